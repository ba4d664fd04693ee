"""A small synchronous client of the HTTP service, for optimisation loops and large batches.

Needs the optional extra ``client`` (httpx); importing ``ibl`` does not.

>>> from ibl.client import Client                          # doctest: +SKIP
>>> with Client("http://127.0.0.1:8000") as client:        # doctest: +SKIP
...     result = client.analyze(case)                       # an ibl.Result
...     answers = client.analyze_batch(cases, chunk=500)    # Result or Problem, in order

Answers travel as MessagePack unless ``format="json"``. A 503 (overloaded, or over the
server's time limit) and a transport failure (refused connection, timeout) are retried
(an analysis has no side effects, so sending it again is safe), waiting as ``Retry-After`` says,
at most ``retries`` times and within ``budget`` seconds in all; a 4xx answer raises
``ProblemError`` carrying the RFC 9457 problem (type, title, status, detail, and ``errors``
naming each offending field by JSON pointer).
"""

from __future__ import annotations

import email.utils
import time
from collections.abc import Mapping, Sequence
from types import TracebackType
from typing import TYPE_CHECKING, Any, Literal

import msgspec

from ibl.schema import Case, Result

if TYPE_CHECKING:
    import httpx

__all__ = [
    "DEFAULT_CHUNK",
    "Client",
    "ClientError",
    "FieldError",
    "Problem",
    "ProblemError",
    "Unavailable",
]

#: Cases per batch request by default: the server's default batch limit (``IBL_MAX_BATCH``).
DEFAULT_CHUNK = 1000
#: Wait before retrying a connection failure, or a 503 without a usable Retry-After [s];
#: doubled on each further attempt (common practice: exponential back-off).
FIRST_BACKOFF_S = 0.25
#: Longest single wait between two attempts [s].
MAX_BACKOFF_S = 10.0

Format = Literal["msgpack", "json"]
_MEDIA: dict[str, str] = {"msgpack": "application/msgpack", "json": "application/json"}


class FieldError(msgspec.Struct, frozen=True):
    """One offending member of the request: a JSON pointer into the body and the reason."""

    pointer: str
    reason: str


class Problem(msgspec.Struct, frozen=True):
    """RFC 9457 problem details as the service sends them."""

    type: str
    title: str
    status: int
    detail: str = ""
    errors: list[FieldError] = msgspec.field(default_factory=list)


class _Probe(msgspec.Struct):
    """Tells a problem (it has ``status``) from a result (it has none) in a batch answer."""

    status: int | None = None


class _Batch(msgspec.Struct):
    results: list[msgspec.Raw]


class ClientError(Exception):
    """The service could not be reached, or answered something unexpected."""


class ProblemError(ClientError):
    """The service refused the request with a problem (4xx, or 503 after the retries)."""

    def __init__(self, problem: Problem) -> None:
        self.problem = problem
        lines = [f"{problem.status} {problem.title}: {problem.detail}".rstrip(": ")]
        lines += [f"  {error.pointer}: {error.reason}" for error in problem.errors]
        super().__init__("\n".join(lines))

    @property
    def status(self) -> int:
        return self.problem.status

    @property
    def errors(self) -> list[FieldError]:
        return self.problem.errors


class Unavailable(ProblemError):
    """Still 503 when the retries or the time budget ran out."""


def _retry_after(value: str | None) -> float | None:
    """Seconds to wait from a ``Retry-After`` header: delta-seconds or an HTTP date."""
    if value is None:
        return None
    value = value.strip()
    if value.isdigit():
        return float(value)
    try:
        when = email.utils.parsedate_to_datetime(value)
    except (TypeError, ValueError):
        return None
    return max(0.0, when.timestamp() - time.time())


