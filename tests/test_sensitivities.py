"""Derivatives of events and drag with respect to every input pressure value.

The reference for every derivative is a central difference of whole runs (``ibl.run_batch``
on the case with one input value moved up and down), computed here; the derivatives come
from the reverse-mode differentiation of the march (``ibl.sensitivity``).

Step of the central differences: 1e-6 of the input value's scale (Ue/U_inf and Cp are of
order 1).  The truncation error of a central difference is of order step^2 times the third
derivative, far below anything checked; the rounding error is about 1e-16 / 1e-6 = 1e-10
of the positions (of order 1), and events are located to 1e-14 of the surface length, so
the reference is good to about 1e-7 of the derivatives (of order 0.1 to 10).

Tolerance: 1 % of the largest derivative magnitude of each array (the requirement).  The
differentiated march holds the step sizes of the turbulent march that do not end on a
station fixed; their effect is of the order of the march's truncation error (separation
moves by less than 1e-5 % of the side length with twenty times smaller steps,
``tests/test_kernel.py``), far inside the tolerance.
"""

from __future__ import annotations

import json
import math
from dataclasses import replace
from typing import Any

import msgspec
import numpy as np
import pytest
from litestar.testing import TestClient

import ibl
from ibl import sensitivity
from ibl.march import SideState, march
from ibl.prepare import SideInput, prepare
from ibl.schema import Result
from ibl_service.app import create_app
from ibl_service.config import Settings

# The first derivative compiles the backward sweep (about half a minute on these machines):
# marked slow to keep the default run short; CI runs it in its slow step.
pytestmark = pytest.mark.slow

STEP = 1e-6
TOLERANCE = 0.01
QUANTITIES = ("transition", "laminar_separation", "separation", "friction_drag")


def _surface(s: np.ndarray, values: np.ndarray, reynolds: float, **extra: Any) -> dict[str, Any]:
    key = extra.pop("key", "edge_velocity")
    doc: dict[str, Any] = {
        "surface": {"s": s.tolist()},
        "pressure": {key: values.tolist()},
        "flow": {"reynolds": reynolds},
        "output": {"stations": False, "sensitivities": list(QUANTITIES)},
    }
    doc.update(extra)
    return doc


def _figures(result: Result) -> dict[str, float]:
    side = result.sides[0]
    figures = {
        "transition": side.transition.s if side.transition else math.nan,
        "laminar_separation": side.laminar_separation.s if side.laminar_separation else math.nan,
        "separation": side.separation.s if side.separation else math.nan,
        "friction_drag": side.friction_drag if side.friction_drag is not None else math.nan,
    }
    return figures


def _central_differences(
    doc: dict[str, Any], skip: tuple[int, ...] = (), step: float = STEP
) -> dict[str, Any]:
    """d(figure)/d(input value i) by central differences of whole runs (NaN where skipped)."""
    key = next(iter(doc["pressure"]))
    base = np.array(doc["pressure"][key], dtype=float)
    cases = []
    for i in range(base.size):
        for sign in (1.0, -1.0):
            values = base.copy()
            values[i] += sign * step
            moved = json.loads(json.dumps(doc))
            moved["pressure"][key] = values.tolist()
            moved["output"] = {"stations": False}
            cases.append(ibl.parse_case(moved))
    results = ibl.run_batch(cases)
    out = {name: np.full(base.size, math.nan) for name in QUANTITIES}
    for i in range(base.size):
        if i in skip:
            continue
        up, down = results[2 * i], results[2 * i + 1]
        assert isinstance(up, Result) and isinstance(down, Result)
        a, b = _figures(up), _figures(down)
        for name in QUANTITIES:
            out[name][i] = (a[name] - b[name]) / (2.0 * step)
    return out


def _check(
    doc: dict[str, Any],
    present: set[str],
    skip: tuple[int, ...] = (),
    zero: set[str] = frozenset(),
    step: float = STEP,
) -> None:
    """The derivatives of the figures in ``present`` against central differences, null for
    the others; those in ``zero`` are zero in both (a trip's position)."""
    result = ibl.run(ibl.parse_case(doc))
    derived = result.sides[0].sensitivities
    assert isinstance(derived, ibl.schema.Sensitivities)
    reference = _central_differences(doc, skip, step)
    for name in QUANTITIES:
        got = getattr(derived, name)
        if name not in present:
            assert got is None, name  # the event does not occur
            continue
        assert got is not None, name
        got = np.array(got)
        want = reference[name]
        keep = np.isfinite(want)
        scale = np.max(np.abs(want[keep]))
        assert (scale == 0.0) == (name in zero), name
        error = np.max(np.abs(got[keep] - want[keep]))
        assert error <= TOLERANCE * scale, (name, error / scale)


def test_howarth_retarded_flow_laminar_separation_and_friction() -> None:
    # Howarth's (1938) linearly retarded flow Ue = 1 - s/8: laminar separation near
    # s = 0.96 (Thwaites' method), no transition criterion.
    s = np.linspace(0.0, 1.5, 41)
    doc = _surface(s, 1.0 - s / 8.0, 1e5, transition={"criterion": "none"})
    _check(doc, {"laminar_separation", "separation", "friction_drag"})


def test_michel_transition_then_turbulent_separation() -> None:
    # A linear deceleration steep enough for Head's layer to separate after Michel's
    # transition.
    s = np.linspace(0.0, 1.0, 41)
    doc = _surface(s, 1.0 - 0.55 * s, 3e6, transition={"criterion": "michel"})
    _check(doc, {"transition", "separation", "friction_drag"})


def test_tripped_layer_separation_and_friction() -> None:
    # A trip: the transition position is given, its derivatives are zero.
    s = np.linspace(0.0, 1.0, 41)
    trip = {"criterion": "none", "trip": {"surface": 0.05}}
    doc = _surface(s, 1.0 - 0.55 * s, 1e6, transition=trip)
    result = ibl.run(ibl.parse_case(doc))
    derived = result.sides[0].sensitivities
    assert isinstance(derived, ibl.schema.Sensitivities)
    assert derived.transition == [0.0] * s.size
    _check(doc, {"transition", "separation", "friction_drag"}, zero={"transition"})


