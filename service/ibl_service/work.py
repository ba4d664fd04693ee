"""The work of each analysis endpoint, from request body to response body.

These functions are synchronous and CPU-bound: handlers run them in a worker
thread through ``ibl_service.runner.Runner``.  They raise ``ibl.CaseError`` or
``ibl_service.errors.ProblemError`` for the exception table to answer.
"""

from __future__ import annotations

import threading

import msgspec

import ibl
from ibl.errors import msgspec_path_to_pointer
from ibl.schema import Case, Output, Result
from ibl_service import codec
from ibl_service.config import Settings
from ibl_service.errors import INVALID_REQUEST, ProblemError, problem_from_case_error
from ibl_service.wire import BatchResponse, CsvCase, CsvTable, FieldError, Problem

__all__ = ["analyse", "analyse_batch", "csv_case", "figure", "table"]

#: Figures are drawn one at a time per process: matplotlib is not thread-safe (its
#: configuration is global state), and drawing holds the interpreter lock anyway.
_DRAWING = threading.Lock()


def analyse(
    body: bytes,
    settings: Settings,
    content: codec.BodyFormat = "json",
    answer: codec.BodyFormat = "json",
) -> bytes:
    """One case in, one result out (each as JSON or MessagePack)."""
    case = codec.decode_case(body, settings, content)
    return codec.encode(codec.sanitise(ibl.run(case, arrays=answer)), answer)


def analyse_batch(
    body: bytes,
    settings: Settings,
    content: codec.BodyFormat = "json",
    answer: codec.BodyFormat = "json",
) -> bytes:
    """Many cases in, one entry per case out; a bad case fails alone.

    Every case is decoded on its own; the valid ones are marched together by one
    ``ibl.run_batch`` call.
    """
    raw_cases = codec.decode_batch(body, settings, content)
    entries: list[Result | Problem | None] = [None] * len(raw_cases)
    valid: list[tuple[int, Case]] = []
    for index, raw in enumerate(raw_cases):
        try:
            valid.append((index, codec.decode_case(raw, settings, content)))
        except ibl.CaseError as error:
            entries[index] = problem_from_case_error(error, f"/cases/{index}")
    outcomes = ibl.run_batch([case for _, case in valid], arrays=answer) if valid else []
    for (index, _), outcome in zip(valid, outcomes, strict=True):
        entries[index] = (
            problem_from_case_error(outcome, f"/cases/{index}")
            if isinstance(outcome, ibl.CaseError)
            else codec.sanitise(outcome)
        )
    results = [entry for entry in entries if entry is not None]
    return codec.encode(BatchResponse(results=results), answer)


def figure(
    body: bytes,
    settings: Settings,
    fmt: codec.FigureFormat,
    content: codec.BodyFormat = "json",
) -> bytes:
    """One case in, the figure of its result out (SVG or PNG bytes).

    The same figure as ``ibl run --plot``: lengths labelled in metres when the case gives
    speed and viscosity, and a contour drawn whole beneath its analysed stations.
    """
    case = codec.decode_case(body, settings, content)
    # The figure is drawn from the stations, whatever the case's output asks.
    result = codec.sanitise(ibl.run(msgspec.structs.replace(case, output=Output())))
    from ibl.figures import length_unit, render  # matplotlib: loaded on first use only

    units = length_unit({"flow": msgspec.to_builtins(case.flow)})
    surface = case.surface
    outline = (surface.x, surface.y) if surface.x and surface.y else None
    with _DRAWING:
        return render(result, fmt, units=units, outline=outline)


def table(
    body: bytes,
    settings: Settings,
    content: codec.BodyFormat = "json",
    answer: codec.BodyFormat = "json",
) -> bytes:
    """One case in, the station table of its result out (``ibl run --format csv``): plain
    CSV, the header row with units in the names, then one row per station of every side.
    ``answer`` is ignored: a table is always CSV."""
    case = codec.decode_case(body, settings, content)
    result = codec.sanitise(ibl.run(msgspec.structs.replace(case, output=Output())))
    from ibl.table import stations_csv
    from ibl.units import length_unit

    units = length_unit({"flow": msgspec.to_builtins(case.flow)})
    return stations_csv(msgspec.to_builtins(result), units=units).encode()


_CSV_TABLE: dict[
    codec.BodyFormat, msgspec.json.Decoder[CsvTable] | msgspec.msgpack.Decoder[CsvTable]
] = {
    "json": msgspec.json.Decoder(CsvTable),
    "msgpack": msgspec.msgpack.Decoder(CsvTable),
}

#: Where a reader's message about an option points in the request, by its flag.
_CSV_OPTIONS = {"--columns": "/columns", "--delimiter": "/delimiter"}


def _csv_error(reason: str) -> FieldError:
    """A problem of the CSV reader (worded for ``ibl run``) as one of this request."""
    pointer = "/text"
    for flag, member in _CSV_OPTIONS.items():
        if reason.startswith(flag + ":"):
            pointer, reason = member, reason.removeprefix(flag + ":").strip()
        reason = reason.replace(f"e.g. {flag} ", f"e.g. `{member[1:]}` = ")
        reason = reason.replace(flag, f"`{member[1:]}`")
    return FieldError(pointer=pointer, reason=reason)


def csv_case(
    body: bytes,
    settings: Settings,
    content: codec.BodyFormat = "json",
    answer: codec.BodyFormat = "json",
) -> bytes:
    """A ``CsvTable`` in, the ``CsvCase`` read from it out: the CSV reader of ``ibl run``.

    Problems of the table point at ``/text`` (or ``/columns``, ``/delimiter``) and name the
    line; a value the case cannot hold (a Cp out of range, too few points) names the
    member of the case it would have gone to and its data row.
    """
    from ibl.cli import csv_case as read_csv

    try:
        request = _CSV_TABLE[content].decode(body)
    except msgspec.ValidationError as exc:
        codec.check_body(body, content)
        message, _, path = str(exc).partition(" - at `")
        error = FieldError(pointer=msgspec_path_to_pointer(path.rstrip("`")), reason=message)
        raise ProblemError(INVALID_REQUEST, "The request is not valid.", [error]) from None
    except (msgspec.DecodeError, RecursionError):
        codec.check_body(body, content)
        raise
    try:
        members = read_csv(request.text, "CSV", request.columns, request.delimiter)
    except ibl.CaseError as error:
        errors = [_csv_error(p.reason) for p in error.problems]
        raise ProblemError(INVALID_REQUEST, "The CSV table cannot be read.", errors) from None
    rows = len(next(iter(members["pressure"].values())))
    if rows > settings.max_points:
        reason = f"has {rows} data rows; this service accepts at most {settings.max_points}"
        raise ProblemError(INVALID_REQUEST, "The CSV table is too long.", [_csv_error(reason)])
    try:
        found = msgspec.convert(members, CsvCase)
    except msgspec.ValidationError as exc:
        message, _, path = str(exc).partition(" - at `")
        pointer = msgspec_path_to_pointer(path.rstrip("`"))
        member, _, index = pointer.rpartition("/")
        where = f"{member}, data row {int(index) + 1}" if index.isdigit() else pointer
        reason = f"{message} (read into the case's {where})"
        raise ProblemError(
            INVALID_REQUEST, "The CSV table does not make a valid case.", [_csv_error(reason)]
        ) from None
    return codec.encode(found, answer)
