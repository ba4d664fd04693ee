"""Wire types of the HTTP API that the library does not define.

The analysis itself travels as the library's own ``ibl.schema.Case`` and
``ibl.schema.Result``; this module adds the envelopes around them (batch request
and response), RFC 9457 problem details and the health answer.  All share one
base: unknown fields are errors, instances are immutable.
"""

from __future__ import annotations

from typing import Annotated, Literal

import msgspec
from msgspec import UNSET, Meta, UnsetType

from ibl.schema import Body, Case, Pressure, Result, Surface

__all__ = [
    "MAX_DETAIL",
    "MAX_ERRORS",
    "MAX_POINTER",
    "MAX_REASON",
    "BatchEnvelope",
    "BatchRequest",
    "BatchResponse",
    "CsvCase",
    "CsvTable",
    "FieldError",
    "Health",
    "Problem",
    "Wire",
]


#: Bounds of a problem's text and entries; longer text is cut (``ibl_service.errors.problem``).
MAX_POINTER = 1000
MAX_REASON = 500
MAX_DETAIL = 1000
MAX_ERRORS = 100
#: Longest CSV text the table route reads: 20,000 rows (the most points of a surface) of
#: about 100 characters each, with room to spare.
MAX_CSV_CHARACTERS = 4_000_000


class Wire(msgspec.Struct, forbid_unknown_fields=True, frozen=True, kw_only=True):
    """Common base of the service's own wire types."""


Pointer = Annotated[
    str,
    Meta(
        max_length=MAX_POINTER,
        description="JSON pointer (RFC 6901) into the request body; an empty string is the "
        "whole body",
    ),
]


class FieldError(Wire, frozen=True):
    """One offending member of the request body."""

    pointer: Pointer
    reason: Annotated[
        str, Meta(max_length=MAX_REASON, description="What is wrong with it, and what is accepted")
    ]


class Problem(Wire, frozen=True):
    """RFC 9457 problem details, with one entry in ``errors`` per offending field."""

    type: Annotated[str, Meta(max_length=200, description="URI identifying the kind of problem")]
    title: Annotated[str, Meta(max_length=200, description="Short summary of the kind of problem")]
    status: Annotated[int, Meta(ge=400, le=599, description="HTTP status code")]
    detail: Annotated[
        str, Meta(max_length=MAX_DETAIL, description="Explanation of this occurrence")
    ]
    errors: Annotated[
        list[FieldError],
        Meta(
            max_length=MAX_ERRORS,
            description=f"The offending members, at most {MAX_ERRORS} (the detail gives the count)",
        ),
    ] = msgspec.field(default_factory=list)


class BatchRequest(Wire, frozen=True):
    """Several cases analysed together; the answer keeps their order."""

    cases: Annotated[
        list[Case],
        Meta(
            description="The cases. The server's limit on their number is set by "
            "IBL_MAX_BATCH (1000 unless configured otherwise)."
        ),
    ]


class BatchEnvelope(Wire, frozen=True):
    """How a batch is decoded: each case stays raw JSON so that it can fail alone."""

    cases: list[msgspec.Raw]


class BatchResponse(Wire, frozen=True):
    """One entry per case, in request order: a result, or the problem with that case."""

    results: list[Result | Problem]


class Health(Wire, frozen=True):
    """Liveness or readiness."""

    status: Literal["live", "ready"]


class CsvTable(Wire, frozen=True):
    """A table of surface points as CSV text, read into the members of a case."""

    text: Annotated[
        str,
        Meta(
            max_length=MAX_CSV_CHARACTERS,
            description="The CSV text: a header row naming one column per quantity by its name "
            "in the case document (x and y, or s; one of cp, edge_velocity or p [Pa]; "
            "optionally radius, which makes the body axisymmetric), then one row per point in "
            "order along the contour. Other columns are ignored; `#` lines are comments; the "
            "delimiter is `,`, `;` or a tab, recognised from the header, and with `;` or a tab "
            "a decimal comma is read as a decimal point",
        ),
    ]
    columns: Annotated[
        Annotated[str, Meta(max_length=2000)] | None,
        Meta(
            description="Quantities mapped to header names of a wider table, compared without "
            "regard to case or spaces, e.g. `x=X [ m ],y=Y [ m ],p=Pressure [ Pa ]`",
        ),
    ] = None
    delimiter: Annotated[
        Annotated[str, Meta(max_length=20)] | None,
        Meta(
            description="The delimiter, when not recognised from the header: one character, "
            "or `tab`, `comma`, `semicolon`",
        ),
    ] = None


class CsvCase(Wire, frozen=True):
    """The members of a case a CSV table holds; add `flow` (and any options) to analyse it."""

    surface: Surface
    pressure: Pressure
    body: Annotated[
        Body | UnsetType,
        Meta(description="Axisymmetric with the radii of a `radius` column; absent otherwise"),
    ] = UNSET