def test_abu_ghannam_shaw_transition() -> None:
    s = np.linspace(0.0, 1.0, 41)
    doc = _surface(s, 1.0 - 0.2 * s, 2e6, transition={"criterion": "abu_ghannam_shaw"})
    doc["flow"]["turbulence_intensity"] = 0.01
    _check(doc, {"transition", "friction_drag"})


def test_ellipse_nose_in_cp_from_the_stagnation_point() -> None:
    # Potential flow over an ellipse (a cos t, b sin t) at zero incidence (Milne-Thomson,
    # Theoretical Hydrodynamics, the elliptic cylinder): Ue/U = (1 + b/a) sin t /
    # sqrt(sin^2 t + (b/a)^2 cos^2 t), here from the leading-edge stagnation point, given
    # as Cp = 1 - (Ue/U)^2 on a single surface.  At the stagnation point (Cp = 1, Ue = 0)
    # the derivative does not exist (the start of the layer changes kind): skipped.  The
    # points avoid the symmetric pair round the largest Ue: two equal neighbouring values
    # make the slope limiter's secant zero, where the march has no derivative (README).
    a, b = 0.5, 0.1
    t = np.linspace(0.0, 0.8 * np.pi, 60)
    x, y = -a * np.cos(t), b * np.sin(t)
    s = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))])
    ratio = b / a
    ue = (1.0 + ratio) * np.sin(t) / np.sqrt(np.sin(t) ** 2 + ratio**2 * np.cos(t) ** 2)
    doc = _surface(s, 1.0 - ue**2, 2e6, key="cp", transition={"criterion": "michel"})
    result = ibl.run(ibl.parse_case(doc))
    derived = result.sides[0].sensitivities
    assert isinstance(derived, ibl.schema.Sensitivities)
    assert derived.with_respect_to == "cp"
    present = {n for n in QUANTITIES if getattr(derived, n) is not None}
    assert {"transition", "friction_drag"} <= present
    _check(doc, present, skip=(0,))


def test_only_what_is_asked_for_and_nothing_by_default() -> None:
    s = np.linspace(0.0, 1.0, 21)
    doc = _surface(s, 1.0 - 0.2 * s, 1e6)
    doc["output"]["sensitivities"] = ["friction_drag"]
    out = ibl.analyze(doc)["sides"][0]["sensitivities"]
    assert set(out) == {"with_respect_to", "friction_drag"}
    assert len(out["friction_drag"]) == s.size
    del doc["output"]["sensitivities"]
    assert "sensitivities" not in ibl.analyze(doc)["sides"][0]


# ----------------------------------------------------------------------------- contours

CONTOUR_QUANTITIES = (*QUANTITIES, "profile_drag")


def _ellipse(
    alpha_deg: float, n: int, start: float, stop: float, reynolds: float, b: float = 0.06
) -> dict:
    """Exact potential flow over the ellipse x = a cos t, y = b sin t at incidence alpha
    (Milne-Thomson, Theoretical Hydrodynamics, the elliptic cylinder; no circulation):
    |u|/U = (a + b) |sin(t - alpha)| / sqrt(a^2 sin^2 t + b^2 cos^2 t), as Cp = 1 - (u/U)^2,
    on the points t = start + (stop - start) k/n (closed when stop - start = 2 pi);
    a = 0.5."""
    a = 0.5
    alpha = math.radians(alpha_deg)
    t = start + (stop - start) * np.arange(n) / n
    ue = (a + b) * np.abs(np.sin(t - alpha)) / np.sqrt((a * np.sin(t)) ** 2 + (b * np.cos(t)) ** 2)
    return {
        "surface": {"x": (a * np.cos(t)).tolist(), "y": (b * np.sin(t)).tolist()},
        "pressure": {"cp": (1.0 - ue**2).tolist()},
        "flow": {"reynolds": reynolds},
        "output": {"stations": False, "sensitivities": list(CONTOUR_QUANTITIES)},
    }


def _joukowski(alpha_deg: float, n: int, reynolds: float) -> dict:
    """Exact potential flow over the symmetric Joukowski section of the circle of centre
    (-0.1, 0) and radius 1.1 (z = zeta + 1/zeta), with the Kutta condition's circulation
    (Milne-Thomson, Theoretical Hydrodynamics, Joukowski's aerofoil): speed on the circle
    2 U |sin(phi - alpha) + sin alpha|, divided by |dz/dzeta| = |1 - 1/zeta^2|; the
    points avoid the cusp (phi = 0), where both vanish.  Attached at the cusped trailing
    edge, so it has a profile drag."""
    eps, alpha = 0.1, math.radians(alpha_deg)
    phi = 2.0 * np.pi * (np.arange(n) + 0.5) / n
    zeta = -eps + (1.0 + eps) * np.exp(1j * phi)
    z = zeta + 1.0 / zeta
    ue = 2.0 * np.abs(np.sin(phi - alpha) + np.sin(alpha)) / np.abs(1.0 - 1.0 / zeta**2)
    return {
        "surface": {"x": z.real.tolist(), "y": z.imag.tolist()},
        "pressure": {"cp": (1.0 - ue**2).tolist()},
        "flow": {"reynolds": reynolds},
        "output": {"stations": False, "sensitivities": list(CONTOUR_QUANTITIES)},
    }


def _contour_figures(result: Result) -> list[dict[str, float]]:
    return [
        {
            "transition": side.transition.s if side.transition else math.nan,
            "laminar_separation": side.laminar_separation.s
            if side.laminar_separation
            else math.nan,
            "separation": side.separation.s if side.separation else math.nan,
            "friction_drag": side.friction_drag if side.friction_drag is not None else math.nan,
            "profile_drag": result.drag.profile if result.drag.profile is not None else math.nan,
        }
        for side in result.sides
    ]


