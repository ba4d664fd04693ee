"""Drag: friction drag against flat-plate laws, the momentum balance of a closed thin plate,
and Squire & Young's profile drag against a measured section drag.

Coefficients are D/(q_inf L) per unit span with L the coordinate unit (the chord or plate
length here, 1), so a one-sided unit plate's friction drag is its mean skin-friction
coefficient C_F.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import ibl


def _plate(reynolds: float, *, tripped: bool, n: int = 401, radius: float | None = None):
    """A single surface at Ue = U_inf from s = 0 to 1: laminar throughout, or tripped at s = 0."""
    s = np.linspace(0.0, 1.0, n)
    transition: dict = {"criterion": "none"}
    if tripped:
        transition["trip"] = {"surface": 0.0}
    doc = {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": [1.0] * n},
        "flow": {"reynolds": reynolds},
        "transition": transition,
        "output": {"stations": False},
    }
    if radius is not None:
        doc["body"] = {"kind": "axisymmetric", "radius": [radius] * n}
    return ibl.analyze(doc)


@pytest.mark.parametrize("reynolds", [1e5, 1e6])
def test_laminar_plate_friction_blasius(reynolds: float) -> None:
    # Blasius (1908): C_F = 1.328 / sqrt(Re_L) for one side of a plate of length L, exact
    # for the boundary-layer equations. Thwaites' closure puts Cf sqrt(Re_x) 1.2 % below
    # Blasius' 0.664 (S(0) = 0.22 over theta sqrt(Re_x)/x = 0.6708; README's accuracy
    # table), and the friction drag is its integral: 1.5 %.
    result = _plate(reynolds, tripped=False)
    blasius = 1.328 / math.sqrt(reynolds)
    assert result["sides"][0]["friction_drag"] == pytest.approx(blasius, rel=0.015)
    assert result["drag"]["friction"] == result["sides"][0]["friction_drag"]
    assert result["drag"]["profile"] is None  # a single surface has no trailing edge
    assert "single surface" in result["drag"]["note"]


@pytest.mark.parametrize(
    ("reynolds", "law", "source"),
    [
        (1e6, lambda re: 0.455 / math.log10(re) ** 2.58, "Prandtl-Schlichting"),
        (1e7, lambda re: 0.455 / math.log10(re) ** 2.58, "Prandtl-Schlichting"),
        (1e7, lambda re: 0.074 * re**-0.2, "Schlichting 1/5-power"),
    ],
)
def test_turbulent_plate_friction_laws(reynolds: float, law, source: str) -> None:
    # Turbulent from the leading edge, against the mean skin-friction laws of a plate:
    # Prandtl-Schlichting C_F = 0.455 (log10 Re_L)^-2.58 and C_F = 0.074 Re_L^-0.2 for
    # 5e5 < Re_L < 1e7 (Schlichting, Boundary-Layer Theory, ch. 21; recalled, not
    # re-checked). 10 %: Head's method with Ludwieg-Tillmann Cf is within 10 % of the
    # local flat-plate laws (ibl/validation.py, "the calibrated flat-plate laws differ
    # from each other by up to 9 % at Re_x = 1e7").
    result = _plate(reynolds, tripped=True)
    assert result["sides"][0]["friction_drag"] == pytest.approx(law(reynolds), rel=0.10), source


def test_cylinder_in_axial_flow_is_the_plate_times_its_circumference() -> None:
    # With dr/ds = 0 the axisymmetric equations reduce to the planar ones (Rott & Crabtree
    # 1952; Head 1958): a long cylinder's friction drag over its wetted area 2 pi r L is the
    # plate's times 2 pi r [derived]. Rounding only.
    plate = _plate(1e6, tripped=True)["sides"][0]["friction_drag"]
    cylinder = _plate(1e6, tripped=True, radius=0.25)["sides"][0]["friction_drag"]
    assert cylinder == pytest.approx(2.0 * math.pi * 0.25 * plate, rel=1e-6)


def _thin_plate(reynolds: float, *, tripped: bool, radius: float | None = None):
    """A closed lens of thickness 1e-3 chord (y = +-4e-3 x (1 - x)), Ue = U_inf all round:
    no pressure gradient, both sides from the sharp leading edge to the trailing edge."""
    xs = 0.5 * (1.0 - np.cos(np.linspace(0.0, np.pi, 201)))
    upper, lower = xs[::-1], xs[1:]
    x = np.concatenate([upper, lower])
    y = np.concatenate([4e-3 * upper * (1.0 - upper), -4e-3 * lower * (1.0 - lower)])
    transition: dict = {"criterion": "none"}
    if tripped:
        transition["trip"] = {"upper": 0.0, "lower": 0.0}
    doc = {
        "surface": {"x": x.tolist(), "y": y.tolist()},
        "pressure": {"edge_velocity": [1.0] * x.size},
        "flow": {"reynolds": reynolds},
        "transition": transition,
        "output": {"stations": ["theta"]},
    }
    if radius is not None:
        doc["body"] = {"kind": "axisymmetric", "radius": (radius + y).tolist()}
    return ibl.analyze(doc)


@pytest.mark.parametrize(
    ("tripped", "tolerance"), [(False, 0.03), (True, 0.01)], ids=["laminar", "turbulent"]
)
def test_thin_plate_profile_drag_equals_friction_drag(tripped: bool, tolerance: float) -> None:
    # Momentum balance of a plate at zero incidence (no pressure gradient, no separation):
    # d theta/dx = Cf/2 with Ue = U_inf, so each side's friction drag is int Cf dx =
    # 2 theta_TE; Squire & Young's 2 theta_TE (Ue_TE/U_inf)^((H+5)/2) is 2 theta_TE there
    # too, whatever H: profile drag equals friction drag [derived]. Turbulent: Head's
    # momentum equation is integrated with the same Cf, so only the quadrature of the
    # stations differs (1 %). Laminar: Thwaites' theta is 1.0 % above Blasius and its Cf
    # 1.2 % below (README's accuracy table): the two differ by 2.2 %, hence 3 %.
    result = _thin_plate(1e6 if not tripped else 1e7, tripped=tripped)
    drag = result["drag"]
    assert drag["profile_method"] == "squire_young_1938"
    assert drag["profile"] == pytest.approx(drag["friction"], rel=tolerance)
    for side in result["sides"]:
        assert side["friction_drag"] == pytest.approx(2.0 * side["theta"][-1], rel=tolerance)


def test_ring_profile_drag_young_equals_friction_drag() -> None:
    # The same identity on a thin annular plate (a ring of radius 0.5 in axial flow): the
    # two sides are two surfaces of revolution; Young's (1939) 4 pi r theta_TE per side
    # equals the friction drag 2 pi r int Cf dx = 4 pi r theta_TE [derived]. 1 % as above.
    result = _thin_plate(1e7, tripped=True, radius=0.5)
    drag = result["drag"]
    assert drag["profile_method"] == "young_1939"
    assert drag["profile"] == pytest.approx(drag["friction"], rel=0.01)
    assert drag["friction"] == pytest.approx(sum(s["friction_drag"] for s in result["sides"]))


def _naca0012(panels: int) -> tuple[np.ndarray, np.ndarray]:
    """NACA 0012 with the closed trailing edge (x^4 coefficient -0.1036; Abbott & von
    Doenhoff 1959, sec. 6.4), cosine-spaced: nodes from the trailing edge over the upper
    side to the nose and back along the lower side."""
    x = 0.5 * (1.0 - np.cos(np.linspace(0.0, np.pi, panels + 1)))
    t = 0.6 * (0.2969 * np.sqrt(x) - 0.1260 * x - 0.3516 * x**2 + 0.2843 * x**3 - 0.1036 * x**4)
    return np.concatenate([x[::-1], x[1:]]), np.concatenate([t[::-1], -t[1:]])


def _source_panels(xn: np.ndarray, yn: np.ndarray) -> tuple[np.ndarray, ...]:
    """Potential flow at zero incidence about a closed symmetric contour (counter-clockwise
    nodes): constant-strength source panels, zero normal velocity at the panel midpoints
    (Hess & Smith 1967; Katz & Plotkin, Low-Speed Aerodynamics, sec. 11.2: a panel of
    length L induces u = ln(r1/r2)/(2 pi), v = (theta2 - theta1)/(2 pi) in its own frame,
    v = 1/2 on itself). No circulation: the section is symmetric and carries no lift.
    Returns the midpoints and the tangential speed there."""
    dx, dy = np.diff(xn), np.diff(yn)
    length = np.hypot(dx, dy)
    tx, ty = dx / length, dy / length
    nx, ny = ty, -tx  # outward for counter-clockwise nodes
    xc, yc = xn[:-1] + 0.5 * dx, yn[:-1] + 0.5 * dy
    rx, ry = xc[:, None] - xn[None, :-1], yc[:, None] - yn[None, :-1]
    xi, eta = rx * tx + ry * ty, rx * nx + ry * ny
    u = np.log(np.hypot(xi, eta) / np.hypot(xi - length, eta)) / (2.0 * np.pi)
    v = (np.arctan2(eta, xi - length) - np.arctan2(eta, xi)) / (2.0 * np.pi)
    np.fill_diagonal(u, 0.0)
    np.fill_diagonal(v, 0.5)
    vx, vy = u * tx + v * nx, u * ty + v * ny
    sigma = np.linalg.solve(vx * nx[:, None] + vy * ny[:, None], -nx)
    speed = tx + (vx * tx[:, None] + vy * ty[:, None]) @ sigma
    return xc, yc, np.abs(speed)


def test_naca0012_profile_drag_against_measured() -> None:
    # NACA 0012, smooth, zero lift, Re = 6e6: measured section drag c_d about 0.0058
    # (Abbott & von Doenhoff 1959, Theory of Wing Sections, appendix IV; recalled, not
    # re-checked). Pressure from the source-panel solution above, transition by Michel's
    # criterion. The potential flow stagnates at the sharp trailing edge, which the real
    # (viscous) flow does not: the last 2 % of chord are left out (common practice), the
    # sides then meet at the middle of the short base that closes the contour.
    # 20 %: transition from Michel's criterion is uncertain by about 20 % in Re_x (README's
    # accuracy table), Head's turbulent Cf by up to 10 %, and the value is recalled.
    xc, yc, speed = _source_panels(*_naca0012(120))
    # The panel solution's peak v/V against the tabulated 1.188 at 10-15 % chord (Abbott &
    # von Doenhoff 1959, appendix I; recalled, not re-checked); 0.01 for the recall.
    assert float(np.max(speed)) == pytest.approx(1.188, abs=0.01)
    keep = xc <= 0.98
    doc = {
        "surface": {"x": xc[keep].tolist(), "y": yc[keep].tolist()},
        "pressure": {"edge_velocity": speed[keep].tolist()},
        "flow": {"reynolds": 6e6},
        "output": {"stations": False},
    }
    drag = ibl.analyze(doc)["drag"]
    assert drag["profile_method"] == "squire_young_1938", drag["note"]
    assert drag["profile"] == pytest.approx(0.0058, rel=0.20)
    # A thick section has pressure drag as well: profile drag above friction drag.
    assert drag["friction"] < drag["profile"]


def test_potential_flow_to_the_trailing_edge_gives_no_profile_drag() -> None:
    # Potential flow stagnates at a sharp trailing edge (Ue -> 0): Head's layer separates
    # just before it, and profile drag is refused with the reason, friction drag kept.
    xc, yc, speed = _source_panels(*_naca0012(120))
    doc = {
        "surface": {"x": xc.tolist(), "y": yc.tolist()},
        "pressure": {"edge_velocity": speed.tolist()},
        "flow": {"reynolds": 6e6},
        "output": {"stations": False},
    }
    drag = ibl.analyze(doc)["drag"]
    assert drag["profile"] is None and drag["profile_method"] is None
    assert "separates" in drag["note"]
    assert drag["friction"] > 0.0


def test_open_contour_has_no_profile_drag() -> None:
    # An open contour's sides end at its two ends, apart: no trailing edge where they meet.
    phi = np.linspace(0.2, 2.0 * np.pi - 0.2, 121)
    doc = {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": (0.1 * np.sin(phi)).tolist()},
        "pressure": {"edge_velocity": np.abs(np.sin(phi)).tolist()},
        "flow": {"reynolds": 1e6},
        "transition": {"criterion": "none"},
        "output": {"stations": False},
    }
    drag = ibl.analyze(doc)["drag"]
    assert drag["profile"] is None
    assert "apart" in drag["note"] or "separates" in drag["note"]


def test_meridian_on_both_sides_of_the_axis_is_one_body() -> None:
    # A closed meridian contour of a body of revolution (radius |y|) gives its upper and
    # lower halves as two sides; they describe one body, so the total is their mean
    # [derived: each side's 2 pi r integral is the whole body's friction drag].
    phi = np.linspace(0.0, 2.0 * np.pi, 241)
    doc = {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": (0.25 * np.sin(phi)).tolist()},
        "pressure": {"edge_velocity": (1.1 * np.abs(np.sin(phi))).tolist()},
        "flow": {"reynolds": 1e6},
        "body": {"kind": "axisymmetric"},
        "output": {"stations": False},
    }
    result = ibl.analyze(doc)
    upper, lower = (side["friction_drag"] for side in result["sides"])
    assert result["drag"]["friction"] == pytest.approx(0.5 * (upper + lower))
    assert result["drag"]["profile"] is None
