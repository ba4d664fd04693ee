"""Faults and overload against real ``ibl serve`` processes on 127.0.0.1, and input bounds.

The servers are started as subprocesses and always stopped; every request has a
timeout and every wait is bounded by a count.  A slow analysis is made
deterministic without any hook in the service: the servers of these tests run
with a ``sitecustomize`` module on ``PYTHONPATH`` (written here into a temporary
folder, inherited by every worker process) that wraps ``ibl.run`` and
``ibl.run_batch``.  A case named ``hold:<seconds>:<tag>`` writes the worker's
process id to ``<markers>/<tag>`` and then sleeps before it is analysed; a case
named ``raise:<tag>`` raises an unexpected exception.
"""

from __future__ import annotations

import asyncio
import contextlib
import json
import os
import re
import signal
import socket
import subprocess
import sys
import textwrap
import time
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import httpx
import msgspec
import psutil
import pytest

from ibl import CaseError, FieldProblem
from ibl_service import openapi
from ibl_service.app import create_app
from ibl_service.config import Settings
from ibl_service.errors import OVERLOADED, TIME_LIMIT, bounded_problem, problem_from_case_error
from ibl_service.metrics import forget_gone_processes
from ibl_service.wire import MAX_DETAIL, MAX_ERRORS, MAX_REASON, FieldError, Problem

ROOT = Path(__file__).resolve().parents[1]
HOST = "127.0.0.1"
PROBLEM_JSON = "application/problem+json"

SITE_HOOK = textwrap.dedent(
    """
    import os
    import time
    from pathlib import Path

    import ibl

    _markers = Path(os.environ["IBL_TEST_MARKERS"])
    _run, _run_batch = ibl.run, ibl.run_batch


    def _act(cases):
        for case in cases:
            name = getattr(case, "name", None) or ""
            if name.startswith("hold:"):
                _, seconds, tag = name.split(":")
                (_markers / tag).write_text(str(os.getpid()))
                time.sleep(float(seconds))
            elif name.startswith("raise:"):
                raise RuntimeError("internal detail that must not leave the server")


    def run(case, **options):
        _act([case])
        return _run(case, **options)


    def run_batch(cases, **options):
        _act(cases)
        return _run_batch(cases, **options)


    ibl.run, ibl.run_batch = run, run_batch
    """
)


def plate(name: str | None = None, points: int = 40) -> dict[str, Any]:
    """A flat plate at zero pressure gradient, given by arc length."""
    doc: dict[str, Any] = {
        "surface": {"s": [(i + 1) / points for i in range(points)]},
        "pressure": {"edge_velocity": [1.0] * points},
        "flow": {"reynolds": 1.0e6},
    }
    if name is not None:
        doc["name"] = name
    return doc


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind((HOST, 0))
        port: int = sock.getsockname()[1]
        return port


def problem_of(response: httpx.Response, status: int) -> Problem:
    assert response.status_code == status, response.text
    assert response.headers["content-type"].startswith(PROBLEM_JSON)
    problem = msgspec.json.decode(response.content, type=Problem)
    assert problem.status == status
    assert "Traceback" not in response.text and 'File "' not in response.text
    return problem


# --------------------------------------------------------------------------- servers


@dataclass
class Server:
    """A running ``ibl serve`` and what the tests need to know about it."""

    process: subprocess.Popen[bytes]
    base: str
    log: Path
    markers: Path
    metrics: Path
    workers: int
    seen_pids: set[int] = field(default_factory=set)

    def worker_pids(self) -> set[int]:
        """Process ids of the uvicorn worker processes (children of the server)."""
        try:
            children = psutil.Process(self.process.pid).children()
        except psutil.NoSuchProcess:
            return set()
        pids = set()
        for child in children:
            with contextlib.suppress(psutil.Error):
                if "spawn_main" in " ".join(child.cmdline()) and child.is_running():
                    if child.status() != psutil.STATUS_ZOMBIE:
                        pids.add(child.pid)
        self.seen_pids |= pids
        return pids

    def started_workers(self) -> int:
        return self.log.read_text(errors="replace").count("Application startup complete.")

    def wait_for_marker(self, tag: str, tries: int = 600) -> int:
        """The worker pid written by a held case once it runs (bounded: about a minute)."""
        path = self.markers / tag
        for _ in range(tries):
            if path.exists() and path.read_text():
                return int(path.read_text())
            assert self.process.poll() is None, self.log.read_text()
            time.sleep(0.1)
        raise AssertionError(f"the held case {tag!r} never started")


