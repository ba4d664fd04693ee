"""Surface pressure in pascals: the conversion to Cp, its references, and the CSV input of
wall exports (named columns, byte-order mark, quoted headers, other delimiters)."""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from litestar.testing import TestClient

import ibl
from ibl.cli import main
from ibl.prepare import GAMMA, cp_from_pressure
from ibl_service.app import create_app
from ibl_service.config import Settings

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

#: Free-stream static pressure of the invented cases [Pa] (the standard atmosphere at sea
#: level, common practice).
P_INF = 101_325.0
#: Air density of the invented cases [kg/m^3] (common practice for air at about 20 C).
RHO = 1.2

#: Relative tolerance of "equal to floating-point rounding": Cp = (p - p_inf) / q_inf from
#: absolute pressures loses about eps * p_inf / q_inf ~ 1e-16 * 1e5 / 1e2 = 1e-13 relative;
#: the march and its event location (root finding between stations) may amplify that by a
#: few orders but not to 1e-9. A wrong q_inf (a missing 1/2, a wrong density) moves results
#: by percent.
RTOL = 1e-9


def ellipse_case(points_per_side: int = 50) -> dict[str, Any]:
    """An elliptic strut (12 % thick) with its potential-flow Cp.

    On the ellipse (a cos t, b sin t) the surface speed is
    U (1 + b/a) |sin t| / sqrt(sin^2 t + (b/a)^2 cos^2 t) (Milne-Thomson, Theoretical
    Hydrodynamics, the flow past an elliptic cylinder at zero incidence).
    """
    a, b = 0.5, 0.06
    n = 2 * points_per_side - 1
    t = np.pi * (2 * np.arange(n) + 1) / n
    ratio = b / a
    speed = (1 + ratio) * np.abs(np.sin(t)) / np.sqrt(np.sin(t) ** 2 + (ratio * np.cos(t)) ** 2)
    return {
        "surface": {"x": (a + a * np.cos(t)).tolist(), "y": (b * np.sin(t)).tolist()},
        "pressure": {"cp": (1 - speed**2).tolist()},
        "flow": {"reynolds": 2.0e6},
    }


def in_pascals(case: dict[str, Any], q_inf: float, **references: Any) -> dict[str, Any]:
    """The same case with its Cp written as absolute pressures p = p_inf + q_inf Cp."""
    out = copy.deepcopy(case)
    cp = np.array(out["pressure"].pop("cp"))
    out["pressure"] = {"p": (P_INF + q_inf * cp).tolist(), "reference_pressure": P_INF}
    out["pressure"].update(references)
    return out


def cp_pointer(pointer: Any) -> Any:
    """A pointer into the pressures in pascals, as it reads for the same case given as Cp."""
    if isinstance(pointer, str) and (
        pointer == "/pressure/p" or pointer.startswith("/pressure/p/")
    ):
        return "/pressure/cp" + pointer[len("/pressure/p") :]
    return pointer


def assert_same_document(a: Any, b: Any, where: str = "") -> None:
    """Equal result documents: numbers to RTOL, everything else exactly, except that ``b``
    (the case in pascals) points at ``/pressure/p`` where ``a`` (the case in Cp) points at
    ``/pressure/cp``."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and a.keys() == b.keys(), where
        for key in a:
            assert_same_document(a[key], b[key], f"{where}/{key}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), where
        for i, (u, v) in enumerate(zip(a, b, strict=True)):
            assert_same_document(u, v, f"{where}/{i}")
    elif isinstance(a, float) and not isinstance(b, str):
        assert b == pytest.approx(a, rel=RTOL, abs=1e-12), where
    elif where.endswith("/pointer"):
        assert not str(b).startswith("/pressure/cp"), where
        assert a == cp_pointer(b), where
    else:
        assert a == b, where


def problems_of(case: dict[str, Any]) -> dict[str, str]:
    with pytest.raises(ibl.CaseError) as error:
        ibl.analyze(case)
    return {p.pointer: p.reason for p in error.value.problems}


# ------------------------------------------------------------------------ the conversion


def test_cp_from_pressure_is_bernoulli():
    """Bernoulli (incompressible): p = p_inf + 0.5 rho (U^2 - u^2), so Cp = 1 - (u/U)^2."""
    speed, u = 20.0, np.array([0.0, 10.0, 20.0, 30.0])
    p = P_INF + 0.5 * RHO * (speed**2 - u**2)
    cp = cp_from_pressure(p, P_INF, 0.5 * RHO * speed**2)
    np.testing.assert_allclose(cp, 1 - (u / speed) ** 2, rtol=0, atol=1e-12)


def test_pascals_and_cp_give_the_same_result():
    """The definition Cp = (p - p_inf) / q_inf (common practice), with q_inf given."""
    case = ellipse_case()
    q_inf = 0.5 * RHO * 30.0**2
    from_cp = ibl.analyze(case)
    from_p = ibl.analyze(in_pascals(case, q_inf, dynamic_pressure=q_inf))
    assert_same_document(from_cp, from_p)


def test_dynamic_pressure_from_density_and_speed():
    """q_inf = 0.5 rho U_inf^2 (definition): the same result as q_inf given."""
    case = ellipse_case()
    speed = 30.0
    case["flow"] = {"speed": speed, "kinematic_viscosity": 1.5e-5}
    from_cp = ibl.analyze(case)
    converted = in_pascals(case, 0.5 * RHO * speed**2)
    converted["flow"]["density"] = RHO
    assert_same_document(from_cp, ibl.analyze(converted))


def test_compressible_free_stream_uses_the_static_density():
    """At M > 0, q_inf = 0.5 rho_inf U_inf^2 = gamma p_inf M^2 / 2 for an ideal gas
    (a^2 = gamma p / rho; standard gas dynamics): pressures built with the second form and
    converted with the first give the Cp case's result."""
    mach = 0.4
    speed = mach * math.sqrt(GAMMA * P_INF / RHO)
    case = ellipse_case()
    case["flow"] = {"speed": speed, "kinematic_viscosity": 1.5e-5, "mach": mach}
    from_cp = ibl.analyze(case)
    converted = in_pascals(case, 0.5 * GAMMA * P_INF * mach**2)
    converted["flow"]["density"] = RHO
    from_p = ibl.analyze(converted)
    assert_same_document(from_cp, from_p)
    # This coarse nose draws a warning on the pressure values: it names the ones given.
    assert "/pressure/p" in [w["pointer"] for w in from_p["warnings"]]


