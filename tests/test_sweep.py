"""Sweeps: ranges, agreement with single runs, chunking, a dask.distributed cluster, the CLI."""

from __future__ import annotations

import copy
import csv
import io
import json
import math
from pathlib import Path
from typing import Any

import msgspec
import numpy as np
import pytest

import ibl
from ibl.analysis import CAUTION
from ibl.cli import main
from ibl.sweep import (
    CSV_COLUMNS,
    SidePositions,
    Sweep,
    SweepPoint,
    parse_range,
    run_chunk,
    set_variable,
    sweep,
    sweep_csv,
    sweep_notes,
)

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "strut.json"
STRUT = json.loads(EXAMPLE.read_text())
RE_VALUES = [float(v) for v in np.geomspace(1e5, 1e7, 7)]


def _plate(n: int = 201) -> dict[str, Any]:
    s = np.linspace(0.0, 1.0, n)
    return {
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": [1.0] * n},
        "flow": {"reynolds": 2e6, "turbulence_intensity": 0.01},
        "transition": {"criterion": "abu_ghannam_shaw"},
    }


# --------------------------------------------------------------------------------- ranges


def test_reynolds_range_is_logarithmic() -> None:
    values = parse_range("1e5:1e7:20", "reynolds")
    assert len(values) == 20
    assert values[0] == pytest.approx(1e5) and values[-1] == pytest.approx(1e7)
    ratios = np.array(values[1:]) / np.array(values[:-1])
    np.testing.assert_allclose(ratios, 100.0 ** (1.0 / 19.0), rtol=1e-12)


@pytest.mark.parametrize("variable", ["turbulence_intensity", "mach", "trip_upper", "trip"])
def test_other_ranges_are_linear(variable: str) -> None:
    values = parse_range("0:0.1:5", variable)
    np.testing.assert_allclose(values, [0.0, 0.025, 0.05, 0.075, 0.1], atol=1e-15)


@pytest.mark.parametrize(
    ("text", "variable"),
    [
        ("1e5:1e7", "reynolds"),
        ("0:1e7:3", "reynolds"),
        ("1e5:1e7:0", "reynolds"),
        ("a:b:3", "mach"),
        ("0:1:3", "mach"),
        ("0:0.5:3", "turbulence_intensity"),
        ("0:1:3", "speed"),
    ],
    ids=["two-parts", "log-zero", "count-zero", "not-numbers", "mach-1", "tu-0.5", "unknown"],
)
def test_bad_ranges_raise(text: str, variable: str) -> None:
    with pytest.raises(ValueError):
        parse_range(text, variable)


def test_set_variable_copies_and_replaces() -> None:
    doc = copy.deepcopy(STRUT)
    swept = set_variable(doc, "reynolds", 3e5)
    assert swept["flow"]["reynolds"] == 3e5
    assert "speed" not in swept["flow"] and "kinematic_viscosity" not in swept["flow"]
    assert doc == STRUT
    assert set_variable(doc, "trip_lower", 0.05)["transition"]["trip"] == {"lower": 0.05}
    assert set_variable(_plate(), "trip", 0.2)["transition"]["trip"] == {"surface": 0.2}


# ------------------------------------------------------------------------- against single


def _single(doc: dict[str, Any]) -> dict[str, Any]:
    return {side["name"]: side for side in ibl.analyze(doc)["sides"]}


def _event_s(event: dict[str, Any] | None) -> float | None:
    return None if event is None else event["s"]


def _assert_matches_single_runs(result: Sweep, docs: list[dict[str, Any]]) -> None:
    assert len(result.points) == len(docs)
    for point, doc in zip(result.points, docs, strict=True):
        single = _single(doc)
        assert point.error is None
        assert [p.side for p in point.sides] == list(single)
        for positions in point.sides:
            side = single[positions.side]
            assert positions.transition_s == _event_s(side["transition"])
            assert positions.laminar_separation_s == _event_s(side["laminar_separation"])
            assert positions.separation_s == _event_s(side["separation"])
            if side["transition"] is not None:
                assert positions.transition_x == side["transition"]["x"]
                assert positions.transition_cause == side["transition"]["cause"]
            if side["separation"] is not None:
                assert positions.separation_x == side["separation"]["x"]
                assert positions.separation_regime == side["separation"]["regime"]
            assert positions.last_station_s == side["s"][-1]


@pytest.mark.parametrize("chunk", [1, 3, 64], ids=["chunk1", "chunk3", "one-chunk"])
def test_reynolds_sweep_equals_single_runs(chunk: int) -> None:
    """Each swept case built here by hand (Reynolds number in place of speed and viscosity)
    and analysed alone gives the positions of the sweep, whatever the chunking."""
    result = sweep(STRUT, "reynolds", RE_VALUES, chunk=chunk)
    docs = []
    for value in RE_VALUES:
        doc = copy.deepcopy(STRUT)
        doc["flow"] = {
            "reynolds": value,
            "turbulence_intensity": STRUT["flow"]["turbulence_intensity"],
        }
        docs.append(doc)
    _assert_matches_single_runs(result, docs)
    assert [p.value for p in result.points] == RE_VALUES


