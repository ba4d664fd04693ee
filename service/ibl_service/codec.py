"""Conversion between HTTP bodies and the library's types, in one place.

Contents
--------
- ``request_format`` / ``response_format``: JSON or MessagePack, by the ``Content-Type``
  and ``Accept`` headers.
- ``check_body``: the body must be well-formed in its format (else 400).
- ``decode_case`` / ``decode_batch``: bodies to ``Case`` objects or raw batch entries,
  with the service's limits applied.
- ``sanitise``: keep non-finite numbers out of a ``Result`` (JSON has none; msgspec
  would write ``null`` where the schema promises a number).
- ``finite_or_none``: the same for free-form documents (the method catalogue).
- ``encode``: any wire value to JSON or MessagePack bytes.
- ``figure_format``: the figure format (SVG or PNG) an ``Accept`` header asks for (else 406).

How ``sanitise`` repairs a result, each repair adding a ``non_finite`` warning:

1. the station arrays of a side end before the first station with a non-finite value;
2. another non-finite number becomes ``null`` where the schema allows it, or text
   (``"nan"``, ``"inf"``, ``"-inf"``) where the schema allows text;
3. otherwise the smallest enclosing optional member or list entry is left out.
"""

from __future__ import annotations

import functools
import math
from typing import Any, Literal

import msgspec
import msgspec.inspect as mi

import ibl
from ibl.errors import msgspec_path_to_pointer
from ibl.schema import Case, Notice, Result, Side
from ibl_service.config import Settings
from ibl_service.errors import (
    INVALID_REQUEST,
    MALFORMED_JSON,
    MALFORMED_MSGPACK,
    NOT_ACCEPTABLE,
    ProblemError,
)
from ibl_service.wire import BatchEnvelope, FieldError

__all__ = [
    "BODY_MEDIA_TYPES",
    "FIGURE_MEDIA_TYPES",
    "POINT_ARRAYS",
    "BodyFormat",
    "FigureFormat",
    "check_body",
    "decode_batch",
    "decode_case",
    "encode",
    "figure_format",
    "finite_or_none",
    "request_format",
    "response_format",
    "sanitise",
]

BodyFormat = Literal["json", "msgpack"]

#: Media type of each body format; JSON is the default both ways.
BODY_MEDIA_TYPES: dict[BodyFormat, str] = {
    "json": "application/json",
    "msgpack": "application/msgpack",
}
#: Request media types read as MessagePack (the registered one and two in common use).
_MSGPACK_TYPES = frozenset(
    {"application/msgpack", "application/vnd.msgpack", "application/x-msgpack"}
)

_ENCODERS: dict[BodyFormat, msgspec.json.Encoder | msgspec.msgpack.Encoder] = {
    "json": msgspec.json.Encoder(),
    "msgpack": msgspec.msgpack.Encoder(),
}
_BATCH_DECODERS: dict[
    BodyFormat, msgspec.json.Decoder[BatchEnvelope] | msgspec.msgpack.Decoder[BatchEnvelope]
] = {
    "json": msgspec.json.Decoder(BatchEnvelope),
    "msgpack": msgspec.msgpack.Decoder(BatchEnvelope),
}
_ANY_DECODERS: dict[BodyFormat, msgspec.json.Decoder[Any] | msgspec.msgpack.Decoder[Any]] = {
    "json": msgspec.json.Decoder(msgspec.Raw),
    "msgpack": msgspec.msgpack.Decoder(),
}

#: Point arrays of a case, by attribute path; ``Settings.max_points`` applies to each.
POINT_ARRAYS = (
    ("surface", "x"),
    ("surface", "y"),
    ("surface", "s"),
    ("pressure", "cp"),
    ("pressure", "edge_velocity"),
    ("pressure", "p"),
    ("body", "radius"),
)


def encode(value: Any, fmt: BodyFormat = "json") -> bytes:
    """JSON (or MessagePack) bytes of a wire value."""
    return _ENCODERS[fmt].encode(value)


def request_format(content_type: str | None) -> BodyFormat:
    """MessagePack for a MessagePack ``Content-Type``; JSON for anything else (or none)."""
    media = (content_type or "").partition(";")[0].strip().lower()
    return "msgpack" if media in _MSGPACK_TYPES else "json"