# ------------------------------------------------------------------------ bad references

Q = 0.5 * RHO * 30.0**2

BAD_REFERENCES = [
    ("no reference pressure", {"dynamic_pressure": Q}, None, "/pressure/reference_pressure"),
    ("no dynamic pressure", {"reference_pressure": P_INF}, None, "/pressure/dynamic_pressure"),
    (
        "density without speed",
        {"reference_pressure": P_INF},
        {"reynolds": 2e6, "density": RHO},
        "/pressure/dynamic_pressure",
    ),
    (
        "zero dynamic pressure",
        {"reference_pressure": P_INF, "dynamic_pressure": 0.0},
        None,
        "/pressure/dynamic_pressure",
    ),
    (
        "negative dynamic pressure",
        {"reference_pressure": P_INF, "dynamic_pressure": -50.0},
        None,
        "/pressure/dynamic_pressure",
    ),
    (
        "zero density",
        {"reference_pressure": P_INF},
        {"speed": 30.0, "kinematic_viscosity": 1.5e-5, "density": 0.0},
        "/flow/density",
    ),
    (
        "two dynamic pressures",
        {"reference_pressure": P_INF, "dynamic_pressure": Q},
        {"speed": 30.0, "kinematic_viscosity": 1.5e-5, "density": RHO},
        "/pressure/dynamic_pressure",
    ),
]


def _bad_case(references: dict[str, Any], flow: dict[str, Any] | None) -> dict[str, Any]:
    case = in_pascals(ellipse_case(), Q)
    case["pressure"] = {"p": case["pressure"]["p"], **references}
    if flow is not None:
        case["flow"] = flow
    return case


@pytest.mark.parametrize(
    ("references", "flow", "pointer"),
    [b[1:] for b in BAD_REFERENCES],
    ids=[b[0] for b in BAD_REFERENCES],
)
def test_bad_references_name_the_field(references, flow, pointer):
    assert pointer in problems_of(_bad_case(references, flow))


@pytest.fixture
def client():
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as made:
        yield made


@pytest.mark.parametrize(
    ("references", "flow", "pointer"),
    [b[1:] for b in BAD_REFERENCES],
    ids=[b[0] for b in BAD_REFERENCES],
)
def test_bad_references_are_422_over_http(client, references, flow, pointer):
    response = client.post("/v1/analyses", json=_bad_case(references, flow))
    assert response.status_code == 422, response.text
    assert response.headers["content-type"].startswith("application/problem+json")
    assert pointer in [e["pointer"] for e in response.json()["errors"]]


def test_pascals_over_http_give_the_cp_result(client):
    case = ellipse_case()
    from_cp = client.post("/v1/analyses", json=case)
    from_p = client.post("/v1/analyses", json=in_pascals(case, Q, dynamic_pressure=Q))
    assert from_cp.status_code == from_p.status_code == 200
    assert_same_document(from_cp.json(), from_p.json())


