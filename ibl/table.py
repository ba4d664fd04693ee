"""The station table of a result document as CSV, and reading it back.

Contents
--------
- ``COLUMNS``: the columns of the station table, in order.
- ``stations_csv(result, *, units)``: every side's stations as one long table with a
  ``side`` column. Plain CSV: the first line is the header row, every other line a station.
- ``header_name(column, units)``: a column's name in the header, its unit in brackets.
- ``stations_notes(result, *, units)``: what the table does not hold (case, units rule,
  column meanings, pressure plateau and margins of each side, caution), as text lines;
  the CLI writes them to stderr beside the table on stdout.
- ``read_stations(text)``: the table back as ``{side: {column: [values]}}``; empty cells are
  ``None``.

Header names: ``name [unit]``, one space, the unit in square brackets: a length unit (``m``
or ``coordinate unit``), ``U_inf`` for velocities in multiples of the free-stream speed, ``-``
for dimensionless numbers; ``side`` and ``regime`` (text) have none. Python's ``csv``
module, spreadsheets and data-frame readers take the first line as column names.

Numbers are written with Python's shortest round-trip representation, so reading the table
back gives the very same floats.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Mapping
from typing import Any

from ibl.analysis import CAUTION
from ibl.schema import STATION_QUANTITIES
from ibl.units import COORDINATE_UNIT, lengths_note

__all__ = [
    "COLUMNS",
    "HEADER_UNITS",
    "UNITS",
    "header_name",
    "read_stations",
    "stations_csv",
    "stations_notes",
]

#: Columns of the station table: the side, then its station arrays; every one but ``side``
#: and ``regime`` is a number.
COLUMNS = ("side", *STATION_QUANTITIES)

_TEXT = frozenset({"side", "regime"})

#: Units of each column; ``L`` stands for the length unit of the case.
UNITS = {
    "side": "upper/lower/surface",
    "s": "L, arc length from the stagnation point or leading edge",
    "x": "L",
    "y": "L",
    "edge_velocity": "Ue/U_inf",
    "theta": "L, momentum thickness",
    "delta_star": "L, displacement thickness",
    "shape_factor": "-, delta_star/theta",
    "cf": "-, tau_w/(0.5 rho Ue^2)",
    "re_theta": "-, Ue theta/nu",
    "delta99": "L",
    "regime": "laminar/turbulent",
}


#: The unit in each column's header name; ``L`` stands for the length unit of the case,
#: ``None`` for a text column.
HEADER_UNITS: dict[str, str | None] = {
    "side": None,
    "s": "L",
    "x": "L",
    "y": "L",
    "edge_velocity": "U_inf",
    "theta": "L",
    "delta_star": "L",
    "shape_factor": "-",
    "cf": "-",
    "re_theta": "-",
    "delta99": "L",
    "regime": None,
}

#: A header name: the column, then optionally one space and its unit in square brackets.
_HEADER_NAME = re.compile(r"\s*([A-Za-z_][A-Za-z0-9_]*)(?: \[([^\]]*)\])?\s*")


def header_name(column: str, units: str = COORDINATE_UNIT) -> str:
    """The name of ``column`` in the header row, with its unit.

    >>> header_name("theta", "m"), header_name("cf"), header_name("side")
    ('theta [m]', 'cf [-]', 'side')
    """
    unit = HEADER_UNITS[column]
    if unit is None:
        return column
    return f"{column} [{units if unit == 'L' else unit}]"


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


def stations_notes(result: Mapping[str, Any], *, units: str = COORDINATE_UNIT) -> str:
    """What a reader of the station table of ``result`` should know and the table does not
    hold: the case, the units, the plateau and margins of each side, the caution.

    One statement a line, each starting with ``# `` (so that the notes stay apart from the
    table even when both end up in one file); the CLI writes them to stderr.
    """
    return "\n".join(_note_lines(result, units)) + "\n"


def _note_lines(result: Mapping[str, Any], units: str) -> list[str]:
    name = result.get("name") or "(unnamed)"
    lines = [
        "# ibl station table: one row per station, sides one after another",
        f"# case: {name}",
        f"# L = {units}; {lengths_note(units)} Header names carry the unit in brackets "
        "(`theta [m]`; `-` dimensionless). Empty cells: undefined (cf at a stagnation "
        "point or sharp edge) or not applicable (x, y of single-surface input)",
    ]
    lines += [f"# {column}: {unit}" for column, unit in UNITS.items()]
    for side in result.get("sides", []):
        plateau = side.get("pressure_plateau")
        if plateau:
            where = f"s = {plateau['s']!r}"
            if plateau.get("x") is not None:
                where += f" (x = {plateau['x']!r}, y = {plateau['y']!r})"
            lines.append(
                f"# pressure plateau, {side['name']}: onset {where}, ends at s = "
                f"{plateau['end_s']!r}, mean cp = {plateau['cp']!r}: separated flow in the "
                "input data; the stations end at the onset unless separation comes first"
            )
        margins = side.get("margins") or {}
        lam, turb = margins.get("laminar"), margins.get("turbulent")
        if lam:
            lines.append(
                f"# laminar margin, {side['name']}: smallest Thwaites lambda "
                f"{lam['lambda']!r} at s = {lam['s']!r}"
            )
        if turb:
            lines.append(
                f"# turbulent margin, {side['name']}: largest shape factor "
                f"{turb['shape_factor']!r} at s = {turb['s']!r}"
            )
    lines.append(f"# CAUTION: {CAUTION}")
    return lines


def stations_csv(result: Mapping[str, Any], *, units: str = COORDINATE_UNIT) -> str:
    """The stations of every side of ``result`` (a result document) as one CSV table: the
    header row (``header_name``) first, then one row per station. Nothing else: what the
    table does not say is in ``stations_notes``."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow([header_name(column, units) for column in COLUMNS])
    missing = [c for c in COLUMNS[1:] if any(c not in side for side in result["sides"])]
    if missing:
        raise ValueError(
            f"the station table needs the station arrays; the result lacks {', '.join(missing)}"
            ": analyse the case with output.stations = true"
        )
    for side in result["sides"]:
        count = len(side["s"])
        for i in range(count):
            row = [side["name"]]
            for column in COLUMNS[1:]:
                values = side[column]
                row.append(_cell(None if values is None else values[i]))
            writer.writerow(row)
    return buffer.getvalue()


