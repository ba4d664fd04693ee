"""Separated regions already in the input (the base-pressure plateau) and margins to
separation.

Sources: the bluff-body scenarios are invented (attached, potential-flow-like Cp up to an
assumed separation angle, then a constant base Cp, as in the free-streamline model of Roshko
1954, NACA TN 3169 [recalled, not re-checked]); the measured distribution is Achenbach 1968
(tests/reference/cylinder_subcritical_cp.csv, recalled, not re-checked); the attached flows
are exact potential flows (cylinder, sphere, ellipses, Joukowski sections, Rankine half-bodies:
Milne-Thomson, Theoretical Hydrodynamics, standard results) and the reference cases of
``ibl.validation``; the margins are checked against Thwaites' closed form on Howarth's linearly
retarded flow (Thwaites 1949; Howarth 1938) and zero pressure gradient (lambda = 0 exactly).
"""

from __future__ import annotations

import csv
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest

import ibl
from ibl import analysis
from ibl.analysis import NEAR_SEPARATION_FRACTION, analyze
from ibl.cli import summary
from ibl.figures import render
from ibl.plateau import PLATEAU_MIN_TURNING, _reach, find_plateau
from ibl.references import surface_case
from ibl.sweep import sweep, sweep_csv, sweep_text
from ibl.table import stations_notes

REFERENCE = Path(__file__).parent / "reference"


def contour_case(x: np.ndarray, y: np.ndarray, cp: np.ndarray, **extra: Any) -> dict[str, Any]:
    case: dict[str, Any] = {
        "surface": {"x": x.tolist(), "y": y.tolist()},
        "pressure": {"cp": cp.tolist()},
        "flow": {"reynolds": 2e4},
        "transition": {"criterion": "michel"},
    }
    case.update(extra)
    return case


def side_of(result: dict[str, Any], name: str) -> dict[str, Any]:
    return next(side for side in result["sides"] if side["name"] == name)


# ------------------------------------------------------------------ invented bluff bodies


def mast(step_deg: float, separation_deg: float = 80.0, base_cp: float | None = None):
    """Invented circular mast, diameter 1: Cp = 1 - 2.3 sin^2(90 theta / 70) (minimum -1.3 at
    70 deg, a potential-flow-like shape of a subcritical cylinder) up to the assumed
    separation angle, then constant at its value there (or ``base_cp``)."""
    theta = np.arange(-180.0, 180.0 + step_deg / 2, step_deg)
    t = np.abs(theta)
    attached = 1.0 - 2.3 * np.sin(np.radians(90.0 * np.minimum(t, separation_deg) / 70.0)) ** 2
    cp = attached if base_cp is None else np.where(t < separation_deg, attached, base_cp)
    rad = np.radians(theta)
    return 0.5 * -np.cos(rad), 0.5 * np.sin(rad), cp


@pytest.mark.parametrize("step_deg", [1.0, 5.0, 10.0])
def test_circular_mast_plateau_begins_at_the_assumed_separation_angle(step_deg: float) -> None:
    # Invented scenario: separation assumed at 80 deg; the onset lies at the kink within half
    # a tap spacing, and at least 2.5 deg (the recovery approaches the level tangentially,
    # so on fine taps the steepest recovery line meets the level a little before the kink).
    x, y, cp = mast(step_deg)
    result = analyze(contour_case(x, y, cp))
    for name in ("upper", "lower"):
        side = side_of(result, name)
        plateau = side["pressure_plateau"]
        assert plateau is not None
        onset_deg = math.degrees(plateau["s"] / 0.5)
        assert abs(onset_deg - 80.0) <= max(0.5 * step_deg, 2.5), onset_deg
        base = 1.0 - 2.3 * math.sin(math.radians(90.0 * 80.0 / 70.0)) ** 2
        assert plateau["cp"] == pytest.approx(base, abs=0.01)
        # The rear point; arc length along the chords: 1 - step^2/24 of the arc (step in rad).
        assert plateau["end_s"] == pytest.approx(0.5 * math.pi, rel=2e-3)
        assert side["separation"] is None
        assert side["s"][-1] == pytest.approx(plateau["s"], rel=1e-12)  # stations end there
        assert plateau["x"] == pytest.approx(-0.5 * math.cos(plateau["s"] / 0.5), abs=2e-3)
    codes = [w["code"] for w in result["warnings"]]
    assert codes.count("pressure_plateau") == 2


