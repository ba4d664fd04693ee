"""The HTTP application: routes, wiring and the application factory.

Routes
------
- ``POST /v1/analyses``: one case, one result.
- ``POST /v1/analyses/batch``: many cases, one entry each (result or problem), in order.
- ``POST /v1/analyses/figure``: one case, the figure of its result (SVG or PNG, by ``Accept``).
- ``POST /v1/analyses/table``: one case, the station table of its result as CSV.
- ``POST /v1/cases/csv``: a CSV table of surface points, the case members it holds.
- ``GET /v1/methods``: the catalogue of methods and criteria with their options,
  defaults, validity ranges and sources.
- ``GET /health/live``, ``GET /health/ready``: liveness and readiness.
- ``GET /metrics``: Prometheus text exposition.
- ``GET /schema/openapi.json``: the OpenAPI 3.1 document.
- ``GET /docs``: interactive documentation of the API (assets served locally, under
  ``/docs/assets``).
- ``GET /``: the page for people (``ibl_service.page``; assets under ``/page``).

Handlers stay thin: read the body, hand the CPU-bound work (``ibl_service.work``) to
the runner, answer.  Errors are raised, and answered by one table
(``ibl_service.errors.EXCEPTION_HANDLERS``).
"""

from __future__ import annotations

import functools
import logging
import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import anyio.to_thread
import msgspec
from litestar import Controller, Litestar, Request, Response, get, post
from litestar.datastructures import State
from litestar.exceptions import InternalServerException
from litestar.openapi import OpenAPIConfig, ResponseSpec
from litestar.openapi.spec import Contact, License, Tag

import ibl
from ibl.schema import Case, Flow, Output, Pressure, Result, Surface
from ibl_service import codec, work
from ibl_service.catalogue import MethodCatalogue
from ibl_service.config import Settings
from ibl_service.docs import docs_routes
from ibl_service.errors import (
    BODY_TOO_LARGE,
    EXCEPTION_HANDLERS,
    INCOMPLETE_BODY,
    INTERNAL_ERROR,
    INVALID_CASE,
    INVALID_REQUEST,
    MALFORMED_JSON,
    MALFORMED_MSGPACK,
    NOT_ACCEPTABLE,
    NOT_READY,
    OVERLOADED,
    PROBLEM_MEDIA_TYPE,
    TIME_LIMIT,
    ProblemError,
    ProblemKind,
)
from ibl_service.metrics import CONTENT_TYPE, RequestMetrics, exposition, mark_worker_stopped
from ibl_service.openapi import CAUTION, ServiceJsonRenderPlugin
from ibl_service.page import page_routes
from ibl_service.runner import Runner
from ibl_service.wire import BatchRequest, BatchResponse, CsvCase, CsvTable, Health, Problem

__all__ = ["Runtime", "create_app", "warm_up"]

log = logging.getLogger("ibl_service")


def _warm_up_case(points_per_side: int = 60) -> Case:
    """An elliptic strut, 12 % thick, at zero incidence, with its potential-flow Cp.

    An odd number of points puts one on the leading-edge stagnation point; the flow
    then goes through both sides, transition and turbulent separation, so every
    compiled kernel of the library is exercised.
    """
    n = 2 * points_per_side - 1
    ts = [math.pi * (2 * i + 1) / n for i in range(n)]
    ratio = 0.12
    speed = [
        (1 + ratio) * abs(math.sin(t)) / math.sqrt(math.sin(t) ** 2 + (ratio * math.cos(t)) ** 2)
        for t in ts
    ]
    return Case(
        surface=Surface(
            x=[0.5 + 0.5 * math.cos(t) for t in ts], y=[0.06 * math.sin(t) for t in ts]
        ),
        pressure=Pressure(cp=[1 - u * u for u in speed]),
        flow=Flow(reynolds=2e6),
    )


def warm_up() -> None:
    """Analyse a small case once with each laminar method, and once with every derivative:
    compiles and caches the library's kernels (the march with supplied laminar values and
    the derivatives' backward sweep are compilations of their own; without this, the first
    request that asks for one would stall its worker for the compile, tens of seconds)."""
    case = _warm_up_case()
    ibl.run(case)
    fd = msgspec.structs.replace(case.laminar, method="finite_difference")
    ibl.run(msgspec.structs.replace(case, laminar=fd))
    every = Output(
        sensitivities=[
            "transition",
            "laminar_separation",
            "separation",
            "friction_drag",
            "profile_drag",
        ]
    )
    ibl.run(msgspec.structs.replace(case, output=every))