def test_turbulence_sweep_equals_single_runs() -> None:
    values = parse_range("0.005:0.04:6", "turbulence_intensity")
    result = sweep(_plate(), "turbulence_intensity", values, chunk=4)
    docs = []
    for value in values:
        doc = _plate()
        doc["flow"]["turbulence_intensity"] = value
        docs.append(doc)
    _assert_matches_single_runs(result, docs)
    transitions = [p.sides[0].transition_s for p in result.points]
    assert all(t is not None for t in transitions)
    assert transitions == sorted(transitions, reverse=True), "more Tu, earlier transition"


def test_trip_sweep_puts_transition_at_the_trip() -> None:
    values = parse_range("0.05:0.1:3", "trip_upper")
    result = sweep(STRUT, "trip_upper", values)
    for point in result.points:
        upper = next(p for p in point.sides if p.side == "upper")
        assert upper.transition_cause == "trip"
        assert upper.transition_s == pytest.approx(point.value, abs=2e-3)


def test_a_bad_case_is_reported_and_the_rest_run() -> None:
    points = run_chunk(STRUT, "reynolds", [1e6, -1.0, 2e6])
    assert points[1]["error"] is not None and "/flow/reynolds" in points[1]["error"]
    assert points[0]["error"] is None and points[2]["error"] is None
    assert points[0]["sides"] and points[2]["sides"]


def test_wrong_case_raises() -> None:
    doc = copy.deepcopy(STRUT)
    doc["pressure"]["cp"][3] = 5.0
    with pytest.raises(ibl.CaseError):
        sweep(doc, "reynolds", RE_VALUES)


# ------------------------------------------------------------------------------ cluster


@pytest.mark.slow
def test_local_cluster_gives_the_local_results() -> None:
    distributed = pytest.importorskip("distributed")
    local = sweep(STRUT, "reynolds", RE_VALUES, chunk=2)
    with (
        distributed.LocalCluster(
            n_workers=2, processes=True, threads_per_worker=1, dashboard_address=None
        ) as cluster,
        distributed.Client(cluster) as client,
    ):
        remote = sweep(STRUT, "reynolds", RE_VALUES, scheduler=client, chunk=2)
        by_address = sweep(STRUT, "reynolds", RE_VALUES, scheduler=cluster.scheduler_address)
    assert remote == local
    assert by_address == local


# ---------------------------------------------------------------------------------- CLI


def test_cli_sweep_text(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["sweep", str(EXAMPLE), "--reynolds", "1e5:1e7:4"]) == 0
    out, err = capsys.readouterr()
    assert CAUTION in out
    for value in parse_range("1e5:1e7:4", "reynolds"):
        assert f"{value:.4g}" in out
    assert "upper transition" in out and "lower sep." in out
    assert "%|" not in err, "no progress bar when stderr is not a terminal"


