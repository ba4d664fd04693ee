"""Inputs at the edges of what the methods admit: bodies of revolution closing to a point,
trips outside or off the sides, inflow states, and command-line flags on odd documents.

Each test names the invariance or physics it protects.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

import ibl
from ibl import CaseError
from ibl.cli import main

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "strut.json"

# ------------------------------------------------------------------ bodies of revolution

#: Nose radius, end of the cylinder and length of the invented nose-cylinder-cone body.
NOSE, CYLINDER_END, LENGTH = 0.1, 0.6, 1.0
#: Ue = tanh(s / UE_SCALE): zero at the nose, about 1 from a nose radius on (an invented,
#: potential-flow-like distribution without the rear deceleration, so that the layer
#: stays attached to the tail).
UE_SCALE = 0.05


def _nose_cylinder_cone() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Meridian x, y (y the radius) and chord arc length of a hemispherical nose, a
    cylinder and a cone closing to a point on the axis at x = LENGTH."""
    phi = np.linspace(0.0, 0.5 * np.pi, 31)
    x = np.concatenate(
        (
            NOSE * (1.0 - np.cos(phi)),
            np.linspace(NOSE, CYLINDER_END, 41)[1:],
            np.linspace(CYLINDER_END, LENGTH, 61)[1:],
        )
    )
    y = np.concatenate(
        (
            NOSE * np.sin(phi),
            np.full(40, NOSE),
            NOSE * (LENGTH - x[-60:]) / (LENGTH - CYLINDER_END),
        )
    )
    s = np.concatenate(([0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))))
    return x, y, s


def _pointed_body(reynolds: float, transition: dict[str, Any]) -> dict[str, Any]:
    x, y, s = _nose_cylinder_cone()
    return {
        "surface": {"x": x.tolist(), "y": y.tolist()},
        "pressure": {"edge_velocity": np.tanh(s / UE_SCALE).tolist()},
        "flow": {"reynolds": reynolds},
        "body": {"kind": "axisymmetric"},
        "transition": transition,
    }


def _codes(result: dict[str, Any]) -> list[str]:
    return [w["code"] for w in result["warnings"]]


@pytest.mark.parametrize(
    "transition",
    [{"criterion": "none"}, {"trip": {"upper": 0.05}}],
    ids=["laminar", "tripped"],
)
def test_pointed_tail_stops_at_the_thin_layer_limit(transition):
    # The axisymmetric integral equations (Rott & Crabtree 1952; Head 1958) hold while the
    # layer is thin against the body radius; on a tail closing to a point r -> 0 and theta
    # would grow without bound. The stations must end, with a warning saying why and where,
    # before the tail; every station kept downstream of the largest radius must have
    # delta99 < r (the limit chosen, THIN_LAYER_RATIO = 1), all values finite, theta below
    # the body's largest radius and Cf positive.
    result = ibl.analyze(_pointed_body(1e6, transition))
    (side,) = result["sides"]
    notices = [w for w in result["warnings"] if w["code"] == "thin_layer_limit"]
    assert len(notices) == 1, result["warnings"]
    assert "march_stopped" not in _codes(result)  # not "too rough": the cause is the radius
    assert "radius" in notices[0]["message"]
    x, y = np.array(side["x"]), np.array(side["y"])
    theta, d99 = np.array(side["theta"]), np.array(side["delta99"])
    assert x[-1] < LENGTH and y[-1] > 0.0  # ends before r = 0
    assert x[-1] > CYLINDER_END  # but on the tail, downstream of the largest radius
    tail = x > CYLINDER_END + 1e-12
    assert np.all(d99[tail] < y[tail])
    assert np.all(np.isfinite(theta)) and theta.max() < NOSE
    cf = np.array(side["cf"][1:], dtype=float)
    assert np.all(cf > 0.0)
    assert side["separation"] is None
    if "trip" in transition:
        assert side["transition"]["cause"] == "trip"
        assert side["regime"][-1] == "turbulent"


