"""The finite-difference laminar method (``laminar.method = "finite_difference"``) through the
whole analysis: events, transition criteria and the hand-over to Head's method, against
published solutions and independent scipy computations.

Tolerances: the finite-difference march has a grid error below 0.3 % in the separation
position and 1 % in theta on the flows of its grid study (``ibl.finite_difference``), so
positions are checked to 0.3 % and thicknesses to 1 %.
"""

from __future__ import annotations

import json
import math
from typing import Any

import msgspec
import numpy as np
import pytest
from litestar.testing import TestClient
from scipy.optimize import brentq
from similarity import exact_march, side, surface_case

import ibl
from ibl.bench import ellipse_case
from ibl.finite_difference import march_laminar
from ibl.prepare import prepare
from ibl_service.app import create_app
from ibl_service.config import Settings

FD = {"method": "finite_difference"}
#: Reynolds number per unit length of the laminar-only cases.
RE = 1.0e5
#: Laminar separation on a circular cylinder in potential flow, Ue = 2 U sin(phi):
#: 104.5 deg (Terrill 1960, Phil. Trans. R. Soc. A 253, series solution) [memory].
TERRILL_DEG = 104.5


def _cylinder(method: str, n: int = 360) -> dict[str, Any]:
    """Unit circle, flow along +x, potential-flow Cp = 1 - 4 sin^2(phi); laminar only."""
    t = np.linspace(0.0, 2.0 * np.pi, n + 1)
    phi = np.pi - t
    return {
        "surface": {"x": np.cos(t).tolist(), "y": np.sin(t).tolist()},
        "pressure": {"cp": (1.0 - 4.0 * np.sin(phi) ** 2).tolist()},
        "flow": {"reynolds": RE},
        "transition": {"criterion": "none"},
        "laminar": {"method": method},
    }


def _separation_deg(result: dict[str, Any], name: str) -> float:
    sd = side(result, name)
    assert sd["separation"] is not None and sd["separation"]["regime"] == "laminar", sd
    return math.degrees(sd["separation"]["s"])  # radius 1: arc length = angle


@pytest.fixture(scope="module")
def cylinders() -> dict[str, dict[str, Any]]:
    return {m: ibl.analyze(_cylinder(m)) for m in ("thwaites", "finite_difference")}


@pytest.mark.parametrize("name", ["upper", "lower"])
def test_cylinder_separation_terrill(cylinders: dict[str, dict[str, Any]], name: str) -> None:
    """Terrill (1960): 104.5 deg.  The finite-difference march within 0.3 % (its grid
    error); Thwaites' method 1 to 3 % early (its known error on this flow: 103.1 deg with
    lambda_sep = -0.09, recalled as about 1.5 % early, not re-checked)."""
    fd = _separation_deg(cylinders["finite_difference"], name)
    thw = _separation_deg(cylinders["thwaites"], name)
    assert abs(fd / TERRILL_DEG - 1.0) < 0.003, fd
    assert 0.01 < 1.0 - thw / TERRILL_DEG < 0.03, thw
    assert cylinders["finite_difference"]["options"]["laminar_method"] == "keller_box_1970"
    assert cylinders["finite_difference"]["warnings"] == []


def _michel(re_x: float) -> float:
    """Michel (1951) in the form of Cebeci & Smith (1974) [memory]."""
    return 1.174 * (1.0 + 22400.0 / re_x) * re_x**0.46


@pytest.fixture(scope="module")
def plate() -> dict[str, Any]:
    s = np.linspace(0.0, 1.0, 801)
    case = surface_case(s, np.ones_like(s), 1.0e7, criterion="michel", laminar=FD)
    return side(ibl.analyze(case), "surface")


def test_flat_plate_theta_blasius(plate: dict[str, Any]) -> None:
    """Blasius (1908): theta = 0.664 x / sqrt(Re_x), within 1 % on the laminar stations
    (past the first few, where the relative error of a thickness growing from zero is
    not meaningful)."""
    s = np.asarray(plate["s"])
    theta = np.asarray(plate["theta"])
    laminar = np.asarray(plate["regime"]) == "laminar"
    pick = laminar & (s > 0.01)
    assert pick.sum() > 50
    blasius = 0.664 * s[pick] / np.sqrt(1.0e7 * s[pick])
    assert np.max(np.abs(theta[pick] / blasius - 1.0)) < 0.01


