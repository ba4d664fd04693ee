"""The page for people at ``/``: a form that builds a case, runs it through the API and shows
the figure, the events of each side and the warnings.

Plain HTML, one style sheet and one script, all in this package (package data), served by
the application itself: no build step and no request to any other host. The page uses only
the public API (``/v1/cases/csv``, ``/v1/analyses``, ``/v1/analyses/figure``,
``/v1/analyses/table``) and the demonstration case of ``ibl demo`` (``ibl/data``), served
at ``DEMO``.
"""

from __future__ import annotations

import functools
from importlib.resources import files
from pathlib import Path

from litestar import MediaType, Response, get
from litestar.handlers import HTTPRouteHandler

from ibl.analysis import CAUTION
from ibl.cli import DEMO_CASE

__all__ = ["ASSETS", "ASSET_DIR", "ASSET_TYPES", "DEMO", "PAGE", "page_routes"]

#: Where the page, its assets and the demonstration case are served.
PAGE = "/"
ASSETS = "/page"
DEMO = "/page/demo-case.json"

#: This package's folder: the page and its assets sit beside this module.
ASSET_DIR = Path(str(files(__package__)))

#: The assets, by file name, with their media types (RFC 9239 for JavaScript, RFC 2318 for
#: CSS); only these files of the folder are served.
#: (Litestar adds ``charset=utf-8`` to text types.)
ASSET_TYPES = {"page.js": "text/javascript", "page.css": "text/css"}

#: The text in the page that stands for the caution of every result (one text everywhere).
_CAUTION_MARK = "<!-- caution -->"


@functools.cache
def _html() -> str:
    text = (ASSET_DIR / "index.html").read_text(encoding="utf-8")
    return text.replace(_CAUTION_MARK, CAUTION)


@get(PAGE, include_in_schema=False, media_type=MediaType.HTML, sync_to_thread=False)
def page() -> str:
    """The page."""
    return _html()


@get(DEMO, include_in_schema=False, sync_to_thread=False)
def demo_case() -> Response[bytes]:
    """The demonstration case of ``ibl demo`` (invented data), as a case document."""
    data = files("ibl").joinpath("data", DEMO_CASE).read_bytes()
    return Response(data, media_type=MediaType.JSON)


def _asset(name: str, media_type: str) -> HTTPRouteHandler:
    data = (ASSET_DIR / name).read_bytes()

    def serve() -> Response[bytes]:
        return Response(data, media_type=media_type, headers={"Cache-Control": "no-cache"})

    serve.__name__ = serve.__qualname__ = "asset_" + name.replace(".", "_")
    return get(f"{ASSETS}/{name}", include_in_schema=False, sync_to_thread=False)(serve)


def page_routes() -> list[HTTPRouteHandler]:
    """The page, its assets and the demonstration case, all left out of the OpenAPI document."""
    return [page, demo_case, *(_asset(name, kind) for name, kind in ASSET_TYPES.items())]