@contextlib.contextmanager
def serving(tmp_path: Path, workers: int = 2, **env: str) -> Iterator[Server]:
    """``ibl serve`` on 127.0.0.1 with the hook module; stopped (and its workers) at the end."""
    site = tmp_path / "site"
    site.mkdir(exist_ok=True)
    (site / "sitecustomize.py").write_text(SITE_HOOK)
    markers = tmp_path / "markers"
    markers.mkdir(exist_ok=True)
    metrics = tmp_path / "metrics"
    port = free_port()
    environ = dict(
        os.environ,
        PYTHONPATH=os.pathsep.join([str(site), str(ROOT), str(ROOT / "service")]),
        IBL_TEST_MARKERS=str(markers),
        PROMETHEUS_MULTIPROC_DIR=str(metrics),
        **env,
    )
    log = tmp_path / "server.log"
    command = [sys.executable, "-m", "ibl_service.serve", "--host", HOST, "--port", str(port)]
    with log.open("wb") as sink:
        process = subprocess.Popen(
            [*command, "--workers", str(workers)],
            cwd=ROOT,
            env=environ,
            stdout=sink,
            stderr=subprocess.STDOUT,
        )
    server = Server(process, f"http://{HOST}:{port}", log, markers, metrics, workers)
    try:
        for _ in range(2400):  # start-up (a first compile included), bounded: four minutes
            assert process.poll() is None, log.read_text()
            if server.started_workers() >= workers:
                break
            time.sleep(0.1)
        else:
            raise AssertionError("the server did not start:\n" + log.read_text())
        assert httpx.get(f"{server.base}/health/ready", timeout=10).status_code == 200
        server.worker_pids()
        yield server
    finally:
        if process.poll() is None:
            process.send_signal(signal.SIGTERM)
            try:
                process.wait(timeout=60)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait(timeout=30)
        for pid in server.seen_pids:  # workers left behind if the supervisor was killed
            with contextlib.suppress(psutil.Error):
                psutil.Process(pid).kill()


def in_progress(server: Server, path: str) -> float:
    """The merged ``requests_in_progress`` gauge of one route."""
    text = httpx.get(f"{server.base}/metrics", timeout=10).text
    pattern = rf'^ibl_requests_in_progress\{{[^}}]*path="{re.escape(path)}"[^}}]*\}} (\S+)$'
    return sum(float(value) for value in re.findall(pattern, text, re.M))


# -------------------------------------------------------------------------- overload


@pytest.mark.slow
def test_overload_is_refused_with_retry_after_and_nothing_hangs(tmp_path: Path) -> None:
    """One worker, one analysis at a time, one waiting: of eight slow requests sent at
    once, two are analysed and six are refused at once with 503 and Retry-After."""
    with serving(tmp_path, workers=1, IBL_COMPUTE_THREADS="1", IBL_MAX_QUEUE="1") as server:

        async def scenario() -> list[tuple[int, httpx.Response]]:
            done: list[tuple[int, httpx.Response]] = []
            async with httpx.AsyncClient(base_url=server.base, timeout=60) as client:

                async def send(index: int) -> None:
                    doc = plate(f"hold:2:overload-{index}")
                    done.append((index, await client.post("/v1/analyses", json=doc)))

                await asyncio.gather(*(send(i) for i in range(8)))
            return done

        answers = asyncio.run(scenario())
        statuses = [response.status_code for _, response in answers]
        assert Counter(statuses) == {200: 2, 503: 6}, statuses
        # The refusals came back before either analysis finished: nothing queued behind them.
        assert statuses == [503] * 6 + [200] * 2
        for _, response in answers:
            if response.status_code == 503:
                problem = problem_of(response, 503)
                assert problem.type == OVERLOADED.type
                assert response.headers["retry-after"] == "1"
            else:
                assert "sides" in response.json()
        assert httpx.get(f"{server.base}/health/ready", timeout=10).status_code == 200


