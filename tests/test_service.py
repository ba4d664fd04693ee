"""The HTTP service: every endpoint, every problem shape and every limit."""

from __future__ import annotations

import json
import math
import os
import re
import socket
import struct
import subprocess
import sys
import threading
import time
import xml.etree.ElementTree as ET
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import anyio
import httpx
import msgspec
import pytest
from litestar.testing import TestClient

import ibl
from ibl.schema import Result
from ibl_service import codec, openapi
from ibl_service.app import create_app
from ibl_service.config import Settings
from ibl_service.errors import (
    CLIENT_CLOSED,
    NOT_ACCEPTABLE,
    OVERLOADED,
    TIME_LIMIT,
    ProblemError,
)
from ibl_service.runner import Runner
from ibl_service.serve import build_parser
from ibl_service.serve import main as serve_main
from ibl_service.wire import Problem

PROBLEM_JSON = "application/problem+json"


# ----------------------------------------------------------------------- case documents


def strut(points_per_side: int = 60, name: str = "strut") -> dict[str, Any]:
    """A closed contour: an elliptic strut, 12 % thick, with its potential-flow Cp.

    On the ellipse (a cos t, b sin t) the surface speed is
    U (1 + b/a) |sin t| / sqrt(sin^2 t + (b/a)^2 cos^2 t); an odd number of points
    puts one on the leading-edge stagnation point.
    """
    a, b = 0.5, 0.06
    n = 2 * points_per_side - 1
    ts = [math.pi * (2 * i + 1) / n for i in range(n)]
    ratio = b / a
    speed = [
        (1 + ratio) * abs(math.sin(t)) / math.sqrt(math.sin(t) ** 2 + (ratio * math.cos(t)) ** 2)
        for t in ts
    ]
    return {
        "name": name,
        "surface": {"x": [a + a * math.cos(t) for t in ts], "y": [b * math.sin(t) for t in ts]},
        "pressure": {"cp": [1 - u * u for u in speed]},
        "flow": {"reynolds": 2.0e6},
    }


def plate(points: int = 40) -> dict[str, Any]:
    """One surface given by arc length: a flat plate at zero pressure gradient."""
    return {
        "surface": {"s": [(i + 1) / points for i in range(points)]},
        "pressure": {"edge_velocity": [1.0] * points},
        "flow": {"reynolds": 1.0e6},
    }


@pytest.fixture
def make_client() -> Iterator[Any]:
    """Clients of fresh applications, with chosen settings; closed at the end."""
    clients: list[TestClient[Any]] = []

    def make(**settings: Any) -> TestClient[Any]:
        client = TestClient(create_app(Settings(**settings)), raise_server_exceptions=False)
        client.__enter__()
        clients.append(client)
        return client

    yield make
    for client in clients:
        client.__exit__(None, None, None)


@pytest.fixture
def client(make_client: Any) -> TestClient[Any]:
    made: TestClient[Any] = make_client()
    return made


def post_json(client: TestClient[Any], path: str, doc: Any) -> Any:
    return client.post(path, content=json.dumps(doc), headers={"content-type": "application/json"})


def problem_of(response: Any, status: int) -> Problem:
    """Check the RFC 9457 shape and return the problem."""
    assert response.status_code == status, response.text
    assert response.headers["content-type"].startswith(PROBLEM_JSON)
    problem = msgspec.json.decode(response.content, type=Problem)
    assert problem.status == status
    assert problem.type and problem.title and problem.detail
    assert "Traceback" not in response.text
    return problem


def pointers(problem: Problem) -> list[str]:
    return [e.pointer for e in problem.errors]


def with_number(doc: dict[str, Any], path: tuple[str, str, int], literal: str) -> bytes:
    """``doc`` as JSON with one number replaced by a literal JSON cannot carry in Python."""
    part, name, index = path
    marker = 123456.789
    doc = json.loads(json.dumps(doc))
    doc[part][name][index] = marker
    return json.dumps(doc).replace(repr(marker), literal, 1).encode()


# ------------------------------------------------------------------------ happy paths


def test_analyse_returns_the_library_result(client: TestClient[Any]) -> None:
    case = strut()
    response = post_json(client, "/v1/analyses", case)
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("application/json")
    result = msgspec.json.decode(response.content, type=Result)
    assert result.name == "strut"
    assert result.sides and result.caution
    expected = msgspec.to_builtins(ibl.run(ibl.parse_case(case)))
    assert response.json() == json.loads(json.dumps(expected))


def test_analyse_single_surface(client: TestClient[Any]) -> None:
    response = post_json(client, "/v1/analyses", plate())
    assert response.status_code == 200, response.text
    msgspec.json.decode(response.content, type=Result)


def test_batch_keeps_order_and_a_bad_case_fails_alone(client: TestClient[Any]) -> None:
    bad = strut(name="bad")
    bad["pressure"]["cp"][17] = "high"
    cases = [strut(name="first"), bad, plate() | {"name": "third"}]
    response = post_json(client, "/v1/analyses/batch", {"cases": cases})
    assert response.status_code == 200, response.text
    first, middle, third = response.json()["results"]
    assert first["name"] == "first" and third["name"] == "third"
    problem = msgspec.convert(middle, Problem)
    assert problem.status == 422
    assert pointers(problem) == ["/cases/1/pressure/cp/17"]
    single = post_json(client, "/v1/analyses", cases[0]).json()
    assert first == single


def test_batch_cross_field_problem_fails_alone(client: TestClient[Any]) -> None:
    uneven = plate()
    uneven["pressure"]["edge_velocity"] = uneven["pressure"]["edge_velocity"][:-5]
    response = post_json(client, "/v1/analyses/batch", {"cases": [plate(), uneven]})
    assert response.status_code == 200, response.text
    good, bad = response.json()["results"]
    msgspec.convert(good, Result)
    problem = msgspec.convert(bad, Problem)
    assert problem.status == 422
    assert problem.errors and all(p.startswith("/cases/1") for p in pointers(problem))


