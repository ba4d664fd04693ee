"""The CSV station table: self-describing, and read back to the very same numbers."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from similarity import surface_case

import ibl
from ibl.analysis import CAUTION
from ibl.cli import main
from ibl.table import COLUMNS, read_stations, stations_csv

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


def test_null_cells_are_empty() -> None:
    result = _plate()
    text = stations_csv(result)
    rows = [line for line in text.splitlines() if not line.startswith("#")]
    header = rows[0].split(",")
    first = dict(zip(header, rows[1].split(","), strict=True))
    assert result["sides"][0]["cf"][0] is None
    assert first["cf"] == "" and first["x"] == "" and first["y"] == ""
    assert first["side"] == "surface" and first["regime"] == "laminar"


def test_table_is_self_describing() -> None:
    result = ibl.analyze(json.loads(EXAMPLE.read_text()))
    text = stations_csv(result, units="m")
    comments = [line for line in text.splitlines() if line.startswith("#")]
    assert any(CAUTION in line for line in comments)
    assert any(result["name"] in line for line in comments)
    assert any("L = m" in line for line in comments)
    for column in COLUMNS:
        assert any(line.startswith(f"# {column}:") for line in comments), column
    header = next(line for line in text.splitlines() if not line.startswith("#"))
    assert header.split(",") == list(COLUMNS)
    rows = text.count("\nupper,") + text.count("\nlower,")
    assert rows == sum(len(side["s"]) for side in result["sides"])


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
    table = read_stations(capsys.readouterr().out)
    for side in result["sides"]:
        assert table[side["name"]] == _expected(side)


def test_demo_csv_states_metres(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["demo", "--format", "csv"]) == 0
    assert "# L = m;" in capsys.readouterr().out
