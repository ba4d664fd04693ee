"""``/docs``: interactive API documentation that needs no internet access.

The page may reference only URLs of the service itself; each answers 200 with the
media type registered for its kind (text/javascript: RFC 9239; text/css: RFC 2318;
image/png: IANA registration of PNG).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from html.parser import HTMLParser
from typing import Any

import pytest
from litestar.testing import TestClient

from ibl_service.app import create_app
from ibl_service.config import Settings

#: Media type by file suffix (the registrations named above).
EXPECTED = {".js": "text/javascript", ".css": "text/css", ".png": "image/png"}


class _Links(HTMLParser):
    """Every ``src`` and ``href`` of a page."""

    def __init__(self) -> None:
        super().__init__()
        self.urls: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.urls += [value for name, value in attrs if name in ("src", "href") and value]


@pytest.fixture(scope="module")
def client() -> Iterator[TestClient[Any]]:
    with TestClient(create_app(Settings()), raise_server_exceptions=False) as made:
        yield made


def _page(client: TestClient[Any]) -> str:
    answer = client.get("/docs")
    assert answer.status_code == 200
    assert answer.headers["content-type"].startswith("text/html")
    return answer.text


def test_docs_page_references_only_local_urls(client: TestClient[Any]) -> None:
    page = _page(client)
    links = _Links()
    links.feed(page)
    assert links.urls, "the page names its assets"
    for url in links.urls:
        assert url.startswith("/") and not url.startswith("//"), url
    assert not re.search(r"https?://", page)  # no host named anywhere, scripts included
    assert "validatorUrl: null" in page  # Swagger UI would otherwise call its online validator
    assert any(url.endswith(".js") for url in links.urls)
    assert any(url.endswith(".css") for url in links.urls)


def test_docs_assets_answer_with_their_media_type(client: TestClient[Any]) -> None:
    links = _Links()
    links.feed(_page(client))
    for url in links.urls:
        answer = client.get(url)
        assert answer.status_code == 200, url
        suffix = url[url.rfind(".") :]
        assert answer.headers["content-type"].split(";")[0] == EXPECTED[suffix], url
        assert len(answer.content) > 0


def test_docs_page_reads_the_served_document(client: TestClient[Any]) -> None:
    (spec_url,) = re.findall(r'url: "([^"]+)"', _page(client))
    answer = client.get(spec_url)
    assert answer.status_code == 200
    assert answer.json()["openapi"].startswith("3.1")  # Swagger UI 5 reads 3.1 documents


def test_docs_routes_stay_out_of_the_document(client: TestClient[Any]) -> None:
    paths = client.get("/schema/openapi.json").json()["paths"]
    assert not [path for path in paths if path.startswith("/docs")]
