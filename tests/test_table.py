"""The CSV station table: plain CSV that Python's csv module and spreadsheets read (the
header row first, RFC 4180 section 2), its notes apart, and read back to the very same
numbers."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from similarity import surface_case

import ibl
from ibl.analysis import CAUTION
from ibl.cli import main
from ibl.table import COLUMNS, header_name, read_stations, stations_csv, stations_notes

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "strut.json"


def _plate() -> dict[str, Any]:
    """Single surface with a sharp leading edge: x and y are null and cf is null at s = 0."""
    s = np.linspace(0.0, 1.0, 201)
    return ibl.analyze(surface_case(s, np.ones_like(s), 2e6, criterion="michel"))


def _expected(side: dict[str, Any]) -> dict[str, list[Any]]:
    count = len(side["s"])
    return {
        column: [None] * count if side[column] is None else list(side[column])
        for column in COLUMNS[1:]
    }


@pytest.mark.parametrize(
    "result",
    [ibl.analyze(json.loads(EXAMPLE.read_text())), _plate()],
    ids=["contour", "single_surface"],
)
def test_round_trip_gives_the_same_floats(result: dict[str, Any]) -> None:
    table = read_stations(stations_csv(result))
    assert list(table) == [side["name"] for side in result["sides"]]
    for side in result["sides"]:
        got = table[side["name"]]
        expected = _expected(side)
        for column in COLUMNS[1:]:
            # repr-exact: == on floats, not approx
            assert got[column] == expected[column], column


def _plain_rows(text: str) -> list[dict[str, str]]:
    """The table as the standard library's csv module reads it: first line = names."""
    return list(csv.DictReader(io.StringIO(text)))


def test_null_cells_are_empty() -> None:
    result = _plate()
    first = _plain_rows(stations_csv(result))[0]
    assert result["sides"][0]["cf"][0] is None
    assert first["cf [-]"] == "" and first["x [coordinate unit]"] == ""
    assert first["y [coordinate unit]"] == ""
    assert first["side"] == "surface" and first["regime"] == "laminar"


def test_plain_csv_readers_see_the_header_then_stations() -> None:
    """csv.DictReader takes the first line as the header: it must be the header row, and
    every other line a station (no comment lines that a plain reader would take as data)."""
    result = ibl.analyze(json.loads(EXAMPLE.read_text()))
    text = stations_csv(result, units="m")
    rows = _plain_rows(text)
    assert len(rows) == sum(len(side["s"]) for side in result["sides"])
    assert not any(line.startswith("#") for line in text.splitlines())
    names = list(rows[0])
    assert names[0] == "side" and names[-1] == "regime"
    assert {"s [m]", "theta [m]", "shape_factor [-]", "cf [-]", "edge_velocity [U_inf]"} <= set(
        names
    )
    assert {row["side"] for row in rows} == {side["name"] for side in result["sides"]}
    for row in rows:  # every numeric cell a number or empty, as a spreadsheet would take it
        for name, cell in row.items():
            if name not in ("side", "regime") and cell:
                float(cell)


def test_header_names_follow_the_unit_rule() -> None:
    for units in ("m", "coordinate unit"):
        for column in COLUMNS:
            name = header_name(column, units)
            if column in ("side", "regime"):
                assert name == column
            else:
                head, _, rest = name.partition(" [")
                assert head == column and rest.endswith("]"), name
    assert header_name("delta99", "m") == "delta99 [m]"
    assert header_name("re_theta", "m") == "re_theta [-]"


def test_notes_say_what_the_table_does_not() -> None:
    result = ibl.analyze(json.loads(EXAMPLE.read_text()))
    notes = stations_notes(result, units="m").splitlines()
    assert all(line.startswith("# ") for line in notes)
    assert any(CAUTION in line for line in notes)
    assert any(result["name"] in line for line in notes)
    assert any("L = m" in line for line in notes)
    for column in COLUMNS:
        assert any(line.startswith(f"# {column}:") for line in notes), column


def test_notes_above_the_table_are_still_read() -> None:
    """A file holding the notes and then the table (or a table of an earlier version,
    which began with # lines) reads back the same."""
    result = _plate()
    text = stations_csv(result)
    assert read_stations(stations_notes(result) + text) == read_stations(text)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("# only comments\n", "no station table"),
        ("side,s\nupper,0.0\n", "lacks"),
        (",".join(COLUMNS) + "\nupper,abc" + ",1" * 9 + ",laminar\n", "not a number"),
        (",".join(COLUMNS) + "\nupper,1\n", "cells"),
    ],
    ids=["empty", "missing-columns", "bad-number", "short-row"],
)
def test_bad_tables_raise(text: str, message: str) -> None:
    with pytest.raises(ValueError, match=message):
        read_stations(text)


def test_cli_csv_matches_cli_json(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["run", str(EXAMPLE), "--format", "json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert main(["run", str(EXAMPLE), "--format", "csv"]) == 0
    written = capsys.readouterr()
    table = read_stations(written.out)
    for side in result["sides"]:
        assert table[side["name"]] == _expected(side)
    assert written.out.splitlines()[0].startswith("side,s [")  # stdout: the table alone
    assert CAUTION in written.err  # the notes: on stderr


def test_demo_csv_states_metres(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["demo", "--format", "csv"]) == 0
    written = capsys.readouterr()
    assert "s [m]" in written.out.splitlines()[0]
    assert "# L = m;" in written.err