def response_format(accept: str | None) -> BodyFormat:
    """MessagePack when ``Accept`` weights ``application/msgpack`` above JSON; else JSON.

    Results are always available as JSON, so an ``Accept`` header that allows neither is
    answered with JSON rather than refused.
    """
    if not accept or "msgpack" not in accept.lower():
        return "json"
    ranges = _media_ranges(accept)
    msgpack_q = max(_quality(media, ranges) for media in _MSGPACK_TYPES)
    return "msgpack" if msgpack_q > _quality(BODY_MEDIA_TYPES["json"], ranges) else "json"


def _malformed(exc: Exception, fmt: BodyFormat) -> ProblemError:
    reason = "it is nested too deeply" if isinstance(exc, RecursionError) else str(exc)
    if fmt == "msgpack":
        return ProblemError(
            MALFORMED_MSGPACK, f"The request body is not valid MessagePack: {reason}."
        )
    return ProblemError(MALFORMED_JSON, f"The request body is not valid JSON: {reason}.")


def check_body(body: bytes, fmt: BodyFormat = "json") -> None:
    """Raise a 400 ``ProblemError`` unless ``body`` is one well-formed value in ``fmt``."""
    try:
        _ANY_DECODERS[fmt].decode(body)
    except (msgspec.DecodeError, RecursionError) as exc:
        raise _malformed(exc, fmt) from None


def _check_points(case: Case, max_points: int) -> None:
    problems = []
    for part, name in POINT_ARRAYS:
        values = getattr(getattr(case, part, None), name, None)
        if values is not None and len(values) > max_points:
            reason = f"has {len(values)} points; this service accepts at most {max_points}"
            problems.append(ibl.FieldProblem(f"/{part}/{name}", reason))
    if problems:
        raise ibl.CaseError(problems)


def decode_case(data: bytes, settings: Settings, fmt: BodyFormat = "json") -> Case:
    """A validated ``Case`` from its encoded bytes.

    Raises
    ------
    ProblemError
        400, when ``data`` is not well-formed in ``fmt``.
    ibl.CaseError
        Naming each bad field.
    """
    try:
        case = ibl.parse_case(data, encoding=fmt)
    except ibl.CaseError:
        check_body(data, fmt)  # a malformed body can fail validation before the parser sees it
        raise
    _check_points(case, settings.max_points)
    return case


def decode_batch(body: bytes, settings: Settings, fmt: BodyFormat = "json") -> list[bytes]:
    """The raw encoded bytes of each case of a batch body; each is decoded later, on its own."""
    try:
        envelope = _BATCH_DECODERS[fmt].decode(body)
    except msgspec.ValidationError as exc:
        check_body(body, fmt)  # a malformed body can fail validation before the parser sees it
        message, _, path = str(exc).partition(" - at `")
        error = FieldError(pointer=msgspec_path_to_pointer(path.rstrip("`")), reason=message)
        raise ProblemError(INVALID_REQUEST, "The batch is not valid.", [error]) from None
    except (msgspec.DecodeError, RecursionError) as exc:
        raise _malformed(exc, fmt) from None
    count = len(envelope.cases)
    if count > settings.max_batch:
        reason = f"has {count} cases; this service accepts at most {settings.max_batch}"
        error = FieldError(pointer="/cases", reason=reason)
        raise ProblemError(INVALID_REQUEST, "The batch has too many cases.", [error])
    return [bytes(raw) for raw in envelope.cases]


# -------------------------------------------------------------------- content negotiation

FigureFormat = Literal["svg", "png"]

#: Media type of each figure format, in the server's order of preference.
FIGURE_MEDIA_TYPES: dict[FigureFormat, str] = {"svg": "image/svg+xml", "png": "image/png"}


def _media_ranges(accept: str) -> list[tuple[str, str, float]]:
    """``(type, subtype, q)`` of each well-formed media range of an ``Accept`` value."""
    ranges = []
    for item in accept.split(","):
        media, *params = (part.strip() for part in item.split(";"))
        main, slash, sub = media.lower().partition("/")
        if not (slash and main and sub) or (main == "*" and sub != "*"):
            continue
        q = 1.0
        for param in params:
            name, _, value = param.partition("=")
            if name.strip().lower() == "q":
                try:
                    q = float(value.strip())
                except ValueError:
                    q = -1.0
        if 0.0 <= q <= 1.0:
            ranges.append((main, sub, q))
    return ranges