def test_laminar_thin_layer_limit_where_thwaites_puts_it():
    # Where the limit lies, against an independent evaluation of Thwaites' axisymmetric
    # integral (Rott & Crabtree 1952) by scipy quadrature on the exact geometry:
    # theta^2 = 0.45 nu / (r^2 Ue^6) int r^2 Ue^5 ds, delta99 = (4.91/0.664) theta (Blasius
    # ratio), the limit where delta99 = r on the cone. Tolerance: a quarter of the station
    # spacing on the tail (the kernel interpolates between stations; the contour's chords
    # differ from the arcs of the nose by less than 1e-4).
    nu = 1.0 / 1e4
    arc_nose = 0.5 * np.pi * NOSE
    cone = math.hypot(LENGTH - CYLINDER_END, NOSE)

    def radius(s: float) -> float:
        if s <= arc_nose:
            return NOSE * math.sin(s / NOSE)
        if s <= arc_nose + CYLINDER_END - NOSE:
            return NOSE
        return NOSE * (1.0 - (s - arc_nose - (CYLINDER_END - NOSE)) / cone)

    def margin(s: float) -> float:
        breaks = [arc_nose, arc_nose + CYLINDER_END - NOSE]
        points = [b for b in breaks if b < s]
        integral = quad(
            lambda t: radius(t) ** 2 * math.tanh(t / UE_SCALE) ** 5,
            0.0,
            s,
            points=points or None,
            limit=200,
        )[0]
        theta = math.sqrt(0.45 * nu * integral / (radius(s) ** 2 * math.tanh(s / UE_SCALE) ** 6))
        return 4.91 / 0.664 * theta - radius(s)

    start_cone = arc_nose + CYLINDER_END - NOSE
    expected = brentq(margin, start_cone + 1e-6, start_cone + cone * (1.0 - 1e-9), xtol=1e-10)
    result = ibl.analyze(_pointed_body(1e4, {"criterion": "none"}))
    (side,) = result["sides"]
    s = np.array(side["s"])
    assert s[-1] < expected
    spacing = cone / 60
    text = next(w["message"] for w in result["warnings"] if w["code"] == "thin_layer_limit")
    reported = float(text.split("at s = ")[1].split(" ")[0])
    assert reported == pytest.approx(expected, abs=0.25 * spacing)


def test_single_surface_narrowing_to_a_thread_stops_at_the_thin_layer_limit():
    # The same limit on a single surface whose radius falls to 1e-6 of the length at its
    # end (allowed there: positive after the first point); turbulent from the start.
    s = np.linspace(0.0, 1.0, 401)
    radius = np.where(s < 0.5, 0.05, 0.05 * (1.0 - (s - 0.5) / 0.5) + 1e-6)
    doc = {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": [1.0] * s.size},
        "flow": {"reynolds": 1e6},
        "body": {"kind": "axisymmetric", "radius": radius.tolist()},
        "transition": {"trip": {"surface": 0.0}},
    }
    result = ibl.analyze(doc)
    (side,) = result["sides"]
    assert "thin_layer_limit" in _codes(result) and "march_stopped" not in _codes(result)
    n = len(side["s"])
    assert 0.5 < side["s"][-1] < 1.0
    assert np.all(np.array(side["delta99"])[s[:n] > 0.5] < radius[:n][s[:n] > 0.5])


def _sphere(reynolds: float) -> dict[str, Any]:
    phi = np.linspace(0.0, np.pi, 181)
    return {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "pressure": {"edge_velocity": (1.5 * np.sin(phi)).tolist()},
        "flow": {"reynolds": reynolds},
        "body": {"kind": "axisymmetric"},
        "transition": {"criterion": "none"},
    }


def _prolate_spheroid(transition: dict[str, Any]) -> dict[str, Any]:
    # Potential flow along a prolate spheroid of semi-axes a, b (Lamb, Hydrodynamics,
    # section 105 [memory]): Ue = (1 + k) a sin(t) / sqrt(a^2 sin^2 t + b^2 cos^2 t), with
    # k = alpha0 / (2 - alpha0), alpha0 = 2 (1 - e^2)/e^3 (atanh(e) - e).
    a, b = 0.5, 0.1
    t = np.linspace(0.0, np.pi, 201)
    e = math.sqrt(1.0 - (b / a) ** 2)
    alpha0 = 2.0 * (1.0 - e * e) / e**3 * (math.atanh(e) - e)
    k = alpha0 / (2.0 - alpha0)
    ue = (1.0 + k) * a * np.sin(t) / np.sqrt((a * np.sin(t)) ** 2 + (b * np.cos(t)) ** 2)
    return {
        "surface": {"x": (a * (1.0 - np.cos(t))).tolist(), "y": (b * np.sin(t)).tolist()},
        "pressure": {"edge_velocity": ue.tolist()},
        "flow": {"reynolds": 1e6},
        "body": {"kind": "axisymmetric"},
        "transition": transition,
    }


def _tripped(doc: dict[str, Any]) -> dict[str, Any]:
    return {**doc, "transition": {"trip": {"upper": 0.05}}}


