"""The OpenAPI 3.1 document: generated from the application, committed under ``openapi/``.

Litestar generates the paths, operations and response schemas from the routes.
The analysis endpoints read their bodies themselves (so that a bad case in a
batch fails alone), so their request bodies are added here from the wire type
each route names in ``opt["request_body"]``, with the schema msgspec itself
derives for that type: exactly what the decoder accepts, unknown members
included (``additionalProperties: false``).

Every request body, and the answer of the analysis endpoints, is offered as JSON and as
MessagePack (the same document; ``Content-Type`` and ``Accept`` choose).

Regenerate the committed copy with ``python -m ibl_service.openapi``; ``--check``
exits non-zero when it is stale.
"""

from __future__ import annotations

import argparse
import copy
import json
import sys
import typing
from pathlib import Path
from typing import TYPE_CHECKING, Any

import msgspec
from litestar.openapi.plugins import JsonRenderPlugin

from ibl.analysis import CAUTION as RESULT_CAUTION

if TYPE_CHECKING:
    from litestar import Litestar, Request

    from ibl_service.config import Settings

__all__ = ["CAUTION", "COMMITTED", "ServiceJsonRenderPlugin", "document", "main", "to_text"]

#: Where the committed copy lives.
COMMITTED = Path(__file__).resolve().parents[2] / "openapi" / "openapi.json"

#: The caution of every result, in the API description too (one text everywhere).
CAUTION = "**Caution.** " + RESULT_CAUTION

_REF = "#/components/schemas/{name}"
_RETRY_AFTER = {
    "description": "Seconds to wait before retrying.",
    "schema": {"type": "integer", "minimum": 1},
}


def _batch_response_schema() -> dict[str, Any]:
    """``BatchResponse``: its entries are a union that msgspec cannot describe by itself."""
    from ibl_service.wire import BatchResponse

    entry = {"oneOf": [{"$ref": _REF.format(name=n)} for n in ("Result", "Problem")]}
    return {
        "title": "BatchResponse",
        "description": BatchResponse.__doc__,
        "type": "object",
        "properties": {"results": {"type": "array", "items": entry}},
        "required": ["results"],
        "additionalProperties": False,
    }


def _opt_values(app: Litestar, key: str) -> dict[str, Any]:
    """Operation id -> what a route names in ``opt[key]`` (a wire type, or response content)."""
    found: dict[str, Any] = {}
    for route in app.routes:
        for handler in getattr(route, "route_handlers", ()):
            if key in handler.opt and isinstance(handler.operation_id, str):
                found[handler.operation_id] = handler.opt[key]
    return found


def _apply_limits(schemas: dict[str, Any], settings: Settings) -> None:
    """State the server's own limits: cases per batch, and points per surface when
    ``IBL_MAX_POINTS`` is below the library's limit."""
    from ibl.schema import Case
    from ibl_service.codec import POINT_ARRAYS

    schemas["BatchRequest"]["properties"]["cases"]["maxItems"] = settings.max_batch
    parts = typing.get_type_hints(Case)
    for part, name in POINT_ARRAYS:
        component = schemas[parts[part].__name__]
        for option in component["properties"][name].get("anyOf", []):
            if option.get("type") == "array":
                option["maxItems"] = min(option["maxItems"], settings.max_points)


def _lift_single_alternatives(node: Any) -> None:
    """Replace ``oneOf`` lists of one schema by that schema (Litestar writes them for optional
    members, e.g. the station arrays a case's ``output`` may leave out): one type reads
    better and gives generated clients a plain member."""
    if isinstance(node, dict):
        options = node.get("oneOf")
        if isinstance(options, list) and len(options) == 1 and isinstance(options[0], dict):
            del node["oneOf"]
            for key, value in options[0].items():
                node.setdefault(key, value)
        for value in node.values():
            _lift_single_alternatives(value)
    elif isinstance(node, list):
        for value in node:
            _lift_single_alternatives(value)


def _drop_null_defaults(node: Any) -> None:
    """Remove ``default: null`` (msgspec writes it for ``X | None = None`` members): for
    these members absence means "not given", and a generator reading the default would
    send an explicit null, or type the member as always present."""
    if isinstance(node, dict):
        if "default" in node and node["default"] is None:
            del node["default"]
        for value in node.values():
            _drop_null_defaults(value)
    elif isinstance(node, list):
        for value in node:
            _drop_null_defaults(value)


