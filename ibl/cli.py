"""Command line: ``ibl run``, ``ibl demo``, ``ibl sweep``, ``ibl validate``, ``ibl bench``,
``ibl serve``.

Contents
--------
- ``main(argv)``: the entry point.
- ``load_case(path, overrides)``: a case from JSON or CSV, with options from flags.
- ``csv_case(text)``: the geometry and pressure members of a case from CSV text.
- ``summary(result, units, outline)``: the readable per-side summary.
- ``chord_position(outline, x, y)``: x/c of a point of a closed contour, and the chord c.
"""

from __future__ import annotations

import argparse
import csv
import json
import math
import re
import sys
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any

import msgspec

from ibl.analysis import CAUTION, analyze
from ibl.errors import CaseError
from ibl.turbulent import METHODS
from ibl.units import COORDINATE_UNIT, lengths_note

if TYPE_CHECKING:
    from ibl.figures import Format

__all__ = [
    "CSV_QUANTITIES",
    "DEMO_CASE",
    "csv_case",
    "load_case",
    "main",
    "parse_columns",
    "summary",
]

#: The built-in demonstration case (invented data).
DEMO_CASE = "strut.json"

#: Quantities a CSV column can carry, by their names in the case document.
CSV_QUANTITIES = ("x", "y", "s", "cp", "p", "edge_velocity", "radius")
#: Pressure quantities, in the order a header is searched for one when none is named.
_PRESSURES = ("cp", "edge_velocity", "p")
#: Delimiters recognised from the header line when ``--delimiter`` is not given.
_DELIMITERS = (",", ";", "\t")
#: Units (in square brackets in a header name) each quantity may be given in.
_UNITS = {"p": {"pa"}, "cp": {"-", "1"}, "edge_velocity": {"-", "1"}}
_UNIT = re.compile(r"\[\s*([^\]]*?)\s*\]")


def parse_columns(text: str) -> dict[str, str]:
    """``--columns`` text to {quantity: column name}.

    >>> parse_columns('x=X [ m ],y=Y [ m ], p = "Pressure [ Pa ]"')
    {'x': 'X [ m ]', 'y': 'Y [ m ]', 'p': 'Pressure [ Pa ]'}

    Raises
    ------
    CaseError
        For an item that is not QUANTITY=COLUMN, an unknown quantity or one named twice.
    """
    mapping: dict[str, str] = {}
    for item in re.split(r",(?=\s*\w+\s*=)", text):
        key, equals, name = item.partition("=")
        key, name = key.strip().lower(), name.strip()
        if len(name) > 1 and name[0] == name[-1] and name[0] in "\"'":
            name = name[1:-1].strip()
        if not equals or not key or not name:
            raise CaseError.at("", f"--columns: {item.strip()!r} is not QUANTITY=COLUMN")
        if key not in CSV_QUANTITIES:
            raise CaseError.at(
                "",
                f"--columns: unknown quantity {key!r}; use {', '.join(CSV_QUANTITIES)}",
            )
        if key in mapping:
            raise CaseError.at("", f"--columns: {key!r} is named twice")
        mapping[key] = name
    return mapping


def _key(name: str) -> str:
    """A column name as compared: case-insensitive, white space ignored."""
    return "".join(name.split()).lower()


def _delimiter(header_line: str, given: str | None) -> str:
    if given is not None:
        named = {"tab": "\t", "\\t": "\t", "comma": ",", "semicolon": ";"}
        delimiter = named.get(given.lower(), given)
        if len(delimiter) != 1 or delimiter in '"\r\n':
            raise CaseError.at("", f"--delimiter: {given!r} is not one character")
        return delimiter
    counts = {d: len(next(csv.reader([header_line], delimiter=d))) for d in _DELIMITERS}
    return max(_DELIMITERS, key=lambda d: counts[d])  # a tie keeps the comma


