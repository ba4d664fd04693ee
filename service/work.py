"""The work of each analysis endpoint, from request body to response body.

These functions are synchronous and CPU-bound: handlers run them in a worker
thread through ``service.runner.Runner``.  They raise ``ibl.CaseError`` or
``service.errors.ProblemError`` for the exception table to answer.
"""

from __future__ import annotations

import threading

import msgspec

import ibl
from ibl.schema import Case, Output, Result
from service import codec
from service.config import Settings
from service.errors import problem_from_case_error
from service.wire import BatchResponse, Problem

__all__ = ["analyse", "analyse_batch", "figure"]

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