@pytest.mark.slow
def test_a_saturated_worker_stays_live_but_not_ready(tmp_path: Path) -> None:
    with serving(tmp_path, workers=1, IBL_COMPUTE_THREADS="1", IBL_MAX_QUEUE="0") as server:
        with httpx.Client(base_url=server.base, timeout=60) as client:

            async def hold() -> httpx.Response:
                async with httpx.AsyncClient(base_url=server.base, timeout=60) as other:
                    return await other.post("/v1/analyses", json=plate("hold:3:busy"))

            async def probe() -> tuple[httpx.Response, httpx.Response, httpx.Response]:
                task = asyncio.ensure_future(hold())
                await asyncio.to_thread(server.wait_for_marker, "busy")
                live = await asyncio.to_thread(client.get, "/health/live")
                ready = await asyncio.to_thread(client.get, "/health/ready")
                return live, ready, await task

            live, ready, held = asyncio.run(probe())
        assert live.status_code == 200
        problem_of(ready, 503)
        assert ready.headers["retry-after"] == "1"
        assert held.status_code == 200


@pytest.mark.slow
def test_a_waiting_analysis_whose_client_left_is_dropped(tmp_path: Path) -> None:
    """One analysis at a time, one waiting: the waiting one's client disconnects, so its
    place is freed at once and it is never analysed."""
    with serving(tmp_path, workers=1, IBL_COMPUTE_THREADS="1", IBL_MAX_QUEUE="1") as server:
        body = json.dumps(plate("hold:0:left")).encode()
        host, port = server.base.removeprefix("http://").split(":")
        request = (
            f"POST /v1/analyses HTTP/1.1\r\nHost: {host}\r\nContent-Type: application/json\r\n"
            f"Content-Length: {len(body)}\r\n\r\n"
        ).encode() + body

        def ready() -> int:
            return httpx.get(f"{server.base}/health/ready", timeout=10).status_code

        async def scenario() -> httpx.Response:
            async with httpx.AsyncClient(base_url=server.base, timeout=60) as client:
                first = asyncio.ensure_future(
                    client.post("/v1/analyses", json=plate("hold:4:first"))
                )
                await asyncio.to_thread(server.wait_for_marker, "first")
                with socket.create_connection((host, int(port)), timeout=10) as sock:
                    sock.sendall(request)
                    for _ in range(200):  # until it waits: the worker is then saturated
                        if await asyncio.to_thread(ready) == 503:
                            break
                        await asyncio.sleep(0.05)
                    else:
                        raise AssertionError("the second analysis was never queued")
                # Disconnected: its place frees while the first analysis still runs.
                for _ in range(200):
                    if await asyncio.to_thread(ready) == 200:
                        break
                    await asyncio.sleep(0.05)
                else:
                    raise AssertionError("the place of the departed client was not freed")
                assert not first.done()
                return await first

        assert asyncio.run(scenario()).status_code == 200
        # Had it not been dropped, it would have run as soon as the first one ended.
        assert httpx.post(f"{server.base}/v1/analyses", json=plate(), timeout=60).is_success
        assert not (server.markers / "left").exists()


# ------------------------------------------------------------------------ time limit