def _select(path: Path | str, header: list[str], mapping: dict[str, str]) -> dict[str, int]:
    """The column index of each quantity read: those named by ``--columns``, and the others
    found by their own names in the header where they do not conflict with a named one."""
    keys = [_key(name) for name in header]
    index: dict[str, int] = {}
    for quantity, name in mapping.items():
        if _key(name) not in keys:
            raise CaseError.at(
                "",
                f"{path}: the header has no column {name!r} (--columns {quantity}=...); it holds "
                + ", ".join(repr(h) for h in header),
            )
        index[quantity] = keys.index(_key(name))
    found = {q: keys.index(q) for q in CSV_QUANTITIES if q in keys and q not in index}
    if not {"x", "y", "s"} & index.keys():  # no geometry named: x and y before s
        drop = ("s",) if {"x", "y"} <= found.keys() else ("x", "y")
    else:
        drop = ("x", "y") if "s" in index else ("s",)
    for q in drop:
        found.pop(q, None)
    pressures = [q for q in _PRESSURES if q in found]
    for q in pressures[1:] if not set(_PRESSURES) & index.keys() else pressures:
        found.pop(q)
    index.update(found)
    contour = "x" in index or "y" in index
    if (contour and not {"x", "y"} <= index.keys()) or not (contour or "s" in index):
        wanted = "y" if "x" in index else "x" if contour else "x and y (or s)"
        raise CaseError.at(
            "",
            f"{path}: the header has no column for {wanted}; it holds "
            + ", ".join(repr(h) for h in header)
            + ". Name them with --columns, e.g. --columns 'x=X [ m ],y=Y [ m ],p=Pressure [ Pa ]'",
        )
    if not set(_PRESSURES) & index.keys():
        raise CaseError.at(
            "",
            f"{path}: the header has no column for the pressure (cp, edge_velocity or p); it holds "
            + ", ".join(repr(h) for h in header)
            + ". Name it with --columns, e.g. --columns 'p=Pressure [ Pa ]'",
        )
    for quantity, column in index.items():
        units = _UNIT.findall(header[column])
        allowed = _UNITS.get(quantity)
        if allowed and units and units[-1].lower() not in allowed:
            raise CaseError.at(
                "",
                f"{path}: column {header[column]!r} is in {units[-1]}; {quantity} is read "
                + ("in Pa" if quantity == "p" else "as a ratio [-]"),
            )
    return index


def _number(cell: str, decimal_comma: bool) -> float:
    text = cell.strip()
    if decimal_comma and "," in text and "." not in text:
        text = text.replace(",", ".", 1)
    return float(text)


def _read_csv(
    path: Path, columns: str | None = None, delimiter: str | None = None
) -> dict[str, Any]:
    """A case from a CSV file (``csv_case`` on its text; UTF-8, else Windows-1252)."""
    try:
        text = path.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        text = path.read_text(encoding="cp1252", errors="replace")
    return csv_case(text, path, columns, delimiter)


