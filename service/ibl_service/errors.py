"""Errors as RFC 9457 problem details: the kinds of problem and the one exception table.

Contents
--------
- ``ProblemKind`` and the kinds this service answers with (``MALFORMED_JSON``, ...).
- ``ProblemError``: raise it anywhere below a handler to answer with a problem.
- ``problem_from_case_error``: a library ``CaseError`` as a problem, its pointers
  optionally prefixed (``/cases/3``) for a batch entry.
- ``EXCEPTION_HANDLERS``: exception class to response, given to the application.

No answer ever carries a stack trace; unexpected exceptions are logged and
answered with a plain 500 problem.
"""

from __future__ import annotations

import itertools
import logging
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from http import HTTPStatus
from typing import Any

import msgspec
from litestar import Request, Response
from litestar.exceptions import HTTPException

from ibl import CaseError
from ibl_service.wire import MAX_DETAIL, MAX_ERRORS, MAX_POINTER, MAX_REASON, FieldError, Problem

__all__ = [
    "BODY_TOO_LARGE",
    "CLIENT_CLOSED",
    "EXCEPTION_HANDLERS",
    "INCOMPLETE_BODY",
    "INTERNAL_ERROR",
    "INVALID_CASE",
    "INVALID_REQUEST",
    "MALFORMED_JSON",
    "MALFORMED_MSGPACK",
    "NOT_ACCEPTABLE",
    "NOT_READY",
    "OVERLOADED",
    "PROBLEM_MEDIA_TYPE",
    "TIME_LIMIT",
    "ProblemError",
    "ProblemKind",
    "bounded_problem",
    "problem_from_case_error",
    "problem_response",
]

PROBLEM_MEDIA_TYPE = "application/problem+json"

log = logging.getLogger("ibl_service")
_encode = msgspec.json.Encoder().encode


def _cut(text: str, limit: int) -> str:
    return text if len(text) <= limit else text[: limit - 1] + "\u2026"


def bounded_problem(
    uri: str, title: str, status: int, detail: str, errors: Iterable[FieldError] = ()
) -> Problem:
    """A ``Problem`` within the documented bounds: text that echoes the request (a member
    name, an enum value) is cut, and at most ``MAX_ERRORS`` entries are kept."""
    kept = [
        FieldError(pointer=_cut(e.pointer, MAX_POINTER), reason=_cut(e.reason, MAX_REASON))
        for e in itertools.islice(errors, MAX_ERRORS)
    ]
    return Problem(
        type=uri, title=title, status=status, detail=_cut(detail, MAX_DETAIL), errors=kept
    )


@dataclass(frozen=True, slots=True)
class ProblemKind:
    """One kind of problem: its URI slug, HTTP status and title."""

    slug: str
    status: int
    title: str

    @property
    def type(self) -> str:
        """The problem type URI (a tag URI: an identifier, not a link)."""
        return f"tag:ibl,2025:problem/{self.slug}"

    def problem(self, detail: str, errors: Iterable[FieldError] = ()) -> Problem:
        """A problem of this kind."""
        return bounded_problem(self.type, self.title, self.status, detail, errors)


MALFORMED_JSON = ProblemKind("malformed-json", 400, "Malformed JSON")
MALFORMED_MSGPACK = ProblemKind("malformed-msgpack", 400, "Malformed MessagePack")
INCOMPLETE_BODY = ProblemKind("incomplete-body", 400, "Incomplete request body")
INVALID_CASE = ProblemKind("invalid-case", 422, "Invalid case")
INVALID_REQUEST = ProblemKind("invalid-request", 422, "Invalid request")
NOT_ACCEPTABLE = ProblemKind("not-acceptable", 406, "Not acceptable")
BODY_TOO_LARGE = ProblemKind("body-too-large", 413, "Request body too large")
TIME_LIMIT = ProblemKind("time-limit", 503, "Time limit exceeded")
OVERLOADED = ProblemKind("overloaded", 503, "Service overloaded")
NOT_READY = ProblemKind("not-ready", 503, "Not ready")
INTERNAL_ERROR = ProblemKind("internal-error", 500, "Internal error")
#: Never delivered (the client has gone); the status is what metrics record for it.
CLIENT_CLOSED = ProblemKind("client-closed", 499, "Client closed the request")


class ProblemError(Exception):
    """Answer the current request with a problem (and optional extra headers)."""

    def __init__(
        self,
        kind: ProblemKind,
        detail: str,
        errors: Iterable[FieldError] = (),
        headers: Mapping[str, str] | None = None,
    ) -> None:
        super().__init__(detail)
        self.problem = kind.problem(detail, errors)
        self.headers = dict(headers or {})


def problem_from_case_error(error: CaseError, prefix: str = "") -> Problem:
    """The library's ``CaseError`` as an ``invalid-case`` problem, pointers under ``prefix``."""
    errors = [FieldError(pointer=prefix + p.pointer, reason=p.reason) for p in error.problems]
    where = f"The case at {prefix}" if prefix else "The case"
    plural = "" if len(errors) == 1 else "s"
    listed = "listed" if len(errors) <= MAX_ERRORS else f"the first {MAX_ERRORS} listed"
    detail = f"{where} is invalid: {len(errors)} problem{plural}, {listed} in `errors`."
    return INVALID_CASE.problem(detail, errors)


def problem_response(problem: Problem, headers: Mapping[str, str] | None = None) -> Response[bytes]:
    """A problem as an ``application/problem+json`` response."""
    return Response(
        content=_encode(problem),
        status_code=problem.status,
        media_type=PROBLEM_MEDIA_TYPE,
        headers=dict(headers or {}),
    )


def _on_problem(_: Request[Any, Any, Any], exc: ProblemError) -> Response[bytes]:
    return problem_response(exc.problem, exc.headers)


def _on_case_error(_: Request[Any, Any, Any], exc: CaseError) -> Response[bytes]:
    return problem_response(problem_from_case_error(exc))


def _on_http(request: Request[Any, Any, Any], exc: HTTPException) -> Response[bytes]:
    """Errors raised by the framework itself: routing, methods, the body size limit."""
    status = exc.status_code
    if status == BODY_TOO_LARGE.status:
        limit = request.app.state.settings.max_body_bytes
        answer = BODY_TOO_LARGE.problem(f"The request body is larger than {limit} bytes.")
    elif status >= 500:
        return _on_unexpected(request, exc)
    else:
        try:
            phrase = HTTPStatus(status).phrase
        except ValueError:
            phrase = "Error"
        detail = exc.detail if exc.detail and exc.detail != phrase else f"{phrase}."
        answer = bounded_problem("about:blank", phrase, status, detail)
    headers = {k: v for k, v in (exc.headers or {}).items() if k.lower() == "allow"}
    return problem_response(answer, headers)


def _on_unexpected(request: Request[Any, Any, Any], exc: Exception) -> Response[bytes]:
    log.error("unexpected error on %s %s", request.method, request.url.path, exc_info=exc)
    return problem_response(INTERNAL_ERROR.problem("The server failed to answer this request."))


#: The one exception-to-response table; more specific classes win (method resolution order).
EXCEPTION_HANDLERS: dict[type[Exception], Callable[..., Response[bytes]]] = {
    ProblemError: _on_problem,
    CaseError: _on_case_error,
    HTTPException: _on_http,
    Exception: _on_unexpected,
}