def _parse(column: str, cell: str, line: int) -> str | float | None:
    if column in _TEXT:
        return cell
    if cell == "":
        return None
    try:
        return float(cell)
    except ValueError:
        raise ValueError(f"line {line}: `{column}` value {cell!r} is not a number") from None


def _column_of(name: str) -> str:
    """The column of a header name: ``theta [m]`` -> ``theta``; unknown forms unchanged."""
    match = _HEADER_NAME.fullmatch(name)
    return match.group(1) if match else name.strip()


def read_stations(text: str) -> dict[str, dict[str, list[Any]]]:
    """Read a station table written by ``stations_csv``.

    Returns ``{side name: {column: values}}`` for every column but ``side``, sides in the
    order they appear; empty cells are ``None``. Header names are matched without their
    unit (``theta [m]`` is ``theta``); lines starting with ``#`` (notes pasted above the
    table, or tables of earlier versions, which began with them) are skipped.

    Raises
    ------
    ValueError
        If the header lacks a column or a cell is not a number.
    """
    numbered = [
        (number, line)
        for number, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not numbered:
        raise ValueError("no station table: the text holds no header line")
    rows = csv.reader(line for _, line in numbered)
    header = [_column_of(name) for name in next(rows)]
    missing = [column for column in COLUMNS if column not in header]
    if missing:
        raise ValueError(f"the header lacks {', '.join(missing)}")
    sides: dict[str, dict[str, list[Any]]] = {}
    for (number, _), row in zip(numbered[1:], rows, strict=True):
        if len(row) != len(header):
            raise ValueError(f"line {number}: {len(row)} cells, expected {len(header)}")
        cells = dict(zip(header, row, strict=True))
        side = sides.setdefault(cells["side"], {column: [] for column in COLUMNS[1:]})
        for column in COLUMNS[1:]:
            side[column].append(_parse(column, cells[column], number))
    return sides