def test_batch_of_none(client: TestClient[Any]) -> None:
    response = post_json(client, "/v1/analyses/batch", {"cases": []})
    assert response.status_code == 200
    assert response.json() == {"results": []}


def test_methods_catalogue(client: TestClient[Any]) -> None:
    import ibl.registry

    response = client.get("/v1/methods")
    assert response.status_code == 200
    body = response.json()
    assert body and isinstance(body, dict)
    text = json.dumps(ibl.registry.catalogue(), allow_nan=True)
    assert body == json.loads(text, parse_constant=lambda _: None)  # unbounded ends as null


def test_health(client: TestClient[Any]) -> None:
    assert client.get("/health/live").json() == {"status": "live"}
    assert client.get("/health/ready").json() == {"status": "ready"}


def test_not_ready_when_the_start_up_analysis_fails(
    make_client: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    def broken(case: Any, **_: Any) -> Any:
        raise RuntimeError("no")

    monkeypatch.setattr(ibl, "run", broken)
    client = make_client()
    assert client.get("/health/live").status_code == 200
    response = client.get("/health/ready")
    problem_of(response, 503)
    assert response.headers["retry-after"] == "1"


def _samples(client: TestClient[Any]) -> dict[tuple[str, str, str], float]:
    """Metric samples by (name, path, status); counters are process-wide, so tests compare."""
    response = client.get("/metrics")
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("text/plain")
    samples = {}
    for name, labels, value in re.findall(r"^(\w+)\{([^}]*)\} (\S+)$", response.text, re.M):
        path = re.search(r'path="([^"]*)"', labels)
        status = re.search(r'status_code="([^"]*)"', labels)
        key = (name, path.group(1) if path else "", status.group(1) if status else "")
        samples[key] = float(value)
    return samples


def test_metrics_count_requests_by_route(client: TestClient[Any]) -> None:
    before = _samples(client)
    post_json(client, "/v1/analyses", plate())
    post_json(client, "/v1/analyses", plate())
    client.post("/v1/analyses", content=b"{", headers={"content-type": "application/json"})
    client.get("/health/live")
    after = _samples(client)

    def added(name: str, path: str, status: str = "") -> float:
        key = (name, path, status)
        return after.get(key, 0.0) - before.get(key, 0.0)

    assert added("ibl_requests_total", "/v1/analyses", "200") == 2
    assert added("ibl_requests_total", "/v1/analyses", "400") == 1  # problems keep their status
    assert added("ibl_requests_total", "/health/live", "200") == 1
    assert added("ibl_request_duration_seconds_count", "/v1/analyses", "200") == 2
    assert not any(path == "/metrics" for _, path, _ in after)  # the scrape is not counted
    assert after[("ibl_requests_in_progress", "/v1/analyses", "")] == 0


# --------------------------------------------------------------------------- OpenAPI


def test_openapi_served_equals_committed(client: TestClient[Any]) -> None:
    served = client.get("/schema/openapi.json")
    assert served.status_code == 200
    committed = json.loads(openapi.COMMITTED.read_text(encoding="utf-8"))
    assert served.json() == committed, (
        "stale openapi/openapi.json: run python -m ibl_service.openapi"
    )


def test_openapi_document_is_complete(client: TestClient[Any]) -> None:
    doc = client.get("/schema/openapi.json").json()
    assert doc["openapi"].startswith("3.1")
    assert "Caution" in doc["info"]["description"]
    ops = {op["operationId"]: op for item in doc["paths"].values() for op in item.values()}
    assert set(ops) >= {
        "analyse",
        "analyseBatch",
        "analyseFigure",
        "listMethods",
        "live",
        "ready",
        "metrics",
    }
    for op_id, body in (
        ("analyse", "Case"),
        ("analyseBatch", "BatchRequest"),
        ("analyseFigure", "Case"),
    ):
        op = ops[op_id]
        schema = op["requestBody"]["content"]["application/json"]["schema"]
        assert schema == {"$ref": f"#/components/schemas/{body}"}
        assert {"200", "400", "413", "422", "503"} <= set(op["responses"])
        assert "Retry-After" in op["responses"]["503"]["headers"]
        assert "Caution" in op["description"]
    figure = ops["analyseFigure"]["responses"]
    assert set(figure["200"]["content"]) == {"image/svg+xml", "image/png"}
    assert "application/problem+json" in figure["406"]["content"]
    schemas = doc["components"]["schemas"]
    assert schemas["Case"]["additionalProperties"] is False
    refs = set(_refs(doc))
    assert refs and all(ref.removeprefix("#/components/schemas/") in schemas for ref in refs)


def _refs(node: Any) -> Iterator[str]:
    if isinstance(node, dict):
        for key, value in node.items():
            if key == "$ref":
                yield value
            else:
                yield from _refs(value)
    elif isinstance(node, list):
        for value in node:
            yield from _refs(value)


def test_openapi_check_command_detects_drift(tmp_path: Path) -> None:
    target = tmp_path / "openapi.json"
    assert openapi.main(["--output", str(target)]) == 0
    assert openapi.main(["--check", "--output", str(target)]) == 0
    target.write_text(target.read_text().replace('"analyse"', '"analyze"', 1))
    assert openapi.main(["--check", "--output", str(target)]) == 1


# --------------------------------------------------------------------------- problems


@pytest.mark.parametrize(
    "body",
    [b"", b"{", b'{"surface": }', b"[1,]", b"NaN", b'{"a": Infinity}', b"\xff\xfe{}", b"[" * 5000],
    ids=[
        "empty",
        "truncated",
        "missing value",
        "trailing comma",
        "nan",
        "infinity",
        "bad utf-8",
        "deep",
    ],
)
@pytest.mark.parametrize("path", ["/v1/analyses", "/v1/analyses/batch"])
def test_malformed_json_is_400(client: TestClient[Any], path: str, body: bytes) -> None:
    problem = problem_of(client.post(path, content=body), 400)
    assert problem.type.endswith("malformed-json")


def test_invalid_case_names_the_field(client: TestClient[Any]) -> None:
    case = strut()
    case["pressure"]["cp"][17] = "high"
    problem = problem_of(post_json(client, "/v1/analyses", case), 422)
    assert problem.type.endswith("invalid-case")
    assert pointers(problem) == ["/pressure/cp/17"]
    assert problem.errors[0].reason


@pytest.mark.parametrize(
    ("edit", "pointer"),
    [
        (lambda c: c["transition"].update(criterion="no-such-criterion"), "/transition/criterion"),
        (lambda c: c["turbulent"].update(skin_friction="no-such-law"), "/turbulent/skin_friction"),
        (lambda c: c["flow"].update(reynolds=-1.0), "/flow/reynolds"),
        (lambda c: c["flow"].update(mach=1.5), "/flow/mach"),
    ],
    ids=["criterion", "skin friction law", "negative reynolds", "supersonic"],
)
def test_bad_option_names_the_field(client: TestClient[Any], edit: Any, pointer: str) -> None:
    case = strut() | {"transition": {}, "turbulent": {}}
    edit(case)
    assert pointer in pointers(problem_of(post_json(client, "/v1/analyses", case), 422))


def test_unknown_member_is_422(client: TestClient[Any]) -> None:
    case = strut()
    case["flow"]["viscosity_of_honey"] = 1.0
    problem = problem_of(post_json(client, "/v1/analyses", case), 422)
    assert problem.errors
    assert any(
        "viscosity_of_honey" in e.reason or "viscosity_of_honey" in e.pointer
        for e in problem.errors
    )


@pytest.mark.parametrize("literal", ["1e400", "-1e400", "1" * 400])
def test_non_finite_number_is_422_with_pointer(client: TestClient[Any], literal: str) -> None:
    body = with_number(strut(), ("pressure", "cp", 5), literal)
    problem = problem_of(client.post("/v1/analyses", content=body), 422)
    assert pointers(problem) == ["/pressure/cp/5"]


def test_non_finite_number_in_a_batch_fails_alone(client: TestClient[Any]) -> None:
    text = with_number(strut(), ("pressure", "cp", 5), "1e999").decode()
    body = f'{{"cases": [{json.dumps(plate())}, {text}, {json.dumps(plate())}]}}'
    response = client.post("/v1/analyses/batch", content=body)
    assert response.status_code == 200, response.text
    first, middle, last = response.json()["results"]
    assert pointers(msgspec.convert(middle, Problem)) == ["/cases/1/pressure/cp/5"]
    assert first == last and "sides" in first


@pytest.mark.parametrize(
    ("doc", "pointer"),
    [
        ([], ""),
        ({}, ""),
        ({"cases": None}, "/cases"),
        ({"cases": [], "extra": 1}, ""),
    ],
    ids=["array", "no cases", "null cases", "unknown member"],
)
def test_bad_batch_envelope_is_422(client: TestClient[Any], doc: Any, pointer: str) -> None:
    problem = problem_of(post_json(client, "/v1/analyses/batch", doc), 422)
    assert problem.type.endswith("invalid-request")
    assert pointers(problem) == [pointer]


def test_not_a_case_entry_in_a_batch_fails_alone(client: TestClient[Any]) -> None:
    response = post_json(client, "/v1/analyses/batch", {"cases": [plate(), 7, None]})
    assert response.status_code == 200
    results = response.json()["results"]
    assert "sides" in results[0]
    for index in (1, 2):
        problem = msgspec.convert(results[index], Problem)
        assert problem.status == 422 and pointers(problem) == [f"/cases/{index}"]


def test_unknown_path_and_method(client: TestClient[Any]) -> None:
    problem = problem_of(client.get("/v1/nothing-here"), 404)
    assert problem.type == "about:blank"
    response = client.get("/v1/analyses")
    problem_of(response, 405)
    assert "POST" in response.headers["allow"]


def test_unexpected_error_is_500_without_details(
    client: TestClient[Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    def broken(case: Any, **_: Any) -> Any:
        raise RuntimeError("secret internals")

    monkeypatch.setattr(ibl, "run", broken)
    response = post_json(client, "/v1/analyses", plate())
    problem = problem_of(response, 500)
    assert "secret" not in response.text
    assert problem.type.endswith("internal-error")


WEIRD_BODIES = [
    b"null",
    b"true",
    b"0",
    b'"case"',
    b"[]",
    b"1e999",
    b"-0",
    b'{"surface": null, "pressure": null, "flow": null}',
    b'{"surface": {}, "pressure": {}, "flow": {}}',
    b'{"surface": {"s": []}, "pressure": {"cp": []}, "flow": {}}',
    b'{"surface": {"x": [0, 1, 2], "y": [0, 0, 0]}, "pressure": {"cp": [2, 2, 2]}, "flow": {}}',
    b'{"surface": {"s": [0, 0, 0]}, "pressure": {"edge_velocity": [0, 0, 0]}, '
    b'"flow": {"reynolds": 1}}',
    b'{"surface": {"s": [3, 2, 1]}, "pressure": {"edge_velocity": [1, 1, 1]}, '
    b'"flow": {"reynolds": 1e300}}',
    b'{"surface": {"s": [1e-300, 2e-300, 3e-300]}, "pressure": {"edge_velocity": '
    b'[1e300, -1e300, 1e300]}, "flow": {"speed": 1e-300, "kinematic_viscosity": 1e300}}',
    b'{"surface": ' + b"[" * 3000 + b"]" * 3000 + b"}",
    b'{"name": "\\ud800", "surface": {}, "pressure": {}, "flow": {}}',
    b'{"flow": {}, "flow": {}}',
    b"\xef\xbb\xbf{}",
    b'{"cases": [' + b"{}," * 50 + b"{}]}",
    b'{"cases": [{"surface": {"s": "abc"}}], "cases": []}',
    b'{"cases": [' + b"[" * 3000 + b"]" * 3000 + b"]}",
    '{"name": "\u00e9\u4e2d\U0001f600"}'.encode(),
    b"\x00\x01\x02",
]


@pytest.mark.parametrize("body", WEIRD_BODIES, ids=range(len(WEIRD_BODIES)))
@pytest.mark.parametrize("where", ["single", "batch", "batch entry"])
def test_weird_input_is_never_a_server_error(
    client: TestClient[Any], where: str, body: bytes
) -> None:
    path = "/v1/analyses" if where == "single" else "/v1/analyses/batch"
    if where == "batch entry":
        body = b'{"cases": [' + body + b"]}"
    response = client.post(path, content=body, headers={"content-type": "application/json"})
    assert response.status_code < 500, response.text
    if response.status_code >= 400:
        problem_of(response, response.status_code)
    elif where == "batch entry":
        (entry,) = response.json()["results"]
        if "status" in entry:
            assert msgspec.convert(entry, Problem).status == 422


# ---------------------------------------------------------------------------- figures

FIGURE = "/v1/analyses/figure"
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
SVG_ROOT = "{http://www.w3.org/2000/svg}svg"


def post_figure(client: TestClient[Any], doc: Any, accept: str | None = None) -> Any:
    headers = {"content-type": "application/json"}
    if accept is not None:
        headers["accept"] = accept
    return client.post(FIGURE, content=json.dumps(doc), headers=headers)


def svg_text(response: Any) -> str:
    """The SVG document of a figure answer, checked: content type, size, root element."""
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("image/svg+xml")
    assert response.headers["vary"] == "Accept"
    assert len(response.content) > 20_000  # axes, curves and text: a real figure
    root = ET.fromstring(response.content)
    assert root.tag == SVG_ROOT
    return response.text


def png_size(response: Any) -> tuple[int, int]:
    """Width and height of a PNG figure answer, checked: content type, magic, header chunk."""
    assert response.status_code == 200, response.text
    assert response.headers["content-type"] == "image/png"
    body = response.content
    assert body[:8] == PNG_MAGIC and body[12:16] == b"IHDR"
    assert body[-12:] == b"\x00\x00\x00\x00IEND\xaeB`\x82"  # the image is complete
    assert len(body) > 20_000
    width, height = struct.unpack(">II", body[16:24])
    return width, height


@pytest.mark.parametrize("accept", [None, "*/*", "text/html, image/*"])
def test_figure_is_svg_by_default(client: TestClient[Any], accept: str | None) -> None:
    text = svg_text(post_figure(client, strut(), accept))
    assert "upper side" in text and "lower side" in text  # text is kept as text
    assert "CAUTION" in text


def test_figure_as_png(client: TestClient[Any]) -> None:
    width, height = png_size(post_figure(client, strut(), "image/png"))
    assert width > 600 and height > 400


def test_figure_of_a_single_surface(client: TestClient[Any]) -> None:
    text = svg_text(post_figure(client, plate()))
    assert ">surface<" in text and "upper side" not in text


def test_figure_length_unit_follows_the_case(client: TestClient[Any]) -> None:
    assert "[coordinate unit]" in svg_text(post_figure(client, strut()))
    si = strut() | {"flow": {"speed": 20.0, "kinematic_viscosity": 1.5e-5}}
    text = svg_text(post_figure(client, si))
    assert "x [m]" in text and "coordinate unit" not in text


@pytest.mark.parametrize(
    ("accept", "fmt"),
    [
        (None, "svg"),
        ("", "svg"),
        ("*/*", "svg"),
        ("image/png", "png"),
        ("IMAGE/PNG", "png"),
        ("image/png, image/svg+xml", "svg"),
        ("image/svg+xml;q=0.5, image/png", "png"),
        ("image/*;q=0.2, image/png;q=0.3", "png"),
        ("image/png;q=0, */*", "svg"),
        ("image/svg+xml;q=0, image/*", "png"),
        ("text/html, application/json;q=0.9, image/png;q=0.1", "png"),
        ("nonsense, image/png", "png"),
        ("image/png;q=high, image/svg+xml;q=0.1", "svg"),
    ],
)
def test_figure_format_negotiation(accept: str | None, fmt: str) -> None:
    assert codec.figure_format(accept) == fmt


@pytest.mark.parametrize(
    "accept",
    [
        "application/json",
        "text/html, application/xhtml+xml",
        "image/jpeg",
        "image/*;q=0",
        "image/svg+xml;q=0, image/png;q=0.000",
        "*/*;q=0",
        "nonsense",
        "*/png",
    ],
)
def test_figure_format_not_acceptable(accept: str) -> None:
    with pytest.raises(ProblemError) as raised:
        codec.figure_format(accept)
    assert raised.value.problem.type == NOT_ACCEPTABLE.type


def test_figure_unsupported_accept_is_406(client: TestClient[Any]) -> None:
    response = post_figure(client, strut(), "application/json")
    problem = problem_of(response, 406)
    assert problem.type.endswith("not-acceptable")
    assert "image/svg+xml" in problem.detail and "image/png" in problem.detail


def test_figure_invalid_case_is_422_in_either_format(client: TestClient[Any]) -> None:
    case = strut()
    case["pressure"]["cp"][17] = "high"
    for accept in ("image/png", "image/svg+xml"):
        problem = problem_of(post_figure(client, case, accept), 422)
        assert problem.type.endswith("invalid-case")
        assert pointers(problem) == ["/pressure/cp/17"]


@pytest.mark.parametrize(
    ("doc", "pointer"),
    [
        ({"surface": {"s": [0.1, 0.2, 0.3]}, "flow": {"reynolds": 1e6}}, ""),
        (strut() | {"flow": {"reynolds": -1.0}}, "/flow/reynolds"),
        (strut() | {"mesh": {"y_plus": []}}, "/mesh/y_plus"),
    ],
    ids=["missing pressure", "negative reynolds", "empty y_plus"],
)
def test_figure_invalid_case_is_422_with_pointer(
    client: TestClient[Any], doc: Any, pointer: str
) -> None:
    problem = problem_of(post_figure(client, doc, "image/png"), 422)
    assert pointer in pointers(problem)


@pytest.mark.parametrize("body", [b"", b"{", b"\xff"])
def test_figure_malformed_json_is_400(client: TestClient[Any], body: bytes) -> None:
    problem_of(client.post(FIGURE, content=body, headers={"accept": "image/png"}), 400)


def test_figure_points_limit(make_client: Any) -> None:
    client = make_client(max_points=50)
    problem = problem_of(post_figure(client, strut(points_per_side=30)), 422)
    assert "/surface/x" in pointers(problem)


def test_figure_unexpected_error_is_500_without_details(
    client: TestClient[Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    import ibl.figures

    def broken(*args: Any, **kwargs: Any) -> bytes:
        raise RuntimeError("secret drawing internals")

    monkeypatch.setattr(ibl.figures, "render", broken)
    response = post_figure(client, strut(), "image/png")
    problem_of(response, 500)
    assert "secret" not in response.text


# ---------------------------------------------------------------------------- MessagePack

MSGPACK = "application/msgpack"


def post_msgpack(client: TestClient[Any], path: str, doc: Any, accept: str = MSGPACK) -> Any:
    return client.post(
        path,
        content=msgspec.msgpack.encode(doc),
        headers={"content-type": MSGPACK, "accept": accept},
    )


def test_msgpack_both_ways_gives_the_json_result(client: TestClient[Any]) -> None:
    as_json = post_json(client, "/v1/analyses", strut())
    response = post_msgpack(client, "/v1/analyses", strut())
    assert response.status_code == 200, response.text
    assert response.headers["content-type"] == MSGPACK
    assert "Accept" in response.headers["vary"]
    result = msgspec.msgpack.decode(response.content, type=Result)
    assert result == msgspec.json.decode(as_json.content, type=Result)
    # MessagePack carries every double in 9 bytes: the answer is well under the JSON one.
    assert len(response.content) < 0.6 * len(as_json.content)


def test_msgpack_batch_matches_the_json_batch(client: TestClient[Any]) -> None:
    bad = plate()
    bad["pressure"]["edge_velocity"] = [1.0] * 39  # one value short
    doc = {"cases": [strut(), bad, plate()]}
    as_json = json.loads(post_json(client, "/v1/analyses/batch", doc).content)
    response = post_msgpack(client, "/v1/analyses/batch", doc)
    assert response.status_code == 200, response.text
    assert response.headers["content-type"] == MSGPACK
    assert msgspec.msgpack.decode(response.content) == as_json
    assert as_json["results"][1]["errors"][0]["pointer"] == "/cases/1/pressure/edge_velocity"


# ---------------------------------------------------------------------- answer shapes

STATION_ARRAYS = ibl.schema.STATION_QUANTITIES


def _without_arrays(result: dict[str, Any], keep: tuple[str, ...] = ()) -> dict[str, Any]:
    """A result document with the station arrays not in ``keep`` taken out of its sides."""
    out = dict(result, sides=[dict(side) for side in result["sides"]])
    for side in out["sides"]:
        for name in STATION_ARRAYS:
            if name not in keep:
                side.pop(name)
    return out


def _answer(client: TestClient[Any], path: str, doc: Any, fmt: str) -> Any:
    if fmt == "json":
        response = post_json(client, path, doc)
        assert response.status_code == 200, response.text
        return response.json()
    response = post_msgpack(client, path, doc)
    assert response.status_code == 200, response.text
    return msgspec.msgpack.decode(response.content)


@pytest.mark.parametrize("fmt", ["json", "msgpack"])
@pytest.mark.parametrize("make_doc", [strut, plate], ids=["contour", "surface"])
def test_summary_answer_is_the_full_answer_without_arrays(
    client: TestClient[Any], fmt: str, make_doc: Any
) -> None:
    full = _answer(client, "/v1/analyses", make_doc(), fmt)
    summary = _answer(client, "/v1/analyses", dict(make_doc(), output={"stations": False}), fmt)
    assert summary == _without_arrays(full)
    assert summary["drag"] == full["drag"]
    assert all("friction_drag" in side for side in summary["sides"])


@pytest.mark.parametrize("fmt", ["json", "msgpack"])
def test_subset_of_arrays_in_a_batch(client: TestClient[Any], fmt: str) -> None:
    keep = ("x", "cf", "regime")
    doc = {
        "cases": [
            dict(strut(), output={"stations": list(keep)}),
            dict(plate(), output={"stations": ["theta", "y"]}),
            strut(),
        ]
    }
    results = _answer(client, "/v1/analyses/batch", doc, fmt)["results"]
    full = post_json(client, "/v1/analyses", strut()).json()
    assert results[0] == _without_arrays(full, keep)
    assert results[2] == full
    side = results[1]["sides"][0]
    assert set(STATION_ARRAYS) & set(side) == {"theta", "y"}
    assert side["y"] is None  # a single surface has no geometry


@pytest.mark.parametrize(
    ("output", "pointer"),
    [
        ({"stations": ["s", "pressure"]}, "/output/stations/1"),
        ({"stations": "none"}, "/output/stations"),
        ({"stations": [1]}, "/output/stations/0"),
        ({"stations": True, "arrays": False}, "/output"),
        ("summary", "/output"),
    ],
)
def test_bad_output_is_422_with_pointer(client: TestClient[Any], output: Any, pointer: str) -> None:
    problem = problem_of(post_json(client, "/v1/analyses", dict(plate(), output=output)), 422)
    assert pointers(problem) == [pointer]
    batch = post_json(
        client, "/v1/analyses/batch", {"cases": [plate(), dict(plate(), output=output)]}
    )
    assert batch.status_code == 200
    entries = batch.json()["results"]
    assert "sides" in entries[0]
    assert [e["pointer"] for e in entries[1]["errors"]] == ["/cases/1" + pointer]


def test_unknown_station_name_lists_the_names(client: TestClient[Any]) -> None:
    doc = dict(plate(), output={"stations": ["theta", "momentum"]})
    problem = problem_of(post_json(client, "/v1/analyses", doc), 422)
    assert "delta_star" in problem.errors[0].reason


def test_figure_of_a_summary_case_draws_the_stations(client: TestClient[Any]) -> None:
    doc = dict(strut(), output={"stations": False})
    response = post_json(client, "/v1/analyses/figure", doc)
    assert response.status_code == 200, response.text
    assert response.content.lstrip().startswith(b"<?xml") or b"<svg" in response.content[:500]


def test_sanitise_repairs_a_side_without_arrays() -> None:
    case = ibl.parse_case(dict(strut(), output={"stations": False}))
    result = ibl.run(case, arrays="json")
    assert codec.sanitise(result) is result
    broken = msgspec.structs.replace(result.sides[0], friction_drag=math.nan)
    repaired = codec.sanitise(msgspec.structs.replace(result, sides=[broken, *result.sides[1:]]))
    assert repaired.sides[0].friction_drag is None
    assert [w.pointer for w in repaired.warnings if w.code == "non_finite"] == [
        "/sides/0/friction_drag"
    ]
    assert msgspec.json.decode(codec.encode(repaired), type=Result).sides[0].name == "upper"


@pytest.mark.parametrize("content_type", ["application/msgpack", "application/x-msgpack"])
def test_msgpack_request_with_json_answer(client: TestClient[Any], content_type: str) -> None:
    response = client.post(
        "/v1/analyses",
        content=msgspec.msgpack.encode(plate()),
        headers={"content-type": content_type},
    )
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("application/json")
    assert response.json() == post_json(client, "/v1/analyses", plate()).json()


@pytest.mark.parametrize(
    ("accept", "fmt"),
    [
        (None, "json"),
        ("", "json"),
        ("*/*", "json"),
        ("application/json", "json"),
        ("application/msgpack", "msgpack"),
        ("Application/MsgPack", "msgpack"),
        ("application/vnd.msgpack", "msgpack"),
        ("application/json;q=0.5, application/msgpack", "msgpack"),
        ("application/msgpack;q=0.4, application/json", "json"),
        ("application/msgpack;q=0.5, */*;q=0.1", "msgpack"),
        ("application/msgpack, application/json", "json"),  # a tie: JSON
        ("text/html", "json"),  # results always exist as JSON
    ],
)
def test_answer_format_negotiation(accept: str | None, fmt: str) -> None:
    # RFC 9110, section 12.5.1: each type takes the weight of its most specific range.
    assert codec.response_format(accept) == fmt


def test_malformed_msgpack_is_400(client: TestClient[Any]) -> None:
    response = client.post("/v1/analyses", content=b"\xc1", headers={"content-type": MSGPACK})
    problem = problem_of(response, 400)
    assert problem.type.endswith("malformed-msgpack")
    truncated = msgspec.msgpack.encode(strut())[:-3]
    batch = client.post("/v1/analyses/batch", content=truncated, headers={"content-type": MSGPACK})
    problem_of(batch, 400)


def test_msgpack_non_finite_number_is_422_with_pointer(client: TestClient[Any]) -> None:
    doc = strut()
    doc["pressure"]["cp"][7] = math.nan  # MessagePack, unlike JSON, can carry NaN
    problem = problem_of(post_msgpack(client, "/v1/analyses", doc), 422)
    assert problem.errors[0].pointer == "/pressure/cp/7"
    assert problem.errors[0].reason == "is not a finite number"
    batch = post_msgpack(client, "/v1/analyses/batch", {"cases": [plate(), doc]})
    entries = msgspec.msgpack.decode(batch.content)["results"]
    assert entries[1]["errors"][0]["pointer"] == "/cases/1/pressure/cp/7"


def test_msgpack_figure_request(client: TestClient[Any]) -> None:
    response = post_msgpack(client, FIGURE, strut(), accept="image/svg+xml")
    assert response.status_code == 200, response.text
    assert response.headers["content-type"].startswith("image/svg+xml")


# ----------------------------------------------------------------------------- limits


def test_body_limit_with_content_length(make_client: Any) -> None:
    client = make_client(max_body_bytes=2_000)
    problem = problem_of(post_json(client, "/v1/analyses", strut()), 413)
    assert problem.type.endswith("body-too-large") and "2000" in problem.detail
    assert post_json(client, "/v1/analyses", plate(5)).status_code == 200


def test_body_limit_when_streamed(make_client: Any) -> None:
    client = make_client(max_body_bytes=2_000)

    def chunks() -> Iterator[bytes]:
        body = json.dumps({"cases": [strut()]}).encode()
        for start in range(0, len(body), 500):
            yield body[start : start + 500]

    problem_of(client.post("/v1/analyses/batch", content=chunks()), 413)


def test_points_limit(make_client: Any) -> None:
    client = make_client(max_points=50)
    problem = problem_of(post_json(client, "/v1/analyses", strut(points_per_side=30)), 422)
    assert set(pointers(problem)) == {"/surface/x", "/surface/y", "/pressure/cp"}
    assert "50" in problem.errors[0].reason
    assert post_json(client, "/v1/analyses", strut(points_per_side=25)).status_code == 200
    batch = post_json(client, "/v1/analyses/batch", {"cases": [plate(), strut(30)]}).json()
    assert "sides" in batch["results"][0]
    assert "/cases/1/surface/x" in pointers(msgspec.convert(batch["results"][1], Problem))


def test_batch_limit(make_client: Any) -> None:
    client = make_client(max_batch=2)
    assert post_json(client, "/v1/analyses/batch", {"cases": [plate()] * 2}).status_code == 200
    problem = problem_of(post_json(client, "/v1/analyses/batch", {"cases": [plate()] * 3}), 422)
    assert pointers(problem) == ["/cases"]


@pytest.mark.parametrize("path", ["/v1/analyses", "/v1/analyses/batch", FIGURE])
def test_time_limit_is_503_with_retry_after(
    make_client: Any, monkeypatch: pytest.MonkeyPatch, path: str
) -> None:
    client = make_client(time_limit_s=0.05)

    def slow(case: Any, **_: Any) -> Any:
        time.sleep(0.5)
        return None

    monkeypatch.setattr(ibl, "run", slow)
    monkeypatch.setattr(ibl, "run_batch", slow)
    doc = {"cases": [plate()]} if path.endswith("/batch") else plate()
    response = post_json(client, path, doc)
    problem = problem_of(response, 503)
    assert problem.type.endswith("time-limit")
    assert response.headers["retry-after"] == "1"


async def _settle(runner: Runner, pending: int) -> None:
    """Wait (bounded: ten seconds) until ``runner`` counts ``pending`` analyses."""
    for _ in range(1000):
        if runner.pending == pending:
            return
        await anyio.sleep(0.01)
    raise AssertionError(f"{runner.pending} analyses pending, not {pending}")


def test_overload_is_refused_promptly() -> None:
    async def scenario() -> ProblemError:
        runner = Runner(Settings(compute_threads=1, max_queue=0))
        gate = threading.Event()
        async with anyio.create_task_group() as tg:
            tg.start_soon(runner.run, lambda: gate.wait(30))
            await _settle(runner, 1)
            assert runner.saturated
            try:
                await runner.run(lambda: 1)
            except ProblemError as exc:
                refused = exc
            else:
                raise AssertionError("a saturated runner accepted work")
            gate.set()
        await _settle(runner, 0)
        assert not runner.saturated
        assert await runner.run(lambda: 2) == 2
        runner.close()
        return refused

    refused = anyio.run(scenario)
    assert refused.problem.type == OVERLOADED.type and refused.problem.status == 503
    assert refused.headers["Retry-After"] == "1"


def test_a_burst_cannot_slip_past_the_queue_bound() -> None:
    """Six analyses arrive in the same turn of the event loop: one runs, one waits, four
    are refused, although none had started when the others were admitted."""

    async def scenario() -> list[object]:
        runner = Runner(Settings(compute_threads=1, max_queue=1))
        gate = threading.Event()
        outcomes: list[object] = []

        async def one(value: int) -> None:
            try:
                outcomes.append(await runner.run(lambda: gate.wait(30) and value))
            except ProblemError as exc:
                outcomes.append(exc.problem.type)

        async with anyio.create_task_group() as tg:
            for value in range(6):
                tg.start_soon(one, value)
            for _ in range(1000):  # bounded: ten seconds
                if len(outcomes) == 4:
                    break
                await anyio.sleep(0.01)
            assert runner.saturated and runner.pending == 2
            gate.set()
        runner.close()
        return outcomes

    outcomes = anyio.run(scenario)
    assert outcomes[:4] == [OVERLOADED.type] * 4
    assert sorted(outcomes[4:]) == [0, 1]  # type: ignore[type-var]


def test_a_timed_out_analysis_keeps_its_thread_until_it_ends() -> None:
    async def scenario() -> None:
        runner = Runner(Settings(compute_threads=1, max_queue=0, time_limit_s=0.05))
        gate = threading.Event()
        try:
            await runner.run(lambda: gate.wait(30))
        except ProblemError as exc:
            assert exc.problem.type == TIME_LIMIT.type
        else:
            raise AssertionError("the time limit did not apply")
        assert runner.saturated  # still running in the background
        try:
            await runner.run(lambda: 1)
        except ProblemError as exc:
            assert exc.problem.type == OVERLOADED.type
        else:
            raise AssertionError("a runner whose thread is busy accepted work")
        gate.set()
        await _settle(runner, 0)
        assert await runner.run(lambda: 2) == 2
        runner.close()

    anyio.run(scenario)


def test_a_timed_out_analysis_that_never_started_is_dropped() -> None:
    async def scenario() -> list[str]:
        runner = Runner(Settings(compute_threads=1, max_queue=1, time_limit_s=0.2))
        gate = threading.Event()
        ran: list[str] = []

        async def occupy() -> None:
            try:
                await runner.run(lambda: gate.wait(30))
            except ProblemError:  # its own time limit; it keeps running
                pass

        async with anyio.create_task_group() as tg:
            tg.start_soon(occupy)
            await _settle(runner, 1)
            try:
                await runner.run(lambda: ran.append("waiting one"))
            except ProblemError as exc:
                assert exc.problem.type == TIME_LIMIT.type
            assert runner.pending == 1  # its place in the queue is free at once
            gate.set()
        await _settle(runner, 0)
        runner.close()
        return ran

    assert anyio.run(scenario) == []


def test_an_analysis_whose_client_is_gone_is_dropped() -> None:
    async def scenario() -> tuple[ProblemError, list[str]]:
        runner = Runner(Settings(compute_threads=1, max_queue=1))
        gate = threading.Event()
        left = anyio.Event()
        ran: list[str] = []

        async def gone() -> None:
            await left.wait()

        async with anyio.create_task_group() as tg:
            tg.start_soon(runner.run, lambda: gate.wait(30))
            await _settle(runner, 1)
            left.set()  # the client of the next analysis leaves while it waits
            try:
                await runner.run(lambda: ran.append("waiting one"), gone)
            except ProblemError as exc:
                dropped = exc
            else:
                raise AssertionError("an analysis for a client that left was answered")
            assert runner.pending == 1  # its place is free at once
            gate.set()
        await _settle(runner, 0)
        assert await runner.run(lambda: "still answers", gone=lambda: anyio.sleep(30)) == (
            "still answers"
        )
        runner.close()
        return dropped, ran

    dropped, ran = anyio.run(scenario)
    assert dropped.problem.type == CLIENT_CLOSED.type and ran == []


# ------------------------------------------------------------------ non-finite results


def _real_result() -> Result:
    result = ibl.run(ibl.parse_case(strut()))
    assert len(result.sides) == 2 and all(side.transition for side in result.sides)
    assert all(len(side.mesh.first_cell) >= 2 for side in result.sides)
    return result


def test_non_finite_results_are_repaired_and_noted(
    client: TestClient[Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    nan, inf = math.nan, math.inf
    good = _real_result()
    upper, lower = good.sides
    theta = [*upper.theta]
    theta[2] = nan
    cf = [*upper.cf]
    cf[1] = inf
    assert upper.transition is not None
    broken_upper = msgspec.structs.replace(
        upper,
        theta=theta,
        cf=cf,
        transition=msgspec.structs.replace(upper.transition, x=inf),
    )
    broken_lower = msgspec.structs.replace(
        lower, mesh=msgspec.structs.replace(lower.mesh, max_thickness=inf)
    )
    cells = [*lower.mesh.first_cell]
    cells[0] = msgspec.structs.replace(cells[0], height=nan)
    lower_cells = msgspec.structs.replace(
        lower, mesh=msgspec.structs.replace(lower.mesh, first_cell=cells)
    )
    result = msgspec.structs.replace(
        good,
        sides=[broken_upper, broken_lower, lower_cells],
        options={**good.options, "probe": nan},
    )
    monkeypatch.setattr(ibl, "run", lambda case, **_: result)
    response = post_json(client, "/v1/analyses", plate())
    assert response.status_code == 200, response.text
    repaired = msgspec.json.decode(response.content, type=Result)
    first, third = repaired.sides
    assert first.theta == upper.theta[:2] and len(first.s) == len(first.regime) == 2
    assert first.cf == [upper.cf[0], None]
    assert first.transition is not None and first.transition.x is None
    assert third.mesh.first_cell == lower.mesh.first_cell[1:]
    assert repaired.options["probe"] == "nan"
    noted = {w.pointer for w in repaired.warnings if w.code == "non_finite"}
    assert noted == {
        "/sides/0/theta/2",
        "/sides/0/cf/1",
        "/sides/0/transition/x",
        "/sides/1",
        "/sides/2/mesh/first_cell/0",
        "/options/probe",
    }
    assert repaired.warnings[: len(good.warnings)] == good.warnings


def test_finite_results_pass_unchanged(
    client: TestClient[Any], monkeypatch: pytest.MonkeyPatch
) -> None:
    result = _real_result()
    monkeypatch.setattr(ibl, "run", lambda case, **_: result)
    response = post_json(client, "/v1/analyses", plate())
    assert response.content == msgspec.json.encode(result)


# ------------------------------------------------------------------ configuration, serve


def test_settings_from_environment() -> None:
    settings = Settings.from_env(
        {
            "IBL_MAX_BODY_BYTES": "1000",
            "IBL_MAX_POINTS": "500",
            "IBL_MAX_BATCH": "7",
            "IBL_TIME_LIMIT_S": "2.5",
            "IBL_COMPUTE_THREADS": "3",
            "IBL_MAX_QUEUE": "",
        }
    )
    assert settings == Settings(
        max_body_bytes=1000, max_points=500, max_batch=7, time_limit_s=2.5, compute_threads=3
    )


@pytest.mark.parametrize(
    ("var", "value"),
    [
        ("IBL_MAX_BATCH", "many"),
        ("IBL_MAX_BATCH", "0"),
        ("IBL_TIME_LIMIT_S", "-1"),
        ("IBL_TIME_LIMIT_S", "nan"),
        ("IBL_MAX_POINTS", "10000000"),
    ],
)
def test_bad_setting_names_the_variable(var: str, value: str) -> None:
    with pytest.raises(ValueError, match=var):
        Settings.from_env({var: value})


def test_serve_refuses_bad_limits(monkeypatch: pytest.MonkeyPatch, capsys: Any) -> None:
    monkeypatch.setenv("IBL_MAX_BODY_BYTES", "lots")
    assert serve_main(["--port", "1"]) == 2
    assert "IBL_MAX_BODY_BYTES" in capsys.readouterr().err


def test_serve_options_fall_back_to_environment() -> None:
    args = build_parser({"IBL_HOST": "0.0.0.0", "IBL_PORT": "9001", "IBL_WORKERS": "3"}).parse_args(
        []
    )
    assert (args.host, args.port, args.workers) == ("0.0.0.0", 9001, 3)
    args = build_parser({"IBL_PORT": "9001"}).parse_args(["--port", "9002", "--workers", "1"])
    assert (args.host, args.port, args.workers) == ("127.0.0.1", 9002, 1)
    with pytest.raises(SystemExit):
        build_parser({}).parse_args(["--workers", "0"])


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port: int = sock.getsockname()[1]
        return port


@pytest.mark.slow
def test_serve_merges_metrics_of_its_workers(tmp_path: Path) -> None:
    """Two worker processes answer scrapes alike: their samples are merged through files."""
    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    folder = tmp_path / "metrics"
    env = dict(os.environ, PROMETHEUS_MULTIPROC_DIR=str(folder), IBL_MAX_BATCH="5")
    command = [
        sys.executable,
        "-m",
        "ibl_service.serve",
        "--host",
        "127.0.0.1",
        "--port",
        str(port),
    ]
    log = tmp_path / "server.log"
    with log.open("wb") as sink:
        server = subprocess.Popen(
            [*command, "--workers", "2"],
            cwd=Path(__file__).resolve().parents[1],
            env=env,
            stdout=sink,
            stderr=subprocess.STDOUT,
        )
    try:
        for _ in range(1800):  # start-up (a first compile included), bounded: three minutes
            try:
                if httpx.get(f"{base}/health/ready", timeout=1).status_code == 200:
                    break
            except httpx.HTTPError:
                pass
            assert server.poll() is None, log.read_text()
            time.sleep(0.1)
        else:
            raise AssertionError("the server did not become ready")
        for _ in range(20):  # a new connection each time, so both workers answer some
            assert httpx.get(f"{base}/health/live").status_code == 200
        pattern = re.compile(r'^ibl_requests_total\{[^}]*path="/health/live"[^}]*\} (\S+)$', re.M)
        counts = set()
        for _ in range(10):
            scrape = httpx.get(f"{base}/metrics").text
            counts.add(float(pattern.findall(scrape)[0]))
        assert counts == {20.0}
        assert len(list(folder.glob("counter_*.db"))) == 2
    finally:
        server.terminate()
        assert server.wait(timeout=30) == 0, log.read_text()
