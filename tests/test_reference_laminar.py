"""Laminar results of ibl against published exact solutions, measurements and closed forms.

Two kinds of check, named in each test id and in tests/reference/*.csv:

- implementation: ibl against Thwaites' method (Thwaites 1949; Rott & Crabtree 1952 for bodies of
  revolution; Cebeci & Bradshaw 1977 closure) evaluated in closed form or by adaptive quadrature
  in the test.  Differences are discretisation only, so tolerances are tight.
- method: ibl against exact solutions of the boundary-layer equations (scipy in
  tests/similarity.py) or measurements.  Tolerances come from the known accuracy of the method.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq
from similarity import (
    arrays,
    blasius,
    exact_march,
    falkner_skan,
    hiemenz,
    hiemenz_fit,
    hiemenz_fit_slope,
    homann,
    load_csv,
    reference,
    side,
    surface_case,
    thwaites_separation,
    thwaites_theta2,
    thwaites_wedge,
)

import ibl

LAMINAR = reference("laminar.csv")
EXACT = reference("exact_solutions.csv")
WEDGES = load_csv("falkner_skan.csv")

#: Reynolds number per unit length for laminar-only cases ("moderate"; the criterion is "none").
RE = 1.0e5


def _within(got: float, expected: float, row: dict[str, str]) -> None:
    tol = float(row["tolerance"])
    if row["tolerance_kind"] == "rel":
        ok = abs(got / expected - 1.0) <= tol
    else:
        ok = abs(got - expected) <= tol
    assert ok, (
        f"{row['id']}: got {got:.6g}, expected {expected:.6g} "
        f"+/- {tol:g} ({row['tolerance_kind']}); "
        f"source: {row['source']}; tolerance: {row['tolerance_reason']}"
    )


# =========================================================================== reference solvers
# The scipy solutions must reproduce published values before they are used as references.

_SOLVER_VALUES = {
    "blasius_wall_shear": lambda: blasius().wall_shear,
    "blasius_shape_factor": lambda: blasius().shape_factor,
    "blasius_theta": lambda: blasius().theta,
    "blasius_delta_star": lambda: blasius().delta_star,
    "blasius_cf": lambda: blasius().cf,
    "blasius_delta99": lambda: blasius().delta99,
    "fs_beta_0p5_wall_shear": lambda: falkner_skan(0.5 / 1.5).wall_shear,
    "fs_beta_m0p1_wall_shear": lambda: falkner_skan(-0.1 / 2.1).wall_shear,
    "fs_beta_m0p18_wall_shear": lambda: falkner_skan(-0.18 / 2.18).wall_shear,
    "hiemenz_wall_shear": lambda: hiemenz().wall_shear,
    "hiemenz_delta_star": lambda: hiemenz().delta_star,
    "hiemenz_theta": lambda: hiemenz().theta,
    "homann_wall_shear": lambda: homann().wall_shear,
    "howarth_separation": lambda: exact_march("howarth").separation,
    "cylinder_separation_deg": lambda: math.degrees(exact_march("cylinder").separation),
}


@pytest.mark.parametrize(
    "row_id", list(_SOLVER_VALUES), ids=[f"{k}-{EXACT[k]['source']}" for k in _SOLVER_VALUES]
)
def test_reference_solver_reproduces_published_value(row_id: str) -> None:
    row = EXACT[row_id]
    got = _SOLVER_VALUES[row_id]()
    assert abs(got - float(row["expected"])) <= float(row["tolerance"]), (
        f"{row_id}: solver {got:.6g} vs published {row['expected']} ({row['source']})"
    )


# =========================================================================== 1. Falkner-Skan


def _wedge_result(m: float, start: str) -> tuple[dict, float]:
    """ibl on Ue = s^m; returns the surface side and the first station's s."""
    if start == "edge":
        s = np.linspace(0.0, 1.0, 801)
        ue = s**m
        case = surface_case(s, ue, RE)
    else:
        # Ue = s^m is infinite at s = 0 for m < 0: start at s0 from Thwaites' similar state.
        s0 = 0.1
        s = np.linspace(s0, 1.0, 801)
        ue = s**m
        closed = thwaites_wedge(m)
        theta0 = closed["theta"] * s0 / math.sqrt(s0**m * s0 * RE)
        case = surface_case(
            s,
            ue,
            RE,
            inflow={"theta": theta0, "shape_factor": closed["shape_factor"], "regime": "laminar"},
        )
    result = ibl.analyze(case)
    return side(result, "surface"), float(s[0])


