"""Sweeps: one case run at many values of one variable, and where the layer changes.

Contents
--------
- ``VARIABLES``: the variables that can be swept, with their labels and spacing.
- ``parse_range(text, variable)``: ``"start:stop:count"`` to values (logarithmic spacing for
  the Reynolds number, linear otherwise).
- ``set_variable(case_doc, variable, value)``: a copy of a case document with one value set.
- ``sweep(case_doc, variable, values, *, scheduler, chunk, progress, methods)``: the swept
  cases run through ``ibl.run_batch`` in chunks, locally or on a dask.distributed cluster;
  returns a ``Sweep``: transition, laminar separation and separation on each side at every
  value.  ``methods`` (laminar methods, ``LAMINAR_METHODS``) makes the laminar method a
  swept choice: the whole range is run once per method, and each point says its method.
- ``sweep_text(sweep, units)``, ``sweep_csv(sweep, units)``: readable and CSV tables. The
  CSV is plain: its first line is the header row, units in brackets in the header names
  (``separation_s [m]``, ``reynolds [-]``), as in ``ibl.table``.
- ``sweep_csv_header(sweep, units)``: the header names of that CSV.
- ``sweep_notes(sweep, units)``: what the CSV does not hold (case, units rule, column
  meanings, caution), as ``#`` lines; the CLI writes them to stderr beside the table.
- ``variable_label(variable, unit)``: the swept quantity's label with its unit.

Lengths follow ``ibl.units.length_unit`` of the swept case; ``Sweep.length_unit`` says which.
"""

from __future__ import annotations

import copy
import csv
import io
import math
import sys
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

import msgspec
import numpy as np

from ibl.analysis import CAUTION, parse_case, run, run_batch
from ibl.errors import CaseError
from ibl.schema import Case, Output, Result
from ibl.turbulent import METHODS
from ibl.units import COORDINATE_UNIT, lengths_note
from ibl.units import length_unit as case_length_unit

if TYPE_CHECKING:
    from distributed import Client

__all__ = [
    "DEFAULT_CHUNK",
    "LAMINAR_METHODS",
    "VARIABLES",
    "SidePositions",
    "Sweep",
    "SweepPoint",
    "Variable",
    "parse_range",
    "run_chunk",
    "set_variable",
    "sweep",
    "sweep_csv",
    "sweep_csv_header",
    "sweep_notes",
    "sweep_text",
    "variable_label",
]

Variable = Literal["reynolds", "turbulence_intensity", "mach", "trip_upper", "trip_lower", "trip"]

#: The laminar methods a sweep can run as a swept choice (``laminar.method`` of a case).
LAMINAR_METHODS = ("thwaites", "finite_difference")

#: Cases per call of ``run_batch`` when running locally.
DEFAULT_CHUNK = 64


@dataclass(frozen=True)
class VariableInfo:
    """How a swept variable is labelled, spaced and bounded.  ``label`` is the axis label,
    with ``{unit}`` standing for the case's length unit; ``name`` the quantity's name."""

    label: str
    log: bool
    low: float
    high: float
    high_open: bool = False
    name: str = ""
    #: Unit of the value: ``-`` dimensionless, ``L`` the length unit of the case.
    unit: str = "-"


VARIABLES: dict[str, VariableInfo] = {
    "reynolds": VariableInfo(
        "Re = U_inf L/nu, L = 1 {unit} [-]",
        True,
        0.0,
        math.inf,
        high_open=True,
        name="Reynolds number",
    ),
    "turbulence_intensity": VariableInfo(
        "turbulence intensity Tu [-]", False, 0.0, 0.2, name="free-stream turbulence intensity"
    ),
    "mach": VariableInfo(
        "free-stream Mach number [-]", False, 0.0, 1.0, high_open=True, name="Mach number"
    ),
    "trip_upper": VariableInfo(
        "trip position on the upper side, s [{unit}]",
        False,
        0.0,
        math.inf,
        name="trip position on the upper side",
        unit="L",
    ),
    "trip_lower": VariableInfo(
        "trip position on the lower side, s [{unit}]",
        False,
        0.0,
        math.inf,
        name="trip position on the lower side",
        unit="L",
    ),
    "trip": VariableInfo(
        "trip position on the surface, s [{unit}]",
        False,
        0.0,
        math.inf,
        name="trip position on the surface",
        unit="L",
    ),
}