def _check_contour(
    doc: dict[str, Any],
    expected: list[set[str]],
    skip: tuple[int, ...] = (),
    zero: frozenset[str] = frozenset(),
    step: float = STEP,
) -> dict[str, float]:
    """Each side's derivatives against central differences of whole runs (the profile
    drag: the sides' shares summed against the case's profile drag), 1 % of the largest
    derivative of each array; ``expected`` the quantities present per side (null for the
    others), those in ``zero`` zero in both.  Returns the largest error relative to that
    scale, per side and quantity."""
    result = ibl.run(ibl.parse_case(doc))
    codes = [w.code for w in result.warnings]
    assert "sensitivities_unavailable" not in codes, result.warnings
    key = next(iter(doc["pressure"]))
    base = np.array(doc["pressure"][key], dtype=float)
    cases = []
    for i in range(base.size):
        for sign in (1.0, -1.0):
            moved = json.loads(json.dumps(doc))
            moved["pressure"][key][i] = float(base[i] + sign * step)
            moved["output"] = {"stations": False}
            cases.append(ibl.parse_case(moved))
    runs = ibl.run_batch(cases)
    assert all(isinstance(r, Result) for r in runs)
    figures = [_contour_figures(r) for r in runs]  # type: ignore[arg-type]
    errors: dict[str, float] = {}
    keep = np.array([i not in skip for i in range(base.size)])
    assert len(result.sides) == len(expected)
    for k, (side, present) in enumerate(zip(result.sides, expected, strict=True)):
        derived = side.sensitivities
        assert isinstance(derived, ibl.schema.Sensitivities)
        for name in CONTOUR_QUANTITIES:
            got = getattr(derived, name)
            if name not in present:
                assert got is None, (side.name, name)
                continue
            assert got is not None, (side.name, name)
            assert len(got) == base.size
            got = np.array(got)
            if name == "profile_drag":
                got = np.sum([s.sensitivities.profile_drag for s in result.sides], axis=0)
            want = np.array(
                [
                    (figures[2 * i][k][name] - figures[2 * i + 1][k][name]) / (2.0 * step)
                    for i in range(base.size)
                ]
            )
            scale = float(np.max(np.abs(want[keep])))
            assert (scale == 0.0) == (name in zero), (side.name, name)
            error = float(np.max(np.abs(got[keep] - want[keep]))) / (scale or 1.0)
            errors[f"{side.name}.{name}"] = error
            assert error <= TOLERANCE, (side.name, name, error)
    return errors


@pytest.mark.parametrize("repeated", [False, True], ids=["implicit", "first point repeated"])
def test_ellipse_section_at_incidence(repeated: bool) -> None:
    # A closed ellipse at 3 degrees: the stagnation point lies between taps (the
    # parabola fitted to the nose taps moves with their values); every station's s,
    # the split and the slope follow.  Transition on both sides, turbulent separation
    # before the rear stagnation point (so no profile drag: null without a warning).
    # Closed implicitly, or with the first point repeated at the end (whose value the
    # listing does not use: derivative zero in both).
    doc = _ellipse(3.0, 120, 1e-3, 1e-3 + 2.0 * np.pi, 2e6)
    if repeated:
        for values in (doc["surface"]["x"], doc["surface"]["y"], doc["pressure"]["cp"]):
            values.append(values[0])
    both = {"transition", "separation", "friction_drag"}
    _check_contour(doc, [both, both | {"laminar_separation"}])


def test_symmetric_ellipse_with_a_tap_on_the_stagnation_point() -> None:
    # Zero incidence, a point exactly on the stagnation point (Cp = 1): a plateau of one
    # point, the stagnation point held there, the slopes the secants to the next points.
    # The derivative with respect to that point's value does not exist (Cp above 1 is
    # clipped, below it the point leaves the plateau): it is skipped.
    doc = _ellipse(0.0, 120, 0.0, 2.0 * np.pi, 2e6)
    cp = doc["pressure"]["cp"]
    assert cp[60] == pytest.approx(1.0, abs=1e-12)
    both = {"transition", "separation", "friction_drag"}
    _check_contour(doc, [both, both], skip=(60,))


@pytest.mark.parametrize("key", ["cp", "p"])
def test_open_contour_with_a_stagnation_point(key: str) -> None:
    # The front 40 % of the ellipse at 2 degrees, open: the sides run from the fitted
    # stagnation point to the contour's two ends.  Also in pascals (p_inf = 1e5 Pa,
    # q_inf = 500 Pa: d/dp = d/dCp / q_inf, the step scaled the same way).
    doc = _ellipse(2.0, 80, 0.3 * np.pi, 1.7 * np.pi, 3e6)
    doc["transition"] = {"criterion": "michel"}
    step = STEP
    if key == "p":
        cp = np.array(doc["pressure"]["cp"])
        doc["pressure"] = {"p": (1e5 + 500.0 * cp).tolist()}
        doc["pressure"].update(reference_pressure=1e5, dynamic_pressure=500.0)
        step = STEP * 500.0
    _check_contour(doc, [{"transition", "friction_drag"}, {"friction_drag"}], step=step)