@pytest.mark.parametrize(
    ("literal_at", "pointer"),
    [("reference_pressure", "/pressure/reference_pressure"), ("p", "/pressure/p/4")],
)
def test_non_finite_pressures_are_422_over_http(client, literal_at, pointer):
    case = in_pascals(ellipse_case(), Q, dynamic_pressure=Q)
    if literal_at == "p":
        case["pressure"]["p"][4] = "INF"
    else:
        case["pressure"][literal_at] = "INF"
    body = json.dumps(case).replace('"INF"', "1e400")
    response = client.post(
        "/v1/analyses", content=body, headers={"content-type": "application/json"}
    )
    assert response.status_code == 422, response.text
    assert [e["pointer"] for e in response.json()["errors"]] == [pointer]


def test_references_that_blow_cp_up_are_refused():
    """A tiny q_inf (a unit slip, kPa for Pa twice over) gives Cp beyond what a case may
    carry: refused at the first such point, not marched."""
    case = in_pascals(ellipse_case(), Q, dynamic_pressure=1e-300)
    problems = problems_of(case)
    assert list(problems) == ["/pressure/p/0"] and "reference_pressure" in problems["/pressure/p/0"]


def test_non_finite_pressures_through_the_library():
    case = in_pascals(ellipse_case(), Q, dynamic_pressure=Q)
    case["pressure"]["p"][4] = math.nan
    assert "/pressure/p/4" in problems_of(case)
    case = in_pascals(ellipse_case(), Q, dynamic_pressure=Q)
    case["pressure"]["reference_pressure"] = math.inf
    assert "/pressure/reference_pressure" in problems_of(case)


@pytest.mark.parametrize(
    ("pressure", "pointer"),
    [
        ({"cp": [0.0] * 99, "p": [P_INF] * 99, "reference_pressure": P_INF}, "/pressure"),
        ({"cp": [0.0] * 99, "reference_pressure": P_INF}, "/pressure/reference_pressure"),
        ({"cp": [0.0] * 99, "dynamic_pressure": Q}, "/pressure/dynamic_pressure"),
    ],
    ids=["cp and p", "reference with cp", "dynamic pressure with cp"],
)
def test_references_belong_to_p_only(pressure, pointer):
    case = ellipse_case()
    case["pressure"] = pressure
    assert pointer in problems_of(case)


def test_cp_problems_point_into_p():
    """What is said of a Cp value is said of the pressure the case gave."""
    case = in_pascals(ellipse_case(), Q, dynamic_pressure=Q)
    case["pressure"]["p"][5] = P_INF + 1.5 * Q  # Cp = 1.5, above stagnation (Cp = 1 at M = 0)
    problems = problems_of(case)
    assert list(problems) == ["/pressure/p/5"] and "exceeds" in problems["/pressure/p/5"]
    case["pressure"]["p"][5] = P_INF + 1.02 * Q  # within tap noise: clipped and reported
    warnings = ibl.analyze(case)["warnings"]
    clipped = [w for w in warnings if w["code"] == "cp_clipped"]
    assert clipped and clipped[0]["pointer"].startswith("/pressure/p")
    assert not any((w["pointer"] or "").startswith("/pressure/cp") for w in warnings)


# ------------------------------------------------------------------------ the command line

HEADER = ["Node", "X [ m ]", "Y [ m ]", "Z [ m ]", "Pressure [ Pa ]", "Wall Shear [ Pa ]", "Zone"]
COLUMNS = "x=x [ m ],y=Y [m],p=PRESSURE [ Pa ]"  # case and spacing differ from the header


def write_export(
    path: Path, case: dict[str, Any], q_inf: float, *, sep: str = ",", comma: bool = False
) -> None:
    """A wall export: a byte-order mark, quoted header names with units, extra columns
    (one of them text), the pressure in pascals."""
    x, y = case["surface"]["x"], case["surface"]["y"]
    p = P_INF + q_inf * np.array(case["pressure"]["cp"])
    lines = [sep.join(f'"{name}"' for name in HEADER)]
    for i, (xi, yi, pi) in enumerate(zip(x, y, p, strict=True)):
        cells = [str(i + 1), repr(xi), repr(yi), "0.0", repr(float(pi)), "0.12", '"wall"']
        if comma:
            cells = [c.replace(".", ",") for c in cells]
        lines.append(sep.join(cells))
    path.write_text("\n".join(lines) + "\n", encoding="utf-8-sig")


def run_json(capsys, argv: list[str]) -> dict[str, Any]:
    assert main([*argv, "--format", "json"]) == 0, capsys.readouterr().err
    result: dict[str, Any] = json.loads(capsys.readouterr().out)
    return result