def variable_label(variable: str, unit: str = COORDINATE_UNIT) -> str:
    """The label of a swept variable, with the length unit ``unit`` filled in.

    >>> variable_label("reynolds", "m")
    'Re = U_inf L/nu, L = 1 m [-]'
    """
    return _info(variable).label.format(unit=unit)


class SidePositions(msgspec.Struct, frozen=True, kw_only=True):
    """Where the layer on one side changes, at one swept value (s from the side's origin)."""

    side: str
    transition_s: float | None
    transition_x: float | None
    transition_cause: str | None
    laminar_separation_s: float | None
    laminar_separation_x: float | None
    bubble: str | None
    separation_s: float | None
    separation_x: float | None
    separation_regime: str | None
    pressure_plateau_s: float | None = None
    min_lambda: float | None = None
    max_shape_factor: float | None = None
    #: s of the last station: where the stations end (separation, a plateau onset or the end
    #: of the surface).  An event found between stations, as separation, may lie beyond it.
    last_station_s: float


class SweepPoint(msgspec.Struct, frozen=True, kw_only=True):
    """One swept value: the positions on each side, or why the case could not be run."""

    value: float
    sides: list[SidePositions]
    warnings: list[str]
    error: str | None = None
    #: The laminar method of this point when the sweep runs it as a swept choice.
    laminar_method: str | None = None


class Sweep(msgspec.Struct, frozen=True, kw_only=True):
    """A sweep of one variable: the case name, the variable, its label and every point, in
    order; ``length_unit`` is the unit of every s and x (``ibl.units.length_unit``)."""

    name: str | None
    variable: str
    label: str
    points: list[SweepPoint]
    length_unit: str = COORDINATE_UNIT
    caution: str = CAUTION
    turbulent_method: str = METHODS["head"].name
    #: The laminar methods swept as a choice (each point carries its own), or None.
    methods: list[str] | None = None


# ------------------------------------------------------------------------ the variable


def parse_range(text: str, variable: str) -> list[float]:
    """Values from ``"start:stop:count"``: logarithmic for the Reynolds number, else linear.

    >>> parse_range("1e5:1e7:3", "reynolds")
    [100000.0, 1000000.0, 10000000.0]
    >>> parse_range("0:0.02:3", "turbulence_intensity")
    [0.0, 0.01, 0.02]

    Raises
    ------
    ValueError
        If the text is not of that form, the count is below 1 or a value is out of range.
    """
    info = _info(variable)
    parts = text.split(":")
    if len(parts) != 3:
        raise ValueError(f"{variable}: {text!r} is not start:stop:count")
    try:
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise ValueError(f"{variable}: {text!r} is not start:stop:count") from None
    if count < 1:
        raise ValueError(f"{variable}: the count in {text!r} must be at least 1")
    if info.log and (start <= 0.0 or stop <= 0.0):
        raise ValueError(f"{variable}: a logarithmic range needs positive ends, got {text!r}")
    values = (np.geomspace if info.log else np.linspace)(start, stop, count)
    out: list[float] = [float(v) for v in values]
    check_values(variable, out)
    return out


def check_values(variable: str, values: Sequence[float]) -> None:
    """Raise ValueError if a value lies outside what the case document accepts."""
    info = _info(variable)
    for value in values:
        above = value >= info.high if info.high_open else value > info.high
        if not math.isfinite(value) or value < info.low or above or (info.log and value <= 0):
            raise ValueError(f"{variable}: {value:g} is outside the accepted range")


def _info(variable: str) -> VariableInfo:
    if variable not in VARIABLES:
        raise ValueError(f"cannot sweep {variable!r}; choose one of {', '.join(VARIABLES)}")
    return VARIABLES[variable]