def test_flat_plate_michel_on_blasius_theta(plate: dict[str, Any]) -> None:
    """Michel's criterion met where Blasius' Re_theta = 0.664 sqrt(Re_x) crosses it
    (scipy brentq here).  The crossing is shallow: an error e in theta moves it by
    e / (d ln Re_theta/d ln Re_x - d ln Michel/d ln Re_x) in ln Re_x; with the 0.3 %
    theta error allowed at the crossing, that is the tolerance."""
    expected = brentq(lambda r: 0.664 * math.sqrt(r) - _michel(r), 1e4, 1e8, xtol=1e-6)
    h = 1e-4
    slope = 0.5 - (math.log(_michel(expected * math.exp(h))) - math.log(_michel(expected))) / h
    tolerance = 0.003 / slope
    tr = plate["transition"]
    assert tr is not None and tr["cause"] == "criterion", tr
    got = tr["s"] * 1.0e7
    assert abs(math.log(got / expected)) < tolerance, (got, expected, tolerance)
    # Re_theta at transition is Blasius' there, within the theta tolerance.
    assert abs(tr["re_theta"] / (0.664 * math.sqrt(got)) - 1.0) < 0.01


def test_tripped_ellipse_hands_over_the_finite_difference_theta() -> None:
    """theta is continuous at a trip (Head's start): with the trip on a station, the
    turbulent layer there has the theta of the finite-difference march of that side,
    computed here by ``march_laminar`` directly, not Thwaites' theta."""
    doc = ellipse_case(200, 2e6)
    doc["transition"] = {"criterion": "none"}
    probe = side(ibl.analyze(doc), "upper")
    k = int(np.argmin(np.abs(np.asarray(probe["s"]) - 0.3)))
    trip = probe["s"][k]
    doc["transition"]["trip"] = {"upper": trip}
    results = {}
    for method in ("thwaites", "finite_difference"):
        doc["laminar"] = {"method": method}
        result = ibl.analyze(doc)
        assert not [w for w in result["warnings"] if w["code"] == "laminar_method_failed"]
        sd = side(result, "upper")
        assert sd["transition"]["cause"] == "trip"
        assert sd["regime"][k] == "turbulent" and sd["regime"][k - 1] == "laminar"
        results[method] = sd
    upper = next(s for s in prepare(ibl.parse_case(doc)).sides if s.name == "upper")
    due = np.gradient(upper.ue, upper.s, edge_order=2)
    due[0] = upper.slope
    alive = int(np.argmax(upper.ue[1:] <= 0.0)) + 1 if np.any(upper.ue[1:] <= 0.0) else None
    direct = march_laminar(upper.s[:alive], upper.ue[:alive], upper.nu, due=due[:alive])
    assert upper.s[k] + upper.offset == pytest.approx(trip, abs=1e-12)
    fd_theta = results["finite_difference"]["theta"][k]
    assert fd_theta == pytest.approx(direct.theta[k], rel=1e-9)
    assert results["thwaites"]["theta"][k] != pytest.approx(fd_theta, rel=1e-4)
    # Downstream the turbulent layers differ as they started: by the laminar ratio.
    ratio = fd_theta / results["thwaites"]["theta"][k]
    last = min(len(results["thwaites"]["theta"]), len(results["finite_difference"]["theta"]))
    j = k + (last - k) // 2
    got = results["finite_difference"]["theta"][j] / results["thwaites"]["theta"][j]
    assert abs(got - 1.0) <= abs(ratio - 1.0) + 1e-12


def test_sphere_separation() -> None:
    """Sphere in potential flow, Ue = 1.5 U sin(phi), r = sin(phi): laminar separation
    against the scipy reference march of the axisymmetric equations (``ibl.references``,
    solve_bvp steps; 104.85 deg), within 0.3 %."""
    s = np.linspace(0.0, 2.2, 801)
    case = surface_case(s, 1.5 * np.sin(s), RE, radius=np.sin(s), laminar=FD)
    sd = side(ibl.analyze(case), "surface")
    expected = math.degrees(exact_march("sphere").separation)
    got = math.degrees(sd["separation"]["s"])
    assert sd["separation"]["regime"] == "laminar"
    assert abs(got / expected - 1.0) < 0.003, (got, expected)