@pytest.mark.parametrize(
    ("doc", "regime"),
    [
        (_sphere(1e5), "laminar"),
        (_tripped(_sphere(1e6)), "turbulent"),
        (_prolate_spheroid({"criterion": "none"}), "laminar"),
    ],
    ids=["sphere-laminar", "sphere-tripped", "spheroid-laminar"],
)
def test_separation_before_the_tail_shows_no_thin_layer_limit(doc, regime):
    # A closed body in potential flow decelerates towards its rear stagnation point; the
    # layer separates first, while still thin against the radius, so the limit must not
    # cut it and no warning is given.
    result = ibl.analyze(doc)
    (side,) = result["sides"]
    assert "thin_layer_limit" not in _codes(result)
    assert side["separation"] is not None and side["separation"]["regime"] == regime
    assert np.all(np.array(side["delta99"]) < 0.5 * max(side["y"]))


def test_sphere_laminar_separation_is_unchanged_by_the_limit():
    # Sphere in potential flow: laminar separation at 104.8 deg (exact, Mangler 1948);
    # Thwaites puts it 1.3 deg early (README accuracy table, tolerance 2.5 deg).
    side = ibl.analyze(_sphere(1e5))["sides"][0]
    angle = math.degrees(math.acos(-side["separation"]["x"]))
    assert angle == pytest.approx(104.8, abs=2.5)


def test_thin_layer_limit_never_applies_on_a_widening_nose():
    # Rott-Crabtree/Mangler starts at a nose or a cone tip on the axis are exact even though
    # delta99 > r there: the limit applies only downstream of the largest radius. A cone
    # r = 0.2 s at Re = 1e3 (delta99 exceeds r near the tip) keeps all its stations.
    s = np.linspace(0.0, 1.0, 201)
    doc = {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": [1.0] * s.size},
        "flow": {"reynolds": 1e3},
        "body": {"kind": "axisymmetric", "radius": (0.2 * s).tolist()},
        "transition": {"criterion": "none"},
    }
    result = ibl.analyze(doc)
    (side,) = result["sides"]
    assert side["delta99"][5] > 0.2 * s[5]  # the layer is thick against r near the tip
    assert len(side["s"]) == s.size and "thin_layer_limit" not in _codes(result)


# ------------------------------------------------------------------ trips


def _plate(s: np.ndarray, reynolds: float = 1e6, **extra: Any) -> dict[str, Any]:
    return {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": [1.0] * s.size},
        "flow": {"reynolds": reynolds},
        **extra,
    }


def test_trip_beyond_the_surface_changes_nothing_and_is_reported():
    s = np.linspace(0.0, 1.0, 101)
    plain = ibl.analyze(_plate(s, transition={"criterion": "none"}))
    tripped = ibl.analyze(_plate(s, transition={"criterion": "none", "trip": {"surface": 5.0}}))
    assert tripped["sides"] == plain["sides"]
    (notice,) = [w for w in tripped["warnings"] if w["code"] == "trip_outside_surface"]
    assert notice["pointer"] == "/transition/trip/surface"
    assert "beyond the end" in notice["message"]


def test_contour_trip_beyond_its_side_is_reported():
    doc = json.loads(EXAMPLE.read_text())
    doc["transition"] = {"trip": {"upper": 100.0}}
    result = ibl.analyze(doc)
    assert any(
        w["code"] == "trip_outside_surface" and w["pointer"] == "/transition/trip/upper"
        for w in result["warnings"]
    )


def _half_cylinder() -> dict[str, Any]:
    # An open contour from the front stagnation point over the top of a circular cylinder
    # in potential flow (Cp = 1 - 4 sin^2 phi): one side only.
    phi = np.linspace(0.0, 0.6 * np.pi, 61)
    return {
        "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
        "pressure": {"cp": (1.0 - 4.0 * np.sin(phi) ** 2).tolist()},
        "flow": {"reynolds": 1e5},
    }


def test_trip_on_a_side_the_contour_does_not_have_is_refused():
    doc = _half_cylinder()
    (side,) = ibl.analyze(doc)["sides"]
    missing = "lower" if side["name"] == "upper" else "upper"
    doc["transition"] = {"trip": {missing: 0.05}}
    with pytest.raises(CaseError) as error:
        ibl.analyze(doc)
    (problem,) = error.value.problems
    assert problem.pointer == f"/transition/trip/{missing}"
    assert side["name"] in problem.reason


def test_negative_contour_trip_is_refused():
    doc = json.loads(EXAMPLE.read_text())
    doc["transition"] = {"trip": {"upper": -0.1}}
    with pytest.raises(CaseError) as error:
        ibl.analyze(doc)
    assert error.value.problems[0].pointer == "/transition/trip/upper"