def test_v_model_of_a_nose_tap_that_misses_the_stagnation_value() -> None:
    # Coarse taps round a round nose (a unit circle's arc), edge velocity given: Ue =
    # 3|s|/(1 + 3 s^2) except the tap nearest the nose, which reads 0.2 instead of 0.09
    # (a tap that misses the stagnation value).  The parabola through three taps does not
    # reach zero there, so the V of the secants through the two taps on each side locates
    # the stagnation point: s0 and the slope move with those four values.  Laminar
    # separation (the transition) on both sides.
    arc = np.arange(-12, 13) * 0.1 + 0.03
    ue = 3.0 * np.abs(arc) / (1.0 + 3.0 * arc**2)
    ue[12] = 0.2
    doc = {
        "surface": {"x": (-np.cos(arc)).tolist(), "y": np.sin(arc).tolist()},
        "pressure": {"edge_velocity": ue.tolist()},
        "flow": {"reynolds": 1e6},
        "transition": {"criterion": "michel"},
        "output": {"stations": False, "sensitivities": list(CONTOUR_QUANTITIES)},
    }
    q = ue**2
    s = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(np.cos(arc)), np.diff(np.sin(arc))))])
    p_s0, _, _, v_s0, _, _ = ibl.prepare.stagnation_models(s, q, 12, 12)
    located = ibl.run(ibl.parse_case(doc)).stagnation
    assert located is not None
    assert located.s == pytest.approx(s[12] + v_s0, abs=1e-12)  # the V, not the parabola
    assert abs(v_s0 - p_s0) > 1e-3
    both = {"transition", "laminar_separation", "friction_drag"}
    _check_contour(doc, [both, both])


@pytest.mark.parametrize("shift", [0.0, 0.013])
def test_sphere_meridian_contour(shift: float) -> None:
    # A body of revolution given as a contour: the meridian of a unit sphere from 18
    # degrees short of the rear on one side of the axis to the other, exact potential flow
    # Ue = 1.5 U |sin phi| (Lamb, Hydrodynamics, the sphere), the radius |y|.  With a
    # point on the nose (shift 0: a plateau of one point, skipped) and with the points
    # shifted (the nose between points, placed on the axis: only the slopes move).
    phi = np.linspace(-0.9 * np.pi, 0.9 * np.pi, 61) + shift
    ue = 1.5 * np.abs(np.sin(phi))
    doc = {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "body": {"kind": "axisymmetric"},
        "pressure": {"cp": (1.0 - ue**2).tolist()},
        "flow": {"reynolds": 1e6},
        "transition": {"criterion": "michel"},
        "output": {"stations": False, "sensitivities": list(CONTOUR_QUANTITIES)},
    }
    both = {"transition", "laminar_separation", "separation", "friction_drag"}
    _check_contour(doc, [both, both], skip=(30,) if shift == 0.0 else ())


def test_tripped_contour() -> None:
    # Trips on both sides: transition held at the trip (derivative zero), the turbulent
    # layer from there.
    doc = _ellipse(3.0, 120, 1e-3, 1e-3 + 2.0 * np.pi, 1e6)
    doc["transition"] = {"criterion": "none", "trip": {"upper": 0.05, "lower": 0.1}}
    result = ibl.run(ibl.parse_case(doc))
    for side in result.sides:
        assert isinstance(side.sensitivities, ibl.schema.Sensitivities)
        assert side.sensitivities.transition == [0.0] * 120
    both = {"transition", "separation", "friction_drag"}
    _check_contour(doc, [both, both], zero=frozenset({"transition"}))


@pytest.mark.parametrize("alpha", [0.0, 2.0])
def test_profile_drag_of_a_joukowski_section(alpha: float) -> None:
    # Squire & Young's profile drag, summed over the sides, against central differences
    # of the case's profile drag; events and friction drag too.  An odd number of points
    # puts one on the nose (phi = pi): at zero incidence it is the stagnation point
    # (Cp = 1, a plateau of one point, whose own derivative does not exist: skipped).
    doc = _joukowski(alpha, 161, 3e6)
    both = {"transition", "friction_drag", "profile_drag"}
    _check_contour(doc, [both, both], skip=(80,) if alpha == 0.0 else ())


# ------------------------------------------------- station positions and the stagnation point

#: The profile drag's factor of a planar side (Squire & Young: 2 theta Ue^((H + 5)/2)).
PLANAR_PROFILE = 2.0


def _side_figures(side: SideInput, state: SideState) -> np.ndarray:
    """A marched side's figures in the order of ``sensitivity.QUANTITIES``: event positions
    in the side's s, its friction drag (``ibl.drag.friction_drag`` on the kept stations,
    as the result reports it) and its profile drag share (NaN where absent)."""
    keep = state.count
    x = side.x[:keep] if side.x is not None else state.s
    weight = 2.0 * math.pi * side.r[:keep] if side.axisymmetric else None
    friction = ibl.drag.friction_drag(state.s, x, state.ue, state.cf, weight) if keep >= 2 else None
    profile = math.nan
    if keep == side.s.size:
        theta, ue, h = (float(a[-1]) for a in (state.theta, state.ue, state.shape_factor))
        profile = PLANAR_PROFILE * theta * ue ** (0.5 * (h + 5.0))
    return np.array(
        [
            state.transition_s,
            state.laminar_separation_s,
            state.separation_s,
            math.nan if friction is None else friction,
            profile,
        ]
    )


def _moved_difference(sides: list[SideInput], delta: float) -> np.ndarray:
    """Central difference of the figures of two marched sides moved by +delta and -delta."""
    up, down = march(sides)
    return (_side_figures(sides[0], up) - _side_figures(sides[1], down)) / (2.0 * delta)


def _station_cases() -> dict[str, dict[str, Any]]:
    """Single surfaces of the checks above: every transition criterion, Howarth's flow,
    a cone from a sharp tip and a sphere from its nose (bodies of revolution)."""
    s = np.linspace(0.0, 1.0, 41)
    ags = _surface(s, 1.0 - 0.2 * s, 2e6, transition={"criterion": "abu_ghannam_shaw"})
    ags["flow"]["turbulence_intensity"] = 0.01
    nose = np.linspace(0.0, 0.4 * np.pi, 54)  # a sphere of radius 0.5
    sphere = _surface(nose, 1.5 * np.sin(nose / 0.5), 5e6)
    sphere["body"] = {"kind": "axisymmetric", "radius": (0.5 * np.sin(nose / 0.5)).tolist()}
    cone = _surface(s, 1.0 - 0.7 * s, 3e6)
    cone["body"] = {"kind": "axisymmetric", "radius": (0.05 + 0.2 * s).tolist()}
    howarth = np.linspace(0.0, 1.5, 41)
    return {
        "granville": _surface(s, 1.0 - 0.1 * s, 3e6, transition={"criterion": "granville"}),
        "michel": _surface(s, 1.0 - 0.55 * s, 3e6),
        "abu ghannam shaw": ags,
        "howarth": _surface(howarth, 1.0 - howarth / 8.0, 1e5, transition={"criterion": "none"}),
        "cone": cone,
        "sphere": sphere,
    }