def _similar_forms(sd: dict, s_min: float = 0.25) -> dict[str, np.ndarray]:
    s, ue, theta, h, cf, regime = (
        *arrays(sd, "s", "edge_velocity", "theta", "shape_factor", "cf"),
        np.asarray(sd["regime"]),
    )
    assert np.all(regime == "laminar"), "criterion 'none' must keep the layer laminar"
    sel = s >= s_min
    assert sel.sum() > 100, f"too few stations beyond s={s_min}: the layer ended at s={s[-1]:.4g}"
    re_x = ue[sel] * s[sel] * RE
    return {
        "theta": theta[sel] / s[sel] * np.sqrt(re_x),
        "shape_factor": h[sel],
        "cf": cf[sel] * np.sqrt(re_x),
    }


@pytest.mark.parametrize("row", WEDGES, ids=[f"{r['id']}-{r['source']}" for r in WEDGES])
def test_falkner_skan_thwaites_closed_form(row: dict[str, str]) -> None:
    """implementation: theta/s sqrt(Re_s) = sqrt(0.45/(5m+1)), H = H(lambda),
    Cf sqrt(Re_s) = 2 l / (theta/s sqrt(Re_s)),
    lambda = 0.45 m/(5m+1) (Thwaites 1949; Cebeci & Bradshaw 1977 [memory])."""
    m = float(row["m"])
    sd, _ = _wedge_result(m, row["start"])
    got = _similar_forms(sd)
    closed = thwaites_wedge(m)
    for q in ("theta", "shape_factor", "cf"):
        err = np.max(np.abs(got[q] / closed[q] - 1.0))
        tol = float(row[f"tol_impl_{q}"])
        assert err <= tol, (
            f"m={m}: {q} max rel. deviation {err:.4f} from Thwaites' closed form {closed[q]:.5f} "
            f"(ibl range {got[q].min():.5f}..{got[q].max():.5f}), tolerance {tol}"
        )


@pytest.mark.parametrize("row", WEDGES, ids=[f"{r['id']}-{r['source']}" for r in WEDGES])
def test_falkner_skan_exact(row: dict[str, str]) -> None:
    """method: ibl against the exact Falkner-Skan (1931) solution from solve_bvp."""
    m = float(row["m"])
    sd, _ = _wedge_result(m, row["start"])
    got = _similar_forms(sd)
    exact = falkner_skan(m)
    ref = {"theta": exact.theta, "shape_factor": exact.shape_factor, "cf": exact.cf}
    for q in ("theta", "shape_factor", "cf"):
        err = np.max(np.abs(got[q] / ref[q] - 1.0))
        tol = float(row[f"tol_method_{q}"])
        assert err <= tol, (
            f"m={m}: {q} max rel. deviation {err:.4f} from exact {ref[q]:.5f} "
            f"(ibl range {got[q].min():.5f}..{got[q].max():.5f}), tolerance {tol}: "
            f"{row['tolerance_reason']}"
        )


def test_flat_plate_theta_is_thwaites_not_blasius() -> None:
    """Thwaites (1949) on a flat plate: theta sqrt(Re_x)/x = sqrt(0.45) = 0.6708, 1.0 % above
    Blasius' 0.6641 (solve_bvp).  Tolerance 0.3 %: a third of that gap, so the check separates
    them."""
    sd, _ = _wedge_result(0.0, "edge")
    got = _similar_forms(sd)["theta"]
    assert np.all(np.abs(got / math.sqrt(0.45) - 1.0) < 0.003), (got.min(), got.max())
    assert np.all(got / blasius().theta - 1.0 > 0.007)


# =========================================================================== 2. Howarth