def set_variable(case_doc: dict[str, Any], variable: str, value: float) -> dict[str, Any]:
    """A deep copy of ``case_doc`` with ``variable`` set to ``value``.

    Setting the Reynolds number removes speed and viscosity, as the ``--reynolds`` flag does.
    """
    _info(variable)
    doc = copy.deepcopy(case_doc)
    flow = doc.setdefault("flow", {})
    if variable == "reynolds":
        flow.pop("speed", None)
        flow.pop("kinematic_viscosity", None)
        flow["reynolds"] = value
    elif variable in ("turbulence_intensity", "mach"):
        flow[variable] = value
    else:
        side = "surface" if variable == "trip" else variable.removeprefix("trip_")
        doc.setdefault("transition", {}).setdefault("trip", {})[side] = value
    return doc


# ---------------------------------------------------------------------------- running


def _event(event: Any, key: str) -> tuple[float | None, float | None, str | None]:
    if event is None:
        return None, None, None
    return float(event.s), event.x, str(getattr(event, key))


def _positions(result: Result) -> list[SidePositions]:
    out = []
    for side in result.sides:
        tr = _event(side.transition, "cause")
        ls = _event(side.laminar_separation, "bubble")
        sep = _event(side.separation, "regime")
        out.append(
            SidePositions(
                side=side.name,
                transition_s=tr[0],
                transition_x=tr[1],
                transition_cause=tr[2],
                laminar_separation_s=ls[0],
                laminar_separation_x=ls[1],
                bubble=ls[2],
                separation_s=sep[0],
                separation_x=sep[1],
                separation_regime=sep[2],
                pressure_plateau_s=(
                    side.pressure_plateau.s if side.pressure_plateau is not None else None
                ),
                min_lambda=(
                    side.margins.laminar.thwaites_lambda
                    if side.margins.laminar is not None
                    else None
                ),
                max_shape_factor=(
                    side.margins.turbulent.shape_factor
                    if side.margins.turbulent is not None
                    else None
                ),
                last_station_s=float(side.s[-1]) if isinstance(side.s, list) else math.nan,
            )
        )
    return out


def _error_text(error: CaseError) -> str:
    return "; ".join(f"{p.pointer or '/'}: {p.reason}" for p in error.problems)


#: The output a sweep asks of each case: the arc length of the stations only.
_ENDS_ONLY = Output(stations=["s"])


def run_chunk(
    case_doc: dict[str, Any], variable: str, values: Sequence[float]
) -> list[dict[str, Any]]:
    """Run ``case_doc`` at each of ``values`` in one ``run_batch``; the points as builtins.

    Top-level so that a dask.distributed worker can import it.
    """
    cases: list[Case | CaseError] = []
    for value in values:
        try:
            cases.append(parse_case(set_variable(case_doc, variable, value)))
        except CaseError as error:
            cases.append(error)
    # Events and the end of each side are all a sweep keeps: s is the one array built.
    good = [msgspec.structs.replace(c, output=_ENDS_ONLY) for c in cases if isinstance(c, Case)]
    results = iter(run_batch(good) if good else [])
    points = []
    for value, case in zip(values, cases, strict=True):
        outcome: Result | CaseError = case if isinstance(case, CaseError) else next(results)
        if isinstance(outcome, CaseError):
            message = _error_text(outcome)
            points.append(SweepPoint(value=value, sides=[], warnings=[], error=message))
        else:
            codes = sorted({w.code for w in outcome.warnings})
            points.append(SweepPoint(value=value, sides=_positions(outcome), warnings=codes))
    out: list[dict[str, Any]] = msgspec.to_builtins(points)
    return out


def _chunks(values: Sequence[float], size: int) -> Iterator[tuple[int, list[float]]]:
    for start in range(0, len(values), size):
        yield start, list(values[start : start + size])


def _progress(total: int, enabled: bool) -> Any:
    from tqdm import tqdm  # type: ignore[import-untyped,unused-ignore]

    return tqdm(total=total, disable=not enabled, file=sys.stderr, unit="case", leave=False)


def _run_local(
    case_doc: dict[str, Any], variable: str, values: Sequence[float], chunk: int, bar: Any
) -> list[dict[str, Any]]:
    points: list[dict[str, Any]] = []
    for _, part in _chunks(values, chunk):
        points.extend(run_chunk(case_doc, variable, part))
        bar.update(len(part))
    return points


