"""The station table of a result document as CSV, and reading it back.

Contents
--------
- ``COLUMNS``: the columns of the station table, in order.
- ``stations_csv(result, *, units)``: every side's stations as one long table with a
  ``side`` column; comment lines (``#``) name the case, the units and the caution.
- ``read_stations(text)``: the table back as ``{side: {column: [values]}}``; empty cells are
  ``None``.

Numbers are written with Python's shortest round-trip representation, so reading the table
back gives the very same floats.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping
from typing import Any

from ibl.analysis import CAUTION
from ibl.units import COORDINATE_UNIT, lengths_note

__all__ = ["COLUMNS", "UNITS", "read_stations", "stations_csv"]

#: Columns of the station table; every one but ``side`` and ``regime`` is a number.
COLUMNS = (
    "side",
    "s",
    "x",
    "y",
    "edge_velocity",
    "theta",
    "delta_star",
    "shape_factor",
    "cf",
    "re_theta",
    "delta99",
    "regime",
)

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


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return str(value)


def _header_lines(result: Mapping[str, Any], units: str) -> list[str]:
    name = result.get("name") or "(unnamed)"
    lines = [
        "# ibl station table: one row per station, sides one after another",
        f"# case: {name}",
        f"# L = {units}; {lengths_note(units)} Empty cells: undefined (cf at a stagnation "
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
    """The stations of every side of ``result`` (a result document) as one CSV table."""
    buffer = io.StringIO()
    buffer.write("\n".join(_header_lines(result, units)) + "\n")
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(COLUMNS)
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


def read_stations(text: str) -> dict[str, dict[str, list[Any]]]:
    """Read a station table written by ``stations_csv``.

    Returns ``{side name: {column: values}}`` for every column but ``side``, sides in the
    order they appear; empty cells are ``None``.

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
    header = [name.strip() for name in next(rows)]
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
