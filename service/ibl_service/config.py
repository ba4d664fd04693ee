"""Service settings: request limits and worker sizing, read once from the environment.

Every setting has a default that suits one machine with a few cores; each can be
overridden by an environment variable (see ``ENV_VARS``).  Tests and embedding
code build ``Settings`` directly and pass it to ``ibl_service.app.create_app``.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import Any

from ibl.schema import MAX_POINTS

__all__ = ["ENV_VARS", "Settings"]

#: Environment variable -> (settings field, meaning); the documented configuration surface.
ENV_VARS: dict[str, tuple[str, str]] = {
    "IBL_MAX_BODY_BYTES": ("max_body_bytes", "largest request body accepted [bytes]"),
    "IBL_MAX_POINTS": ("max_points", "largest number of points on one surface"),
    "IBL_MAX_BATCH": ("max_batch", "largest number of cases in one batch request"),
    "IBL_TIME_LIMIT_S": ("time_limit_s", "wall-clock limit of one request's analysis [s]"),
    "IBL_COMPUTE_THREADS": ("compute_threads", "analyses run at once in one worker process"),
    "IBL_MAX_QUEUE": ("max_queue", "analyses waiting in one worker before it answers 503"),
}


def _why_invalid(name: str, value: float) -> str | None:
    """Why ``value`` is not acceptable for the setting ``name``, or None if it is."""
    if name == "time_limit_s":
        valid, rule = math.isfinite(value) and value > 0, "a finite number > 0"
    elif name == "max_points":
        valid, rule = 1 <= value <= MAX_POINTS, f"between 1 and {MAX_POINTS}"
    else:
        minimum = 0 if name == "max_queue" else 1
        valid, rule = value >= minimum, f">= {minimum}"
    return None if valid else f"must be {rule}; got {value!r}"


@dataclass(frozen=True, slots=True, kw_only=True)
class Settings:
    """Limits of one worker process.

    ``max_points`` can only tighten the library's own limit (``ibl.schema.MAX_POINTS``)."""

    max_body_bytes: int = 64 * 1024 * 1024
    max_points: int = MAX_POINTS
    max_batch: int = 1000
    time_limit_s: float = 30.0
    compute_threads: int = 2
    max_queue: int = 64

    def __post_init__(self) -> None:
        for f in fields(self):
            why = _why_invalid(f.name, getattr(self, f.name))
            if why:
                raise ValueError(f"`{f.name}` {why}")

    @classmethod
    def from_env(cls, environ: Mapping[str, str] | None = None) -> Settings:
        """Read the ``IBL_*`` variables of ``ENV_VARS``; unset or empty ones keep their default.

        Raises ``ValueError`` naming the variable when a value is not acceptable.
        """
        env = os.environ if environ is None else environ
        values: dict[str, Any] = {}
        for var, (name, _) in ENV_VARS.items():
            text = env.get(var, "").strip()
            if not text:
                continue
            try:
                value = float(text) if name == "time_limit_s" else int(text)
            except ValueError:
                raise ValueError(f"`{var}` must be a number; got {text!r}") from None
            why = _why_invalid(name, value)
            if why:
                raise ValueError(f"`{var}` {why}")
            values[name] = value
        return cls(**values)
