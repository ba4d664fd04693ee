"""The page at ``/`` and the two routes it relies on beside the analyses.

Media types are those registered for each kind (text/html: RFC 2854; text/javascript:
RFC 9239; text/css: RFC 2318; text/csv: RFC 4180). The page's behaviour in a browser is
checked by ``tests/live/browser_check.py`` (its own CI step); here, what a plain HTTP
client can see: the page, its assets, no other host named, labelled fields, and the CSV
routes checked against the library's own readers and the JSON path of the same case.
"""

from __future__ import annotations

import json
import math
import re
import tomllib
from collections.abc import Iterator
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest
from litestar.testing import TestClient

import ibl
from ibl.analysis import CAUTION
from ibl.table import header_name, read_stations
from ibl_service.app import create_app
from ibl_service.config import Settings
from ibl_service.page import ASSET_DIR, ASSET_TYPES, DEMO

ROOT = Path(__file__).resolve().parents[1]

#: Media type by file suffix (the registrations named above).
EXPECTED = {".js": "text/javascript", ".css": "text/css"}


class _Page(HTMLParser):
    """The URLs, form fields, labels and element ids of a page."""

    def __init__(self) -> None:
        super().__init__()
        self.urls: list[str] = []
        self.fields: list[dict[str, str | None]] = []
        self.labelled: set[str] = set()
        self.ids: set[str] = set()

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        named = dict(attrs)
        self.urls += [value for name, value in attrs if name in ("src", "href") and value]
        if named.get("id"):
            self.ids.add(str(named["id"]))
        if tag in ("input", "select", "textarea"):
            self.fields.append(named)
        if tag == "label" and named.get("for"):
            self.labelled.add(str(named["for"]))


@pytest.fixture(scope="module")
def client() -> Iterator[TestClient[Any]]:
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as made:
        yield made


@pytest.fixture(scope="module")
def page(client: TestClient[Any]) -> str:
    answer = client.get("/")
    assert answer.status_code == 200
    assert answer.headers["content-type"].split(";")[0] == "text/html"
    return answer.text


def _parsed(text: str) -> _Page:
    parsed = _Page()
    parsed.feed(text)
    return parsed


def _assets(page: str) -> list[str]:
    return [url for url in _parsed(page).urls if not url.startswith("data:")]


def test_page_is_html_with_the_caution(page: str) -> None:
    assert page.lstrip().lower().startswith("<!doctype html>")
    assert CAUTION in page  # the library's caution, one text everywhere
    assert "do not\nreplace applicable codes and licensed engineering judgement" in page


def test_assets_answer_with_their_media_types(client: TestClient[Any], page: str) -> None:
    urls = _assets(page)
    assert sorted(url.rsplit("/", 1)[1] for url in urls) == sorted(ASSET_TYPES)
    for url in urls:
        answer = client.get(url)
        assert answer.status_code == 200, url
        media = answer.headers["content-type"].split(";")[0].strip()
        assert media == EXPECTED[url[url.rfind(".") :]], url
        assert answer.content == (ASSET_DIR / url.rsplit("/", 1)[1]).read_bytes()


def test_only_the_listed_files_are_served(client: TestClient[Any]) -> None:
    for name in ("__init__.py", "index.html", "../app.py"):
        assert client.get(f"/page/{name}").status_code == 404, name


def test_page_and_assets_name_no_other_host(client: TestClient[Any], page: str) -> None:
    texts = {"/": page} | {url: client.get(url).text for url in _assets(page)}
    for url, text in texts.items():
        assert not re.search(r"https?://|//[a-z0-9.-]+\.[a-z]{2,}/", text, re.I), url
    for url in _parsed(page).urls:
        assert url.startswith("data:") or (url.startswith("/") and not url.startswith("//"))


def test_every_field_has_a_label(page: str) -> None:
    parsed = _parsed(page)
    assert parsed.fields
    for field in parsed.fields:
        kind = field.get("type")
        if kind == "radio":
            continue  # wrapped in its <label>, checked below
        assert field.get("id") in parsed.labelled, field
    assert len(re.findall(r"<label><input type=\"radio\"", page)) == 4