def _howarth_separation(lambda_s: float | None = None) -> float:
    s = np.linspace(0.0, 0.2, 801)
    case = surface_case(
        s, 1.0 - s, RE, laminar=None if lambda_s is None else {"separation_lambda": lambda_s}
    )
    sd = side(ibl.analyze(case), "surface")
    sep = sd["separation"]
    assert sep is not None, "Howarth's retarded flow must separate before s = 0.2"
    assert sep["regime"] == "laminar"
    assert sd["laminar_separation"] is not None
    assert abs(sd["laminar_separation"]["s"] - sep["s"]) < 1e-9
    return float(sep["s"])


@pytest.mark.parametrize(
    "row_id,lambda_s",
    [
        ("howarth_thwaites_closed_form", None),
        ("howarth_curle_skan_closed_form", -0.082),
        ("howarth_exact", None),
    ],
    ids=[
        "thwaites_1949_closed_form_0.1231",
        "curle_skan_1957_closed_form_0.1158",
        "howarth_1938_exact_0.1199",
    ],
)
def test_howarth_linearly_retarded_flow(row_id: str, lambda_s: float | None) -> None:
    row = LAMINAR[row_id]
    _within(_howarth_separation(lambda_s), float(row["expected"]), row)


def test_howarth_closed_form_matches_quadrature() -> None:
    """The closed form 1 - 2.2^(-1/6) (Thwaites 1949 for Ue = 1 - x) agrees with the quadrature
    helper used for the other flows: guards the reference itself (quadrature accuracy 1e-9)."""
    s_sep = thwaites_separation(lambda x: 1.0 - x, lambda _x: -1.0, 1.0, (0.05, 0.2))
    assert abs(s_sep - (1.0 - 2.2 ** (-1.0 / 6.0))) < 1e-8


# =========================================================================== 3. circular cylinder


def _cylinder_contour(n: int, offset_deg: float) -> dict:
    """Circle of radius 1, flow along +x, stagnation at (-1, 0); points listed from (1, 0) over
    the upper side to the front and back along the lower side (closed: last point repeats first).
    Potential flow Ue = 2 sin(phi), phi measured from the front stagnation point."""
    t = np.radians(offset_deg) + np.linspace(0.0, 2.0 * np.pi, n + 1)  # polar angle from +x axis
    x, y = np.cos(t), np.sin(t)
    phi = np.pi - t  # angle from the stagnation point (-1, 0)
    cp = 1.0 - 4.0 * np.sin(phi) ** 2
    return {
        "surface": {"x": [float(v) for v in x], "y": [float(v) for v in y]},
        "pressure": {"cp": [float(v) for v in cp]},
        "flow": {"reynolds": RE},
        "transition": {"criterion": "none"},
    }


@pytest.fixture(
    scope="module",
    params=[(360, 0.0), (360, 0.5), (359, 0.0)],
    ids=["stagnation_on_a_point", "stagnation_between_points", "rear_point_sampled_front_between"],
)
def cylinder(request: pytest.FixtureRequest) -> dict:
    """The third sampling puts a point exactly on the rear stagnation point (Ue = 0 there) while
    the front one falls between points: the analysis must still start from the front (upstream)
    stagnation point, the free stream being along +x."""
    n, offset = request.param
    return ibl.analyze(_cylinder_contour(n, offset))


def _separation_deg(result: dict, name: str) -> float:
    sd = side(result, name)
    assert sd["separation"] is not None, f"{name}: no separation on the cylinder"
    assert sd["separation"]["regime"] == "laminar"
    return math.degrees(sd["separation"]["s"])  # radius 1: arc length = angle


@pytest.mark.parametrize("name", ["upper", "lower"])
def test_cylinder_thwaites_closed_form(cylinder: dict, name: str) -> None:
    row = LAMINAR["cylinder_thwaites_closed_form"]
    expected = math.degrees(
        thwaites_separation(lambda p: 2 * math.sin(p), lambda p: 2 * math.cos(p), 1.0, (1.6, 2.0))
    )
    _within(_separation_deg(cylinder, name), expected, row)


