"""MessagePack for schemathesis: the service takes and gives ``application/msgpack`` too.

Imported by the in-process test and named by ``SCHEMATHESIS_HOOKS`` for the live runs.
"""

from __future__ import annotations

from typing import Any

import msgspec
import schemathesis

MSGPACK = "application/msgpack"


@schemathesis.serializer(MSGPACK)
def to_msgpack(ctx: Any, value: Any) -> bytes:
    """Generated bodies as MessagePack."""
    return msgspec.msgpack.encode(value)


@schemathesis.deserializer(MSGPACK)
def from_msgpack(ctx: Any, response: Any) -> Any:
    """MessagePack answers, for checking against the document's schema."""
    return msgspec.msgpack.decode(response.content)