def test_fields_named_by_the_script_exist_with_a_message_box(page: str) -> None:
    script = (ASSET_DIR / "page.js").read_text(encoding="utf-8")
    table = script[script.index("const FIELD_OF") : script.index("};", script.index("FIELD_OF"))]
    ids = re.findall(r'"/[a-z_/]+": "([a-z_-]+)"', table)
    assert "reynolds" in ids and "trip-upper" in ids
    parsed = _parsed(page)
    for name in ids:
        assert name in parsed.ids, name
        assert f"{name}-error" in parsed.ids, name
    for name in re.findall(r'\$\("([a-z_-]+)"\)', script):
        assert name in parsed.ids, name


def test_demo_case_is_the_library_demo(client: TestClient[Any]) -> None:
    answer = client.get(DEMO)
    assert answer.status_code == 200
    assert answer.headers["content-type"].startswith("application/json")
    shipped = json.loads((ROOT / "ibl" / "data" / "strut.json").read_text())
    assert answer.json() == shipped


def test_page_routes_stay_out_of_the_document(client: TestClient[Any]) -> None:
    paths = client.get("/schema/openapi.json").json()["paths"]
    assert "/" not in paths and not any(p.startswith("/page") for p in paths)
    assert "/v1/cases/csv" in paths and "/v1/analyses/table" in paths


def test_assets_are_package_data() -> None:
    """Installed (not only in a checkout) the package carries every file the page serves."""
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())
    listed = config["tool"]["setuptools"]["package-data"]["ibl_service.page"]
    assert sorted(listed) == sorted(["index.html", *ASSET_TYPES])


# ------------------------------------------------------------------------ CSV routes


def _ellipse(points: int = 41, ratio: float = 0.2) -> tuple[list[float], list[float], list[float]]:
    """An ellipse x^2/a^2 + y^2/b^2 = 1 at zero incidence with its exact potential-flow
    Cp = 1 - (1 + b/a)^2 sin^2 t / (sin^2 t + (b/a)^2 cos^2 t) (Milne-Thomson, Theoretical
    Hydrodynamics, the flow past an elliptic cylinder), points clockwise from the rear."""
    ts = [2 * math.pi * i / (points - 1) for i in range(points)]
    x = [0.5 + 0.5 * math.cos(t) for t in ts]
    y = [-0.5 * ratio * math.sin(t) for t in ts]
    cp = [
        1 - (1 + ratio) ** 2 * math.sin(t) ** 2 / (math.sin(t) ** 2 + (ratio * math.cos(t)) ** 2)
        for t in ts
    ]
    return x, y, cp


def _csv(columns: dict[str, list[float]], sep: str = ",", decimal: str = ".") -> str:
    names = list(columns)
    rows = [sep.join(names)]
    for values in zip(*columns.values(), strict=True):
        rows.append(sep.join(repr(v).replace(".", decimal) for v in values))
    return "\n".join(rows) + "\n"


def test_csv_case_holds_the_numbers_of_the_table(client: TestClient[Any]) -> None:
    x, y, cp = _ellipse()
    answer = client.post("/v1/cases/csv", json={"text": _csv({"x": x, "y": y, "cp": cp})})
    assert answer.status_code == 200, answer.text
    doc = answer.json()
    assert doc["surface"]["x"] == x and doc["surface"]["y"] == y  # repr round-trips exactly
    assert doc["pressure"]["cp"] == cp and "body" not in doc


def test_csv_with_semicolons_and_decimal_commas_reads_the_same(client: TestClient[Any]) -> None:
    x, y, cp = _ellipse()
    columns = {"x": x, "y": y, "cp": cp}
    plain = client.post("/v1/cases/csv", json={"text": _csv(columns)}).json()
    text = "\ufeff# exported\n" + _csv(columns, sep=";", decimal=",")
    european = client.post("/v1/cases/csv", json={"text": text}).json()
    assert european == plain