@pytest.mark.parametrize("name", ["upper", "lower"])
def test_cylinder_terrill_1960(cylinder: dict, name: str) -> None:
    row = LAMINAR["cylinder_terrill"]
    _within(_separation_deg(cylinder, name), float(row["expected"]), row)


def test_cylinder_symmetric(cylinder: dict) -> None:
    row = LAMINAR["cylinder_symmetry"]
    diff = _separation_deg(cylinder, "upper") - _separation_deg(cylinder, "lower")
    _within(diff, 0.0, row)


def test_cylinder_front_stagnation_point(cylinder: dict) -> None:
    """The sides start at the front stagnation point (-1, 0), the one facing the free stream
    (along +x); the rear one at (1, 0) has Ue = 0 as well.  Within 1e-3 (0.06 of a panel)."""
    stag = cylinder["stagnation"]
    assert stag is not None
    assert abs(stag["x"] + 1.0) < 1e-3 and abs(stag["y"]) < 1e-3, stag


def test_cylinder_first_station_is_stagnation(cylinder: dict) -> None:
    """Result contract for contour input: the first station is the stagnation point, s = 0,
    Ue = 0; "upper" is the side with the larger mean y."""
    for name in ("upper", "lower"):
        sd = side(cylinder, name)
        assert sd["s"][0] == 0.0
        assert abs(sd["edge_velocity"][0]) < 1e-6
    upper, lower = side(cylinder, "upper"), side(cylinder, "lower")
    assert np.mean(upper["y"]) > np.mean(lower["y"])


# =========================================================================== 4. Hiemenz measured


@pytest.fixture(scope="module")
def hiemenz_cylinder() -> float:
    s = np.linspace(0.0, 1.6, 801)
    sd = side(ibl.analyze(surface_case(s, hiemenz_fit(s), RE)), "surface")
    assert sd["separation"] is not None and sd["separation"]["regime"] == "laminar"
    return math.degrees(sd["separation"]["s"])


@pytest.mark.parametrize(
    "row_id",
    ["hiemenz_fit_thwaites_closed_form", "hiemenz_fit_exact_bl", "hiemenz_fit_measured"],
    ids=["thwaites_1949_quadrature", "exact_boundary_layer_march", "hiemenz_1911_measured_81deg"],
)
def test_hiemenz_measured_distribution(hiemenz_cylinder: float, row_id: str) -> None:
    row = LAMINAR[row_id]
    if row_id == "hiemenz_fit_thwaites_closed_form":
        expected = math.degrees(
            thwaites_separation(hiemenz_fit, hiemenz_fit_slope, 1.0, (1.25, 1.6))
        )
    elif row_id == "hiemenz_fit_exact_bl":
        expected = math.degrees(exact_march("hiemenz_fit").separation)
    else:
        expected = float(row["expected"])
    _within(hiemenz_cylinder, expected, row)


# =========================================================================== 5. stagnation flows


def _first_stations(sd: dict, a: float, s_max: float) -> np.ndarray:
    s, theta = arrays(sd, "s", "theta")
    sel = (s > 0.0) & (s <= s_max)
    assert sel.sum() >= 1
    return theta[sel] ** 2 * a * RE  # theta^2 a / nu with nu = 1/RE


def test_planar_stagnation_thwaites() -> None:
    """Ue = a s (Hiemenz flow): Thwaites gives theta^2 a/nu = 0.45/6 = 0.075 at every station."""
    row = LAMINAR["planar_stagnation_thwaites"]
    s = np.linspace(0.0, 0.5, 201)
    sd = side(ibl.analyze(surface_case(s, s, RE)), "surface")
    values = np.concatenate([[sd["theta"][0] ** 2 * RE], _first_stations(sd, 1.0, 0.5)])
    err = np.max(np.abs(values / float(row["expected"]) - 1.0))
    assert err <= float(row["tolerance"]), (
        f"theta^2 a/nu from {values.min():.5f} to {values.max():.5f}"
    )