def rounded_square(corner: float = 0.1, n_face: int = 16, n_corner: int = 10):
    """Invented rounded-square building section, side 1, flow on a face: the upper half
    contour from the front face centre round the front corner, along the top, round the rear
    corner, down to the rear face centre; s at the end of the front corner is returned."""
    h = 0.5
    front = np.column_stack((np.full(n_face, -h), np.linspace(0.0, h - corner, n_face)))
    phi = np.linspace(0.0, 0.5 * np.pi, n_corner + 1)[1:]
    c1 = np.column_stack((-h + corner - corner * np.cos(phi), h - corner + corner * np.sin(phi)))
    top_x = np.linspace(-h + corner, h - corner, 2 * n_face)[1:]
    top = np.column_stack((top_x, np.full(top_x.size, h)))
    c2 = np.column_stack((h - corner + corner * np.sin(phi), h - corner + corner * np.cos(phi)))
    rear = np.column_stack((np.full(n_face - 1, h), np.linspace(h - corner, 0.0, n_face)[1:]))
    upper = np.vstack((front, c1, top, c2, rear))
    arc = np.concatenate(([0.0], np.cumsum(np.hypot(*np.diff(upper, axis=0).T))))
    corner_end = n_face + n_corner - 1
    # Attached: Cp falls from 1 at the face centre to -0.2 at the corner's start and -1.5 at
    # its end (the suction peak); separated: a constant base Cp of -1.4 beyond the corner.
    cp = np.empty(arc.size)
    cp[:n_face] = 1.0 - 1.2 * (upper[:n_face, 1] / (h - corner)) ** 2
    cp[n_face : corner_end + 1] = -0.2 - 1.3 * np.sin(phi)
    cp[corner_end + 1 :] = -1.4 + 0.01 * np.sin(7.0 * arc[corner_end + 1 :])  # tap scatter
    return upper, cp, float(arc[corner_end]), float(arc[corner_end + 1] - arc[corner_end])


def mirrored(upper: np.ndarray, cp: np.ndarray):
    """A closed contour from the upper half (listed from the front): rear to front over the
    upper half reversed, then the lower half, without repeating the shared points."""
    lower = upper[1:-1] * np.array([1.0, -1.0])
    x = np.concatenate((upper[::-1, 0], lower[:, 0], upper[-1:, 0]))
    y = np.concatenate((upper[::-1, 1], lower[:, 1], upper[-1:, 1]))
    c = np.concatenate((cp[::-1], cp[1:-1], cp[-1:]))
    return x, y, c


def test_rounded_square_plateau_begins_where_the_front_corner_ends() -> None:
    # Invented scenario: separation assumed at the end of the front corner rounding (the
    # suction peak), a recovery to the constant base pressure within the next spacing; the
    # onset lies within that spacing.
    upper, cp, corner_end_s, spacing = rounded_square()
    x, y, c = mirrored(upper, cp)
    result = analyze(contour_case(x, y, c))
    for name in ("upper", "lower"):
        plateau = side_of(result, name)["pressure_plateau"]
        assert plateau is not None
        assert corner_end_s - 1e-9 <= plateau["s"] <= corner_end_s + spacing + 1e-9
        assert plateau["cp"] == pytest.approx(-1.4, abs=0.01)