def test_batch_mixing_methods_equals_each_alone() -> None:
    """A batch holding both methods gives each case what it gives alone (the sides of a
    batch are independent)."""
    s = np.linspace(0.0, 1.0, 201)
    plate_fd = surface_case(s, np.ones_like(s), 1.0e7, criterion="michel", laminar=FD)
    docs = [_cylinder("thwaites", 120), _cylinder("finite_difference", 120), plate_fd]
    cases = [ibl.parse_case(d) for d in docs]
    together = ibl.run_batch(cases)
    for case, got in zip(cases, together, strict=True):
        assert msgspec.to_builtins(got) == msgspec.to_builtins(ibl.run(case))


def test_unknown_method_is_422_with_pointer() -> None:
    """HTTP: "nope" is a 422 naming /laminar/method; the method is served by the catalogue
    and a finite-difference analysis answers 200 with Terrill's separation (0.3 %)."""
    doc = _cylinder("nope", 60)
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as client:
        response = client.post(
            "/v1/analyses", content=json.dumps(doc), headers={"content-type": "application/json"}
        )
        good = client.post(
            "/v1/analyses",
            content=json.dumps(_cylinder("finite_difference", 360)),
            headers={"content-type": "application/json"},
        )
        methods = client.get("/v1/methods").json()
    assert good.status_code == 200, good.text
    assert abs(_separation_deg(good.json(), "upper") / TERRILL_DEG - 1.0) < 0.003
    choices = methods["laminar"]["options"]["method"]["choices"]
    assert set(choices) == {"thwaites", "finite_difference"}
    assert "Keller" in choices["finite_difference"]["reference"]
    assert response.status_code == 422, response.text
    body = response.json()
    assert any(e["pointer"] == "/laminar/method" for e in body["errors"]), body
    with pytest.raises(ibl.CaseError) as error:
        ibl.parse_case(doc)
    assert error.value.problems[0].pointer == "/laminar/method"


def test_failed_march_is_a_warning_not_a_crash() -> None:
    """An edge velocity oscillating by 90 % over a few stations: Newton's iteration of the
    finite-difference march fails; the result has Thwaites' layer and says so."""
    s = np.linspace(0.0, 1.0, 201)
    ue = 1.01 + 0.9 * np.sin(200.0 * s)
    result = ibl.analyze(surface_case(s, ue, 1.0e6, laminar=FD))
    failed = [w for w in result["warnings"] if w["code"] == "laminar_method_failed"]
    assert len(failed) == 1 and failed[0]["pointer"] == "/laminar/method", result["warnings"]
    sd = side(result, "surface")
    assert len(sd["s"]) >= 1 and np.all(np.isfinite(np.asarray(sd["theta"])))


def test_cli_flag_and_sweep_choice(tmp_path: Any, capsys: pytest.CaptureFixture[str]) -> None:
    """``--laminar-method`` sets the case's method (the cylinder separates at Terrill's
    angle within 0.3 %); in ``ibl sweep`` a comma list runs the range once per method, and
    each method's rows are those of a sweep of that method alone."""
    from ibl.cli import main
    from ibl.sweep import sweep

    doc = _cylinder("thwaites", 120)
    path = tmp_path / "cylinder.json"
    path.write_text(json.dumps(doc))
    assert (
        main(["run", str(path), "--laminar-method", "finite_difference", "--format", "json"]) == 0
    )
    result = json.loads(capsys.readouterr().out)
    assert abs(_separation_deg(result, "upper") / TERRILL_DEG - 1.0) < 0.003
    values = [1e5, 1e6]
    both = sweep(doc, "reynolds", values, methods=["thwaites", "finite_difference"])
    assert [p.laminar_method for p in both.points] == ["thwaites"] * 2 + ["finite_difference"] * 2
    for i, method in enumerate(("thwaites", "finite_difference")):
        alone = sweep({**doc, "laminar": {"method": method}}, "reynolds", values)
        got = [msgspec.structs.replace(p, laminar_method=None) for p in both.points[2 * i :][:2]]
        assert got == alone.points
    assert main(["sweep", str(path), "--reynolds", "1e5:1e6:2", "--quiet", "--format", "csv",
                 "--laminar-method", "thwaites,finite_difference"]) == 0  # fmt: skip
    rows = capsys.readouterr().out.splitlines()
    assert rows[0].split(",")[1] == "laminar_method"
    assert {row.split(",")[1] for row in rows[1:]} == {"thwaites", "finite_difference"}
    assert main(["sweep", str(path), "--reynolds", "1e5:1e6:2", "--quiet",
                 "--laminar-method", "thwaites,nope"]) == 2  # fmt: skip