def test_cli_sweep_csv_and_json_agree(capsys: pytest.CaptureFixture[str]) -> None:
    args = ["sweep", str(EXAMPLE), "--reynolds", "1e5:1e7:5", "--criterion", "granville"]
    assert main([*args, "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["caution"] == CAUTION and doc["variable"] == "reynolds"
    assert main([*args, "--format", "csv"]) == 0
    text, notes = capsys.readouterr()
    # The table alone on stdout, read as it is; the notes on stderr.
    assert not any(line.startswith("#") for line in text.splitlines())
    assert (
        notes.startswith("# ibl sweep of the Reynolds number") and f"# CAUTION: {CAUTION}" in notes
    )
    rows = list(csv.DictReader(io.StringIO(text)))
    expected = [
        (point["value"], side["side"], side["transition_s"], side["separation_s"])
        for point in doc["points"]
        for side in point["sides"]
    ]
    got = [
        (
            float(row["reynolds [-]"]),
            row["side"],
            float(row["transition_s [m]"]) if row["transition_s [m]"] else None,
            float(row["separation_s [m]"]) if row["separation_s [m]"] else None,
        )
        for row in rows
    ]
    assert got == expected


def test_cli_sweep_fixed_flags_apply(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["sweep", str(EXAMPLE), "--trip-upper", "0:0.1:3", "--reynolds", "3e6"]) == 0
    single = ibl.analyze(set_variable(set_variable(STRUT, "reynolds", 3e6), "trip_upper", 0.05))
    upper = next(side for side in single["sides"] if side["name"] == "upper")
    assert f"{upper['transition']['s']:.4g}" in capsys.readouterr().out


def test_cli_sweep_plot(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "sweep.png"
    assert main(["sweep", str(EXAMPLE), "--reynolds", "1e5:1e7:4", "--plot", str(path)]) == 0
    assert path.read_bytes().startswith(b"\x89PNG")
    assert str(path) in capsys.readouterr().err


@pytest.mark.parametrize(
    "flags",
    [[], ["--reynolds", "1e6"], ["--reynolds", "1e5:1e6:3", "--mach", "0:0.3:3"]],
    ids=["none", "no-range", "two-ranges"],
)
def test_cli_sweep_needs_one_range(flags: list[str], capsys: pytest.CaptureFixture[str]):
    assert main(["sweep", str(EXAMPLE), *flags]) == 2
    assert "exactly one range" in capsys.readouterr().err


def test_sweep_csv_marks_failed_points() -> None:
    result = Sweep(
        name=None,
        variable="reynolds",
        label="Re",
        points=msgspec.convert(run_chunk(STRUT, "reynolds", [1e6, -1.0]), list[SweepPoint]),
    )
    rows = sweep_csv(result).splitlines()
    failed = [row for row in rows[1:] if row.startswith("-1.0,")]
    assert len(failed) == 1 and "/flow/reynolds" in failed[0]
    assert not any(math.isnan(float(row.split(",")[0])) for row in rows[1:])


#: Header of the sweep CSV of a Reynolds-number sweep of a case in metres: the documented
#: format (README, "Sweeps"), written out here rather than taken from the code.
REYNOLDS_HEADER_M = [
    "reynolds [-]",
    "side",
    "transition_s [m]",
    "transition_x [m]",
    "transition_cause",
    "laminar_separation_s [m]",
    "laminar_separation_x [m]",
    "bubble",
    "separation_s [m]",
    "separation_x [m]",
    "separation_regime",
    "pressure_plateau_s [m]",
    "min_lambda [-]",
    "max_shape_factor [-]",
    "last_station_s [m]",
    "error",
]


def _swept_with_a_failure() -> Sweep:
    # Values with long decimal expansions, and a case that cannot be run (a negative Re).
    values = [1.0 / 3.0 * 1e6, 2.0**0.5 * 1e6, -1.0]
    return Sweep(
        name="strut",
        variable="reynolds",
        label="Re",
        points=msgspec.convert(run_chunk(STRUT, "reynolds", values), list[SweepPoint]),
        length_unit="m",
    )


def test_sweep_csv_is_plain_csv_that_dictreader_reads() -> None:
    """Python's csv.DictReader takes the first line as the column names (Python library
    reference, csv.DictReader): the first line must be the header row, no comment above it."""
    result = _swept_with_a_failure()
    text = sweep_csv(result)
    assert not text.startswith("#") and "\n#" not in text
    reader = csv.DictReader(io.StringIO(text))
    rows = list(reader)
    assert reader.fieldnames == REYNOLDS_HEADER_M
    assert len(rows) == 2 * 2 + 1  # two sides at each good value, one row for the failure
    assert all(None not in row and len(row) == len(REYNOLDS_HEADER_M) for row in rows)
    assert rows[-1]["side"] == "" and "/flow/reynolds" in rows[-1]["error"]
    assert "# CAUTION: " in sweep_notes(result) and "case: strut" in sweep_notes(result)


def test_sweep_csv_numbers_read_back_exactly() -> None:
    """float(repr(x)) == x for every finite double (Python's shortest round-trip repr, the
    Python language reference on float.__repr__): every number read back by DictReader and
    float() is the very float of the sweep, and every empty cell a None."""
    result = _swept_with_a_failure()
    rows = list(csv.DictReader(io.StringIO(sweep_csv(result))))
    expected: list[tuple[float, SidePositions | None]] = [
        (point.value, side)
        for point in result.points
        for side in (point.sides if point.sides else [None])
    ]
    assert len(rows) == len(expected)
    numeric = 0
    for row, (value, side) in zip(rows, expected, strict=True):
        assert float(row["reynolds [-]"]) == value
        if side is None:
            continue
        for column, name in zip(CSV_COLUMNS[1:-1], REYNOLDS_HEADER_M[1:-1], strict=True):
            wanted = getattr(side, column)
            if isinstance(wanted, float):
                assert float(row[name]) == wanted, (column, row[name], wanted)
                numeric += 1
            else:
                assert row[name] == ("" if wanted is None else wanted), column
    assert numeric > 10


def test_sweep_csv_header_units_follow_the_case() -> None:
    """A trip position is a length, in the unit of the case (README, "Units of length"):
    metres here (the strut gives speed and viscosity), the coordinate unit for a plate
    given by a Reynolds number."""
    strut = sweep(STRUT, "trip_upper", [0.02])
    assert sweep_csv(strut).splitlines()[0].startswith("trip_upper [m],side,transition_s [m],")
    plate = sweep(_plate(), "turbulence_intensity", [0.01])
    header = next(csv.reader(io.StringIO(sweep_csv(plate))))
    assert header[0] == "turbulence_intensity [-]"
    assert "separation_s [coordinate unit]" in header


def test_progress_bar_goes_to_stderr_only_when_asked(capsys: pytest.CaptureFixture[str]) -> None:
    sweep(STRUT, "reynolds", RE_VALUES, chunk=2, progress=True)
    out, err = capsys.readouterr()
    assert out == "" and f"/{len(RE_VALUES)} [" in err
    sweep(STRUT, "reynolds", RE_VALUES, chunk=2, progress=False)
    assert capsys.readouterr() == ("", "")