def test_d_section_plateau_begins_at_the_corners_of_the_base() -> None:
    # Invented D-section: semicircular front (radius 0.5), flat base at x = 0; attached
    # Cp = 1 - 2.2 sin^2(theta) on the front up to the corners (theta = 90 deg), then the
    # constant base Cp = -1.2 over the base. Tolerance one tap spacing (5 deg): the attached
    # Cp at 85 deg is already within the scatter allowance of the minimum (rule of practice
    # PLATEAU_ONSET_BAND), so the data cannot place the onset closer.
    theta = np.radians(np.arange(0.0, 90.1, 5.0))
    front = np.column_stack((-0.5 * np.cos(theta), 0.5 * np.sin(theta)))
    base = np.column_stack((np.zeros(10), np.linspace(0.5, 0.0, 11)[1:]))
    upper = np.vstack((front, base))
    cp = np.concatenate((1.0 - 2.2 * np.sin(theta) ** 2, np.full(10, -1.2)))
    x, y, c = mirrored(upper, cp)
    result = analyze(contour_case(x, y, c))
    for name in ("upper", "lower"):
        plateau = side_of(result, name)["pressure_plateau"]
        assert plateau is not None
        corner_s = 18 * 0.5 * 2.0 * math.sin(math.radians(2.5))  # along the chords
        assert corner_s - 0.5 * math.radians(5.0) - 1e-9 <= plateau["s"] <= corner_s + 1e-9
        assert plateau["end_s"] == pytest.approx(corner_s + 0.5, abs=1e-9)


def test_transition_and_laminar_separation_before_the_plateau_are_still_found() -> None:
    # Invented mast with a strong recovery before an assumed late separation at 110 deg (a
    # potential-flow-like Cp = 1 - 4 sin^2 theta, base Cp -0.6): Thwaites' laminar
    # separation (near 104 deg on the potential-flow cylinder, Terrill 1960) comes first.
    theta = np.arange(-180.0, 180.1, 2.0)
    t = np.radians(np.abs(theta))
    cp = np.where(np.abs(theta) < 110.0, 1.0 - 4.0 * np.sin(t) ** 2, -0.6)
    rad = np.radians(theta)
    case = contour_case(0.5 * -np.cos(rad), 0.5 * np.sin(rad), cp)
    case["flow"] = {"reynolds": 2e4}
    case["transition"] = {"criterion": "none"}
    side = side_of(analyze(case), "upper")
    assert side["pressure_plateau"] is not None
    assert side["separation"] is not None and side["separation"]["regime"] == "laminar"
    assert side["separation"]["s"] < side["pressure_plateau"]["s"]
    # At a higher Reynolds number with Michel's criterion, transition comes first too.
    case["flow"] = {"reynolds": 2e6}
    case["transition"] = {"criterion": "michel"}
    side = side_of(analyze(case), "upper")
    assert side["transition"] is not None
    assert side["transition"]["s"] < side["pressure_plateau"]["s"]


def test_plateau_detection_can_be_switched_off() -> None:
    x, y, cp = mast(5.0)
    result = analyze(contour_case(x, y, cp, separation={"pressure_plateau": False}))
    for side in result["sides"]:
        assert side["pressure_plateau"] is None
        assert side["s"][-1] == pytest.approx(0.5 * math.pi, rel=2e-3)  # to the rear point
    assert result["options"]["pressure_plateau"] == "off"
    with pytest.raises(ibl.CaseError) as error:
        ibl.parse_case(contour_case(x, y, cp, separation={"pressure_plateau": "yes"}))
    assert error.value.problems[0].pointer == "/separation/pressure_plateau"


# ----------------------------------------------------------- published measured data


def load_achenbach() -> tuple[np.ndarray, np.ndarray, float]:
    with (REFERENCE / "cylinder_subcritical_cp.csv").open() as handle:
        rows = list(csv.DictReader(line for line in handle if not line.startswith("#")))
    theta = np.array([float(r["theta_deg"]) for r in rows])
    cp = np.array([float(r["cp"]) for r in rows])
    return theta, cp, float(rows[0]["separation_deg"])