def test_csv_case_analyses_like_the_same_case_sent_as_json(client: TestClient[Any]) -> None:
    """Reading the table must not change the case: with a flow added, the members answered
    are a case, analysed exactly as the same case written as JSON."""
    x, y, cp = _ellipse()
    members = client.post("/v1/cases/csv", json={"text": _csv({"x": x, "y": y, "cp": cp})})
    flow = {"reynolds": 2e6}
    from_csv = client.post("/v1/analyses", json=members.json() | {"flow": flow}).json()
    direct = {"surface": {"x": x, "y": y}, "pressure": {"cp": cp}, "flow": flow}
    assert from_csv == client.post("/v1/analyses", json=direct).json()


@pytest.mark.parametrize(
    ("body", "pointer", "words"),
    [
        ({"text": "x,y,cp\n1,0,0.2\n0.5,abc,-0.5\n0,0,1\n"}, "/text", ["line 3", "'abc'"]),
        ({"text": "x,y\n1,0\n0,1\n1,1\n"}, "/text", ["no column for the pressure"]),
        ({"text": "x,y,cp\n1,0,0.2\n0,0,1\n"}, "/text", ["length >= 3", "/surface/x"]),
        ({"text": "x,y,cp\n1,0\n"}, "/text", ["line 2", "2 values, expected 3"]),
        ({"text": ""}, "/text", ["empty"]),
        ({"text": "x,y,cp\n1,0,0\n0,1,-2e9\n0,2,0\n"}, "/text", ["/pressure/cp, data row 2"]),
        ({"text": "x,y,cp\n", "columns": "q=Q"}, "/columns", ["unknown quantity 'q'"]),
        ({"text": "x,y,cp\n", "delimiter": "ab"}, "/delimiter", ["not one character"]),
        ({"text": 'x,y,cp\n"' + "1" * 200_000 + '",0,0\n'}, "/text", ["line 2"]),
        ({"text": "x" * 200_000}, "/text", ["line 1"]),
        ({"txt": "x,y,cp"}, "", ["unknown field `txt`"]),
    ],
)
def test_bad_csv_is_a_problem_naming_where(
    client: TestClient[Any], body: dict[str, str], pointer: str, words: list[str]
) -> None:
    answer = client.post("/v1/cases/csv", json=body)
    assert answer.status_code == 422, answer.text
    assert answer.headers["content-type"].startswith("application/problem+json")
    (error,) = answer.json()["errors"]
    assert error["pointer"] == pointer
    for word in words:
        assert word in error["reason"], error["reason"]
    assert "--" not in error["reason"]  # worded for the request, not for the command line


def test_csv_radius_column_makes_a_body_of_revolution(client: TestClient[Any]) -> None:
    x, y, cp = _ellipse()
    radius = [abs(v) for v in y]
    text = _csv({"x": x, "y": y, "cp": cp, "radius": radius})
    doc = client.post("/v1/cases/csv", json={"text": text}).json()
    assert doc["body"] == {"kind": "axisymmetric", "radius": radius}


def test_station_table_is_the_result_as_csv(client: TestClient[Any]) -> None:
    case = client.get(DEMO).json()
    answer = client.post("/v1/analyses/table", json=case)
    assert answer.status_code == 200, answer.text
    assert answer.headers["content-type"].split(";")[0] == "text/csv"
    header = answer.text.splitlines()[0].split(",")
    assert header[:3] == ["side", header_name("s", "m"), header_name("x", "m")]
    table = read_stations(answer.text)
    result = ibl.analyze(case)
    for side in result["sides"]:
        for column in ("s", "theta", "shape_factor", "regime"):
            assert table[side["name"]][column] == side[column], column


def test_station_table_of_a_bad_case_is_a_problem(client: TestClient[Any]) -> None:
    answer = client.post("/v1/analyses/table", json={"surface": {}, "flow": {}})
    assert answer.status_code == 422
    pointers = [e["pointer"] for e in answer.json()["errors"]]
    assert pointers == ["/pressure"] or pointers == [""], pointers