def csv_case(
    text: str, source: Path | str = "CSV", columns: str | None = None, delimiter: str | None = None
) -> dict[str, Any]:
    """The ``surface``, ``pressure`` and (with radii) ``body`` of a case from a CSV table:
    one column per quantity, named in the header by its case document name (x, y, s, cp, p,
    edge_velocity, radius) or mapped by ``columns`` (``--columns``). A leading byte-order
    mark, ``#`` comment lines, quoted header names and other columns are allowed; the
    delimiter is ``,``, ``;`` or a tab, from the header unless given, and with ``;`` or a
    tab a decimal comma is read as a decimal point. ``source`` starts every message.

    >>> csv_case("s,edge_velocity\\n0,0\\n0.5,1.1\\n1,1.05\\n")["pressure"]
    {'edge_velocity': [0.0, 1.1, 1.05]}

    Raises
    ------
    CaseError
        At the pointer ``""``, naming the line and column of what cannot be read.
    """
    text = text.removeprefix("\ufeff")
    lines = [
        (number, line)
        for number, line in enumerate(text.splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not lines:
        raise CaseError.at("", f"{source}: empty CSV file")
    try:
        sep = _delimiter(lines[0][1], delimiter)
    except csv.Error as error:
        raise CaseError.at("", f"{source}, line {lines[0][0]}: {error}") from None

    def split(number: int, line: str) -> list[str]:
        try:
            return next(csv.reader([line], delimiter=sep, skipinitialspace=True), [])
        except csv.Error as error:
            raise CaseError.at("", f"{source}, line {number}: {error}") from None

    header = [name.strip() for name in split(*lines[0])]
    index = _select(source, header, parse_columns(columns) if columns else {})
    values: dict[str, list[float]] = {quantity: [] for quantity in index}
    for number, line in lines[1:]:
        row = split(number, line)
        if not any(cell.strip() for cell in row):
            continue
        if len(row) != len(header) and (
            len(row) < len(header) or any(c.strip() for c in row[len(header) :])
        ):
            raise CaseError.at(
                "", f"{source}, line {number}: {len(row)} values, expected {len(header)}"
            )
        for quantity, column in index.items():
            cell = row[column]
            try:
                values[quantity].append(_number(cell, sep != ","))
            except ValueError:
                raise CaseError.at(
                    "",
                    f"{source}, line {number}: column {header[column]!r} ({quantity}) value "
                    f"{cell!r} is not a number",
                ) from None
    if not next(iter(values.values())):
        raise CaseError.at("", f"{source}: no data rows under the header")
    surface = {"s": values["s"]} if "s" in values else {"x": values["x"], "y": values["y"]}
    pressure = {q: values[q] for q in _PRESSURES if q in values}
    case: dict[str, Any] = {"surface": surface, "pressure": pressure}
    if "radius" in values:
        case["body"] = {"kind": "axisymmetric", "radius": values["radius"]}
    return case


def load_case(path: Path, args: argparse.Namespace | None = None) -> dict[str, Any]:
    """Read a case from a JSON case document or a CSV table, then apply flag overrides."""
    columns = getattr(args, "columns", None)
    delimiter = getattr(args, "delimiter", None)
    if path.suffix.lower() == ".csv":
        case = _read_csv(path, columns, delimiter)
    else:
        if columns is not None or delimiter is not None:
            flag = "--columns" if columns is not None else "--delimiter"
            raise CaseError.at("", f"{flag} applies to CSV input only")
        try:
            case = json.loads(path.read_text())
        except json.JSONDecodeError as error:
            raise CaseError.at("", f"{path}: malformed JSON: {error}") from None
        if not isinstance(case, dict):
            raise CaseError.at("", f"{path}: a case document is a JSON object")
    if args is not None:
        _apply_flags(case, args)
    return case


_JSON_TYPES = {
    str: "str",
    int: "int",
    float: "float",
    bool: "bool",
    list: "array",
    type(None): "null",
}


def _object_member(parent: dict[str, Any], key: str, pointer: str, flag: str) -> dict[str, Any]:
    """The object member ``key`` of ``parent`` (created empty when missing) that ``flag``
    writes into; a member of another type is a case error naming it."""
    value = parent.setdefault(key, {})
    if not isinstance(value, dict):
        kind = _JSON_TYPES.get(type(value), type(value).__name__)
        raise CaseError.at(
            pointer, f"Expected `object`, got `{kind}`; {flag} sets a member of this object"
        )
    return value


def _apply_flags(case: dict[str, Any], args: argparse.Namespace) -> None:
    """Write the flags given into the case document.

    Raises
    ------
    CaseError
        If a member a flag writes into is not an object (e.g. ``"flow": 5``).
    """

    def flow(flag: str) -> dict[str, Any]:
        return _object_member(case, "flow", "/flow", flag)

    def transition(flag: str) -> dict[str, Any]:
        return _object_member(case, "transition", "/transition", flag)

    def pressure(flag: str) -> dict[str, Any]:
        return _object_member(case, "pressure", "/pressure", flag)

    if args.reynolds is not None:
        member = flow("--reynolds")
        member.pop("speed", None)
        member.pop("kinematic_viscosity", None)
        member["reynolds"] = args.reynolds
    if args.speed is not None:
        member = flow("--speed")
        member.pop("reynolds", None)
        member["speed"] = args.speed
    if args.viscosity is not None:
        member = flow("--viscosity")
        member.pop("reynolds", None)
        member["kinematic_viscosity"] = args.viscosity
    if args.mach is not None:
        flow("--mach")["mach"] = args.mach
    if args.reference_pressure is not None:
        pressure("--reference-pressure")["reference_pressure"] = args.reference_pressure
    if args.dynamic_pressure is not None:
        flow("--dynamic-pressure").pop("density", None)
        pressure("--dynamic-pressure")["dynamic_pressure"] = args.dynamic_pressure
    if args.density is not None:
        pressure("--density").pop("dynamic_pressure", None)
        flow("--density")["density"] = args.density
    if args.turbulence_intensity is not None:
        flow("--turbulence-intensity")["turbulence_intensity"] = args.turbulence_intensity
    if args.criterion is not None:
        transition("--criterion")["criterion"] = args.criterion
    if args.turbulent_method is not None:
        turbulent = _object_member(case, "turbulent", "/turbulent", "--turbulent-method")
        turbulent["method"] = args.turbulent_method
    method = getattr(args, "laminar_method", None)
    if method is not None:
        _object_member(case, "laminar", "/laminar", "--laminar-method")["method"] = method
    trips = {"upper": args.trip_upper, "lower": args.trip_lower, "surface": args.trip}
    for side, value in trips.items():
        if value is not None:
            flag = "--trip" if side == "surface" else f"--trip-{side}"
            member = _object_member(transition(flag), "trip", "/transition/trip", flag)
            member[side] = value
    if args.axisymmetric:
        _object_member(case, "body", "/body", "--axisymmetric")["kind"] = "axisymmetric"
    if args.y_plus:
        case["mesh"] = {"y_plus": args.y_plus}
    if getattr(args, "summary", False):
        _object_member(case, "output", "/output", "--summary")["stations"] = False
    if args.smoothing is not None:
        _object_member(case, "pressure", "/pressure", "--smoothing")["smoothing"] = args.smoothing


def _smoothing_argument(text: str) -> str | float:
    """``--smoothing``: 'auto' or a number (its range is checked with the case)."""
    if text == "auto":
        return text
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError("expected 'auto' or a number") from None


def _fmt(value: float | None, unit: str = "") -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return f"{value:.4g}{unit}"


_CAUSES = {
    "criterion": "criterion met",
    "trip": "trip",
    "laminar_separation": "at laminar separation (short bubble)",
}


def _where(event: dict[str, Any]) -> str:
    text = f"s = {_fmt(event['s'])}"
    if event.get("x") is not None:
        text += f" (x = {_fmt(event['x'])})"
    return text


def _margin_lines(side: dict[str, Any], options: dict[str, Any]) -> list[str]:
    """Closest approach to each separation criterion over the stations."""
    margins = side.get("margins") or {}
    sep = side.get("separation") or {}
    lines = []
    lam = margins.get("laminar")
    if lam:
        crossed = side.get("laminar_separation") is not None
        lines.append(
            f"  laminar margin      smallest lambda = {_fmt(lam['lambda'])} at s = "
            f"{_fmt(lam['s'])} "
            + ("(then crossed: laminar separation)" if crossed else "")
            + f"(separation at {options['separation_lambda']})" * (not crossed)
        )
    turb = margins.get("turbulent")
    if turb:
        crossed = sep.get("regime") == "turbulent"
        lines.append(
            f"  turbulent margin    largest H = {_fmt(turb['shape_factor'])} at s = "
            f"{_fmt(turb['s'])} "
            + ("(crossed: turbulent separation)" if crossed else "")
            + f"(separation at {options['separation_shape_factor']})" * (not crossed)
        )
    return lines


#: How the chord of a closed contour is defined, as the summary says it.
CHORD_DEFINITION = (
    "from the contour point of smallest x (most upstream) to that of largest x (most "
    "downstream); x/c is the distance along the chord from its upstream end, over c"
)
#: What the summary says where transition is placed at a short laminar separation bubble.
BUBBLE_SIMPLIFICATION = (
    "transition placed at the laminar separation point of the short bubble; its "
    "reattachment and length are not modelled"
)


def chord_position(
    outline: tuple[Any, Any] | None, x: float, y: float
) -> tuple[float, float] | None:
    """(x/c, c) of the point (x, y) on a closed contour ``outline`` (see ``CHORD_DEFINITION``);
    None for an open contour, or one whose chord has no length.

    >>> square = ([0.0, 2.0, 2.0, 0.0, 0.0], [0.0, 0.0, 1.0, 1.0, 0.0])
    >>> chord_position(square, 0.5, 0.0)
    (0.25, 2.0)
    """
    if outline is None:
        return None
    import numpy as np

    from ibl.prepare import _closure

    px, py = np.asarray(outline[0], dtype=float), np.asarray(outline[1], dtype=float)
    if px.size < 3 or px.size != py.size or not (np.isfinite(px).all() and np.isfinite(py).all()):
        return None
    arc = np.concatenate([[0.0], np.cumsum(np.hypot(np.diff(px), np.diff(py)))])
    if not _closure(px, py, arc)[0]:
        return None
    front, rear = int(np.argmin(px)), int(np.argmax(px))
    dx, dy = float(px[rear] - px[front]), float(py[rear] - py[front])
    chord = math.hypot(dx, dy)
    if chord <= 0.0:
        return None
    along = float((x - px[front]) * dx + (y - py[front]) * dy) / chord
    return along / chord, chord


def summary(
    result: dict[str, Any],
    *,
    units: str = COORDINATE_UNIT,
    outline: tuple[Any, Any] | None = None,
) -> str:
    """A readable summary of a result document, one block per side, with the caution.

    ``units`` is the case's length unit (``ibl.units.length_unit``); ``outline``, the input
    contour (x, y), gives the stagnation point's x/c on a closed contour."""
    lines = []
    if result.get("name"):
        lines.append(f"Case: {result['name']}")
    stag = result.get("stagnation")
    if stag:
        chord = chord_position(outline, stag["x"], stag["y"])
        lines.append(
            "Stagnation point: "
            + (f"x/c = {_fmt(chord[0])}, " if chord else "")
            + f"x = {_fmt(stag['x'])}, y = {_fmt(stag['y'])} "
            f"({_fmt(stag['s'])} along the contour from its first point, at index "
            f"{stag['position']:.2f} of the input points)"
        )
        if chord:
            lines.append(f"  chord c = {_fmt(chord[1])}, {CHORD_DEFINITION}")
    options = result["options"]
    lines.append(
        f"Methods: {options['laminar_method']}"
        + (
            f" (lambda_sep = {options['separation_lambda']})"
            if options["laminar_method"].startswith("thwaites")
            else ""
        )
        + ", "
        f"transition {options['transition_criterion']}, {options['turbulent_method']} with "
        f"{options['skin_friction']} (H_sep = {options['separation_shape_factor']})"
    )
    for side in result["sides"]:
        lines.append("")
        if side.get("s"):
            end = side["s"][-1]
            lines.append(f"[{side['name']}]  {len(side['s'])} stations, s = 0 to {_fmt(end)}")
        else:
            lines.append(f"[{side['name']}]")
        tr = side["transition"]
        if tr:
            cause = _CAUSES[tr["cause"]]
            lines.append(
                f"  transition          {_where(tr)}, {cause}, Re_theta = {_fmt(tr['re_theta'])}"
            )
            if tr["cause"] == "laminar_separation":
                lines.append(f"                      ({BUBBLE_SIMPLIFICATION})")
        else:
            lines.append("  transition          none (laminar throughout the attached length)")
        ls = side["laminar_separation"]
        if ls:
            lines.append(
                f"  laminar separation  {_where(ls)}, Re_delta* = {_fmt(ls['re_delta_star'])}: "
                f"{ls['bubble']} bubble"
                + (" (likely to burst: treated as separation)" if ls["bubble"] == "long" else "")
            )
        sep = side["separation"]
        plateau = side.get("pressure_plateau")
        if sep:
            lines.append(f"  separation          {_where(sep)}, {sep['regime']}")
        elif plateau:
            lines.append("  separation          none predicted before the pressure plateau")
        else:
            lines.append("  separation          none: attached to the end of the surface")
        if plateau:
            ends_there = not sep and math.isclose(end, plateau["s"], rel_tol=1e-9, abs_tol=1e-12)
            lines.append(
                f"  pressure plateau    {_where(plateau)} to s = {_fmt(plateau['end_s'])}, "
                f"mean Cp = {_fmt(plateau['cp'])}: separated flow in the input data"
                + ("; the stations end at its onset" if ends_there else "")
            )
        lines.extend(_margin_lines(side, options))
        m = side["mesh"]
        for cell in m["first_cell"]:
            lines.append(
                f"  first cell y+ = {cell['y_plus']:<6g} height {_fmt(cell['height'])} "
                f"(smallest, at s = {_fmt(cell['s'])})"
            )
        lines.append(
            f"  largest delta99     {_fmt(m['max_thickness'])} at s = {_fmt(m['max_thickness_s'])}"
        )
        lines.append(
            f"  peak nu_t/nu        {_fmt(m['max_eddy_viscosity_ratio'])}"
            + (" (turbulent part)" if m["max_eddy_viscosity_ratio"] > 0 else " (laminar only)")
        )
        if "friction_drag" in side:
            lines.append(f"  friction drag       {_fmt(side['friction_drag'])} (up to separation)")
    drag = result.get("drag")
    if drag:
        axisymmetric = options["laminar_method"].endswith(("crabtree_1952", "mangler_1948"))
        per = "q_inf L^2" if axisymmetric else "q_inf L"
        lines.append("")
        lines.append(f"Drag (D/{per}, L the coordinate unit):")
        lines.append(f"  friction            {_fmt(drag['friction'])}")
        if drag["profile"] is not None:
            lines.append(
                f"  profile             {_fmt(drag['profile'])} ({drag['profile_method']})"
            )
        else:
            lines.append("  profile             -")
        lines.append(f"  {drag['note']}")
    if result["warnings"]:
        lines.append("")
        lines.append("Warnings:")
        lines.extend(f"  [{w['code']}] {w['message']}" for w in result["warnings"])
    lines.append("")
    lines.append(lengths_note(units))
    lines.append("CAUTION: " + CAUTION)
    return "\n".join(lines)


#: Flags that ``ibl sweep`` accepts either as a number or as a range start:stop:count.
_SWEEPABLE = {
    "reynolds": "Reynolds number Re = U_inf L/nu, L one coordinate unit [-]",
    "mach": "free-stream Mach number [-]",
    "turbulence_intensity": "free-stream turbulence intensity, a fraction, e.g. 0.01 [-]",
    "trip_upper": "trip position on the upper side, s from the stagnation point [L]",
    "trip_lower": "trip position on the lower side, s from the stagnation point [L]",
    "trip": "trip position on a single surface, in the s of surface.s [L]",
}
#: What [L] in the help stands for (``ibl.units.LENGTH_RULE``).
_L = " (L: m when the flow is given by speed and viscosity, else the coordinate unit)"


def _add_case_flags(
    parser: argparse.ArgumentParser, *, sweep: bool = False, csv_input: bool = True
) -> None:
    if sweep:
        parser.add_argument(
            "--format",
            choices=["text", "csv", "json"],
            default="text",
            help="text table, CSV table (plain CSV on stdout, units in the header names; case, "
            "units rule and caution on stderr) or JSON document",
        )
        for name, text in _SWEEPABLE.items():
            parser.add_argument(
                "--" + name.replace("_", "-"),
                metavar="VALUE|START:STOP:COUNT",
                help=text
                + (_L if name.startswith("trip") else "")
                + ("; a range is spaced logarithmically" if name == "reynolds" else ""),
            )
    else:
        parser.add_argument(
            "--format",
            choices=["text", "json", "csv"],
            default="text",
            help="text summary, JSON result document, or CSV station table (plain CSV on "
            "stdout, units in the header names; case, units rule and caution on stderr)",
        )
        parser.add_argument("--reynolds", type=float, help=_SWEEPABLE["reynolds"])
        parser.add_argument("--mach", type=float, help=_SWEEPABLE["mach"])
        parser.add_argument(
            "--turbulence-intensity", type=float, help=_SWEEPABLE["turbulence_intensity"]
        )
        parser.add_argument("--trip-upper", type=float, help=_SWEEPABLE["trip_upper"] + _L)
        parser.add_argument("--trip-lower", type=float, help=_SWEEPABLE["trip_lower"] + _L)
        parser.add_argument("--trip", type=float, help=_SWEEPABLE["trip"] + _L)
        parser.add_argument(
            "--summary",
            action="store_true",
            help="leave the station arrays out of the result (output.stations = false): "
            "stagnation point, events, drag, mesh advice and warnings only",
        )
    parser.add_argument("--speed", type=float, help="free-stream speed [m/s]")
    parser.add_argument("--viscosity", type=float, help="kinematic viscosity [m^2/s]")
    parser.add_argument(
        "--reference-pressure",
        type=float,
        metavar="PA",
        help="free-stream static pressure p_inf [Pa], for pressure given as p",
    )
    parser.add_argument(
        "--dynamic-pressure",
        type=float,
        metavar="PA",
        help="free-stream dynamic pressure q_inf [Pa], for p (or give --density and --speed)",
    )
    parser.add_argument(
        "--density",
        type=float,
        metavar="KG_M3",
        help="free-stream density [kg/m^3]: q_inf = 0.5 rho U_inf^2 with --speed",
    )
    if csv_input:
        parser.add_argument(
            "--columns",
            metavar="Q=COLUMN,...",
            help="CSV columns by header name (case-insensitive) for the quantities x, y, s, "
            "cp, p, edge_velocity, radius, e.g. 'x=X [ m ],y=Y [ m ],p=Pressure [ Pa ]'",
        )
        parser.add_argument(
            "--delimiter",
            help="CSV delimiter: one character, or tab (default: ',', ';' or tab, from the header)",
        )
    parser.add_argument(
        "--criterion",
        choices=["michel", "granville", "abu_ghannam_shaw", "none"],
        help="natural-transition criterion (none: no criterion is applied)",
    )
    parser.add_argument(
        "--turbulent-method",
        choices=list(METHODS),
        help="turbulent method: head (Head 1958) or lag_entrainment (Green, Weeks & Brooman 1977)",
    )
    if sweep:
        parser.add_argument(
            "--laminar-method",
            metavar="METHOD[,METHOD]",
            help="laminar method: thwaites or finite_difference; a comma-separated list "
            "runs the sweep once per method (a swept choice), e.g. thwaites,finite_difference",
        )
    else:
        parser.add_argument(
            "--laminar-method",
            choices=["thwaites", "finite_difference"],
            help="laminar method: Thwaites' integral method (default) or the laminar "
            "boundary-layer equations marched by Keller's box scheme (finite_difference)",
        )
    parser.add_argument("--axisymmetric", action="store_true", help="body of revolution")
    parser.add_argument(
        "--y-plus", type=float, nargs="+", help="first-cell y+ targets for mesh advice [-]"
    )
    parser.add_argument(
        "--smoothing",
        type=_smoothing_argument,
        help="smoothing of (Ue/U_inf)^2 along s: 'auto' (generalised cross-validation) or a "
        "spline penalty from 0 to 1e-7 [-] (on normalised arc length and edge velocity; "
        "see README)",
    )
    parser.add_argument(
        "--plot", type=Path, metavar="FILE", help="write a figure (.png or .svg) to FILE"
    )


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="ibl",
        description="Integral boundary-layer and transition estimates from a surface "
        "pressure distribution. " + CAUTION,
    )
    commands = parser.add_subparsers(dest="command", required=True)
    run = commands.add_parser("run", help="analyse a case (JSON case document or CSV taps)")
    run.add_argument(
        "case",
        type=Path,
        help="CASE.json, or a CSV with columns x,y (or s) and cp, p or edge_velocity "
        "(see --columns)",
    )
    _add_case_flags(run)
    demo = commands.add_parser("demo", help="analyse the built-in demonstration case")
    _add_case_flags(demo, csv_input=False)
    sweep = commands.add_parser(
        "sweep",
        help="run a case over a range of one variable (e.g. --reynolds 1e5:1e7:20)",
        description="Run a case at every value of one range START:STOP:COUNT (logarithmic for "
        "--reynolds, linear otherwise) and tabulate transition and separation on each side. "
        "Other flags given as single numbers fix that value. " + CAUTION,
    )
    sweep.add_argument("case", type=Path, help="CASE.json or a CSV of taps")
    _add_case_flags(sweep, sweep=True)
    sweep.add_argument("--chunk", type=int, help="cases per batch [cases] (default: 64 here)")
    sweep.add_argument(
        "--scheduler", metavar="ADDRESS", help="dask.distributed scheduler, e.g. tcp://host:8786"
    )
    sweep.add_argument("--quiet", action="store_true", help="no progress bar")
    validate = commands.add_parser(
        "validate",
        help="compare with exact solutions and published data",
        description="Run the reference cases: exact solutions of the boundary-layer equations, "
        "measurements and published laws; print each comparison with its tolerance and source. "
        "Exit status 1 if any lies outside its tolerance.",
    )
    validate.add_argument(
        "--format", choices=["text", "json"], default="text", help="text report or JSON document"
    )
    validate.add_argument(
        "--plot", type=Path, metavar="FILE", help="write a figure (.png or .svg) to FILE"
    )
    bench = commands.add_parser("bench", help="print timing figures of the march")
    bench.add_argument(
        "--repeat",
        type=int,
        default=200,
        help="timed calls per single-case figure, whose median is printed [calls]",
    )
    bench.add_argument("--batch", type=int, default=2000, help="sides in the batched run [sides]")
    bench.add_argument(
        "--ratios",
        action="store_true",
        help="print only the end-to-end paths as ratios to the march, beside their targets",
    )
    commands.add_parser("serve", help="run the HTTP service", add_help=False)
    return parser


def _report(error: CaseError) -> int:
    print("ibl: the case cannot be analysed:", file=sys.stderr)
    for problem in error.problems:
        print(f"  {problem.pointer or '/'}: {problem.reason}", file=sys.stderr)
    return 2


def _plot_format(path: Path | None) -> Format | None:
    """The figure format of ``--plot``, checked before any work is done.

    Raises
    ------
    ValueError
        If the file name does not end in .png or .svg.
    """
    if path is None:
        return None
    from ibl.figures import format_of

    return format_of(path)


def _write_figure(path: Path, data: bytes) -> None:
    path.write_bytes(data)
    print(f"ibl: figure written to {path}", file=sys.stderr)


def _analyse(args: argparse.Namespace) -> int:
    """``ibl run`` and ``ibl demo``."""
    try:
        fmt = _plot_format(args.plot)
    except ValueError as error:
        print(f"ibl: {error}", file=sys.stderr)
        return 2
    if args.command == "demo":
        text = resources.files("ibl").joinpath("data", DEMO_CASE).read_text()
        case = json.loads(text)
        _apply_flags(case, args)
    else:
        if not args.case.exists():
            print(f"ibl: {args.case}: no such file", file=sys.stderr)
            return 2
        case = load_case(args.case, args)
    if args.format == "csv" or args.plot is not None:
        # The table and the figure are the stations, whatever the case's output asks.
        if args.summary:
            what = "--format csv" if args.format == "csv" else "--plot"
            print(f"ibl: --summary leaves out the stations that {what} needs", file=sys.stderr)
            return 2
        if isinstance(case.get("output"), dict):
            case["output"] = dict(case["output"], stations=True)
    result = analyze(case)
    from ibl.figures import length_unit

    units = length_unit(case)
    surface = case.get("surface", {})
    outline = (surface["x"], surface["y"]) if surface.get("x") and surface.get("y") else None
    if args.format == "json":
        sys.stdout.write(msgspec.json.encode(result).decode() + "\n")
    elif args.format == "csv":
        from ibl.table import stations_csv, stations_notes

        # The table alone on stdout, for plain CSV readers; what it does not say, on stderr.
        sys.stdout.write(stations_csv(result, units=units))
        sys.stderr.write(stations_notes(result, units=units))
    else:
        print(summary(result, units=units, outline=outline))
    if args.plot is not None and fmt is not None:
        from ibl.figures import render

        _write_figure(args.plot, render(result, fmt, units=units, outline=outline))
    return 0


def _sweep_range(args: argparse.Namespace) -> tuple[str, list[float]]:
    """The one swept flag and its values; the other sweepable flags become numbers."""
    from ibl.sweep import parse_range

    ranges = [n for n in _SWEEPABLE if getattr(args, n) is not None and ":" in getattr(args, n)]
    if len(ranges) != 1:
        raise ValueError(
            "give exactly one range START:STOP:COUNT, e.g. --reynolds 1e5:1e7:20"
            + (f" (got {len(ranges)})" if ranges else "")
        )
    variable = ranges[0]
    values = parse_range(getattr(args, variable), variable)
    setattr(args, variable, None)
    for name in _SWEEPABLE:
        text = getattr(args, name)
        if text is not None:
            try:
                setattr(args, name, float(text))
            except ValueError:
                raise ValueError(f"--{name.replace('_', '-')}: {text!r} is not a number") from None
    return variable, values


def _sweep(args: argparse.Namespace) -> int:
    """``ibl sweep``."""
    from ibl.sweep import sweep, sweep_csv, sweep_notes, sweep_text

    try:
        fmt = _plot_format(args.plot)
        variable, values = _sweep_range(args)
    except ValueError as error:
        print(f"ibl: {error}", file=sys.stderr)
        return 2
    if not args.case.exists():
        print(f"ibl: {args.case}: no such file", file=sys.stderr)
        return 2
    methods = None
    if args.laminar_method is not None and "," in args.laminar_method:
        methods = [m.strip() for m in args.laminar_method.split(",")]
        args.laminar_method = None
    case = load_case(args.case, args)
    flag = "--" + variable.replace("_", "-")
    if variable.startswith("trip"):
        transition = _object_member(case, "transition", "/transition", flag)
        _object_member(transition, "trip", "/transition/trip", flag)
    else:
        _object_member(case, "flow", "/flow", flag)
    progress = sys.stderr.isatty() and not args.quiet
    try:
        result = sweep(
            case,
            variable,
            values,
            scheduler=args.scheduler,
            chunk=args.chunk,
            progress=progress,
            methods=methods,
        )
    except ImportError as error:
        print(f"ibl: --scheduler needs dask.distributed ({error})", file=sys.stderr)
        return 2
    except CaseError:
        raise  # reported with its pointers by ``main``
    except ValueError as error:  # the laminar methods of a swept choice
        print(f"ibl: {error}", file=sys.stderr)
        return 2
    from ibl.figures import length_unit

    # Coordinates stay in metres when a case given by speed and viscosity is swept in Re
    # (the case is known to be valid here).
    units = length_unit(case)
    if args.format == "json":
        sys.stdout.write(msgspec.json.encode(result).decode() + "\n")
    elif args.format == "csv":
        # The table alone on stdout, for plain CSV readers; what it does not say, on stderr.
        sys.stdout.write(sweep_csv(result, units=units))
        sys.stderr.write(sweep_notes(result, units=units))
    else:
        print(sweep_text(result, units=units))
    if args.plot is not None and fmt is not None:
        from ibl.figures import render_sweep

        _write_figure(args.plot, render_sweep(result, fmt, units=units))
    return 0


def _validate(args: argparse.Namespace) -> int:
    """``ibl validate``."""
    try:
        fmt = _plot_format(args.plot)
    except ValueError as error:
        print(f"ibl: {error}", file=sys.stderr)
        return 2
    from ibl.validation import figure, report_text, unexpected, validate

    checks = validate()
    if args.format == "json":
        doc = {"checks": msgspec.to_builtins(checks), "caution": CAUTION}
        sys.stdout.write(msgspec.json.encode(doc).decode() + "\n")
    else:
        print(report_text(checks))
    if args.plot is not None and fmt is not None:
        _write_figure(args.plot, figure(checks, fmt))
    return 0 if not unexpected(checks) else 1


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``ibl`` command."""
    argv = list(sys.argv[1:] if argv is None else argv)
    if argv and argv[0] == "serve":
        from ibl_service.serve import main as serve

        return serve(argv[1:])
    args = _parser().parse_args(argv)
    if args.command == "bench":
        from ibl.bench import main as bench

        return bench(repeat=args.repeat, batch=args.batch, ratios_only=args.ratios)
    if args.command == "validate":
        return _validate(args)
    try:
        if args.command == "sweep":
            return _sweep(args)
        return _analyse(args)
    except CaseError as error:
        return _report(error)


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
