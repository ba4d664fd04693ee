"""Runs CPU-heavy work off the event loop, within the time and queue limits.

One ``Runner`` per application owns a pool of ``compute_threads`` threads.  Every
analysis is admitted or refused the moment it arrives: when the analyses running
and waiting already fill the threads and the queue (``max_queue``), the request
is answered at once with 503 and ``Retry-After``.  Admission is counted without
yielding to the event loop, so a burst of simultaneous requests cannot slip past
the bound together.

The time limit covers waiting and running.  An analysis that timed out, or that had to
wait for a thread and whose client has gone away meanwhile, is dropped if it has not
started; one that has started cannot be
interrupted inside its thread, so it finishes in the background while still holding its
thread and its place in the count: a worker flooded with slow cases sheds load instead of
piling up threads.

The runner awaits its threads through ``asyncio``; the service runs on uvloop,
and the test client on anyio's asyncio backend.
"""

from __future__ import annotations

import asyncio
import math
import threading
from collections.abc import Awaitable, Callable
from concurrent.futures import Future, ThreadPoolExecutor
from typing import Any, TypeVar

from ibl_service.config import Settings
from ibl_service.errors import CLIENT_CLOSED, OVERLOADED, TIME_LIMIT, ProblemError

__all__ = ["Runner"]

T = TypeVar("T")

#: Seconds a client is asked to wait after an overload answer.
OVERLOAD_RETRY_AFTER_S = 1


class Runner:
    """Off-loop execution bounded by ``Settings`` (threads, queue, time limit)."""

    def __init__(self, settings: Settings) -> None:
        self.settings = settings
        self.capacity = settings.compute_threads + settings.max_queue
        self._pool = ThreadPoolExecutor(settings.compute_threads, thread_name_prefix="ibl-compute")
        self._lock = threading.Lock()
        self._pending = 0  # admitted and not finished: running (abandoned or not) or waiting

    @property
    def pending(self) -> int:
        """Analyses admitted and not yet finished, timed-out ones still running included."""
        return self._pending

    @property
    def saturated(self) -> bool:
        """True when a new analysis would be refused."""
        return self._pending >= self.capacity

    def _finished(self, _: Future[Any] | None = None) -> None:
        with self._lock:
            self._pending -= 1

    async def run(
        self, fn: Callable[[], T], gone: Callable[[], Awaitable[object]] | None = None
    ) -> T:
        """``fn()`` in a pool thread; ``ProblemError`` (503) when over a limit.

        ``gone``, when given, returns once the client has gone away: the analysis is then
        dropped if it has not started (``ProblemError``, ``CLIENT_CLOSED``), so that a
        worker behind on its queue does not spend itself on answers nobody will read.
        """
        with self._lock:
            waiting = self._pending  # analyses ahead of this one, running or waiting
            admitted = waiting < self.capacity
            if admitted:
                self._pending += 1
        if not admitted:
            raise ProblemError(
                OVERLOADED,
                "Too many analyses are running or waiting; retry shortly.",
                headers={"Retry-After": str(OVERLOAD_RETRY_AFTER_S)},
            )
        try:
            future = self._pool.submit(fn)
        except RuntimeError:  # the pool is closed: the worker is stopping
            self._finished()
            raise
        future.add_done_callback(self._finished)
        # Only an analysis that has to wait for a thread is worth watching the client for.
        queued = waiting >= self.settings.compute_threads
        try:
            return await _first(
                asyncio.wrap_future(future), gone if queued else None, self.settings.time_limit_s
            )
        finally:
            future.cancel()  # no effect once it has started: it then runs to its end

    def close(self) -> None:
        """Drop waiting analyses; running ones finish on their own."""
        self._pool.shutdown(wait=False, cancel_futures=True)


async def _first(
    answer: asyncio.Future[T], gone: Callable[[], Awaitable[object]] | None, limit: float
) -> T:
    """The answer within ``limit`` seconds, unless ``gone`` returns first.

    Raises ``ProblemError``: ``TIME_LIMIT`` (503) when the limit passes first,
    ``CLIENT_CLOSED`` when ``gone`` returns first.  Either way the answer is cancelled, which
    drops the analysis if it has not started.
    """
    waiters: set[asyncio.Future[Any]] = {answer}
    watcher = None
    if gone is not None:
        watcher = asyncio.ensure_future(gone())
        waiters.add(watcher)
    try:
        done, _ = await asyncio.wait(waiters, timeout=limit, return_when=asyncio.FIRST_COMPLETED)
        if answer in done:
            return answer.result()
        if watcher is not None and watcher in done:
            raise ProblemError(CLIENT_CLOSED, "The client closed the connection first.")
        raise ProblemError(
            TIME_LIMIT,
            f"The analysis did not finish within {limit:g} s; retry later, or send fewer "
            "cases or points per request.",
            headers={"Retry-After": str(max(1, math.ceil(limit)))},
        )
    finally:
        if watcher is not None:
            watcher.cancel()
        answer.cancel()  # no effect once done; drops the analysis if it has not started