def test_planar_stagnation_hiemenz_exact() -> None:
    row = LAMINAR["planar_stagnation_hiemenz"]
    s = np.linspace(0.0, 0.5, 201)
    sd = side(ibl.analyze(surface_case(s, s, RE)), "surface")
    got = math.sqrt(float(np.median(_first_stations(sd, 1.0, 0.5))))
    _within(got, hiemenz().theta, row)


def _sphere_surface(n: int = 801, s_end: float = 2.2) -> dict:
    s = np.linspace(0.0, s_end, n)
    case = surface_case(s, 1.5 * np.sin(s), RE, radius=np.sin(s))
    return side(ibl.analyze(case), "surface")


def _sphere_contour(n: int, offset_deg: float) -> dict:
    """Meridian of a unit sphere as a closed contour (flow along +x, nose at (-1, 0)); the body
    radius defaults to |y|.  Potential flow: Ue = 1.5 sin(phi), Cp = 1 - 2.25 sin^2(phi)."""
    case = _cylinder_contour(n, offset_deg)
    t = np.radians(offset_deg) + np.linspace(0.0, 2.0 * np.pi, n + 1)
    case["pressure"] = {"cp": [float(v) for v in 1.0 - 2.25 * np.sin(np.pi - t) ** 2]}
    case["body"] = {"kind": "axisymmetric"}
    return side(ibl.analyze(case), "upper")


@pytest.fixture(
    scope="module",
    params=["surface", "contour_nose_on_a_point", "contour_nose_between_points"],
)
def sphere(request: pytest.FixtureRequest) -> dict:
    """Sphere of radius 1 in potential flow, Ue = 1.5 sin(phi), r = sin(phi): arc-length input
    with 801 stations to phi = 2.2, or the meridian as a 360-point contour."""
    if request.param == "surface":
        return _sphere_surface()
    return _sphere_contour(360, 0.0 if request.param == "contour_nose_on_a_point" else 0.5)


def test_axisymmetric_stagnation_rott_crabtree(sphere: dict) -> None:
    """Sphere, Ue = 1.5 sin(phi), r = sin(phi): at the nose a = 1.5 and Rott & Crabtree (1952) give
    theta^2 a/nu = 0.45/8 = 0.05625.  Checked at the nose and on the stations with phi <= 0.05,
    where the Rott-Crabtree integral for the whole sphere is within 0.1 % of its nose value."""
    row = LAMINAR["axisymmetric_stagnation_rott_crabtree"]
    s = np.asarray(sphere["s"])
    values = np.concatenate(
        [[sphere["theta"][0] ** 2 * 1.5 * RE], _first_stations(sphere, 1.5, 0.05)]
    )
    where = np.concatenate([[0.0], s[(s > 0.0) & (s <= 0.05)]])
    expected = float(row["expected"])
    bad = [
        f"s={w:.4f}: {v:.5f}"
        for w, v in zip(where, values, strict=True)
        if abs(v / expected - 1.0) > float(row["tolerance"])
    ]
    assert not bad, (
        f"theta^2 a/nu near the nose vs {expected} +/- {row['tolerance']} (rel): " + ", ".join(bad)
    )


def test_axisymmetric_stagnation_homann_exact(sphere: dict) -> None:
    row = LAMINAR["axisymmetric_stagnation_homann"]
    got = math.sqrt(float(np.median(_first_stations(sphere, 1.5, 0.05))))
    _within(got, homann().theta, row)


def test_sphere_theta_rott_crabtree_quadrature(sphere: dict) -> None:
    """implementation: theta along the sphere against the Rott-Crabtree integral by adaptive
    quadrature, theta^2 = 0.45 nu / (r^2 Ue^6) int r^2 Ue^5 ds.  Tolerance 0.5 % in theta:
    trapezoidal quadrature on 801 stations (error ~1e-5) plus the nose limit (common practice)."""
    s, theta = arrays(sphere, "s", "theta")
    sel = (s >= 0.05) & (s <= 1.6)
    ref = np.sqrt(thwaites_theta2(s[sel], lambda t: 1.5 * math.sin(t), 1.0 / RE, radius=math.sin))
    err = np.max(np.abs(theta[sel] / ref - 1.0))
    assert err < 0.005, f"max rel. deviation {err:.4g}"