def test_measured_subcritical_cylinder_plateau_onset_near_the_measured_separation() -> None:
    # Achenbach 1968, Re_D = 1e5 (recalled, not re-checked): laminar separation near 78 deg
    # from the skin friction. Tolerance: taps 10 deg apart put the onset within half a
    # spacing (5 deg) of where the data settle, plus 2 deg for the recalled values.
    theta, cp, separation_deg = load_achenbach()
    full = np.concatenate((-theta[::-1], theta[1:]))
    c = np.concatenate((cp[::-1], cp[1:]))
    rad = np.radians(full)
    result = analyze(contour_case(0.5 * -np.cos(rad), 0.5 * np.sin(rad), c, flow={"reynolds": 1e5}))
    for side in result["sides"]:
        plateau = side["pressure_plateau"]
        assert plateau is not None
        onset_deg = math.degrees(plateau["s"] / 0.5)
        assert abs(onset_deg - separation_deg) <= 7.0, onset_deg
        assert plateau["cp"] == pytest.approx(-1.18, abs=0.03)  # the base pressure
        assert side["separation"] is None  # Thwaites alone does not separate on these data


# ---------------------------------------------------------- attached flows: no plateau


def circle_contour(n: int = 181) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    theta = np.linspace(-np.pi, np.pi, n)
    return theta, 0.5 * -np.cos(theta), 0.5 * np.sin(theta)


def ellipse_case(ratio: float) -> dict[str, Any]:
    # Potential flow along the axis 2 of an ellipse of axes 2 and 2 ratio:
    # Ue/U = (1 + t) sin(eta) / sqrt(sin^2 eta + t^2 cos^2 eta) (Milne-Thomson, standard).
    eta = np.linspace(-np.pi, np.pi, 241)
    ue = (1 + ratio) * np.abs(np.sin(eta)) / np.sqrt(np.sin(eta) ** 2 + ratio**2 * np.cos(eta) ** 2)
    return contour_case(-np.cos(eta), ratio * np.sin(eta), 1.0 - ue**2)


def joukowski_case(thickness: float, camber: float, alpha_deg: float) -> dict[str, Any]:
    # Joukowski section: circle through z = 1 centred at (-thickness, camber), Kutta
    # circulation Gamma = 4 pi U R sin(alpha + beta), mapped by zeta = z + 1/z (standard).
    centre = complex(-thickness, camber)
    radius = abs(1.0 - centre)
    beta = math.asin(camber / radius)
    alpha = math.radians(alpha_deg)
    n = 200
    phi = -beta + 2.0 * np.pi * (np.arange(n) + 0.5) / n
    z = centre + radius * np.exp(1j * phi)
    gamma = 4.0 * np.pi * radius * math.sin(alpha + beta)
    w = (
        np.exp(-1j * alpha)
        - radius**2 * np.exp(1j * alpha) / (z - centre) ** 2
        + 1j * gamma / (2.0 * np.pi * (z - centre))
    )
    ue = np.abs(w / (1.0 - 1.0 / z**2))
    zeta = z + 1.0 / z
    return contour_case(zeta.real, zeta.imag, 1.0 - ue**2, flow={"reynolds": 1e6})


def rankine_planar_case() -> dict[str, Any]:
    # 2-D Rankine half-body (source b U 2 pi in a uniform stream): a nose, then flat parallel
    # sides, no tail; r = b (pi - theta) / sin(theta), u = U (1 + b cos(theta) / r),
    # v = U b sin(theta) / r (standard).
    theta = np.linspace(0.12, np.pi - 1e-3, 200)
    r = (np.pi - theta) / np.sin(theta)
    x, y = r * np.cos(theta), r * np.sin(theta)
    u, v = 1.0 + np.cos(theta) / r, np.sin(theta) / r
    q = u**2 + v**2
    xs = np.concatenate((x, [-1.0], x[::-1]))
    ys = np.concatenate((y, [0.0], -y[::-1]))
    qs = np.concatenate((q, [0.0], q[::-1]))
    return contour_case(xs, ys, 1.0 - qs, flow={"reynolds": 1e5})