@pytest.mark.slow
def test_time_limit_answers_a_problem_not_a_dropped_connection(tmp_path: Path) -> None:
    with serving(tmp_path, workers=1, IBL_TIME_LIMIT_S="0.5") as server:
        with httpx.Client(base_url=server.base, timeout=60) as client:
            for path, doc in [
                ("/v1/analyses", plate("hold:1.5:single")),
                ("/v1/analyses/batch", {"cases": [plate(), plate("hold:1.5:batch")]}),
                ("/v1/analyses/figure", plate("hold:1.5:figure")),
            ]:
                response = client.post(path, json=doc)
                problem = problem_of(response, 503)
                assert problem.type == TIME_LIMIT.type
                assert response.headers["retry-after"] == "1"
                assert int(response.headers["content-length"]) == len(response.content)
            # The abandoned analyses finish in the background; then the worker answers again.
            for _ in range(100):
                if client.post("/v1/analyses", json=plate()).status_code == 200:
                    break
                time.sleep(0.2)
            else:
                raise AssertionError("the worker did not recover after its time limits")


def test_time_limit_of_a_real_batch(tmp_path: Path) -> None:
    """No hook: a batch of 200 cases cannot be decoded and analysed within a millisecond."""
    with serving(tmp_path, workers=1, IBL_TIME_LIMIT_S="0.001") as server:
        batch = {"cases": [plate(points=200)] * 200}
        response = httpx.post(f"{server.base}/v1/analyses/batch", json=batch, timeout=60)
        assert problem_of(response, 503).type == TIME_LIMIT.type
        assert response.headers["retry-after"] == "1"
        assert httpx.get(f"{server.base}/health/live", timeout=10).status_code == 200


def test_unexpected_error_in_a_worker_is_a_500_without_details(tmp_path: Path) -> None:
    with serving(tmp_path, workers=1) as server:
        response = httpx.post(f"{server.base}/v1/analyses", json=plate("raise:x"), timeout=60)
        problem = problem_of(response, 500)
        assert "internal detail" not in response.text and "RuntimeError" not in response.text
        assert problem.type.endswith("internal-error")
        # ... but it is logged, with its stack, by the server's logging thread (bounded wait).
        for _ in range(100):
            if "internal detail that must not leave the server" in server.log.read_text():
                break
            time.sleep(0.1)
        else:
            raise AssertionError("the unexpected error was not logged")
        assert "Traceback" in server.log.read_text()


# ---------------------------------------------------------------------- dying workers


@pytest.mark.slow
def test_a_killed_worker_is_replaced_and_the_service_keeps_answering(tmp_path: Path) -> None:
    with serving(tmp_path, workers=2) as server:
        before = server.worker_pids()
        assert len(before) == 2, before

        async def held() -> httpx.Response | Exception:
            async with httpx.AsyncClient(base_url=server.base, timeout=60) as client:
                try:
                    return await client.post("/v1/analyses", json=plate("hold:60:victim"))
                except httpx.HTTPError as exc:
                    return exc

        async def kill_the_busy_worker() -> tuple[int, httpx.Response | Exception]:
            task = asyncio.ensure_future(held())
            victim = await asyncio.to_thread(server.wait_for_marker, "victim")
            assert victim in before
            assert await asyncio.to_thread(in_progress, server, "/v1/analyses") == 1
            os.kill(victim, signal.SIGKILL)
            return victim, await task

        victim, outcome = asyncio.run(kill_the_busy_worker())
        # The request on the killed worker is lost with its connection, not answered wrongly.
        assert isinstance(outcome, httpx.HTTPError), outcome

        fresh = {"connection": "close"}  # a new connection each time: any worker may answer
        with httpx.Client(base_url=server.base, timeout=30, headers=fresh) as client:
            # The other worker answers at once.
            for _ in range(10):
                assert client.post("/v1/analyses", json=plate()).status_code == 200
            for _ in range(1200):  # the supervisor starts a replacement (bounded: two minutes)
                pids = server.worker_pids()
                if len(pids) == 2 and victim not in pids and server.started_workers() >= 3:
                    break
                time.sleep(0.1)
            else:
                raise AssertionError(f"no replacement for {victim}: {server.worker_pids()}")
            (replacement,) = pids - before
            # Until the replacement has answered, keep asking (bounded).
            for _ in range(2000):
                assert client.get("/health/ready").status_code == 200
                if list(server.metrics.glob(f"counter_{replacement}.db")):
                    break
            else:
                raise AssertionError("the replacement worker never answered")
            # The killed worker's request no longer counts as in progress.
            assert in_progress(server, "/v1/analyses") == 0
        assert f"Child process [{victim}] died" in server.log.read_text()