@pytest.mark.parametrize("name", list(_station_cases()))
def test_derivatives_with_respect_to_each_station_position_and_radius(name: str) -> None:
    # The derivatives of a side's figures with respect to each station's s (and r on a
    # body of revolution), Ue held, from the backward sweep, against central differences
    # of two marches with that station moved by 1e-7 of the side's length (truncation
    # error of order 1e-14, rounding about 1e-16 / 1e-7 = 1e-9 of figures of order 1; the
    # moved march's step sizes change too, an effect of the order of its truncation error,
    # ``tests/test_kernel.py``): 1 % of the largest derivative of each figure.  Invariance
    # (exact, up to rounding): moving every station by the same distance moves every
    # event by that distance and leaves the drags as they are, so the derivatives with
    # respect to the stations' s (and x) sum to 1 for positions and 0 for drags.
    side = prepare(ibl.parse_case(_station_cases()[name])).sides[0]
    state = march([side])[0]
    status, _, _, geo = sensitivity.side_arrays(
        side, state, np.ones(len(sensitivity.QUANTITIES), dtype=bool), PLANAR_PROFILE, True
    )
    present = status == sensitivity.OK
    assert present[3]
    delta = 1e-7 * float(side.s[-1] - side.s[0])
    rows = [("s", geo[0] + geo[2])]  # x is s on a single surface
    if side.axisymmetric:
        rows.append(("r", geo[1]))
    for what, got in rows:
        first = 1 if what == "r" and side.r[0] == 0.0 else 0  # a radius stays >= 0
        want = np.zeros_like(got)
        for k in range(first, side.s.size):
            moved = []
            for sign in (1.0, -1.0):
                s, r = side.s.copy(), side.r.copy()
                (s if what == "s" else r)[k] += sign * delta
                slope = side.ue[1] / (s[1] - s[0]) if side.start == "stagnation" else side.slope
                moved.append(replace(side, s=s, r=r, slope=slope))
            want[:, k] = _moved_difference(moved, delta)
        for q in np.flatnonzero(present):
            scale = np.max(np.abs(want[q]))
            error = np.max(np.abs(got[q] - want[q]))
            assert error <= TOLERANCE * scale, (what, sensitivity.QUANTITIES[q], error / scale)
    total = (geo[0] + geo[2]).sum(axis=1)
    expected = np.array([1.0, 1.0, 1.0, 0.0, 0.0])
    assert np.allclose(total[present], expected[present], rtol=0.0, atol=1e-9)


@pytest.mark.parametrize(
    "doc",
    [
        _ellipse(3.0, 120, 1e-3, 1e-3 + 2.0 * np.pi, 2e6),
        _joukowski(0.0, 161, 3e6),
        _joukowski(2.0, 161, 3e6),
    ],
    ids=["ellipse 3 deg", "joukowski 0 deg", "joukowski 2 deg"],
)
def test_stagnation_point_position_in_the_backward_sweep(doc: dict) -> None:
    # d(figure)/d s0 of each side (the stagnation point moved along the contour with the
    # pressure values held: every station's s moves by +-d s0, the stagnation station's x
    # along its segment) from the derivatives with respect to the stations' s and x,
    # against a central difference of two marches of the side so moved (step 1e-7 of the
    # side's length, as above): 1 % of the largest of the figure's derivatives with
    # respect to s0 and to the stations' s.  Their effect on the input values is checked
    # against whole runs by the contour tests above.
    case = ibl.parse_case(doc)
    sides = prepare(case).sides
    for side, state in zip(sides, march(sides), strict=True):
        nose = side.nose
        assert nose is not None and not nose.gap
        status, _, _, geo = sensitivity.side_arrays(
            side, state, np.ones(len(sensitivity.QUANTITIES), dtype=bool), PLANAR_PROFILE, True
        )
        got = sensitivity._stagnation_shift(side, geo)
        delta = min(1e-7 * float(side.s[-1]), 0.01 * float(side.s[1]))
        moved = []
        for sign in (1.0, -1.0):
            assert side.x is not None and side.y is not None
            s, x, y = side.s.copy(), side.x.copy(), side.y.copy()
            s[1:] += sign * delta * nose.direction
            x[0] += sign * delta * nose.position_grad[0]
            y[0] += sign * delta * nose.position_grad[1]
            moved.append(replace(side, s=s, x=x, y=y))
        want = _moved_difference(moved, delta)
        for q in np.flatnonzero(status == sensitivity.OK):
            scale = max(abs(want[q]), np.max(np.abs(geo[0, q])))
            error = abs(got[q] - want[q])
            assert error <= TOLERANCE * scale, (side.name, sensitivity.QUANTITIES[q], error / scale)


def test_equal_nose_values_are_null_with_a_warning() -> None:
    # Zero incidence with the nose between two points of equal Cp: the stagnation model
    # switches (one point or a run of equal points) under any change of either value, so
    # no derivative exists.
    doc = _joukowski(0.0, 160, 3e6)
    result = ibl.analyze(doc)
    for side in result["sides"]:
        assert all(side["sensitivities"][name] is None for name in CONTOUR_QUANTITIES)
    found = [w for w in result["warnings"] if w["code"] == "sensitivities_unavailable"]
    assert found and all("equal" in w["message"] for w in found)


