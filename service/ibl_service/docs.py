"""Interactive API documentation at ``/docs``, served entirely by the application.

The page is Swagger UI reading ``/schema/openapi.json``. Its scripts and style sheet
come from the ``swagger-ui-py`` package (a dependency; its ``static`` folder holds a
Swagger UI 5 build, which reads OpenAPI 3.1) and are served under ``/docs/assets``,
so the page works with no internet access. Swagger UI's online validator badge, the
one request it would send elsewhere, is turned off.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

from litestar import MediaType, Router, get
from litestar.handlers import HTTPRouteHandler
from litestar.static_files import create_static_files_router

__all__ = ["ASSETS", "ASSET_DIR", "PAGE", "docs_routes"]

#: Where the page and its assets are served.
PAGE = "/docs"
ASSETS = "/docs/assets"

#: The Swagger UI build inside the installed package.
ASSET_DIR = Path(str(files("swagger_ui") / "static"))

_HTML = f"""<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>ibl HTTP API</title>
<link rel="icon" type="image/png" href="{ASSETS}/favicon-32x32.png">
<link rel="stylesheet" href="{ASSETS}/swagger-ui.css">
</head>
<body>
<div id="swagger-ui"></div>
<script src="{ASSETS}/swagger-ui-bundle.js"></script>
<script src="{ASSETS}/swagger-ui-standalone-preset.js"></script>
<script>
window.onload = function () {{
  window.ui = SwaggerUIBundle({{
    url: "/schema/openapi.json",
    dom_id: "#swagger-ui",
    validatorUrl: null,
    deepLinking: true,
    presets: [SwaggerUIBundle.presets.apis, SwaggerUIStandalonePreset],
    layout: "StandaloneLayout"
  }});
}};
</script>
</body>
</html>
"""


@get(PAGE, include_in_schema=False, media_type=MediaType.HTML, sync_to_thread=False)
def docs_page() -> str:
    """The documentation page."""
    return _HTML


def docs_routes() -> list[Router | HTTPRouteHandler]:
    """The page and its asset folder, both left out of the OpenAPI document."""
    assets = create_static_files_router(
        path=ASSETS, directories=[ASSET_DIR], name="docs_assets", include_in_schema=False
    )
    return [docs_page, assets]