@pytest.mark.parametrize(
    "row_id",
    ["sphere_rott_crabtree_closed_form", "sphere_exact_bl"],
    ids=["rott_crabtree_1952_quadrature", "exact_boundary_layer_mangler"],
)
def test_sphere_separation(sphere: dict, row_id: str) -> None:
    row = LAMINAR[row_id]
    assert sphere["separation"] is not None and sphere["separation"]["regime"] == "laminar"
    got = math.degrees(sphere["separation"]["s"])
    if row_id == "sphere_rott_crabtree_closed_form":
        expected = math.degrees(
            thwaites_separation(
                lambda t: 1.5 * math.sin(t),
                lambda t: 1.5 * math.cos(t),
                1.0,
                (1.6, 2.2),
                radius=math.sin,
            )
        )
    else:
        expected = math.degrees(exact_march("sphere").separation)
    _within(got, expected, row)


def test_cylinder_theta_against_exact_march() -> None:
    """method: theta along the circular cylinder (Ue = 2 sin phi) against the finite-difference
    solution of the boundary-layer equations, for phi <= 90 deg.  White (Viscous Fluid Flow
    sec. 4-6) [memory]: Thwaites' method is within about 5 % in favourable gradients; at the
    stagnation point the error is -6.3 % (Hiemenz), so 7 %."""
    s = np.linspace(0.0, math.radians(100.0), 401)
    sd = side(ibl.analyze(surface_case(s, 2.0 * np.sin(s), RE)), "surface")
    exact = exact_march("cylinder")
    got_s, got_theta = arrays(sd, "s", "theta")
    sel = (exact.x >= 0.02) & (exact.x <= math.radians(90.0))
    ref = exact.theta[sel] / math.sqrt(RE)
    got = np.interp(exact.x[sel], got_s, got_theta)
    err = np.max(np.abs(got / ref - 1.0))
    assert err < 0.07, f"max rel. deviation {err:.4f}"


# =========================================================================== 6. Michel


@pytest.fixture(scope="module")
def michel_plate() -> dict:
    s = np.linspace(0.0, 1.0, 2001)
    case = surface_case(s, np.ones_like(s), 1.0e7, criterion="michel")
    return side(ibl.analyze(case), "surface")


def _michel(re_x: float) -> float:
    """Michel (1951) in the form of Cebeci & Smith (1974) [memory]."""
    return 1.174 * (1.0 + 22400.0 / re_x) * re_x**0.46


def test_michel_flat_plate_thwaites_crossing(michel_plate: dict) -> None:
    row = LAMINAR["michel_flat_plate_thwaites"]
    expected = brentq(lambda r: math.sqrt(0.45 * r) - _michel(r), 1e4, 1e8, xtol=1e-6)
    tr = michel_plate["transition"]
    assert tr is not None and tr["cause"] == "criterion", tr
    _within(tr["s"] * 1.0e7, expected, row)


def test_michel_flat_plate_re_theta(michel_plate: dict) -> None:
    row = LAMINAR["michel_flat_plate_re_theta"]
    re_x = brentq(lambda r: math.sqrt(0.45 * r) - _michel(r), 1e4, 1e8, xtol=1e-6)
    _within(michel_plate["transition"]["re_theta"], math.sqrt(0.45 * re_x), row)


def test_michel_flat_plate_vs_blasius_crossing(michel_plate: dict) -> None:
    """With Blasius' Re_theta = 0.664 sqrt(Re_x) the Michel crossing is at Re_x = 2.02e6; with
    Thwaites' 0.6708 it comes 17.5 % earlier (1.67e6).  ibl must lie within 20 % of the Blasius
    crossing and, since it uses Thwaites' theta, before it."""
    row = LAMINAR["michel_flat_plate_blasius"]
    expected = brentq(lambda r: blasius().theta * math.sqrt(r) - _michel(r), 1e4, 1e8, xtol=1e-6)
    got = michel_plate["transition"]["s"] * 1.0e7
    _within(got, expected, row)
    assert got < expected