def _quality(media_type: str, ranges: list[tuple[str, str, float]]) -> float:
    """The weight the most specific matching range gives ``media_type`` (0 if none does)."""
    main, _, sub = media_type.partition("/")
    best_specificity, quality = 0, 0.0
    for r_main, r_sub, q in ranges:
        if (r_main, r_sub) == (main, sub):
            specificity = 3
        elif (r_main, r_sub) == (main, "*"):
            specificity = 2
        elif (r_main, r_sub) == ("*", "*"):
            specificity = 1
        else:
            continue
        if specificity > best_specificity:
            best_specificity, quality = specificity, q
    return quality


def figure_format(accept: str | None) -> FigureFormat:
    """The figure format an ``Accept`` header value asks for.

    Each format takes the weight of the most specific media range matching its media type
    (RFC 9110, section 12.5.1); the heaviest above zero wins, SVG on a tie. No header, or an
    empty one, accepts anything: SVG.

    Raises
    ------
    ProblemError
        406, when neither ``image/svg+xml`` nor ``image/png`` is acceptable.
    """
    if accept is None or not accept.strip():
        return "svg"
    ranges = _media_ranges(accept)
    weights = {fmt: _quality(media, ranges) for fmt, media in FIGURE_MEDIA_TYPES.items()}
    best = max(weights, key=lambda fmt: weights[fmt])  # first of the best: SVG on a tie
    if weights[best] <= 0.0:
        offered = " or ".join(FIGURE_MEDIA_TYPES.values())
        raise ProblemError(
            NOT_ACCEPTABLE,
            f"The figure is available as {offered}; the Accept header allows neither.",
        )
    return best


# ----------------------------------------------------------------------- non-finite numbers


def _all_finite(value: object) -> bool:
    """Fast screen: True when no float anywhere in ``value`` is NaN or infinite.

    Lists are homogeneous in the wire types, so the first entry tells their kind; of a
    Struct only the members whose type can hold a float are looked at.
    """
    if isinstance(value, float):
        return math.isfinite(value)
    if isinstance(value, msgspec.Struct):
        for name in _float_fields(type(value)):
            member = getattr(value, name)
            if member is not None and not _all_finite(member):
                return False
        return True
    if isinstance(value, list):
        if not value or isinstance(value[0], str):
            return True
        if isinstance(value[0], msgspec.Struct):
            if _float_fields(type(value[0])):
                for item in value:
                    if not _all_finite(item):
                        return False
            return True
        try:  # NaN and inf propagate through a sum
            return math.isfinite(sum(value))
        except TypeError:
            pass
        try:  # the same without null (and zero) entries
            return math.isfinite(sum(filter(None, value)))
        except TypeError:
            return all(_all_finite(item) for item in value)
    if isinstance(value, dict):
        return all(_all_finite(item) for item in value.values())
    return True


def _holds_float(t: mi.Type) -> bool:
    """Whether a value of type ``t`` can hold a float somewhere (Structs: assumed so)."""
    for m in _members(t):
        if isinstance(m, (mi.FloatType, mi.StructType, mi.AnyType)):
            return True
        if isinstance(m, mi.ListType) and _holds_float(m.item_type):
            return True
        if isinstance(m, mi.DictType) and _holds_float(m.value_type):
            return True
    return False


@functools.cache
def _float_fields(cls: type[msgspec.Struct]) -> tuple[str, ...]:
    """The members of a Struct type that can hold a float."""
    info = mi.type_info(cls)
    assert isinstance(info, mi.StructType)
    return tuple(f.name for f in info.fields if _holds_float(f.type))


class _Unrepairable(Exception):
    """A non-finite number where neither null nor text is allowed."""


def _members(t: mi.Type) -> tuple[mi.Type, ...]:
    """The alternatives of a type, without their constraints and descriptions."""
    while isinstance(t, mi.Metadata):
        t = t.type
    if isinstance(t, mi.UnionType):
        return tuple(m for member in t.types for m in _members(member))
    return (t,)


def _nullable(t: mi.Type) -> bool:
    return any(isinstance(m, mi.NoneType) for m in _members(t))


def _escape(token: str) -> str:
    return token.replace("~", "~0").replace("/", "~1")


def _as_text(value: float) -> str:
    return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")


