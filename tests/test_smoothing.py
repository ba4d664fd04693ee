"""Smoothing of the pressure data (``pressure.smoothing``) and the ``pressure_noisy`` warning.

Exact values come from potential flow: on a circular cylinder Cp = 1 - 4 sin^2(phi), on a
sphere Cp = 1 - (9/4) sin^2(phi), on an ellipse of axes a, b Ue/U_inf =
(1 + b/a) |sin t| / sqrt(sin^2 t + (b/a)^2 cos^2 t) (Milne-Thomson, Theoretical
Hydrodynamics [recalled, not re-checked]).
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import msgspec
import numpy as np
import pytest
from litestar.testing import TestClient

import ibl
from ibl import smoothing
from ibl.schema import SMOOTHING_MAX
from ibl_service.app import create_app
from ibl_service.config import Settings

HERE = Path(__file__).parent
MSGPACK = "application/msgpack"


def cylinder(
    points: int,
    perimeter: float = 2 * np.pi,
    noise: float = 0.0,
    seed: int = 1,
    smoothing_: Any = None,
) -> dict[str, Any]:
    """A closed circular contour listed from its front stagnation point, potential-flow Cp."""
    radius = perimeter / (2 * np.pi)
    phi = np.linspace(0.0, 2 * np.pi, points)
    cp = 1.0 - 4.0 * np.sin(phi) ** 2
    cp += np.random.default_rng(seed).normal(0.0, noise, points) if noise else 0.0
    cp[-1] = cp[0]
    doc: dict[str, Any] = {
        "surface": {"x": (-radius * np.cos(phi)).tolist(), "y": (radius * np.sin(phi)).tolist()},
        "pressure": {"cp": np.minimum(cp, 1.0).tolist()},
        "flow": {"reynolds": min(1e5 / radius, 1e12)},
    }
    if smoothing_ is not None:
        doc["pressure"]["smoothing"] = smoothing_
    return doc


def nose_surface(
    points: int, length: float = 1.0, noise: float = 0.0, smoothing_: Any = None
) -> dict[str, Any]:
    """One surface from a stagnation point: a quarter cylinder, Ue = 2 sin(s / R)."""
    radius = 2 * length / np.pi
    s = np.linspace(0.0, length, points)
    ue = 2.0 * np.sin(s / radius)
    ue[1:] += np.random.default_rng(3).normal(0.0, noise, points - 1) if noise else 0.0
    doc: dict[str, Any] = {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": ue.tolist()},
        "flow": {"reynolds": min(1e5 / radius, 1e12)},
    }
    if smoothing_ is not None:
        doc["pressure"]["smoothing"] = smoothing_
    return doc


def non_finite(value: Any, pointer: str = "") -> list[str]:
    """Pointers of every non-finite number in a JSON-ready document."""
    if isinstance(value, float):
        return [] if math.isfinite(value) else [pointer]
    if isinstance(value, dict):
        return [p for k, v in value.items() for p in non_finite(v, f"{pointer}/{k}")]
    if isinstance(value, list):
        return [p for i, v in enumerate(value) for p in non_finite(v, f"{pointer}/{i}")]
    return []


def codes(result: dict[str, Any]) -> list[str]:
    return [w["code"] for w in result["warnings"]]


# ------------------------------------------------------- robustness over sizes and penalties

SPANS = [1e-6, 1e-3, 1.0]  # arc length of the data, in the unit of the coordinates
# 20,000 points in the slow run only (from 10,000 points on, the spline has its most intervals)
COUNTS = [5, 20, 10_000, pytest.param(20_000, marks=pytest.mark.slow)]
IN_RANGE = ["auto", 0.0, 1e-12, SMOOTHING_MAX]
OUT_OF_RANGE = [1.5 * SMOOTHING_MAX, 1.0, 1e12, math.inf]


@pytest.mark.parametrize("penalty", IN_RANGE, ids=str)
@pytest.mark.parametrize("count", COUNTS)
@pytest.mark.parametrize("span", SPANS)
@pytest.mark.parametrize("shape", ["contour", "surface"])
def test_smoothing_raises_nothing_but_case_error_and_results_are_finite(
    shape: str, span: float, count: int, penalty: Any
) -> None:
    # Noisy data (sigma 0.005) so that the smoothing has work to do; any spacing from
    # span / count (5e-11 of the unit here at the finest) must work: the penalty acts on
    # normalised arc length.
    build = cylinder if shape == "contour" else nose_surface
    doc = build(count, span, noise=0.005, smoothing_=penalty)
    try:
        result = ibl.analyze(doc)
    except ibl.CaseError as error:
        # A refusal is allowed (5 points on a contour are too few for two sides; noise may
        # make the edge velocity vanish next to a stagnation start), as long as it is a
        # CaseError naming a field.
        assert error.problems and all(p.pointer.startswith("/") for p in error.problems)
        return
    assert non_finite(result) == []
    assert "non_finite" not in codes(result)
    assert "input_smoothed" in codes(result)


@pytest.mark.parametrize("penalty", OUT_OF_RANGE, ids=str)
def test_penalty_outside_the_admissible_range_is_a_case_error_naming_smoothing(
    penalty: float,
) -> None:
    doc = cylinder(37, smoothing_=penalty)
    with pytest.raises(ibl.CaseError) as parsed:
        ibl.analyze(doc)
    assert [p.pointer for p in parsed.value.problems] == ["/pressure/smoothing"]
    # A Case built in Python without validation is refused by the preparation too.
    case = ibl.parse_case(cylinder(37))
    bad = msgspec.structs.replace(
        case, pressure=msgspec.structs.replace(case.pressure, smoothing=penalty)
    )
    with pytest.raises(ibl.CaseError) as prepared:
        ibl.run(bad)
    assert [p.pointer for p in prepared.value.problems] == ["/pressure/smoothing"]


def test_auto_smoothing_of_closely_spaced_points_is_not_an_error() -> None:
    # 20 points over 1e-5 of arc length, and 10,000 over a unit surface: both once failed.
    for doc in (nose_surface(20, 1e-5, 0.0, "auto"), nose_surface(10_000, 1.0, 0.0, "auto")):
        result = ibl.analyze(doc)
        assert non_finite(result) == []


def test_auto_smoothing_of_a_noisy_cylinder_recovers_the_potential_flow_cp() -> None:
    # Exact Cp = 1 - 4 sin^2(phi); taps with Gaussian noise sigma = 0.005 (seeded). A fit
    # that passed the noise through would have an RMS error of sigma and a largest error
    # near 3 sigma on 361 points; a GCV smoothing spline's error is of order
    # sigma sqrt(df / n), df << n (Wahba 1990, Spline Models for Observational Data, ch. 4
    # [recalled, not re-checked]): we ask for RMS below sigma / 2 and every point within
    # 1.5 sigma.
    sigma = 0.005
    result = ibl.analyze(cylinder(361, noise=sigma, smoothing_="auto"))
    errors = []
    for side in result["sides"]:
        x, y = np.array(side["x"]), np.array(side["y"])
        ue = np.array(side["edge_velocity"])
        phi = np.arctan2(y, -x)
        errors.append((1.0 - ue**2) - (1.0 - 4.0 * np.sin(phi) ** 2))
    error = np.concatenate(errors)
    assert np.sqrt(np.mean(error**2)) < 0.5 * sigma
    assert np.max(np.abs(error)) < 1.5 * sigma


def test_smoothing_time_does_not_grow_with_the_point_count_beyond_the_basis() -> None:
    # Bounded cost by construction: at most MAX_BASIS basis functions, whatever n (the time
    # itself is reported by benchmarks, not asserted here).
    t = np.linspace(0.0, 1.0, 20_000)
    q = 4.0 * np.sin(np.pi * t) ** 2
    out = smoothing.smooth(t, q, None, periodic=True)
    assert out.values.size == t.size and np.all(np.isfinite(out.values))
    assert out.values[0] == out.values[-1]  # the seam of a closed contour is one point


def test_heavy_smoothing_ellipse_gives_only_finite_numbers() -> None:
    # An ellipse in potential flow (invented case) with Abu-Ghannam & Shaw at Tu 2 % and
    # smoothing 1.0, once answered with a transition Re_theta of inf.
    doc = json.loads((HERE / "cases" / "ellipse_heavy_smoothing.json").read_text())
    with pytest.raises(ibl.CaseError) as refused:
        ibl.analyze(doc)  # 1.0 is far outside the admissible penalties
    assert [p.pointer for p in refused.value.problems] == ["/pressure/smoothing"]
    for penalty in (SMOOTHING_MAX, 1e-9, "auto"):
        doc["pressure"]["smoothing"] = penalty
        result = ibl.analyze(doc)
        assert non_finite(result) == [], penalty
        assert "non_finite" not in codes(result)
        # Smoothing along a closed contour is periodic: the two sides still meet at the nose
        # (x near 0, the ellipse spans 0 <= x <= 1), not at the end of the list.
        assert result["stagnation"]["x"] < 0.05
        assert {side["name"] for side in result["sides"]} == {"upper", "lower"}


def test_linear_edge_velocity_round_a_closed_contour_gives_finite_numbers() -> None:
    # What a non-periodic heavy smoothing once made of a closed contour: q falling linearly
    # to zero at the last point, which repeats the first. The start slope must not come
    # from the stagnation point itself (a distance of zero).
    phi = np.linspace(0.0, 2 * np.pi, 200)
    ue = np.linspace(1.5, 0.0, phi.size)
    doc = {
        "surface": {"x": np.cos(phi).tolist(), "y": (0.3 * np.sin(phi)).tolist()},
        "pressure": {"edge_velocity": ue.tolist()},
        "flow": {"reynolds": 1e5},
    }
    result = ibl.analyze(doc)
    assert non_finite(result) == []


# ------------------------------------------------------------------------- noise warning


def ellipse(points_per_side: int, ratio: float) -> dict[str, Any]:
    n = 2 * points_per_side - 1
    t = np.pi * (2 * np.arange(n) + 1) / n
    speed = (1 + ratio) * np.abs(np.sin(t)) / np.sqrt(np.sin(t) ** 2 + (ratio * np.cos(t)) ** 2)
    return {
        "surface": {"x": (0.5 + 0.5 * np.cos(t)).tolist(), "y": (0.5 * ratio * np.sin(t)).tolist()},
        "pressure": {"cp": (1 - speed**2).tolist()},
        "flow": {"reynolds": 2e6},
    }


def sphere(points: int) -> dict[str, Any]:
    phi = np.linspace(0.0, np.pi, points)
    return {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "pressure": {"cp": (1.0 - 2.25 * np.sin(phi) ** 2).tolist()},
        "flow": {"reynolds": 1e5},
        "body": {"kind": "axisymmetric"},
    }


def smooth_cases() -> list[tuple[str, dict[str, Any]]]:
    cases: list[tuple[str, dict[str, Any]]] = []
    for n in (37, 101, 361, 2000):
        cases.append((f"cylinder-{n}", cylinder(n)))
        cases.append((f"sphere-{n}", sphere(n)))
        cases.append((f"ellipse-12%-{n}", ellipse(n // 2 + 1, 0.12)))
        cases.append((f"ellipse-50%-{n}", ellipse(n // 2 + 1, 0.5)))
    plate = {
        "surface": {"s": np.linspace(0.01, 1.0, 200).tolist()},
        "pressure": {"edge_velocity": [1.0] * 200},
        "flow": {"reynolds": 1e6},
    }
    cases.append(("flat-plate", plate))
    for m in (-0.09, 0.0, 0.1, 1.0):  # Falkner-Skan wedge flows Ue = s^m
        s = np.linspace(0.005, 1.0, 300)
        wedge = {
            "surface": {"s": s.tolist()},
            "pressure": {"edge_velocity": (s**m).tolist()},
            "flow": {"reynolds": 1e6},
        }
        cases.append((f"falkner-skan-m{m}", wedge))
    cases.append(("examples/strut", json.loads((HERE.parent / "examples/strut.json").read_text())))
    return cases


@pytest.mark.parametrize(("name", "doc"), smooth_cases(), ids=[n for n, _ in smooth_cases()])
def test_noise_warning_stays_silent_on_smooth_distributions(name: str, doc: dict[str, Any]) -> None:
    assert "pressure_noisy" not in codes(ibl.analyze(doc)), name


@pytest.mark.parametrize("points", [361, 2000])
def test_noise_warning_fires_on_noisy_cp_and_estimates_sigma(points: int) -> None:
    sigma = 0.005
    result = ibl.analyze(cylinder(points, noise=sigma))
    notices = [w for w in result["warnings"] if w["code"] == "pressure_noisy"]
    assert len(notices) == 1
    assert notices[0]["pointer"] == "/pressure/cp"
    assert "auto" in notices[0]["message"]
    # The estimate itself: the MAD of about n residuals has a relative standard error near
    # 1.17 / sqrt(n) for Gaussian noise (common practice): 20 % is over 3 standard errors.
    doc = cylinder(points, noise=sigma)
    s = np.concatenate(
        ([0.0], np.cumsum(np.hypot(*np.diff([doc["surface"]["x"], doc["surface"]["y"]], axis=1))))
    )
    estimate, _ = smoothing.noise_estimate(s, 1.0 - np.array(doc["pressure"]["cp"]))
    assert estimate == pytest.approx(sigma, rel=0.2)
    # Asked for smoothing, the data are no longer reported as noisy.
    assert "pressure_noisy" not in codes(ibl.analyze(cylinder(points, sigma, smoothing_="auto")))


# --------------------------------------------------------------------------------- service


@pytest.fixture
def client() -> Any:
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as made:
        yield made


def post(client: TestClient[Any], path: str, doc: Any, accept: str = MSGPACK) -> Any:
    return client.post(
        path,
        content=msgspec.msgpack.encode(doc),
        headers={"content-type": MSGPACK, "accept": accept},
    )


@pytest.mark.parametrize("penalty", [math.inf, 1.0, 1e12], ids=str)
@pytest.mark.parametrize("route", ["/v1/analyses", "/v1/analyses/figure"])
def test_service_answers_422_for_a_bad_penalty(client: Any, route: str, penalty: float) -> None:
    accept = "image/svg+xml" if route.endswith("figure") else MSGPACK
    response = post(client, route, cylinder(37, smoothing_=penalty), accept)
    assert response.status_code == 422, response.text
    problem = response.json()
    assert [e["pointer"] for e in problem["errors"]] == ["/pressure/smoothing"]


@pytest.mark.parametrize("penalty", [math.inf, 1.0], ids=str)
def test_service_batch_with_a_bad_penalty_analyses_the_others(client: Any, penalty: float) -> None:
    cases = [cylinder(37), cylinder(37, smoothing_=penalty), nose_surface(20, 1e-5, 0.005, "auto")]
    response = post(client, "/v1/analyses/batch", {"cases": cases})
    assert response.status_code == 200, response.text
    results = msgspec.msgpack.decode(response.content)["results"]
    assert "sides" in results[0] and "sides" in results[2]
    assert [e["pointer"] for e in results[1]["errors"]] == ["/cases/1/pressure/smoothing"]


def test_service_auto_smoothing_of_the_largest_case_is_answered(client: Any) -> None:
    response = post(client, "/v1/analyses", cylinder(20_000, noise=0.005, smoothing_="auto"))
    assert response.status_code == 200, response.text


def test_an_unexpected_failure_preparing_one_case_fails_that_case_alone(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    import ibl.analysis

    real = ibl.analysis.prepare

    def fragile(case: Any) -> Any:
        if case.name == "bad":
            raise FloatingPointError("overflow")
        return real(case)

    monkeypatch.setattr(ibl.analysis, "prepare", fragile)
    cases = [ibl.parse_case(dict(cylinder(37), name=name)) for name in ("a", "bad", "c")]
    outcomes = ibl.run_batch(cases)
    assert isinstance(outcomes[1], ibl.CaseError)
    assert not isinstance(outcomes[0], ibl.CaseError)
    assert not isinstance(outcomes[2], ibl.CaseError)


@pytest.mark.parametrize("wavelength", [0.02, 0.05, 0.112])
def test_penalty_halves_the_documented_wavelength(wavelength: float) -> None:
    # The documented meaning of the penalty: for periodic, uniformly sampled data the
    # minimiser of (1/n) sum (q - f)^2 + p int f''^2 keeps a sinusoid of angular wavenumber
    # k = 2 pi / w with the factor 1 / (1 + p k^4) (substitute f = A sin(k t) into the
    # functional and minimise over A: a two-line derivation). At p = (w / 2 pi)^4 the
    # factor is 1/2; the spline on at most MAX_BASIS intervals approximates the exact
    # minimiser, so 3 % is asked for.
    t = np.linspace(0.0, 1.0, 4001)
    k = 2 * np.pi / wavelength
    q = 2.0 + np.sin(k * t)
    penalty = (wavelength / (2 * np.pi)) ** 4
    out = smoothing.smooth(t, q, penalty, periodic=True)
    amplitude = 2 * np.mean((out.values[:-1] - 2.0) * np.sin(k * t[:-1]))
    assert amplitude == pytest.approx(0.5, rel=0.03)


@pytest.mark.parametrize("penalty", ["auto", 1e-10])
def test_smoothing_does_not_depend_on_the_length_unit(penalty: Any) -> None:
    # Invariance: the same contour in millimetres and in kilometres (Re per unit length
    # scaled with it) gives the same smoothed edge velocity.
    small = ibl.analyze(cylinder(181, 1e-3, noise=0.01, smoothing_=penalty))
    large = ibl.analyze(cylinder(181, 1e3, noise=0.01, smoothing_=penalty))
    for a, b in zip(small["sides"], large["sides"], strict=True):
        np.testing.assert_allclose(a["edge_velocity"], b["edge_velocity"], rtol=1e-9, atol=1e-12)


@pytest.mark.parametrize("periodic", [False, True])
def test_smoothing_many_rows_at_once_equals_one_row_at_a_time(periodic: bool) -> None:
    """``Operator.rows`` is ``smooth`` at a fixed penalty, applied to several rows with the
    factors built once: the same linear operator, so the same values to rounding."""
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(0.0, 1.0, 120))
    t[0], t[-1] = 0.0, 1.0
    rows = rng.normal(size=(4, t.size))
    rows[2] = 0.0
    if periodic:
        rows[:, -1] = rows[:, 0]
    many = smoothing.Operator(t, periodic).rows(rows, 1e-8)
    for row, got in zip(rows, many, strict=True):
        one = smoothing.smooth(t, row, 1e-8, periodic).values
        assert np.allclose(got, one, rtol=0.0, atol=1e-12 * max(1.0, np.abs(one).max()))
