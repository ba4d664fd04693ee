"""How a contour becomes sides: invariances of the split at the stagnation point.

- A closed contour gives the same sides and events whatever point its list starts from,
  with or without its first point repeated at the end: the sides run from the stagnation
  point both ways round to the point where they meet (the trailing edge or rear point).
- Symmetric data give a symmetric split, also when the nose tap misses the stagnation value
  or a plateau of taps holds it (Cp clipped to 1, or within rounding of it), and the result
  is continuous in Cp across such a plateau.
- No side marches stations of zero edge velocity after its start.
- Data without a stagnation point start at the most upstream point, whatever the order.
- Pointers name only members the case contains.

The expected values are invariances of the input (the same points listed differently, mirror
symmetry) and potential-flow facts (Cp = 1 - 4 sin^2 phi on a circular cylinder and
1 - 9/4 sin^2 phi on a sphere, Lamb, Hydrodynamics secs. 68 and 92, recalled, not re-checked).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_sampling import ELLIPSE, JOUKOWSKI_4, ellipse

import ibl
from ibl.errors import CaseError

SETTINGS = settings(
    max_examples=40,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
    derandomize=True,
)
EVENTS = ("transition", "laminar_separation", "separation")


def _case(x, y, cp, re=1e5, **extra) -> dict:
    doc = {
        "surface": {"x": np.asarray(x).tolist(), "y": np.asarray(y).tolist()},
        "pressure": {"cp": np.asarray(cp).tolist()},
        "flow": {"reynolds": re},
    }
    doc.update(extra)
    return doc


def _cylinder(n: int, start_deg: float = 0.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """A closed circle of n distinct points from angle ``start_deg`` (0 is the front), the
    first point repeated at the end, and its potential-flow Cp."""
    phi = np.radians(start_deg) + np.linspace(0.0, 2.0 * np.pi, n + 1)
    return -np.cos(phi), np.sin(phi), 1.0 - 4.0 * np.sin(phi) ** 2


def _summary(result: dict) -> dict[str, dict]:
    """Per side: station count, end point and event positions."""
    out = {}
    for side in result["sides"]:
        out[side["name"]] = {
            "count": len(side["s"]),
            "end": (side["x"][-1], side["y"][-1]) if side["x"] else None,
            **{e: (side[e]["s"] if side[e] else None) for e in EVENTS},
        }
    return out


def _same(a: dict, b: dict, tol: float) -> list[str]:
    bad = []
    if a.keys() != b.keys():
        return [f"sides {sorted(a)} vs {sorted(b)}"]
    for name in a:
        for key in ("count", *EVENTS):
            u, v = a[name][key], b[name][key]
            if (u is None) != (v is None) or (u is not None and abs(u - v) > tol):
                bad.append(f"{name}.{key}: {u} vs {v}")
        u, v = a[name]["end"], b[name]["end"]
        if u is not None and v is not None and math.dist(u, v) > tol:
            bad.append(f"{name}.end: {u} vs {v}")
    return bad


def _rotations(x, y, cp, repeat: bool):
    """Every listing of a closed contour (x, y, cp with the first point repeated at the end)
    that starts at another point, with or without the repeat."""
    m = len(x) - 1
    for k in range(m):
        order = np.r_[np.arange(k, m), np.arange(0, k)]
        if repeat:
            order = np.r_[order, k]
        yield k, x[order], y[order], cp[order]


BODIES = {
    "cylinder_73": _cylinder(72),
    "ellipse_2deg": ELLIPSE.sample(120, "uniform"),
    "joukowski_4deg": JOUKOWSKI_4.sample(120, "uniform"),
}


def _closed(body: str):
    x, y, cp = BODIES[body]
    if body == "cylinder_73":
        return x, y, cp
    return np.append(x, x[0]), np.append(y, y[0]), np.append(cp, cp[0])


@pytest.mark.parametrize("repeat", [True, False], ids=["repeated", "implicit"])
@pytest.mark.parametrize("body", list(BODIES))
def test_sides_do_not_depend_on_where_a_closed_list_starts(body: str, repeat: bool) -> None:
    """The same closed contour listed from each of its points: the same sides, stations and
    events, and the same last stations (to rounding: 1e-9 of the perimeter)."""
    x, y, cp = _closed(body)
    re = 1e6 if body == "joukowski_4deg" else 1e5
    reference = None
    for k, xr, yr, cpr in _rotations(x, y, cp, repeat):
        result = ibl.analyze(_case(xr, yr, cpr, re=re))
        got = _summary(result)
        assert len(got) == 2, (k, got)
        perimeter = float(np.sum(np.hypot(np.diff(x), np.diff(y))))
        if reference is None:
            reference = got
            continue
        bad = _same(reference, got, 1e-9 * perimeter)
        assert not bad, (k, bad)


def test_section_listed_from_its_nose_splits_at_its_trailing_edge() -> None:
    """A Joukowski section listed from its leading edge: each side runs from the stagnation
    point to the trailing edge (the cusp, the most downstream point), and the upper side is
    the one above the section."""
    x, y, cp = _closed("joukowski_4deg")
    nose = int(np.argmin(x[:-1]))
    for repeat in (True, False):
        _, xr, yr, cpr = list(_rotations(x, y, cp, repeat))[nose]
        result = ibl.analyze(_case(xr, yr, cpr, re=1e6))
        sides = {side["name"]: side for side in result["sides"]}
        assert set(sides) == {"upper", "lower"}
        for side in sides.values():
            xs = np.array(side["x"])  # never round the trailing edge: x grows past the nose
            assert np.all(np.diff(xs[np.argmin(xs) :]) > 0.0)
        assert np.mean(sides["upper"]["y"]) > np.mean(sides["lower"]["y"])


@given(
    thickness=st.floats(0.1, 0.8),
    alpha=st.floats(-6.0, 6.0),
    n=st.integers(24, 90),
    start=st.floats(0.0, 1.0),
    repeat=st.booleans(),
)
@SETTINGS
def test_generated_rotations_give_the_same_sides(thickness, alpha, n, start, repeat) -> None:
    """Random ellipses at incidence, listed from a random point, with or without the repeat,
    against the listing from the rear point."""
    shape = ellipse(1.0, thickness, alpha)
    x, y, cp = shape.sample(n, "uniform")
    x, y, cp = np.append(x, x[0]), np.append(y, y[0]), np.append(cp, cp[0])
    k = int(start * n) % n
    rotations = list(_rotations(x, y, cp, repeat))
    first = _summary(ibl.analyze(_case(*rotations[0][1:])))
    other = _summary(ibl.analyze(_case(*rotations[k][1:])))
    assert not _same(first, other, 1e-9 * 8.0)


# ----------------------------------------------------------------------------- plateaus


NOSE = [0, 1, -2, -1]  # the taps at -5, 0 and +5 degrees of a 72-point cylinder (0 repeated)


@pytest.mark.parametrize(
    "value",
    [1.0, 0.9999999999999998, float(np.float32(0.99999994)), 1.0 - 5e-7],
    ids=["exact", "one_ulp_below", "float32_below", "half_tolerance_below"],
)
def test_stagnation_plateau_is_continuous_in_cp(value: float) -> None:
    """Three nose taps at the stagnation value, or within rounding of it: the same result as
    with Cp = 1 exactly (to 1e-6 of the perimeter), a symmetric split with the stagnation point
    at the plateau's middle (on the axis), laminar separation near the potential-flow value
    of Thwaites' method on a cylinder (103.1 deg, Curle's reference computations give 104.5 deg
    for the exact solution, Terrill 1960), and no station of zero edge velocity after the
    start."""
    x, y, cp = _cylinder(72)
    exact = cp.copy()
    exact[NOSE] = 1.0
    cp[NOSE] = value
    result = ibl.analyze(_case(x, y, cp))
    reference = ibl.analyze(_case(x, y, exact))
    assert not _same(_summary(reference), _summary(result), 1e-6 * 2 * np.pi)
    assert result["stagnation"]["y"] == pytest.approx(0.0, abs=1e-12)
    upper, lower = (result["sides"][0], result["sides"][1])
    assert upper["laminar_separation"]["s"] == pytest.approx(lower["laminar_separation"]["s"])
    assert math.degrees(upper["laminar_separation"]["s"]) == pytest.approx(103.1, abs=2.5)
    for side in result["sides"]:
        assert min(side["edge_velocity"][1:]) > 0.0


def test_plateau_puts_the_stagnation_point_at_its_middle() -> None:
    """Taps at 0, 5 and 10 degrees clipped to Cp = 1 (readings above it): the stagnation point
    is put at 5 degrees, the middle of what the data cannot resolve, and reported."""
    x, y, cp = _cylinder(72)
    cp[[0, 1, 2, -1]] = 1.03
    result = ibl.analyze(_case(x, y, cp))
    stag = result["stagnation"]
    angle = math.degrees(math.atan2(stag["y"], -stag["x"]))
    assert angle == pytest.approx(5.0, abs=0.05)
    codes = [w["code"] for w in result["warnings"]]
    assert "stagnation_plateau" in codes and "cp_clipped" in codes


@given(
    n=st.sampled_from([36, 48, 72, 120]),
    width=st.integers(1, 3),
    below=st.sampled_from([0.0, 2.0**-52, 2.0**-24, 1e-8, 3e-7]),
    float32=st.booleans(),
)
@SETTINGS
def test_generated_plateaus_are_symmetric_and_continuous(n, width, below, float32) -> None:
    """Symmetric plateaus of 2 width + 1 taps at Cp = 1 - below (in float64 or float32):
    symmetric sides, and the same events as the exact plateau to 1e-6 of the perimeter."""
    x, y, cp = _cylinder(n)
    taps = [*range(width + 1), *range(-width - 1, 0)]
    exact = cp.copy()
    exact[taps] = 1.0
    cp[taps] = 1.0 - below
    if float32:
        cp = cp.astype(np.float32).astype(np.float64)
        cp[-1] = cp[0]
    result = _summary(ibl.analyze(_case(x, y, cp)))
    assert not _same(_summary(ibl.analyze(_case(x, y, exact))), result, 1e-6 * 2 * np.pi)
    assert result["upper"]["laminar_separation"] == pytest.approx(
        result["lower"]["laminar_separation"], rel=1e-7
    )


@pytest.mark.parametrize("nose_cp", [0.999, 0.99, 0.95, 0.9])
@pytest.mark.parametrize("kind", ["planar", "axisymmetric"])
def test_nose_tap_below_one_keeps_a_symmetric_split(nose_cp: float, kind: str) -> None:
    """A 37-point cylinder or sphere whose nose tap reads below the stagnation value: the
    stagnation point stays on the axis of the symmetric data, both sides separate at the same
    place, and a sphere is not refused (its nose lies on the axis)."""
    phi = np.linspace(0.0, 2.0 * np.pi, 37)
    x, y = np.cos(phi), np.sin(phi)  # listed from the rear point, the nose at index 18
    factor = 9.0 / 4.0 if kind == "axisymmetric" else 4.0
    cp = 1.0 - factor * np.sin(phi) ** 2
    cp[18] = nose_cp
    result = ibl.analyze(_case(x, y, cp, body={"kind": kind}))
    stag = result["stagnation"]
    assert stag["y"] == pytest.approx(0.0, abs=1e-12)
    assert stag["x"] == pytest.approx(-1.0, abs=1e-12)
    upper, lower = result["sides"]
    assert (upper["name"], lower["name"]) == ("upper", "lower")
    assert len(upper["s"]) == len(lower["s"]) > 5
    for event in EVENTS:
        a, b = upper[event], lower[event]
        assert (a is None) == (b is None)
        if a is not None:
            assert a["s"] == pytest.approx(b["s"], rel=1e-7)


def test_axis_crossing_inside_a_side_names_the_y_given() -> None:
    """A body of revolution whose meridian touches the axis between nose and tail, with the
    radius taken from y: the pointer names /surface/y, a member of the case, never
    /body/radius, which the case does not give."""
    x, y, cp = _cylinder(36)
    y = y.copy()
    y[9] = 0.0  # the top point pulled onto the axis
    with pytest.raises(CaseError) as info:
        ibl.analyze(_case(x, y, cp, body={"kind": "axisymmetric"}))
    pointers = [p.pointer for p in info.value.problems]
    assert pointers == ["/surface/y/9"], pointers


# ----------------------------------------------------------------------------- other inputs


@pytest.mark.parametrize("reverse", [False, True], ids=["from_nose", "from_tail"])
@pytest.mark.parametrize("surface", ["upper", "lower"])
def test_one_sided_open_contour_is_named_by_its_side(surface: str, reverse: bool) -> None:
    """An open contour that is one surface of a section (leading edge to trailing edge, all
    y on one side): one side, named after the surface it is, in either listing order."""
    x = 0.5 * (1.0 - np.cos(np.linspace(0.0, np.pi, 60)))
    sign = 1.0 if surface == "upper" else -1.0
    y = sign * 0.6 * (np.sqrt(x) - x)  # a rounded nose at x = 0
    cp = 1.0 - np.minimum(20.0 * np.sqrt(x), 1.2) ** 2  # stagnation at the nose
    if reverse:
        x, y, cp = x[::-1], y[::-1], cp[::-1]
    result = ibl.analyze(_case(x, y, cp, re=1e6))
    assert [side["name"] for side in result["sides"]] == [surface]


@pytest.mark.parametrize("start", ["trailing_edge", "leading_edge", "mid_upper"])
@pytest.mark.parametrize("direction", [1, -1])
def test_no_stagnation_point_starts_at_the_most_upstream_point(start: str, direction: int):
    """A closed thin plate (2 % thick ellipse) with uniform Cp has no stagnation point in the
    data: its sides start at the most upstream point, the leading edge, however it is listed."""
    phi = np.linspace(0.0, 2.0 * np.pi, 81)
    x, y = 0.5 * np.cos(phi), 0.01 * np.sin(phi)
    offset = {"trailing_edge": 0, "leading_edge": 40, "mid_upper": 20}[start]
    order = np.r_[np.arange(offset, 80), np.arange(0, offset + 1)][::direction]
    result = ibl.analyze(_case(x[order], y[order], np.zeros(81), re=1e6))
    assert result["stagnation"]["x"] == pytest.approx(-0.5)
    assert "no_stagnation_point" in [w["code"] for w in result["warnings"]]
    lengths = sorted(side["s"][-1] for side in result["sides"])
    assert lengths[0] == pytest.approx(lengths[1], rel=1e-9)


def test_single_surface_edge_velocity_changing_sign_is_refused() -> None:
    """A single surface whose signed edge velocity changes sign passes a stagnation point:
    refused, the pointer naming the first point after the change."""
    doc = {
        "surface": {"s": [0.0, 0.1, 0.2, 0.3, 0.4, 0.5]},
        "pressure": {"edge_velocity": [-0.3, -0.1, 0.0, 0.2, 0.4, 0.5]},
        "flow": {"reynolds": 1e5},
    }
    with pytest.raises(CaseError) as info:
        ibl.analyze(doc)
    assert [p.pointer for p in info.value.problems] == ["/pressure/edge_velocity/3"]


def test_stagnation_arc_length_along_the_input() -> None:
    """The stagnation point's s is the arc length along the input from its first point: a
    72-gon listed from 90 degrees (the top) reaches the front (0 degrees) after a quarter of
    its perimeter."""
    x, y, cp = _cylinder(72, start_deg=-90.0)
    stag = ibl.analyze(_case(x, y, cp))["stagnation"]
    perimeter = float(np.sum(np.hypot(np.diff(x), np.diff(y))))
    assert stag["s"] == pytest.approx(0.25 * perimeter, rel=1e-6)
    assert stag["position"] == pytest.approx(18.0, abs=1e-6)


@pytest.mark.parametrize("kind", ["planar", "axisymmetric"])
def test_taps_missing_the_stagnation_point_start_from_it(kind: str) -> None:
    """Coarse taps every 10 degrees that straddle the front (none at 0 degrees; the largest
    Cp is 0.97 on a cylinder): the stagnation point is found on the axis between the two
    front taps, which stay on their sides, each side starts there from Ue = 0, and the
    result says that the points do not resolve it only if the extrapolated Ue is not small."""
    phi = np.radians(np.arange(5.0, 360.0, 10.0))
    phi = np.append(phi, phi[0])
    factor = 9.0 / 4.0 if kind == "axisymmetric" else 4.0
    x, y, cp = -np.cos(phi), np.sin(phi), 1.0 - factor * np.sin(phi) ** 2
    result = ibl.analyze(_case(x, y, cp, body={"kind": kind}))
    assert result["stagnation"]["y"] == pytest.approx(0.0, abs=1e-12)
    assert "stagnation_point_between_taps" in [w["code"] for w in result["warnings"]]
    for side in result["sides"]:
        assert side["edge_velocity"][0] == 0.0
        assert side["edge_velocity"][1] == pytest.approx(factor**0.5 * math.sin(math.radians(5)))
        assert len(side["s"]) == 19 or side["separation"] is not None