class _Repairer:
    """Walks a value beside its msgspec type, repairing non-finite numbers."""

    def __init__(self) -> None:
        self.notices: list[Notice] = []

    def note(self, pointer: str, message: str) -> None:
        self.notices.append(Notice(code="non_finite", message=message, pointer=pointer))

    def repair(self, value: Any, t: mi.Type, pointer: str) -> Any:
        if isinstance(value, float):
            if math.isfinite(value):
                return value
            if _nullable(t):
                self.note(pointer, "A non-finite value is reported as null.")
                return None
            if any(isinstance(m, mi.StrType) for m in _members(t)):
                self.note(pointer, "A non-finite value is reported as text.")
                return _as_text(value)
            raise _Unrepairable(pointer)
        if isinstance(value, msgspec.Struct):
            return self.repair_struct(value, t, pointer)
        if isinstance(value, list):
            (item_t,) = [m.item_type for m in _members(t) if isinstance(m, mi.ListType)]
            return self.repair_list(value, item_t, pointer)
        if isinstance(value, dict):
            (dict_t,) = [m for m in _members(t) if isinstance(m, mi.DictType)]
            return {
                k: self.repair(v, dict_t.value_type, f"{pointer}/{_escape(k)}")
                for k, v in value.items()
            }
        return value

    def repair_list(self, values: list[Any], item_t: mi.Type, pointer: str) -> list[Any]:
        out = []
        for i, item in enumerate(values):
            try:
                out.append(self.repair(item, item_t, f"{pointer}/{i}"))
            except _Unrepairable as exc:
                if not isinstance(item, msgspec.Struct):
                    raise
                self.note(f"{pointer}/{i}", f"Entry left out: non-finite value at {exc}.")
        return out

    def repair_struct(self, value: msgspec.Struct, t: mi.Type, pointer: str) -> msgspec.Struct:
        (struct_t,) = [
            m for m in _members(t) if isinstance(m, mi.StructType) and m.cls is type(value)
        ]
        if isinstance(value, Side):
            value = self.truncate_side(value, struct_t, pointer)
        changes: dict[str, Any] = {}
        for field in struct_t.fields:
            old = getattr(value, field.name)
            where = f"{pointer}/{field.encode_name}"
            try:
                new = self.repair(old, field.type, where)
            except _Unrepairable as exc:
                if not _nullable(field.type):
                    raise
                self.note(where, f"Member reported as null: non-finite value at {exc}.")
                new = None
            if new is not old:
                changes[field.name] = new
        return msgspec.structs.replace(value, **changes) if changes else value

    def truncate_side(self, side: Side, side_t: mi.StructType, pointer: str) -> Side:
        """End a side's station arrays before the first station with a non-finite value.

        Arrays whose entries may be null are left to the general rule (null).
        """
        present = [getattr(side, f.name) for f in side_t.fields]
        lists = [value for value in present if isinstance(value, list)]
        if not lists:  # no station arrays (a summary answer), or encoded fragments
            return side
        count = len(lists[0])
        arrays = {
            f.name: getattr(side, f.name)
            for f in side_t.fields
            if isinstance(getattr(side, f.name), list) and len(getattr(side, f.name)) == count
        }
        strict = {
            f.name
            for f in side_t.fields
            for m in _members(f.type)
            if isinstance(m, mi.ListType) and not _nullable(m.item_type)
        }
        bad = [
            (i, name)
            for name, values in arrays.items()
            if name in strict
            for i, v in enumerate(values)
            if isinstance(v, float) and not math.isfinite(v)
        ]
        if not bad:
            return side
        stop, name = min(bad)
        self.note(
            f"{pointer}/{name}/{stop}",
            f"Stations from index {stop} on are left out: non-finite values.",
        )
        return msgspec.structs.replace(side, **{n: v[:stop] for n, v in arrays.items()})


_RESULT_TYPE = mi.type_info(Result)


def sanitise(result: Result) -> Result:
    """``result`` without NaN or infinite numbers, each repair noted in its warnings."""
    if _all_finite(result):
        return result
    repairer = _Repairer()
    try:
        repaired: Result = repairer.repair(result, _RESULT_TYPE, "")
    except _Unrepairable as exc:  # pragma: no cover - Result has no such member today
        raise ValueError(f"non-finite value at {exc} cannot be repaired") from None
    return msgspec.structs.replace(repaired, warnings=[*repaired.warnings, *repairer.notices])


def finite_or_none(value: Any) -> Any:
    """A JSON-ready document with every non-finite float replaced by ``None``."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, (list, tuple)):
        return [finite_or_none(v) for v in value]
    if isinstance(value, dict):
        return {k: finite_or_none(v) for k, v in value.items()}
    return value
