"""MessagePack for schemathesis: the service takes and gives ``application/msgpack`` too.

Imported by the in-process test and named by ``SCHEMATHESIS_HOOKS`` for the live runs.
"""

from __future__ import annotations

from typing import Any

import msgspec
import schemathesis

MSGPACK = "application/msgpack"


def _fits(value: Any) -> Any:
    """``value`` with integers beyond MessagePack's 64 bits as floats (still out of range)."""
    if isinstance(value, bool):
        return value
    if isinstance(value, int) and not -(2**63) <= value < 2**64:
        return float(value)
    if isinstance(value, list):
        return [_fits(v) for v in value]
    if isinstance(value, dict):
        return {k: _fits(v) for k, v in value.items()}
    return value


@schemathesis.serializer(MSGPACK)
def to_msgpack(ctx: Any, value: Any) -> bytes:
    """Generated bodies as MessagePack."""
    return msgspec.msgpack.encode(_fits(value))


@schemathesis.deserializer(MSGPACK)
def from_msgpack(ctx: Any, response: Any) -> Any:
    """MessagePack answers, for checking against the document's schema."""
    return msgspec.msgpack.decode(response.content)