def _run_cluster(
    client: Any,
    case_doc: dict[str, Any],
    variable: str,
    values: Sequence[float],
    chunk: int,
    bar: Any,
) -> list[dict[str, Any]]:
    from distributed import as_completed as completed

    as_completed: Any = completed
    doc = client.scatter(case_doc, broadcast=True)
    parts = list(_chunks(values, chunk))
    futures = [
        client.submit(run_chunk, doc, variable, part, pure=False, key=f"ibl-sweep-{start}")
        for start, part in parts
    ]
    starts = {future.key: start for future, (start, _) in zip(futures, parts, strict=True)}
    slots: list[dict[str, Any] | None] = [None] * len(values)
    for future in as_completed(futures):
        part_points = future.result()
        start = starts[future.key]
        slots[start : start + len(part_points)] = part_points
        bar.update(len(part_points))
    return [p for p in slots if p is not None]


def _cluster_chunk(client: Any, count: int) -> int:
    workers = max(1, len(client.scheduler_info().get("workers", {})))
    return max(1, min(DEFAULT_CHUNK, math.ceil(count / (2 * workers))))


def sweep(
    case_doc: dict[str, Any],
    variable: str,
    values: Sequence[float],
    *,
    scheduler: str | Client | None = None,
    chunk: int | None = None,
    progress: bool = False,
    methods: Sequence[str] | None = None,
) -> Sweep:
    """Run ``case_doc`` at every value of ``variable`` and collect where the layer changes.

    Parameters
    ----------
    case_doc
        A case document (dict); the swept value replaces the one it holds.
    variable
        One of ``VARIABLES``.
    values
        The values, run in chunks of ``chunk`` cases per ``ibl.run_batch``.
    scheduler
        None to run here; a dask.distributed scheduler address or ``Client`` to submit the
        chunks to that cluster (its workers need ``ibl`` installed).
    chunk
        Cases per chunk: by default 64 here, or enough chunks for two per worker on a cluster.
    progress
        Show a tqdm progress bar on stderr.
    methods
        Laminar methods (of ``LAMINAR_METHODS``) to run the whole range with, one after the
        other: the method as a swept choice.  None: the case's own method.

    Raises
    ------
    ValueError
        For an unknown variable, a value out of range or no values.
    CaseError
        If the case cannot be analysed at the first value (the case itself is wrong).
    """
    check_values(variable, values)
    if not values:
        raise ValueError("a sweep needs at least one value")
    if chunk is not None and chunk < 1:
        raise ValueError("chunk must be at least 1")
    if methods is not None:
        unknown = [m for m in methods if m not in LAMINAR_METHODS]
        if unknown or not methods or len(set(methods)) != len(methods):
            raise ValueError(
                f"laminar methods must be distinct names of {', '.join(LAMINAR_METHODS)}; "
                f"got {', '.join(methods) or 'none'}"
            )
    docs: list[tuple[str | None, dict[str, Any]]] = [(None, case_doc)]
    if methods is not None:
        docs = []
        for method in methods:
            doc = copy.deepcopy(case_doc)
            laminar = doc.get("laminar")
            doc["laminar"] = {**(laminar if isinstance(laminar, dict) else {}), "method": method}
            docs.append((method, doc))
    # A case that cannot be analysed at the first value is wrong in itself: say so once.
    first = parse_case(set_variable(case_doc, variable, values[0]))
    for _, doc in docs:
        run(parse_case(set_variable(doc, variable, values[0])))
    points: list[SweepPoint] = []
    with _progress(len(values) * len(docs), progress) as bar:
        for swept, doc in docs:
            if scheduler is None:
                found = _run_local(doc, variable, values, chunk or DEFAULT_CHUNK, bar)
            else:
                found = _with_client(scheduler, doc, variable, values, chunk, bar)
            points += [
                msgspec.structs.replace(point, laminar_method=swept)
                for point in msgspec.convert(found, list[SweepPoint])
            ]
    unit = case_length_unit(case_doc)
    return Sweep(
        name=case_doc.get("name"),
        variable=variable,
        label=variable_label(variable, unit),
        points=points,
        length_unit=unit,
        turbulent_method=METHODS[first.turbulent.method].name,
        methods=list(methods) if methods is not None else None,
    )