def document(app: Litestar) -> dict[str, Any]:
    """The complete OpenAPI document of ``app``, with the limits of its settings."""
    from ibl_service.codec import BODY_MEDIA_TYPES

    media_types = tuple(BODY_MEDIA_TYPES.values())
    doc = copy.deepcopy(app.openapi_schema.to_schema())
    bodies = _opt_values(app, "request_body")
    answers = _opt_values(app, "response_body")
    contents = _opt_values(app, "response_content")
    headers = _opt_values(app, "header_parameter")
    schemas: dict[str, Any] = doc.setdefault("components", {}).setdefault("schemas", {})
    _, extra = msgspec.json.schema_components(
        sorted(set(bodies.values()), key=str), ref_template=_REF
    )
    extra["BatchResponse"] = _batch_response_schema()  # replaces msgspec's, which has no oneOf
    for name, schema in extra.items():
        if name in schemas:
            raise RuntimeError(f"two component schemas are named {name!r}")
        schemas[name] = schema
    described = {t for t in answers.values() if t.__name__ not in schemas}
    _, answer_schemas = msgspec.json.schema_components(
        sorted(described, key=str), ref_template=_REF
    )
    for name, schema in answer_schemas.items():  # parts already described are kept
        schemas.setdefault(name, schema)
    settings = app.state.get("settings")
    if settings is not None:
        _apply_limits(schemas, settings)
    for path_item in doc["paths"].values():
        for operation in path_item.values():
            body_type = bodies.get(operation.get("operationId", ""))
            if body_type is not None:
                ref = {"$ref": _REF.format(name=body_type.__name__)}
                operation["requestBody"] = {
                    "required": True,
                    "content": {media: {"schema": ref} for media in media_types},
                }
            answer_type = answers.get(operation.get("operationId", ""))
            if answer_type is not None:
                ref = {"$ref": _REF.format(name=answer_type.__name__)}
                operation["responses"]["200"]["content"] = {"application/json": {"schema": ref}}
            content = contents.get(operation.get("operationId", ""))
            if content is not None:
                operation["responses"]["200"]["content"] = copy.deepcopy(content)
            elif body_type is not None:  # the same document in either format, by Accept
                answer = operation["responses"]["200"]["content"]
                for media in media_types:
                    answer.setdefault(media, copy.deepcopy(answer["application/json"]))
            header = headers.get(operation.get("operationId", ""))
            if header is not None:
                operation.setdefault("parameters", []).append(copy.deepcopy(header))
            for status, response in operation.get("responses", {}).items():
                if status == "503":
                    response["headers"] = {"Retry-After": _RETRY_AFTER}
    _lift_single_alternatives(schemas)
    _drop_null_defaults(schemas)
    doc["security"] = []  # no authentication (stated in the description)
    return doc


def to_text(doc: dict[str, Any]) -> str:
    """The canonical text of a document: sorted keys, two-space indent, final newline."""
    return json.dumps(doc, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


class ServiceJsonRenderPlugin(JsonRenderPlugin):
    """Serves ``document(app)`` at ``/schema/openapi.json``."""

    def render(self, request: Request[Any, Any, Any], openapi_schema: dict[str, Any]) -> bytes:
        state = request.app.state
        if "openapi_json" not in state:
            state["openapi_json"] = to_text(document(request.app)).encode()
        cached: bytes = state["openapi_json"]
        return cached


def main(argv: list[str] | None = None) -> int:
    """Write the committed document, or with ``--check`` report whether it is current."""
    parser = argparse.ArgumentParser(prog="python -m ibl_service.openapi", description=__doc__)
    parser.add_argument("--check", action="store_true", help="fail if the file is stale")
    parser.add_argument("--output", type=Path, default=COMMITTED, help="default: %(default)s")
    args = parser.parse_args(argv)

    from ibl_service.app import create_app
    from ibl_service.config import Settings

    text = to_text(document(create_app(Settings())))
    output: Path = args.output
    if args.check:
        current = output.read_text(encoding="utf-8") if output.exists() else ""
        if current != text:
            print(f"{output} is stale; run `python -m ibl_service.openapi`", file=sys.stderr)
            return 1
        return 0
    output.parent.mkdir(parents=True, exist_ok=True)
    output.write_text(text, encoding="utf-8")
    print(f"wrote {output}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