class Client:
    """Synchronous client of ``POST /v1/analyses`` and ``POST /v1/analyses/batch``.

    Parameters
    ----------
    base_url
        Where the service answers, e.g. ``http://127.0.0.1:8000``.
    timeout
        Timeout of one HTTP request [s] (connect, read, write, pool).
    retries
        Most retries of one request after a 503 or a connection failure.
    budget
        Longest time one call may spend, attempts and waits included [s]; no wait is
        started that would end beyond it.
    format
        ``"msgpack"`` (the default: smaller, no float text) or ``"json"``.
    """

    def __init__(
        self,
        base_url: str,
        *,
        timeout: float = 60.0,
        retries: int = 5,
        budget: float = 120.0,
        format: Format = "msgpack",
    ) -> None:
        import httpx  # the optional extra "client"; ibl itself does not need it

        if format not in _MEDIA:
            raise ValueError(f"format must be 'msgpack' or 'json', not {format!r}")
        if retries < 0 or budget < 0:
            raise ValueError("retries and budget must not be negative")
        self.format: Format = format
        self.retries = retries
        self.budget = budget
        media = _MEDIA[format]
        self._http = httpx.Client(
            base_url=base_url,
            timeout=timeout,
            headers={"content-type": media, "accept": media},
        )
        self._transport_errors: tuple[type[Exception], ...] = (httpx.TransportError,)
        if format == "msgpack":
            self._encode: Any = msgspec.msgpack.Encoder().encode
            self._result: Any = msgspec.msgpack.Decoder(Result).decode
            self._batch: Any = msgspec.msgpack.Decoder(_Batch).decode
            self._probe: Any = msgspec.msgpack.Decoder(_Probe).decode
            self._problem: Any = msgspec.msgpack.Decoder(Problem).decode
        else:
            self._encode = msgspec.json.Encoder().encode
            self._result = msgspec.json.Decoder(Result).decode
            self._batch = msgspec.json.Decoder(_Batch).decode
            self._probe = msgspec.json.Decoder(_Probe).decode
            self._problem = msgspec.json.Decoder(Problem).decode

    # ---------------------------------------------------------------- context manager

    def __enter__(self) -> Client:
        return self

    def __exit__(
        self,
        kind: type[BaseException] | None,
        value: BaseException | None,
        traceback: TracebackType | None,
    ) -> None:
        self.close()

    def close(self) -> None:
        self._http.close()

    # ------------------------------------------------------------------------ calls

    def analyze(self, case: Case | Mapping[str, Any]) -> Result:
        """One case (a ``Case`` or its document) to its typed ``Result``.

        Raises ``ProblemError`` (with the pointers) if the service refuses the case."""
        response = self._post("/v1/analyses", self._encode(case))
        return self._decode(self._result, response.content)  # type: ignore[no-any-return]

    def analyze_batch(
        self, cases: Sequence[Case | Mapping[str, Any]], *, chunk: int = DEFAULT_CHUNK
    ) -> list[Result | Problem]:
        """Many cases, sent in batches of at most ``chunk``; one entry per case, in order.

        A bad case does not fail the others: its entry is the ``Problem``, whose pointers
        start with ``/cases/<index>``, the index into ``cases`` (not into the chunk)."""
        if chunk < 1:
            raise ValueError("chunk must be at least 1")
        answers: list[Result | Problem] = []
        for start in range(0, len(cases), chunk):
            part = list(cases[start : start + chunk])
            response = self._post("/v1/analyses/batch", self._encode({"cases": part}))
            batch = self._decode(self._batch, response.content)
            if len(batch.results) != len(part):
                raise ClientError(
                    f"the batch answer has {len(batch.results)} entries for {len(part)} cases"
                )
            for raw in batch.results:
                if self._decode(self._probe, raw).status is None:
                    answers.append(self._decode(self._result, raw))
                else:
                    answers.append(_shift(self._decode(self._problem, raw), start))
        return answers

    # ---------------------------------------------------------------------- helpers

    def _decode(self, decode: Any, content: bytes | msgspec.Raw) -> Any:
        try:
            return decode(content)
        except msgspec.DecodeError as error:
            raise ClientError(f"unexpected answer from the service: {error}") from error

    def _post(self, path: str, body: bytes) -> httpx.Response:
        """POST with bounded retries on 503 and connection failures; 4xx raise."""
        deadline = time.monotonic() + self.budget
        backoff = FIRST_BACKOFF_S
        attempt = 0
        while True:
            try:
                response = self._http.post(path, content=body)
            except self._transport_errors as error:
                wait = backoff
                if not self._may_retry(attempt, deadline, wait):
                    raise ClientError(f"could not reach the service: {error}") from error
            else:
                if response.status_code < 400:
                    return response
                problem = _problem_of(response)
                if response.status_code != 503:
                    raise ProblemError(problem)
                hinted = _retry_after(response.headers.get("retry-after"))
                wait = backoff if hinted is None else hinted
                if not self._may_retry(attempt, deadline, wait):
                    raise Unavailable(problem)
            time.sleep(min(wait, MAX_BACKOFF_S))
            attempt += 1
            backoff = min(2.0 * backoff, MAX_BACKOFF_S)

    def _may_retry(self, attempt: int, deadline: float, wait: float) -> bool:
        return attempt < self.retries and time.monotonic() + min(wait, MAX_BACKOFF_S) < deadline


def _problem_of(response: httpx.Response) -> Problem:
    """The RFC 9457 problem of an error answer (JSON or MessagePack); a bare one if none."""
    kind = response.headers.get("content-type", "")
    try:
        if "msgpack" in kind:
            return msgspec.msgpack.decode(response.content, type=Problem)
        return msgspec.json.decode(response.content, type=Problem)
    except msgspec.DecodeError:
        return Problem(
            type="about:blank",
            title=response.reason_phrase or "error",
            status=response.status_code,
            detail=response.text[:500],
        )


def _shift(problem: Problem, start: int) -> Problem:
    """Pointers of a chunk's problem renumbered to index the whole list of cases."""
    if start == 0:
        return problem
    errors = []
    for error in problem.errors:
        pointer = error.pointer
        parts = pointer.split("/", 3)
        if len(parts) >= 3 and parts[1] == "cases" and parts[2].isdigit():
            parts[2] = str(int(parts[2]) + start)
            pointer = "/".join(parts)
        errors.append(FieldError(pointer, error.reason))
    return msgspec.structs.replace(problem, errors=errors)