def test_single_surface_trip_is_in_the_s_of_the_results():
    # Translation invariance: the same plate given with s from 0 or from 0.3, tripped at
    # the same physical place (0.5 from the leading edge, s = 0.5 or 0.8 as given), is
    # the same layer, and the transition is reported where the trip was given.
    s = np.linspace(0.0, 1.0, 101)
    base = ibl.analyze(_plate(s, transition={"criterion": "none", "trip": {"surface": 0.5}}))
    shifted = ibl.analyze(
        _plate(s + 0.3, transition={"criterion": "none", "trip": {"surface": 0.8}})
    )
    a, b = base["sides"][0], shifted["sides"][0]
    assert b["transition"]["s"] == pytest.approx(0.8, abs=1e-12)
    assert a["transition"]["s"] == pytest.approx(0.5, abs=1e-12)
    np.testing.assert_allclose(b["theta"], a["theta"], rtol=1e-9)
    np.testing.assert_allclose(np.array(b["s"]) - 0.3, a["s"], atol=1e-12)
    assert b["regime"] == a["regime"]


def test_single_surface_trip_before_the_first_station_trips_there():
    s = np.linspace(0.3, 1.3, 101)
    at_start = ibl.analyze(_plate(s, transition={"trip": {"surface": 0.3}}))
    before = ibl.analyze(_plate(s, transition={"trip": {"surface": 0.1}}))
    assert before["sides"] == at_start["sides"]
    assert "trip_outside_surface" in _codes(before)
    assert "trip_outside_surface" not in _codes(at_start)


# ------------------------------------------------------------------ inflow


def _inflow_plate(theta: float, h: float, regime: str, reynolds: float = 1e6, **extra: Any):
    s = np.linspace(0.5, 1.5, 201)
    return _plate(
        s, reynolds, inflow={"theta": theta, "shape_factor": h, "regime": regime}, **extra
    )


def test_turbulent_inflow_at_separation_is_separated_at_the_start():
    # A turbulent layer arriving with H at or above the separation shape factor is separated
    # where it arrives: the first station is turbulent with the given state, separation is
    # reported there, and a warning says why.
    result = ibl.analyze(_inflow_plate(2e-3, 2.5, "turbulent"))
    (side,) = result["sides"]
    assert side["regime"] == ["turbulent"]
    assert side["shape_factor"] == [2.5] and side["theta"] == [2e-3]
    assert side["separation"] == {"s": 0.5, "x": None, "y": None, "regime": "turbulent"}
    assert "inflow_separated" in _codes(result)


def test_laminar_inflow_shape_factor_is_not_used_and_a_mismatch_is_reported():
    # Thwaites' method is one-parameter: H follows from lambda = theta^2 Ue'/nu, so a
    # laminar inflow's H cannot change the layer (invariance); a value far from the
    # closure's (Blasius H = 2.59 on a plate, Blasius 1908) is reported.
    theta0 = 0.664 * 0.5 / math.sqrt(0.5 * 1e6)  # Blasius theta at x = 0.5, Re = 1e6
    blasius = ibl.analyze(_inflow_plate(theta0, 2.59, "laminar", transition={"criterion": "none"}))
    odd = ibl.analyze(_inflow_plate(theta0, 1.9, "laminar", transition={"criterion": "none"}))
    assert odd["sides"] == blasius["sides"]
    assert "inflow_shape_factor_unused" not in _codes(blasius)
    (notice,) = [w for w in odd["warnings"] if w["code"] == "inflow_shape_factor_unused"]
    assert notice["pointer"] == "/inflow/shape_factor"


@pytest.mark.parametrize("h", [1.05, 1.1])
def test_inflow_shape_factor_where_head_is_undefined_is_refused(h):
    # Head's H1(H) = 3.3 + 0.8234 (H - 1.1)^-1.287 (Head 1958) is defined for H > 1.1 only.
    with pytest.raises(CaseError) as error:
        ibl.parse_case(_inflow_plate(2e-3, h, "turbulent"))
    assert error.value.problems[0].pointer == "/inflow/shape_factor"


def test_turbulent_inflow_shape_factor_is_used_as_given():
    # No clipping: just above Head's singular point the first station carries the given H.
    side = ibl.analyze(_inflow_plate(2e-3, 1.15, "turbulent"))["sides"][0]
    assert side["shape_factor"][0] == 1.15
    assert side["separation"] is None