def test_cli_wall_export_in_pascals_gives_the_cp_result(tmp_path, capsys):
    case = ellipse_case()
    case["flow"] = {"speed": 30.0, "kinematic_viscosity": 1.5e-5}
    path = tmp_path / "wall.csv"
    write_export(path, case, 0.5 * RHO * 30.0**2)
    assert path.read_bytes().startswith(b"\xef\xbb\xbf")
    flags = ["--speed", "30", "--viscosity", "1.5e-5", "--reference-pressure", str(P_INF)]
    by_density = run_json(
        capsys, ["run", str(path), "--columns", COLUMNS, *flags, "--density", "1.2"]
    )
    by_q = run_json(
        capsys, ["run", str(path), "--columns", COLUMNS, *flags, "--dynamic-pressure", "540"]
    )
    assert_same_document(ibl.analyze(case), by_density)
    assert_same_document(by_density, by_q)


def test_cli_semicolons_and_decimal_commas(tmp_path, capsys):
    """A spreadsheet in a decimal-comma locale writes ';' between cells."""
    case = ellipse_case()
    path = tmp_path / "wall.csv"
    write_export(path, case, Q, sep=";", comma=True)
    flags = ["--reynolds", "2e6", "--reference-pressure", str(P_INF), "--dynamic-pressure", str(Q)]
    result = run_json(capsys, ["run", str(path), "--columns", COLUMNS, *flags])
    assert_same_document(ibl.analyze(case), result)


def test_cli_p_column_by_its_own_name(tmp_path, capsys):
    case = ellipse_case()
    p = P_INF + Q * np.array(case["pressure"]["cp"])
    rows = ["x,y,p"] + [
        f"{a!r},{b!r},{float(c)!r}"
        for a, b, c in zip(case["surface"]["x"], case["surface"]["y"], p, strict=True)
    ]
    path = tmp_path / "taps.csv"
    path.write_text("\n".join(rows))
    flags = ["--reference-pressure", str(P_INF), "--dynamic-pressure", str(Q)]
    result = run_json(capsys, ["run", str(path), "--reynolds", "2e6", *flags])
    assert_same_document(ibl.analyze(case), result)


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--columns", "x=X [ m ],y=Y [ m ],pressure=Pressure [ Pa ]"], "unknown quantity"),
        (["--columns", "x=X [ m ],y=Y [ m ],p=Static Pressure"], "'Static Pressure'"),
        (["--columns", "x=X [ m ],y=Y [ m ],cp=Pressure [ Pa ]"], "is in Pa"),
        (["--columns", "x=X [ m ],p=Pressure [ Pa ]"], "no column for y"),
        (["--columns", "x=X [ m ],y=Y [ m ]"], "no column for the pressure"),
        (["--columns", "x"], "QUANTITY=COLUMN"),
        (["--columns", COLUMNS, "--dynamic-pressure", "540"], "/pressure/reference_pressure"),
        (["--columns", COLUMNS, "--reference-pressure", "0"], "/pressure/dynamic_pressure"),
        (
            ["--columns", COLUMNS, "--reference-pressure", "0", "--dynamic-pressure", "-1"],
            "/pressure/dynamic_pressure",
        ),
    ],
    ids=[
        "unknown quantity",
        "missing column",
        "pascals as cp",
        "no y",
        "no pressure",
        "not a pair",
        "no reference pressure",
        "no dynamic pressure",
        "negative dynamic pressure",
    ],
)
def test_cli_errors_are_clean(tmp_path, capsys, argv, message):
    path = tmp_path / "wall.csv"
    write_export(path, ellipse_case(), Q)
    assert main(["run", str(path), "--reynolds", "2e6", *argv]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


def test_cli_columns_need_a_csv(capsys):
    argv = ["run", str(EXAMPLES / "strut.json"), "--columns", "x=X"]
    assert main(argv) == 2
    assert "CSV input only" in capsys.readouterr().err


def test_readme_mast_example(capsys):
    """The invented mast export (potential flow about a circular cylinder) separates laminar
    at 104.5 deg from the front stagnation point (Terrill 1960, the exact solution for
    potential flow; recalled, not re-checked); Thwaites' method is known to come about
    1.3 deg early there, and the export's 5 deg spacing adds its own error: +-2.5 deg."""
    argv = [
        "run",
        str(EXAMPLES / "mast_wall_export.csv"),
        "--columns",
        "x=X [ m ],y=Y [ m ],p=Pressure [ Pa ]",
        "--reference-pressure",
        "101325",
        "--density",
        "1.2",
        "--speed",
        "12",
        "--viscosity",
        "1.5e-5",
    ]
    result = run_json(capsys, argv)
    radius = 0.05
    for side in result["sides"]:
        angle = math.degrees(side["laminar_separation"]["s"] / radius)
        assert angle == pytest.approx(104.5, abs=2.5)