def rankine_axisymmetric_case() -> dict[str, Any]:
    # Body of revolution: 3-D Rankine half-body (point source U a^2 4 pi): rho^2 =
    # 2 a^2 (1 + cos theta), u = U (1 + a^2 cos(theta) / r^2), v = U a^2 sin(theta) / r^2.
    theta = np.linspace(0.15, np.pi - 1e-3, 200)
    rho = np.sqrt(2.0 * (1.0 + np.cos(theta)))
    r = rho / np.sin(theta)
    x = r * np.cos(theta)
    u, v = 1.0 + np.cos(theta) / r**2, np.sin(theta) / r**2
    q = u**2 + v**2
    xs = np.concatenate((x, [-1.0], x[::-1]))
    ys = np.concatenate((rho, [0.0], -rho[::-1]))
    qs = np.concatenate((q, [0.0], q[::-1]))
    return contour_case(xs, ys, 1.0 - qs, flow={"reynolds": 1e5}, body={"kind": "axisymmetric"})


def sphere_case() -> dict[str, Any]:
    # Potential flow about a sphere: Ue/U = 1.5 sin(theta) (standard).
    theta, x, y = circle_contour()
    return contour_case(x, y, 1.0 - (1.5 * np.sin(theta)) ** 2, body={"kind": "axisymmetric"})


def potential_cylinder_case() -> dict[str, Any]:
    # Cp = 1 - 4 sin^2(theta): within +-0.05 of -3 over about 13 deg of turning.
    theta, x, y = circle_contour()
    return contour_case(x, y, 1.0 - 4.0 * np.sin(theta) ** 2)


ATTACHED = {
    "potential_cylinder": potential_cylinder_case,
    "sphere": sphere_case,
    "ellipse_0.1": lambda: ellipse_case(0.1),
    "ellipse_0.25": lambda: ellipse_case(0.25),
    "ellipse_0.5": lambda: ellipse_case(0.5),
    "ellipse_2": lambda: ellipse_case(2.0),
    "joukowski_12pc_2deg": lambda: joukowski_case(0.1, 0.0, 2.0),
    "joukowski_cambered_4deg": lambda: joukowski_case(0.08, 0.08, 4.0),
    "joukowski_thin_0deg": lambda: joukowski_case(0.04, 0.02, 0.0),
    "rankine_planar": rankine_planar_case,
    "rankine_axisymmetric": rankine_axisymmetric_case,
}


@pytest.mark.parametrize("name", list(ATTACHED))
def test_no_plateau_on_attached_potential_flows(name: str) -> None:
    result = analyze(ATTACHED[name]())
    for side in result["sides"]:
        assert side["pressure_plateau"] is None, (name, side["name"], side["pressure_plateau"])
    assert "pressure_plateau" not in {w["code"] for w in result["warnings"]}


def test_potential_cylinder_minimum_turns_less_than_the_threshold() -> None:
    # Cp within +-0.05 of -3 spans |theta - 90| <= 6.4 deg (sin^2 >= 0.9875): 13 deg of
    # turning, well below the threshold; the rule finds nothing on that side.
    theta = np.linspace(0.0, np.pi, 361)
    cp = 1.0 - 4.0 * np.sin(theta) ** 2
    near = np.degrees(np.ptp(theta[np.abs(cp + 3.0) <= 0.05]))
    assert 12.0 < near < 14.0 < PLATEAU_MIN_TURNING
    assert find_plateau(0.5 * theta, cp, -0.5 * np.cos(theta), 0.5 * np.sin(theta)) is None


@pytest.mark.parametrize(
    ("name", "ue"),
    [
        ("flat_plate", lambda s: np.ones_like(s)),
        ("favourable_wedge_m0.3", lambda s: s**0.3),
        ("mildly_adverse", lambda s: 1.0 - 0.05 * s),
        ("howarth_to_0.1", lambda s: 1.0 - s),
    ],
)
def test_no_plateau_or_warning_on_single_surface_attached_flows(name: str, ue: Any) -> None:
    s = np.linspace(0.0, 0.1 if name.startswith("howarth") else 1.0, 201)
    result = analyze(surface_case(s, ue(s), 1e5))
    assert result["sides"][0]["pressure_plateau"] is None
    codes = {w["code"] for w in result["warnings"]}
    assert "pressure_plateau" not in codes