@pytest.mark.parametrize("theta", [1e-12, 1e-9, 1e-8, 2e-4])
def test_turbulent_inflow_below_the_minimum_reynolds_number_is_refused(theta):
    # Below Re_theta of about 320 a turbulent layer does not sustain itself (Preston 1958
    # [memory]); far below it Ludwieg-Tillmann's Cf ~ Re_theta^-0.268 grows without bound
    # and Head's equations "separate" a flat-plate layer. Re = 1e6: theta 2e-4 is 200.
    with pytest.raises(CaseError) as error:
        ibl.analyze(_inflow_plate(theta, 1.4, "turbulent"))
    (problem,) = error.value.problems
    assert problem.pointer == "/inflow/theta" and "Re_theta" in problem.reason


@pytest.mark.parametrize("law", ["ludwieg_tillmann", "white"])
@pytest.mark.parametrize("separation_h", [1.8, 2.4])
def test_turbulent_flat_plate_never_separates(law, separation_h):
    # A turbulent layer without pressure gradient never separates (common practice): from
    # Re_theta = 320 (Preston's minimum) to 1e5, over three decades of Reynolds number and
    # inflow H from 1.15 to just below separation, the layer reaches the end, attached.
    for reynolds in (1e5, 1e7, 1e9):
        for re_theta in (320.0, 1e3, 1e4, 1e5):
            theta = re_theta / reynolds
            if theta > 0.05:
                continue
            for h in (1.15, 1.4, separation_h - 0.05):
                doc = _inflow_plate(
                    theta,
                    h,
                    "turbulent",
                    reynolds,
                    turbulent={"skin_friction": law, "separation_shape_factor": separation_h},
                )
                result = ibl.analyze(doc)
                (side,) = result["sides"]
                where = (reynolds, re_theta, h)
                assert side["separation"] is None, where
                assert len(side["s"]) == 201, where
                assert "march_stopped" not in _codes(result), where
                assert max(side["shape_factor"]) < separation_h, where


# ------------------------------------------------------------------ command line


@pytest.mark.parametrize(
    ("member", "value", "flags", "pointer"),
    [
        ("flow", 5, ["--reynolds", "1e5"], "/flow"),
        ("flow", [], ["--speed", "10", "--viscosity", "1.5e-5"], "/flow"),
        ("transition", "x", ["--criterion", "none"], "/transition"),
        ("transition", {"trip": 5}, ["--trip-upper", "0.1"], "/transition/trip"),
        ("pressure", [], ["--smoothing", "auto"], "/pressure"),
        ("body", 5, ["--axisymmetric"], "/body"),
        ("flow", None, ["--mach", "0.2"], "/flow"),
    ],
    ids=[
        "flow-number",
        "flow-array",
        "transition-string",
        "trip-number",
        "pressure-array",
        "body-number",
        "flow-null",
    ],
)
def test_flag_on_a_member_of_the_wrong_type_is_a_clean_error(
    tmp_path, capsys, member, value, flags, pointer
):
    # Bad input gets the clean error naming the field by JSON pointer, exit status 2 (as
    # for every invalid case, tests/test_cli.py), never a traceback.
    case = json.loads(EXAMPLE.read_text())
    case[member] = value
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["run", str(path), *flags]) == 2
    err = capsys.readouterr().err
    assert f"  {pointer}: " in err and "Traceback" not in err


def test_smoothing_flag_that_is_not_a_number_is_a_clean_error(capsys):
    # A usage error from the flag's own type check: exit status 2, no traceback.
    with pytest.raises(SystemExit) as info:
        main(["run", str(EXAMPLE), "--smoothing", "lots"])
    assert info.value.code == 2
    err = capsys.readouterr().err
    assert "--smoothing" in err and "Traceback" not in err


@pytest.mark.parametrize(
    ("member", "value", "flags", "pointer"),
    [
        ("flow", 5, ["--reynolds", "1e5:1e6:2"], "/flow"),
        ("transition", {"trip": 5}, ["--trip-upper", "0.05:0.1:2"], "/transition/trip"),
        ("flow", 5, ["--trip-upper", "0.05:0.1:2"], "/flow"),
    ],
    ids=["reynolds-flow-number", "trip-number", "trip-flow-number"],
)
def test_sweep_on_a_member_of_the_wrong_type_is_a_clean_error(
    tmp_path, capsys, member, value, flags, pointer
):
    case = json.loads(EXAMPLE.read_text())
    case[member] = value
    path = tmp_path / "case.json"
    path.write_text(json.dumps(case))
    assert main(["sweep", str(path), *flags, "--quiet"]) == 2
    assert f"  {pointer}" in capsys.readouterr().err