@pytest.mark.parametrize(
    ("value", "pointer"),
    [
        (["separation", "lift"], "/output/sensitivities/1"),
        ("separation", "/output/sensitivities"),
        ([1], "/output/sensitivities/0"),
    ],
    ids=["unknown name", "not a list", "not a name"],
)
def test_bad_sensitivities_name_the_field(value: Any, pointer: str) -> None:
    s = np.linspace(0.0, 1.0, 11)
    doc = _surface(s, np.ones(11), 1e6)
    doc["output"]["sensitivities"] = value
    with pytest.raises(ibl.CaseError) as caught:
        ibl.parse_case(doc)
    assert [p.pointer for p in caught.value.problems] == [pointer]
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as client:
        response = client.post(
            "/v1/analyses", content=json.dumps(doc), headers={"content-type": "application/json"}
        )
        assert response.status_code == 422
        assert response.headers["content-type"].startswith("application/problem+json")
        assert [e["pointer"] for e in response.json()["errors"]] == [pointer]


@pytest.mark.parametrize("fmt", ["json", "msgpack"])
def test_http_carries_the_sensitivities(fmt: str) -> None:
    s = np.linspace(0.0, 1.0, 21)
    doc = _surface(s, 1.0 - 0.55 * s, 3e6)
    want = ibl.analyze(doc)["sides"][0]["sensitivities"]
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as client:
        if fmt == "json":
            body, kind = json.dumps(doc).encode(), "application/json"
        else:
            body, kind = msgspec.msgpack.encode(doc), "application/msgpack"
        response = client.post(
            "/v1/analyses", content=body, headers={"content-type": kind, "accept": kind}
        )
        assert response.status_code == 200, response.text
        got = (response.json() if fmt == "json" else msgspec.msgpack.decode(response.content))[
            "sides"
        ][0]["sensitivities"]
    assert got == want


def test_cli_carries_the_sensitivities_and_names_a_bad_member(tmp_path, capsys) -> None:
    from ibl.cli import main

    s = np.linspace(0.0, 1.0, 21)
    doc = _surface(s, 1.0 - 0.55 * s, 3e6)
    path = tmp_path / "case.json"
    path.write_text(json.dumps(doc))
    assert main(["run", str(path), "--format", "json"]) == 0
    got = json.loads(capsys.readouterr().out)["sides"][0]["sensitivities"]
    assert got == ibl.analyze(doc)["sides"][0]["sensitivities"]
    doc["output"]["sensitivities"] = ["separation", "lift"]
    path.write_text(json.dumps(doc))
    assert main(["run", str(path), "--format", "json"]) != 0
    captured = capsys.readouterr()
    assert "/output/sensitivities/1" in captured.err
    assert "Traceback" not in captured.err


@pytest.mark.parametrize(
    ("edit", "present"),
    [
        (
            lambda d: d.update(inflow={"theta": 2e-4, "shape_factor": 2.59}),
            {"transition", "separation", "friction_drag"},
        ),
        (
            lambda d: d.update(
                inflow={"theta": 5e-4, "shape_factor": 1.4, "regime": "turbulent"},
            ),
            {"separation", "friction_drag"},
        ),
        (
            lambda d: d.update(turbulent={"skin_friction": "white"}),
            {"transition", "separation", "friction_drag"},
        ),
        (
            lambda d: d.update(laminar={"closure": "white"}),
            {"transition", "separation", "friction_drag"},
        ),
        (
            lambda d: d["pressure"].update(
                edge_velocity=[-v for v in d["pressure"]["edge_velocity"]]
            ),
            {"transition", "separation", "friction_drag"},
        ),
    ],
    ids=["laminar inflow", "turbulent inflow", "white skin friction", "white closure", "negative"],
)
def test_other_starts_and_laws(edit: Any, present: set[str]) -> None:
    # Inflow states, the other skin-friction law and laminar closure, and a surface whose
    # edge velocity is given negative (Ue = |value|): the same check against central
    # differences.
    s = np.linspace(0.1, 1.1, 31)
    doc = _surface(s, 1.0 - 0.5 * (s - 0.1), 3e6)
    edit(doc)
    _check(doc, present)


def test_pressure_in_pascals() -> None:
    # p [Pa] with p_inf = 1e5 Pa and q_inf = 500 Pa: d/dp = d/dCp / q_inf, checked the same way.
    s = np.linspace(0.0, 1.0, 31)
    ue = 1.0 - 0.55 * s
    p = 1e5 + 500.0 * (1.0 - ue**2)
    doc = _surface(s, p, 3e6, key="p")
    doc["pressure"].update(reference_pressure=1e5, dynamic_pressure=500.0)
    result = ibl.run(ibl.parse_case(doc))
    derived = result.sides[0].sensitivities
    assert isinstance(derived, ibl.schema.Sensitivities)
    assert derived.with_respect_to == "p"
    _check(doc, {"transition", "separation", "friction_drag"}, step=1e-6 * 500.0)


@pytest.mark.parametrize("smoothing", [1e-9, "auto"])
def test_smoothed_cp(smoothing: Any) -> None:
    # Cp with a deterministic ripple, smoothed: at a given penalty the smoothing spline is
    # linear in the data; "auto" picks the penalty from a grid by GCV, a choice that small
    # moves of the data do not change, so the same central differences apply.
    s = np.linspace(0.0, 1.0, 41)
    ue = 1.0 - 0.55 * s
    ripple = 2e-3 * np.sin(37.0 * s)
    doc = _surface(s, 1.0 - ue**2 + ripple, 3e6, key="cp")
    doc["pressure"]["smoothing"] = smoothing
    _check(doc, {"transition", "separation", "friction_drag"})