@dataclass(slots=True)
class Runtime:
    """Per-process state: the settings, the runner and whether the library answered."""

    settings: Settings
    runner: Runner
    warmed_up: bool = False


def _runtime(request: Request[Any, Any, Any]) -> Runtime:
    runtime: Runtime = request.app.state.runtime
    return runtime


async def _read_body(request: Request[Any, Any, Any]) -> bytes:
    try:
        return await request.body()
    except InternalServerException:  # the client went away mid-body
        raise ProblemError(INCOMPLETE_BODY, "The request body ended early.") from None


async def _client_gone(request: Request[Any, Any, Any]) -> None:
    """Return once the client has disconnected (the body has been read by then)."""
    while (await request.receive())["type"] != "http.disconnect":
        pass


async def _run(request: Request[Any, Any, Any], job: Callable[[], bytes]) -> bytes:
    """``job`` off the event loop, within the limits; dropped if the client goes first."""
    runner = _runtime(request).runner
    return await runner.run(job, functools.partial(_client_gone, request))


def _accept(request: Request[Any, Any, Any]) -> str | None:
    """The ``Accept`` header, its repeats joined; None without one."""
    return ", ".join(request.headers.getall("accept", [])) or None


async def _analysis(
    request: Request[Any, Any, Any], work_fn: Callable[..., bytes]
) -> Response[bytes]:
    """``work_fn(body, settings, content, answer)`` off the loop, in the formats the
    ``Content-Type`` and ``Accept`` headers choose."""
    content = codec.request_format(request.headers.get("content-type"))
    answer = codec.response_format(_accept(request))
    body = await _read_body(request)
    job = functools.partial(work_fn, body, _runtime(request).settings, content, answer)
    return Response(
        await _run(request, job),
        media_type=codec.BODY_MEDIA_TYPES[answer],
        headers={"Vary": "Accept"},
    )


def _problems(*kinds: ProblemKind) -> dict[int, ResponseSpec]:
    """OpenAPI entries for the problems an operation can answer with."""
    by_status: dict[int, list[str]] = {}
    for kind in (*kinds, INTERNAL_ERROR):
        by_status.setdefault(kind.status, []).append(f"{kind.title} (`{kind.type}`)")
    return {
        status: ResponseSpec(
            data_container=Problem,
            media_type=PROBLEM_MEDIA_TYPE,
            generate_examples=False,
            description="; ".join(titles)
            + (". Sent with a Retry-After header." if status == 503 else "."),
        )
        for status, titles in by_status.items()
    }


_BODY_PROBLEMS = (MALFORMED_JSON, MALFORMED_MSGPACK, BODY_TOO_LARGE, TIME_LIMIT, OVERLOADED)

#: The 200 answers of the figure endpoint, by media type (added to the OpenAPI document):
#: binary strings, so that generated clients return the bytes as they came.
_FIGURE_CONTENT = {
    codec.FIGURE_MEDIA_TYPES["svg"]: {
        "schema": {
            "type": "string",
            "format": "binary",
            "contentMediaType": "image/svg+xml",
            "description": "An SVG document (UTF-8 text).",
        }
    },
    codec.FIGURE_MEDIA_TYPES["png"]: {
        "schema": {
            "type": "string",
            "format": "binary",
            "contentMediaType": "image/png",
            "description": "A PNG image.",
        }
    },
}

#: The media type of the station table (RFC 4180, with its optional header parameter).
#: (Litestar adds ``charset=utf-8`` to text types.)
TABLE_MEDIA_TYPE = "text/csv; header=present"
_TABLE_CONTENT = {
    "text/csv": {
        "schema": {
            "type": "string",
            "description": "The station table: UTF-8 CSV text, the header row first.",
        }
    }
}

#: The ``Accept`` choice of the figure endpoint, as a documented header parameter.
_FIGURE_ACCEPT = {
    "name": "Accept",
    "in": "header",
    "required": False,
    "description": "The figure format: SVG (the default, also for `*/*` or no header) or PNG. "
    "A header that allows neither is answered with 406.",
    "schema": {
        "type": "string",
        "enum": list(codec.FIGURE_MEDIA_TYPES.values()),
        "default": codec.FIGURE_MEDIA_TYPES["svg"],
    },
}