def test_single_surface_input_is_not_checked_for_a_plateau() -> None:
    # The mast's upper side given by arc length only: without geometry the level alone
    # cannot tell separated from attached flow; nothing is found, the stations go on to the
    # end and the options say so.
    _, _, cp = mast(5.0)
    half = np.arange(36, 73)
    s = 0.5 * np.radians(np.arange(0.0, 180.1, 5.0))
    result = analyze({"surface": {"s": s.tolist()}, "pressure": {"cp": cp[half].tolist()},
                      "flow": {"reynolds": 2e4}})  # fmt: skip
    side = result["sides"][0]
    assert side["pressure_plateau"] is None
    assert side["s"][-1] == pytest.approx(s[-1])
    assert result["options"]["pressure_plateau"] == "not_checked_without_contour"


def test_no_plateau_on_any_validation_reference_case(monkeypatch: pytest.MonkeyPatch) -> None:
    # Every case behind `ibl validate` (the reference tables of tests/reference as well).
    from ibl.validation import validate

    found: list[Any] = []
    original = analysis._plateaus

    def recording(case: Any, prepared: Any) -> Any:
        ready = original(case, prepared)
        found.extend(p for p in ready.plateaus if p is not None)
        found.extend(w for w in ready.prepared.warnings if "plateau" in w.code)
        return ready

    monkeypatch.setattr(analysis, "_plateaus", recording)
    assert validate()
    assert not found, found


def test_no_plateau_on_the_demonstration_case() -> None:
    result = ibl.analyze(ibl.cli.load_case(Path("examples/strut.json")))
    assert all(side["pressure_plateau"] is None for side in result["sides"])


def test_band_reach_matches_a_direct_scan() -> None:
    # The compiled scan against the definition: the longest stretch from each start whose
    # spread (max - min) stays within the band, found by brute force.
    rng = np.random.default_rng(7)
    for _ in range(300):
        n = int(rng.integers(1, 60))
        values = np.cumsum(rng.normal(size=n)) * rng.uniform(0.1, 2.0)
        band, first = rng.uniform(0.0, 3.0), int(rng.integers(0, n))
        expected = []
        for i in range(first, n):
            j = i
            while j + 1 < n and np.ptp(values[i : j + 2]) <= band:
                j += 1
            expected.append(j)
        assert _reach(values, band, first).tolist() == expected


# ------------------------------------------------------------------------------ margins


def test_laminar_margin_is_zero_on_a_flat_plate() -> None:
    # Zero pressure gradient: Thwaites' lambda = theta^2 dUe/ds / nu = 0 at every station.
    s = np.linspace(0.0, 1.0, 101)
    side = analyze(surface_case(s, np.ones_like(s), 1e5))["sides"][0]
    assert side["margins"]["laminar"]["lambda"] == 0.0
    assert side["margins"]["turbulent"] is None


def thwaites_howarth_lambda(x: float) -> float:
    """Thwaites' lambda on Ue = 1 - x in closed form: theta^2 = 0.45 nu (1 - (1 - x)^6) /
    (6 (1 - x)^6), dUe/dx = -1, so lambda = -0.075 ((1 - x)^-6 - 1) (Thwaites 1949)."""
    return -0.075 * ((1.0 - x) ** -6 - 1.0)


@pytest.mark.parametrize(("end", "near"), [(0.08, False), (0.115, True)])
def test_laminar_margin_matches_thwaites_closed_form_on_howarth_flow(
    end: float, near: bool
) -> None:
    # Tolerance 1 %: the quadrature is near exact for this polynomial Ue; the three-point
    # end gradient is exact for a linear Ue.
    s = np.linspace(0.0, end, 201)
    result = analyze(surface_case(s, 1.0 - s, 1e5))
    margin = result["sides"][0]["margins"]["laminar"]
    assert margin["s"] == pytest.approx(end)
    assert margin["lambda"] == pytest.approx(thwaites_howarth_lambda(end), rel=0.01)
    assert result["sides"][0]["separation"] is None
    # near_separation: within the stated fraction of -0.09 (from -0.072 on).
    warned = "near_separation" in {w["code"] for w in result["warnings"]}
    assert warned == near
    assert (thwaites_howarth_lambda(end) <= (1 - NEAR_SEPARATION_FRACTION) * -0.09) == near


