"""The served OpenAPI document is one that generated clients use without hand edits.

Each check reads the document the application serves and holds it against the
OpenAPI 3.1 specification (spec.openapis.org/oas/v3.1.0: ``security``, ``license``,
``contact``, header parameters, ``format: binary`` for raw bytes) and against what
the service really answers or accepts.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from typing import Any

import msgspec
import pytest
from litestar.testing import TestClient

import ibl.registry
from ibl.schema import Case
from ibl_service.app import create_app
from ibl_service.catalogue import MethodCatalogue
from ibl_service.codec import finite_or_none
from ibl_service.config import Settings

#: First eight bytes of every PNG file (PNG specification, ISO/IEC 15948, section 5.2).
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"

PLATE = {
    "surface": {"s": [(i + 1) / 40 for i in range(40)]},
    "pressure": {"edge_velocity": [1.0] * 40},
    "flow": {"reynolds": 1.0e6},
}


@pytest.fixture(scope="module")
def client() -> Iterator[TestClient[Any]]:
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as made:
        yield made


@pytest.fixture(scope="module")
def doc(client: TestClient[Any]) -> dict[str, Any]:
    served: dict[str, Any] = client.get("/schema/openapi.json").json()
    return served


def _figure(doc: dict[str, Any]) -> dict[str, Any]:
    operation: dict[str, Any] = doc["paths"]["/v1/analyses/figure"]["post"]
    return operation


def test_figure_answers_are_binary_strings(doc: dict[str, Any], client: TestClient[Any]) -> None:
    content = _figure(doc)["responses"]["200"]["content"]
    assert set(content) == {"image/png", "image/svg+xml"}
    for schema in (entry["schema"] for entry in content.values()):
        assert (schema["type"], schema["format"]) == ("string", "binary")
    answer = client.post("/v1/analyses/figure", json=PLATE, headers={"accept": "image/png"})
    assert answer.status_code == 200
    assert answer.headers["content-type"] == "image/png"
    assert answer.content.startswith(PNG_SIGNATURE)  # bytes, not text: binary is right


def test_figure_accept_is_a_documented_header(doc: dict[str, Any], client: TestClient[Any]) -> None:
    (accept,) = [p for p in _figure(doc)["parameters"] if p["name"] == "Accept"]
    assert accept["in"] == "header"
    assert accept["required"] is False
    schema = accept["schema"]
    assert set(schema["enum"]) == set(_figure(doc)["responses"]["200"]["content"])
    assert schema["default"] == "image/svg+xml"
    # the documented default is what the service answers without the header
    answer = client.post("/v1/analyses/figure", json=PLATE)
    assert answer.headers["content-type"].startswith(schema["default"])
    for media in schema["enum"]:
        answer = client.post("/v1/analyses/figure", json=PLATE, headers={"accept": media})
        assert answer.headers["content-type"].startswith(media)


def _resolve(doc: dict[str, Any], schema: dict[str, Any]) -> dict[str, Any]:
    name = schema["$ref"].rsplit("/", 1)[-1]
    component: dict[str, Any] = doc["components"]["schemas"][name]
    return component


def test_method_catalogue_is_typed(doc: dict[str, Any], client: TestClient[Any]) -> None:
    schema = doc["paths"]["/v1/methods"]["get"]["responses"]["200"]["content"]["application/json"]
    catalogue = _resolve(doc, schema["schema"])
    assert catalogue["type"] == "object"
    assert catalogue.get("additionalProperties") is False
    assert set(catalogue["required"]) == set(ibl.registry.catalogue())
    for part in catalogue["properties"].values():
        assert "type" in _resolve(doc, part) or "$ref" in part  # each part a named type
    # the served catalogue decodes strictly (unknown members are errors) to the typed form
    served = client.get("/v1/methods").json()
    msgspec.convert(served, MethodCatalogue)
    msgspec.convert(finite_or_none(ibl.registry.catalogue()), MethodCatalogue)


def _optional_members(doc: dict[str, Any]) -> Iterator[tuple[str, str, dict[str, Any]]]:
    for name, component in doc["components"]["schemas"].items():
        required = set(component.get("required", ()))
        for member, schema in component.get("properties", {}).items():
            if member not in required:
                yield name, member, schema


def test_optional_members_have_no_null_default(doc: dict[str, Any]) -> None:
    optional = list(_optional_members(doc))
    assert ("Case", "name", doc["components"]["schemas"]["Case"]["properties"]["name"]) in optional
    assert any(component == "Flow" and member == "reynolds" for component, member, _ in optional)
    text = json.dumps(doc["components"]["schemas"])
    assert '"default": null' not in text
    for component, member, schema in optional:
        assert schema.get("default", 0) is not None, (component, member)


def test_optional_members_may_be_left_out(doc: dict[str, Any]) -> None:
    """What the document leaves out of ``required``, the decoder lets a client leave out."""
    required = set(doc["components"]["schemas"]["Case"]["required"])
    assert required == {"surface", "pressure", "flow"}
    case = msgspec.json.decode(json.dumps(PLATE), type=Case)  # name, inflow, ... not given
    assert case.name is None
    assert case.inflow is None


def test_document_states_security_license_contact(doc: dict[str, Any]) -> None:
    assert doc["security"] == []  # OpenAPI 3.1, 4.8.1: an empty list requires nothing
    assert "No authentication" in doc["info"]["description"]
    assert doc["info"]["license"]["name"] == "MIT"
    assert doc["info"]["license"]["identifier"] == "MIT"  # SPDX identifier
    contact = doc["info"]["contact"]
    assert contact["name"]
    assert contact["url"].startswith("https://")
    # the document says the same as the package metadata
    import tomllib
    from pathlib import Path

    pyproject = tomllib.loads((Path(__file__).parents[1] / "pyproject.toml").read_text())
    assert pyproject["project"]["license"]["text"] == doc["info"]["license"]["name"]