@pytest.mark.parametrize("reynolds", [2e5, 5e6])
def test_sphere_body_of_revolution(reynolds: float) -> None:
    # Potential flow round a sphere of radius R (Lamb, Hydrodynamics, art. 92):
    # Ue/U = 1.5 sin(s/R), body radius r = R sin(s/R), from the nose on the axis, as a
    # single surface of a body of revolution.  Derivatives for the events that occur.  The
    # points keep clear of switches of the slope limiter near the largest Ue, where the
    # march has no derivative (51 points put one within 1e-6 of a switch, where one-sided
    # differences disagree; 53 a symmetric pair round the peak).
    radius = 0.5
    s = np.linspace(0.0, 0.8 * np.pi * radius, 54)
    ue = 1.5 * np.sin(s / radius)
    doc = _surface(s, ue, reynolds)
    doc["body"] = {"kind": "axisymmetric", "radius": (radius * np.sin(s / radius)).tolist()}
    side = ibl.run(ibl.parse_case(doc)).sides[0]
    present = {"friction_drag"} | {n for n in QUANTITIES[:3] if getattr(side, n) is not None}
    assert {"transition", "separation"} <= present
    _check(doc, present, skip=(0,))


def test_cone_body_of_revolution_from_a_sharp_tip() -> None:
    # A body of revolution whose radius grows linearly along s, with a sharp start at
    # Ue = U_inf and a linear deceleration: turbulent separation after transition.
    s = np.linspace(0.0, 1.0, 41)
    doc = _surface(s, 1.0 - 0.7 * s, 3e6)
    doc["body"] = {"kind": "axisymmetric", "radius": (0.05 + 0.2 * s).tolist()}
    side = ibl.run(ibl.parse_case(doc)).sides[0]
    present = {"friction_drag"} | {n for n in QUANTITIES[:3] if getattr(side, n) is not None}
    assert {"transition", "separation"} <= present
    _check(doc, present)


@pytest.mark.parametrize("gradient", [0.1, 0.3])
def test_granville_transition(gradient: float) -> None:
    # Granville's two steps: the instability point between stations, then the growth
    # criterion on the mean lambda, interpolated linearly between stations.
    s = np.linspace(0.0, 1.0, 41)
    doc = _surface(s, 1.0 - gradient * s, 3e6, transition={"criterion": "granville"})
    side = ibl.run(ibl.parse_case(doc)).sides[0]
    assert side.transition is not None and side.transition.cause == "criterion"
    present = {"friction_drag"} | {n for n in QUANTITIES[:3] if getattr(side, n) is not None}
    _check(doc, present)


# ------------------------------------------- the isentropic edge velocity, smoothed contours

MACH = 0.3


def _isentropic_cp(ue: np.ndarray, mach: float = MACH) -> np.ndarray:
    """Cp whose isentropic edge velocity (``prepare.edge_velocity_from_cp``) is ``ue``:
    p/p_inf = (1 + (gamma - 1)/2 M^2 (1 - (Ue/U)^2))^(gamma/(gamma - 1)) and
    Cp = (p/p_inf - 1) 2/(gamma M^2) (isentropic flow relations, standard gas dynamics);
    the stagnation value where Ue = 0."""
    g = 1.4
    ratio = (1.0 + 0.5 * (g - 1.0) * mach**2 * (1.0 - ue**2)) ** (g / (g - 1.0))
    return np.asarray((ratio - 1.0) * 2.0 / (g * mach**2))


@pytest.mark.parametrize(
    ("key", "smoothing"), [("cp", None), ("p", None), ("cp", "auto")], ids=["cp", "p", "auto"]
)
def test_isentropic_edge_velocity_on_a_single_surface(key: str, smoothing: Any) -> None:
    # M = 0.3: Ue/U_inf from Cp by the isentropic relation, whose derivative is chained in;
    # the pressure in pascals too (p_inf = 1e5 Pa, q_inf = 500 Pa, step scaled the same
    # way), and Cp smoothed by the spline at GCV's penalty.  Reference: central
    # differences of whole runs.
    s = np.linspace(0.0, 1.0, 41)
    cp = _isentropic_cp(1.0 - 0.55 * s)
    if smoothing is not None:
        cp = cp + 2e-3 * np.sin(37.0 * s)
    step = STEP
    if key == "p":
        doc = _surface(s, 1e5 + 500.0 * cp, 3e6, key="p")
        doc["pressure"].update(reference_pressure=1e5, dynamic_pressure=500.0)
        step = STEP * 500.0
    else:
        doc = _surface(s, cp, 3e6, key="cp")
    if smoothing is not None:
        doc["pressure"]["smoothing"] = smoothing
    doc["flow"]["mach"] = MACH
    result = ibl.run(ibl.parse_case(doc))
    assert "sensitivities_unavailable" not in [w.code for w in result.warnings]
    _check(doc, {"transition", "separation", "friction_drag"}, step=step)


@pytest.mark.parametrize("key", ["cp", "p"])
def test_isentropic_edge_velocity_on_a_contour(key: str) -> None:
    # The ellipse at 3 degrees (closed, the stagnation point between taps) at M = 0.3, its
    # exact incompressible speeds given as the Cp of the isentropic relation: the relation's
    # derivative chained with the stagnation point's model.  Central differences of whole
    # runs.
    doc = _ellipse(3.0, 120, 1e-3, 1e-3 + 2.0 * np.pi, 2e6)
    ue = np.sqrt(1.0 - np.array(doc["pressure"]["cp"]))
    cp = _isentropic_cp(ue)
    doc["flow"]["mach"] = MACH
    step = STEP
    if key == "p":
        doc["pressure"] = {"p": (1e5 + 500.0 * cp).tolist()}
        doc["pressure"].update(reference_pressure=1e5, dynamic_pressure=500.0)
        step = STEP * 500.0
    else:
        doc["pressure"]["cp"] = cp.tolist()
    both = {"transition", "separation", "friction_drag"}
    _check_contour(doc, [both, both | {"laminar_separation"}], step=step)