def _with_client(
    scheduler: str | Client,
    case_doc: dict[str, Any],
    variable: str,
    values: Sequence[float],
    chunk: int | None,
    bar: Any,
) -> list[dict[str, Any]]:
    from distributed import Client

    if isinstance(scheduler, Client):
        size = chunk or _cluster_chunk(scheduler, len(values))
        return _run_cluster(scheduler, case_doc, variable, values, size, bar)
    connect: Any = Client
    with connect(scheduler) as client:
        size = chunk or _cluster_chunk(client, len(values))
        return _run_cluster(client, case_doc, variable, values, size, bar)


# ------------------------------------------------------------------------------ tables

CSV_COLUMNS = (
    "value",
    "side",
    "transition_s",
    "transition_x",
    "transition_cause",
    "laminar_separation_s",
    "laminar_separation_x",
    "bubble",
    "separation_s",
    "separation_x",
    "separation_regime",
    "pressure_plateau_s",
    "min_lambda",
    "max_shape_factor",
    "last_station_s",
    "error",
)


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return str(value)


#: The unit in each column's header name: ``L`` the length unit of the case, ``-``
#: dimensionless, ``None`` a text column; the value column takes the swept variable's unit.
CSV_UNITS: dict[str, str | None] = {
    "side": None,
    "transition_s": "L",
    "transition_x": "L",
    "transition_cause": None,
    "laminar_separation_s": "L",
    "laminar_separation_x": "L",
    "bubble": None,
    "separation_s": "L",
    "separation_x": "L",
    "separation_regime": None,
    "pressure_plateau_s": "L",
    "min_lambda": "-",
    "max_shape_factor": "-",
    "last_station_s": "L",
    "error": None,
}


def _header_name(column: str, unit: str | None, units: str) -> str:
    if unit is None:
        return column
    return f"{column} [{units if unit == 'L' else unit}]"


def sweep_csv_header(result: Sweep, *, units: str | None = None) -> list[str]:
    """The header row of ``sweep_csv``: the swept variable, then ``CSV_COLUMNS[1:]``, each
    name followed by one space and its unit in square brackets (none for text columns), as
    in the station table (``ibl.table.header_name``).

    >>> swept = Sweep(name=None, variable="trip_upper", label="", points=[], length_unit="m")
    >>> sweep_csv_header(swept)[:3]
    ['trip_upper [m]', 'side', 'transition_s [m]']
    >>> sweep_csv_header(swept)[-3:]
    ['max_shape_factor [-]', 'last_station_s [m]', 'error']
    """
    unit = units or result.length_unit
    info = VARIABLES.get(result.variable)
    return [
        _header_name(result.variable, info.unit if info is not None else None, unit),
        *(["laminar_method"] if result.methods else []),
        *(_header_name(column, CSV_UNITS[column], unit) for column in CSV_COLUMNS[1:]),
    ]


def sweep_notes(result: Sweep, *, units: str | None = None) -> str:
    """What a reader of ``sweep_csv`` should know and the table does not hold: the swept
    quantity, the case, the units rule, what the columns mean, the caution.

    One statement a line, each starting with ``# ``; the CLI writes them to stderr, so that
    the CSV on stdout stays plain.
    """
    unit = units or result.length_unit
    lines = [
        f"# ibl sweep of the {_quantity(result)}: first column {result.variable} = "
        f"{result.label}; one row per value and side (one row with `error` for a case that "
        "could not be run)",
        f"# case: {result.name or '(unnamed)'}; turbulent method {result.turbulent_method}",
        f"# {lengths_note(unit)} Header names carry the unit in brackets "
        f"(`separation_s [{unit}]`; `-` dimensionless). s: arc length from the stagnation "
        "point or leading edge of each side; empty: the event does not occur",
        "# pressure_plateau_s: onset of a constant-pressure (separated) region in the input; "
        "min_lambda: smallest Thwaites lambda over the laminar stations; max_shape_factor: "
        "largest H over the turbulent stations",
        f"# {_LAST_STATION}",
        f"# CAUTION: {CAUTION}",
    ]
    if result.methods:
        lines.insert(
            -1,
            "# laminar_method: the laminar method of the row (thwaites: Thwaites' integral "
            "method; finite_difference: the boundary-layer equations by Keller's box scheme), "
            f"swept as a choice over {', '.join(result.methods)}",
        )
    return "\n".join(lines) + "\n"