def test_gone_processes_lose_their_live_gauges(tmp_path: Path) -> None:
    live = tmp_path / f"gauge_livesum_{os.getpid()}.db"
    dead_pid = 2**22 + 12345  # above the kernel's largest process id: never a process
    dead = tmp_path / f"gauge_livesum_{dead_pid}.db"
    counter = tmp_path / f"counter_{dead_pid}.db"
    for path in (live, dead, counter):
        path.write_bytes(b"")
    assert forget_gone_processes(tmp_path) == [dead_pid]
    assert live.exists() and counter.exists() and not dead.exists()


# --------------------------------------------------------------------------- shutdown


@pytest.mark.slow
def test_sigterm_lets_requests_in_flight_finish(tmp_path: Path) -> None:
    with serving(tmp_path, workers=2) as server:

        async def scenario() -> tuple[httpx.Response, httpx.Response]:
            async with httpx.AsyncClient(base_url=server.base, timeout=60) as client:
                single = asyncio.ensure_future(
                    client.post("/v1/analyses", json=plate("hold:3:single"))
                )
                batch = asyncio.ensure_future(
                    client.post(
                        "/v1/analyses/batch",
                        json={"cases": [plate("hold:3:batch"), *[plate(points=400)] * 50]},
                    )
                )
                await asyncio.to_thread(server.wait_for_marker, "single")
                await asyncio.to_thread(server.wait_for_marker, "batch")
                server.process.send_signal(signal.SIGTERM)
                return await single, await batch

        single, batch = asyncio.run(scenario())
        assert single.status_code == 200 and "sides" in single.json()
        results = batch.json()["results"]
        assert batch.status_code == 200 and len(results) == 51
        assert all("sides" in entry for entry in results)
        assert server.process.wait(timeout=60) == 0
        with pytest.raises(httpx.ConnectError):
            httpx.get(f"{server.base}/health/live", timeout=5)


# ---------------------------------------------------------------------- input bounds


def _unbounded(node: Any, schemas: dict[str, Any], where: str, seen: set[str]) -> Iterator[str]:
    """Places in a schema where an array has no maxItems or a string no maxLength."""
    if isinstance(node, list):
        for i, item in enumerate(node):
            yield from _unbounded(item, schemas, f"{where}/{i}", seen)
        return
    if not isinstance(node, dict):
        return
    ref = node.get("$ref")
    if isinstance(ref, str):
        name = ref.removeprefix("#/components/schemas/")
        if name not in seen:
            seen.add(name)
            yield from _unbounded(schemas[name], schemas, f"#/components/schemas/{name}", seen)
        return
    kinds = node.get("type")
    kinds = kinds if isinstance(kinds, list) else [kinds]
    if "array" in kinds and "maxItems" not in node:
        yield f"{where}: array without maxItems"
    if "string" in kinds and not ({"maxLength", "enum", "const"} & node.keys()):
        yield f"{where}: string without maxLength"
    for key, value in node.items():
        if key not in ("enum", "const", "default", "examples", "example", "description"):
            yield from _unbounded(value, schemas, f"{where}/{key}", seen)