class AnalysesController(Controller):
    """Analyses of cases."""

    path = "/v1/analyses"
    tags = ("analyses",)

    @post(
        "/",
        status_code=200,
        operation_id="analyse",
        summary="Analyse one case",
        description="Boundary-layer development, transition, separation and near-wall mesh "
        "advice along each side of one case. Separation, laminar flow to the end and "
        "laminar separation bubbles are results, not errors.\n\n" + CAUTION,
        opt={"request_body": Case},
        responses={
            200: ResponseSpec(
                Result, description="The result of the case.", generate_examples=False
            ),
            **_problems(*_BODY_PROBLEMS, INVALID_CASE),
        },
    )
    async def analyse(self, request: Request[Any, Any, Any]) -> Response[bytes]:
        return await _analysis(request, work.analyse)

    @post(
        "/batch",
        status_code=200,
        operation_id="analyseBatch",
        summary="Analyse many cases",
        description="Each case is validated on its own and the valid ones are analysed "
        "together. The answer holds one entry per case, in order: its result, or the "
        "problem with it (pointers start with `/cases/<index>`).\n\n" + CAUTION,
        opt={"request_body": BatchRequest, "response_body": BatchResponse},
        response_description="One entry per case, in order.",
        responses=_problems(*_BODY_PROBLEMS, INVALID_REQUEST),
    )
    async def analyse_batch(self, request: Request[Any, Any, Any]) -> Response[bytes]:
        return await _analysis(request, work.analyse_batch)

    @post(
        "/figure",
        status_code=200,
        operation_id="analyseFigure",
        summary="Figure of one case",
        description="The figure of one case's result: for each side, momentum thickness, "
        "shape factor and skin friction against arc length with transition and separation "
        "marked, and the contour (or a line along the surface) with the laminar and turbulent "
        "stretches. The `Accept` header chooses SVG (`image/svg+xml`, the default, also for "
        "`*/*` or no header) or PNG (`image/png`); anything else is answered with 406. "
        "Lengths are labelled in metres when the case gives speed and viscosity, otherwise "
        "in the unit of the coordinates.\n\n" + CAUTION,
        opt={
            "request_body": Case,
            "response_content": _FIGURE_CONTENT,
            "header_parameter": _FIGURE_ACCEPT,
        },
        response_description="The figure, in the format the Accept header asks for.",
        responses=_problems(*_BODY_PROBLEMS, INVALID_CASE, NOT_ACCEPTABLE),
    )
    async def figure(self, request: Request[Any, Any, Any]) -> Response[bytes]:
        runtime = _runtime(request)
        fmt = codec.figure_format(_accept(request))
        content = codec.request_format(request.headers.get("content-type"))
        body = await _read_body(request)
        job = functools.partial(work.figure, body, runtime.settings, fmt, content)
        return Response(
            await _run(request, job),
            media_type=codec.FIGURE_MEDIA_TYPES[fmt],
            headers={"Vary": "Accept"},
        )

    @post(
        "/table",
        status_code=200,
        operation_id="analyseTable",
        summary="Station table of one case",
        description="The stations of one case's result as plain CSV (RFC 4180), as "
        "`ibl run --format csv` writes them: the header row first, each name with its unit in "
        "brackets (`theta [m]`; `-` dimensionless), then one row per station of every side "
        "with a `side` column. Lengths are in metres when the case gives speed and "
        "viscosity, otherwise in the unit of the coordinates.\n\n" + CAUTION,
        opt={"request_body": Case, "response_content": _TABLE_CONTENT},
        response_description="The station table.",
        responses=_problems(*_BODY_PROBLEMS, INVALID_CASE),
    )
    async def table(self, request: Request[Any, Any, Any]) -> Response[bytes]:
        content = codec.request_format(request.headers.get("content-type"))
        body = await _read_body(request)
        job = functools.partial(work.table, body, _runtime(request).settings, content)
        return Response(await _run(request, job), media_type=TABLE_MEDIA_TYPE)


