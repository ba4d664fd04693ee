"""Runs CPU-heavy work off the event loop, within the time and queue limits.

One ``Runner`` per application: a capacity limiter bounds the analyses running at
once in this worker, a queue bound turns excess load into a prompt 503, and a
time limit turns a long request into a 503 with ``Retry-After``.  A timed-out
analysis cannot be interrupted inside its thread; it finishes in the background
while still holding its slot, so a worker flooded with slow cases sheds load
instead of piling it up.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TypeVar

import anyio
import anyio.to_thread

from service.config import Settings
from service.errors import OVERLOADED, TIME_LIMIT, ProblemError

__all__ = ["Runner"]

T = TypeVar("T")

#: Seconds a client is asked to wait after an overload answer.
OVERLOAD_RETRY_AFTER_S = 1


class Runner:
    """Off-loop execution bounded by ``Settings`` (threads, queue, time limit)."""

    def __init__(self, settings: Settings) -> None:
        self.settings = settings
        self.limiter = anyio.CapacityLimiter(settings.compute_threads)

    @property
    def saturated(self) -> bool:
        """True when a new analysis would be refused."""
        limiter = self.limiter
        return (
            limiter.available_tokens == 0
            and limiter.statistics().tasks_waiting >= self.settings.max_queue
        )

    async def run(self, fn: Callable[[], T]) -> T:
        """``fn()`` in a worker thread; ``ProblemError`` (503) when over a limit."""
        if self.saturated:
            raise ProblemError(
                OVERLOADED,
                "Too many analyses are running or waiting; retry shortly.",
                headers={"Retry-After": str(OVERLOAD_RETRY_AFTER_S)},
            )
        limit = self.settings.time_limit_s
        try:
            with anyio.fail_after(limit):
                return await anyio.to_thread.run_sync(
                    fn, limiter=self.limiter, abandon_on_cancel=True
                )
        except TimeoutError:
            raise ProblemError(
                TIME_LIMIT,
                f"The analysis did not finish within {limit:g} s; retry later, or send "
                "fewer cases or points per request.",
                headers={"Retry-After": str(max(1, math.ceil(limit)))},
            ) from None