@pytest.mark.parametrize(
    ("smoothing", "closure"),
    [(1e-9, "implicit"), ("auto", "implicit"), (1e-9, "repeated"), ("auto", "open")],
)
def test_smoothed_contour(smoothing: Any, closure: str) -> None:
    # An ellipse of axis ratio 1/2 (blunt enough that the smoothing leaves its stagnation
    # point) at 3 degrees with a deterministic ripple in Cp, smoothed: a closed loop
    # (periodic spline) listed without its first point repeated, or with it repeated (its
    # last value unused: derivative zero in both), and the front of the ellipse open.  The
    # spline is linear in q at its penalty (GCV's choice held, as on single surfaces), the
    # stagnation point is fitted to the smoothed values.  The ripple keeps GCV's choice
    # clear of a tie between two penalties of its grid (where a move of 1e-6 switches the
    # choice and no derivative exists).  Central differences of whole runs.
    if closure == "open":
        doc = _ellipse(2.0, 80, 0.3 * np.pi, 1.7 * np.pi, 3e6, b=0.25)
    else:
        doc = _ellipse(3.0, 120, 1e-3, 1e-3 + 2.0 * np.pi, 2e6, b=0.25)
    result = ibl.run(ibl.parse_case(doc))
    expected = [
        {name for name, value in figures.items() if math.isfinite(value)}
        for figures in _contour_figures(result)
    ]
    assert all({"transition", "friction_drag"} <= e for e in expected)
    cp = np.array(doc["pressure"]["cp"])
    cp += 2e-3 * np.sin(2.9 * np.arange(cp.size))  # point to point, like tap noise
    doc["pressure"] = {"cp": cp.tolist(), "smoothing": smoothing}
    if closure == "repeated":
        for values in (doc["surface"]["x"], doc["surface"]["y"], doc["pressure"]["cp"]):
            values.append(values[0])
    _check_contour(doc, expected)


@pytest.mark.parametrize(
    ("first", "spacing"), [(-70.3, 5.0), (-65.0, 4.9)], ids=["fitted nose", "nose on a point"]
)
def test_side_cut_where_the_edge_velocity_vanishes_again(first: float, spacing: float) -> None:
    # An open arc of a circular cylinder past its rear stagnation point: exact potential
    # flow Ue = 2 U |sin theta| (Lamb, Hydrodynamics, the circular cylinder) on theta =
    # first + spacing k degrees, k = 0 .. 64, with Cp = 1 on the point nearest the rear
    # stagnation point.  The side that runs from the front stagnation point round through
    # the rear (upper, y > 0, the branch before the stagnation point in the input's order)
    # ends there (another stagnation point); the cut, a choice of input point, is held:
    # the derivatives with respect to the points before it come from the march, those
    # beyond it are zero, and the cut point's own value (clipped above the stagnation
    # value, within the plateau below it) has none: skipped.  The front stagnation point is
    # fitted between points (a parabola), or on point 50 (a plateau of one point, skipped:
    # the sides' slopes are the secants to the next points).  No two neighbouring points
    # straddle the suction peak symmetrically (the slope limiter's switch, README).
    # Central differences of whole runs.
    theta = np.radians(first + spacing * np.arange(65))
    cp = 1.0 - 4.0 * np.sin(theta) ** 2
    rear = int(np.argmin(np.abs(theta)))
    cp[rear] = 1.0
    skip = (rear,) if first == -70.3 else (rear, 50)
    doc = {
        "surface": {"x": np.cos(theta).tolist(), "y": np.sin(theta).tolist()},
        "pressure": {"cp": cp.tolist()},
        "flow": {"reynolds": 1e6},
        "transition": {"criterion": "michel"},
        "output": {"stations": False, "sensitivities": list(CONTOUR_QUANTITIES)},
    }
    result = ibl.run(ibl.parse_case(doc))
    assert "edge_velocity_vanishes" in [w.code for w in result.warnings]
    expected = [
        {name for name, value in figures.items() if math.isfinite(value)}
        for figures in _contour_figures(result)
    ]
    cut = next(s for s in result.sides if s.name == "upper")
    assert {"transition", "friction_drag"} <= expected[result.sides.index(cut)]
    _check_contour(doc, expected, skip=skip)
    assert cut.sensitivities is not None
    for name in expected[result.sides.index(cut)]:
        assert np.all(np.array(getattr(cut.sensitivities, name))[: rear + 1] == 0.0), name


@pytest.mark.parametrize("transition", ["michel", "trip"])
def test_stations_cut_at_the_thin_layer_limit(transition: str) -> None:
    # A slender body of revolution whose radius r = 0.03 sin(pi (0.9 s + 0.05)) closes
    # towards its tail, edge velocity 1 - 0.1 s: the turbulent layer's delta99 reaches the
    # radius downstream of the largest radius and the stations end before the first point
    # past that limit.  That station, a choice, is held like the stations kept up to
    # separation (and the limit's own position is not a quantity differentiated): the
    # events before it and the friction drag over the stations kept against central
    # differences of whole runs.
    s = np.linspace(0.0, 1.0, 61)
    trip = {"criterion": "none", "trip": {"surface": 0.05}}
    doc = _surface(
        s,
        1.0 - 0.1 * s,
        3e6,
        transition={"criterion": "michel"} if transition == "michel" else trip,
    )
    doc["body"] = {
        "kind": "axisymmetric",
        "radius": (0.03 * np.sin(np.pi * (0.9 * s + 0.05))).tolist(),
    }
    result = ibl.run(ibl.parse_case(doc))
    codes = [w.code for w in result.warnings]
    assert "thin_layer_limit" in codes and "sensitivities_unavailable" not in codes
    _check(
        doc,
        {"transition", "friction_drag"},
        zero=frozenset({"transition"}) if transition == "trip" else frozenset(),
    )