def sweep_csv(result: Sweep, *, units: str | None = None) -> str:
    """The sweep as a long CSV table: the header row (``sweep_csv_header``) first, then one
    row per value and side (one row for a failed case, with its ``error``). Nothing else:
    what the table does not say is in ``sweep_notes``. Numbers are written with Python's
    shortest round-trip representation, so reading them back gives the very same floats.
    ``units`` defaults to the sweep's ``length_unit``."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(sweep_csv_header(result, units=units))
    for point in result.points:
        first = [_cell(point.value)] + ([_cell(point.laminar_method)] if result.methods else [])
        if point.error is not None:
            writer.writerow(first + [""] * (len(CSV_COLUMNS) - 2) + [point.error])
            continue
        for side in point.sides:
            cells = [getattr(side, c) for c in CSV_COLUMNS[1:-1]]
            writer.writerow([*first, *(_cell(c) for c in cells), ""])
    return buffer.getvalue()


def _where(s: float | None, x: float | None) -> str:
    if s is None:
        return "-"
    return f"{s:.4g}" + (f" ({x:.4g})" if x is not None else "")


_CAUSE = {"criterion": "crit", "trip": "trip", "laminar_separation": "bubble"}


def _side_cells(side: SidePositions) -> list[str]:
    transition = _where(side.transition_s, side.transition_x)
    if side.transition_cause:
        transition += " " + _CAUSE.get(side.transition_cause, side.transition_cause)
    separation = _where(side.separation_s, side.separation_x)
    if side.separation_regime:
        separation += " " + ("lam" if side.separation_regime == "laminar" else "turb")
    plateau = "-" if side.pressure_plateau_s is None else f"{side.pressure_plateau_s:.4g}"
    lam = "-" if side.min_lambda is None else f"{side.min_lambda:.3g}"
    h = "-" if side.max_shape_factor is None else f"{side.max_shape_factor:.3g}"
    return [transition, separation, plateau, f"{lam} / {h}"]


_LAST_STATION = (
    "last_station_s: s of the last station, where the stations end (separation, a plateau "
    "onset or the end of the surface); separation_s, found between stations, may lie "
    "slightly beyond it"
)


def _quantity(result: Sweep) -> str:
    info = VARIABLES.get(result.variable)
    return info.name if info is not None and info.name else result.variable


def sweep_text(result: Sweep, *, units: str | None = None) -> str:
    """A readable table: transition and separation s (x) on each side at every value.
    ``units`` defaults to the sweep's ``length_unit``."""
    unit = units or result.length_unit
    names = [s.side for p in result.points for s in p.sides]
    sides = list(dict.fromkeys(names))
    events = ("transition s (x)", "sep. s (x)", "plateau s", "min lambda / max H")
    header = [result.variable] + (["laminar method"] if result.methods else [])
    header += [f"{n} {e}" for n in sides for e in events]
    rows = []
    for point in result.points:
        row = [f"{point.value:.4g}"] + ([point.laminar_method or ""] if result.methods else [])
        if point.error is not None:
            row.append("error: " + point.error)
        else:
            by_name = {s.side: s for s in point.sides}
            for name in sides:
                row += _side_cells(by_name[name]) if name in by_name else ["-"] * len(events)
        rows.append(row)
    widths = [max(len(r[i]) for r in [header, *rows] if i < len(r)) for i in range(len(header))]
    lines = [
        f"Sweep of the {_quantity(result)} ({result.variable}: {result.label}), "
        f"case: {result.name or '(unnamed)'}",
        "",
        "  ".join(h.ljust(w) for h, w in zip(header, widths, strict=True)),
    ]
    lines += ["  ".join(c.ljust(w) for c, w in zip(r, widths, strict=False)) for r in rows]
    lines += [
        "",
        "s: arc length from the stagnation point or leading edge. " + lengths_note(unit) + " "
        "Transition by crit(erion), trip or bubble (placed at the separation point of a short "
        "laminar separation bubble; its reattachment and length are not modelled); "
        "separation lam(inar) or turb(ulent); plateau: onset of a constant-pressure "
        "(separated) region in the input data; min lambda / max H: the closest approach to "
        "laminar and turbulent separation; '-': does not occur.",
        "CAUTION: " + CAUTION,
    ]
    return "\n".join(line.rstrip() for line in lines)