@post(
    "/v1/cases/csv",
    status_code=200,
    operation_id="caseFromCsv",
    summary="Case members from a CSV table",
    description="Reads a CSV table of surface points as `ibl run taps.csv` does, and answers "
    "with the members of a case it holds (`surface`, `pressure` and, with a `radius` column, "
    "`body`); add `flow` and any options to analyse it. Problems name the line and column "
    "under the pointer `/text`.",
    tags=["analyses"],
    opt={"request_body": CsvTable, "response_body": CsvCase},
    responses=_problems(*_BODY_PROBLEMS, INVALID_REQUEST),
)
async def case_from_csv(request: Request[Any, Any, Any]) -> Response[bytes]:
    return await _analysis(request, work.csv_case)


@functools.cache
def _catalogue() -> dict[str, Any]:
    import ibl.registry

    document: dict[str, Any] = codec.finite_or_none(ibl.registry.catalogue())
    return document


@get(
    "/v1/methods",
    operation_id="listMethods",
    summary="Methods and criteria",
    description="Every method and transition criterion with its options, defaults, validity "
    "ranges and sources. An unbounded end of a range is null.\n\n" + CAUTION,
    tags=["analyses"],
    opt={"response_body": MethodCatalogue},
    sync_to_thread=False,
)
def list_methods() -> dict[str, Any]:
    return _catalogue()


class HealthController(Controller):
    """Probes for orchestrators."""

    path = "/health"
    tags = ("health",)

    @get("/live", operation_id="live", summary="Liveness", sync_to_thread=False)
    def live(self) -> Health:
        return Health(status="live")

    @get(
        "/ready",
        operation_id="ready",
        summary="Readiness",
        description="Ready once a start-up analysis succeeded, while the worker is not saturated.",
        responses=_problems(NOT_READY),
        sync_to_thread=False,
    )
    def ready(self, request: Request[Any, Any, Any]) -> Health:
        runtime = _runtime(request)
        if not runtime.warmed_up or runtime.runner.saturated:
            why = "is saturated" if runtime.warmed_up else "has not completed its start-up analysis"
            raise ProblemError(NOT_READY, f"This worker {why}.", headers={"Retry-After": "1"})
        return Health(status="ready")


@get(
    "/metrics",
    operation_id="metrics",
    summary="Prometheus metrics",
    tags=["health"],
    media_type=CONTENT_TYPE,
    sync_to_thread=False,
)
def metrics() -> bytes:
    return exposition()


async def _warm_up(runtime: Runtime) -> None:
    try:
        await anyio.to_thread.run_sync(warm_up)
    except Exception:
        log.exception("start-up analysis failed; the worker stays not ready")
    else:
        runtime.warmed_up = True


def create_app(settings: Settings | None = None) -> Litestar:
    """The application; ``settings`` default to the ``IBL_*`` environment variables."""
    settings = Settings.from_env() if settings is None else settings

    async def start(app: Litestar) -> None:
        app.state.runtime = Runtime(settings=settings, runner=Runner(settings))
        await _warm_up(app.state.runtime)

    def stop(app: Litestar) -> None:
        runtime: Runtime | None = app.state.get("runtime")
        if runtime is not None:
            runtime.runner.close()

    return Litestar(
        route_handlers=[
            AnalysesController,
            case_from_csv,
            list_methods,
            HealthController,
            metrics,
            *docs_routes(),
            *page_routes(),
        ],
        exception_handlers=EXCEPTION_HANDLERS,  # type: ignore[arg-type]
        request_max_body_size=settings.max_body_bytes,
        middleware=[RequestMetrics],
        openapi_config=OpenAPIConfig(
            title="ibl",
            version=ibl.__version__,
            description="Integral boundary-layer and transition estimates from a surface "
            "pressure distribution.\n\nNo authentication: every operation is open to "
            "any client that can reach the service.\n\n" + CAUTION,
            license=License(name="MIT", identifier="MIT"),
            contact=Contact(name="ibl project", url="https://example.org/ibl"),
            tags=[
                Tag(name="analyses", description="Analyses and the methods they use."),
                Tag(name="health", description="Probes and metrics."),
            ],
            path="/schema",
            render_plugins=[ServiceJsonRenderPlugin()],
            use_handler_docstrings=False,
        ),
        state=State({"settings": settings}),
        on_startup=[start],
        on_shutdown=[stop, mark_worker_stopped],
        debug=False,
    )