def test_turbulent_margin_is_the_largest_turbulent_shape_factor_of_the_stations() -> None:
    s = np.linspace(0.0, 1.0, 201)
    result = analyze(surface_case(s, 1.0 - 0.15 * s, 1e6, trip=0.0))
    side = result["sides"][0]
    h = np.array(side["shape_factor"])
    turbulent = np.array([r == "turbulent" for r in side["regime"]])
    k = int(np.argmax(np.where(turbulent, h, -np.inf)))
    assert side["margins"]["turbulent"]["shape_factor"] == h[k]
    assert side["margins"]["turbulent"]["s"] == side["s"][k]
    laminar = side["margins"]["laminar"]  # only the starting station is laminar
    assert laminar is None or laminar["s"] == side["s"][0]


def test_turbulent_near_separation_warning_follows_the_stated_fraction() -> None:
    # Turbulent from the start on retarded flows Ue = 1 - a s: the warning is given exactly
    # when the largest H passes H_sep - f (H_sep - H_0) = 2.2 without separating.
    seen = set()
    for a in (0.05, 0.3, 0.43, 0.44, 0.45):
        s = np.linspace(0.0, 1.0, 201)
        result = analyze(surface_case(s, 1.0 - a * s, 1e6, trip=0.0))
        side = result["sides"][0]
        h = side["margins"]["turbulent"]["shape_factor"]
        separated = side["separation"] is not None
        near = not separated and h >= 2.4 - NEAR_SEPARATION_FRACTION * (2.4 - 1.4)
        warned = any(
            w["code"] == "near_separation" and "turbulent" in w["message"]
            for w in result["warnings"]
        )
        assert warned == near, (a, h, separated)
        seen.add((near, separated))
    assert len(seen) == 3  # the gradients span attached, near and separated layers


# ------------------------------------------------------------------ where it is shown


@pytest.fixture(scope="module")
def mast_result() -> dict[str, Any]:
    x, y, cp = mast(5.0)
    return analyze(contour_case(x, y, cp, name="invented mast"))


def test_summary_names_the_plateau_and_the_margins(mast_result: dict[str, Any]) -> None:
    text = summary(mast_result)
    assert "pressure plateau" in text and "the stations end at its onset" in text
    assert "laminar margin" in text
    assert "none predicted before the pressure plateau" in text


def test_station_table_header_states_the_plateau(mast_result: dict[str, Any]) -> None:
    header = stations_notes(mast_result).splitlines()
    onset = side_of(mast_result, "upper")["pressure_plateau"]["s"]
    assert any(line.startswith("# pressure plateau, upper") and repr(onset) in line
               for line in header)  # fmt: skip
    assert any(line.startswith("# laminar margin, upper") for line in header)


def test_figure_legend_names_the_plateau_and_the_margins(mast_result: dict[str, Any]) -> None:
    svg = render(mast_result, "svg").decode()
    assert "plateau onset (separated in the data)" in svg
    assert "nearest to separation" in svg


def test_sweep_tables_give_the_plateau_onset_and_margins() -> None:
    x, y, cp = mast(5.0)
    result = sweep(contour_case(x, y, cp), "reynolds", [1e4, 2e4])
    rows = sweep_csv(result).splitlines()
    header = [name.split(" [")[0] for name in rows[0].split(",")]
    for column in ("pressure_plateau_s", "min_lambda", "max_shape_factor"):
        assert column in header
    onset = float(rows[1].split(",")[header.index("pressure_plateau_s")])
    assert math.degrees(onset / 0.5) == pytest.approx(80.0, abs=2.5)
    assert "plateau s" in sweep_text(result)