def _request_schemas(doc: dict[str, Any]) -> Iterator[tuple[str, Any]]:
    """Every request body and parameter schema of the document, with where it is."""
    for path, item in doc["paths"].items():
        for method, operation in item.items():
            for media, content in operation.get("requestBody", {}).get("content", {}).items():
                yield f"{method.upper()} {path} {media}", content.get("schema", {})
            for parameter in operation.get("parameters", []):
                yield f"{method.upper()} {path} {parameter['name']}", parameter.get("schema", {})


def test_every_input_array_and_string_is_bounded() -> None:
    doc = json.loads(openapi.COMMITTED.read_text(encoding="utf-8"))
    schemas = doc["components"]["schemas"]
    bodies = list(_request_schemas(doc))
    assert len(bodies) >= 3  # analyses, batch, figure
    found: list[str] = []
    for where, schema in bodies:
        found += _unbounded(schema, schemas, where, set())
    # The service's own answers to errors are bounded too.
    for name in ("Problem", "FieldError"):
        found += _unbounded({"$ref": f"#/components/schemas/{name}"}, schemas, name, set())
    assert found == []


def test_the_bounds_walk_finds_what_is_missing() -> None:
    schemas = {
        "Open": {
            "type": "object",
            "properties": {
                "list": {"type": "array", "items": {"type": "string", "maxLength": 3}},
                "text": {"anyOf": [{"type": "string"}, {"type": "null"}]},
                "kind": {"type": "string", "enum": ["a", "b"]},
            },
        }
    }
    found = list(_unbounded({"$ref": "#/components/schemas/Open"}, schemas, "body", set()))
    assert found == [
        "#/components/schemas/Open/properties/list: array without maxItems",
        "#/components/schemas/Open/properties/text/anyOf/0: string without maxLength",
    ]


def test_the_served_document_states_the_servers_limits() -> None:
    from litestar.testing import TestClient

    with TestClient(create_app(Settings(max_batch=8, max_points=400))) as client:
        schemas = client.get("/schema/openapi.json").json()["components"]["schemas"]
    assert schemas["BatchRequest"]["properties"]["cases"]["maxItems"] == 8
    for component, member in (("Surface", "x"), ("Pressure", "cp"), ("Body", "radius")):
        (array,) = [
            option
            for option in schemas[component]["properties"][member]["anyOf"]
            if option.get("type") == "array"
        ]
        assert array["maxItems"] == 400


def test_problems_echo_bounded_text() -> None:
    """A member name or value of any length comes back cut, never whole."""
    from litestar.testing import TestClient

    with TestClient(create_app(Settings())) as client:
        case = plate()
        case["flow"]["x" * 100_000] = 1.0
        response = client.post("/v1/analyses", json=case)
        problem = problem_of(response, 422)
        assert len(response.content) < 2_000
        assert all(len(e.reason) <= MAX_REASON for e in problem.errors)
        assert problem.errors[0].reason.endswith("\u2026")
        batch = {"cases": [plate() | {"transition": {"trip": {"y" * 100_000: 0.1}}}]}
        response = client.post("/v1/analyses/batch", json=batch)
        assert response.status_code == 200 and len(response.content) < 2_000


def test_problems_list_at_most_so_many_errors() -> None:
    error = CaseError([FieldProblem(f"/pressure/cp/{i}", "bad") for i in range(MAX_ERRORS + 50)])
    problem = problem_from_case_error(error, "/cases/3")
    assert len(problem.errors) == MAX_ERRORS
    assert problem.errors[0].pointer == "/cases/3/pressure/cp/0"
    assert f"{MAX_ERRORS + 50} problems" in problem.detail and "first" in problem.detail
    long = bounded_problem("about:blank", "t", 400, "d" * 5000, [FieldError(pointer="", reason="")])
    assert len(long.detail) == MAX_DETAIL
    # Within bounds, the answer decodes against its own documented limits.
    msgspec.json.decode(msgspec.json.encode(long), type=Problem)
