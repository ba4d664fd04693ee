"""``ibl.client`` against a live ``ibl serve`` on 127.0.0.1 and a small fake server.

The live server is started once for the module the way ``tests/test_faults.py``
starts its servers: a subprocess on a free port with one worker, ready once
``/health/ready`` answers 200, always stopped at the end.
"""

from __future__ import annotations

import contextlib
import http.server
import json
import os
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx
import msgspec
import pytest

import ibl
from ibl.client import Client, Problem, ProblemError, Unavailable
from ibl_service.app import warm_up

ROOT = Path(__file__).resolve().parents[1]
HOST = "127.0.0.1"


def plate(points: int = 40, reynolds: float = 1.0e6) -> dict[str, Any]:
    """A flat plate at zero pressure gradient, given by arc length."""
    return {
        "surface": {"s": [(i + 1) / points for i in range(points)]},
        "pressure": {"edge_velocity": [1.0] * points},
        "flow": {"reynolds": reynolds},
    }


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind((HOST, 0))
        port: int = sock.getsockname()[1]
        return port


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """One ``ibl serve`` worker on 127.0.0.1; its base URL.

    The kernels are compiled here first (or loaded from numba's cache), with the server's
    own warm-up: the server then loads them from the cache. Otherwise, on a fresh checkout,
    it would compile them a third time beside the test run's two workers."""
    warm_up()
    port = free_port()
    log = tmp_path_factory.mktemp("client") / "server.log"
    environ = dict(
        os.environ, PYTHONPATH=os.pathsep.join([str(ROOT), str(ROOT / "service")]), IBL_WORKERS="1"
    )
    command = [sys.executable, "-m", "ibl_service.serve", "--host", HOST, "--port", str(port)]
    with log.open("wb") as sink:
        process = subprocess.Popen(
            [*command, "--workers", "1"], cwd=ROOT, env=environ, stdout=sink, stderr=sink
        )
    base = f"http://{HOST}:{port}"
    try:
        for _ in range(2400):  # start-up (a first compile included), bounded: four minutes
            assert process.poll() is None, log.read_text()
            with contextlib.suppress(httpx.TransportError):
                if httpx.get(f"{base}/health/ready", timeout=5).status_code == 200:
                    break
            time.sleep(0.1)
        else:
            raise AssertionError("the server did not start:\n" + log.read_text())
        yield base
    finally:
        if process.poll() is None:
            process.send_signal(signal.SIGTERM)
            try:
                process.wait(timeout=60)
            except subprocess.TimeoutExpired:
                process.kill()
                process.wait(timeout=30)


@pytest.mark.parametrize("fmt", ["msgpack", "json"])
def test_one_analysis_equals_the_library(server: str, fmt: str) -> None:
    """The typed answer equals ``ibl.run`` of the same case: both formats carry every
    float exactly (MessagePack as 8-byte doubles, JSON as shortest round-trip text), so
    equality is exact. The strut example exercises a contour with both sides."""
    case = json.loads((ROOT / "examples" / "strut.json").read_text())
    with Client(server, format=fmt) as client:  # type: ignore[arg-type]
        answer = client.analyze(case)
    assert isinstance(answer, ibl.Result)
    assert answer == ibl.run(ibl.parse_case(case))


def test_a_bad_case_in_a_batch_fails_alone_at_its_position(server: str) -> None:
    """Five cases sent in chunks of two: the bad one (index 3, a missing ``pressure``)
    comes back as its problem with the pointer renumbered into the whole list, the
    others as results equal to the library's, in order."""
    good = [plate(reynolds=r) for r in (1e5, 2e5, 4e5, 8e5)]
    bad = {"surface": {"s": [0.1, 0.2, 0.3]}, "flow": {"reynolds": 1e6}}
    cases = [*good[:3], bad, good[3]]
    with Client(server) as client:
        answers = client.analyze_batch(cases, chunk=2)
    assert len(answers) == 5
    problem = answers[3]
    assert isinstance(problem, Problem)
    assert problem.status == 422
    assert [e.pointer for e in problem.errors] == ["/cases/3"], problem
    expected = ibl.run_batch([ibl.parse_case(c) for c in good])
    assert [answers[i] for i in (0, 1, 2, 4)] == expected


def test_an_invalid_case_raises_with_its_pointers(server: str) -> None:
    """A Cp of 1e6 (outside the schema's +-1e4) is refused with 422 naming /pressure/cp/1."""
    case = plate()
    case["pressure"] = {"edge_velocity": [1.0, 1e6, 1.0] + [1.0] * 37}
    with Client(server, format="json") as client, pytest.raises(ProblemError) as caught:
        client.analyze(case)
    assert caught.value.status == 422
    assert caught.value.problem.type and caught.value.problem.title
    assert "/pressure/edge_velocity/1" in [e.pointer for e in caught.value.errors]
    assert "/pressure/edge_velocity/1" in str(caught.value)


# ---------------------------------------------------------------- retries, fake server


class _Fake(http.server.BaseHTTPRequestHandler):
    """Answers 503 with ``Retry-After`` while ``refusals`` lasts, then 200 with a result."""

    refusals = 0
    retry_after = "0"
    body = b""
    seen: list[str] = []  # noqa: RUF012 - shared by the handler instances on purpose

    def do_POST(self) -> None:
        self.rfile.read(int(self.headers["content-length"]))
        type(self).seen.append(self.path)
        if type(self).refusals > 0:
            type(self).refusals -= 1
            problem = {
                "type": "urn:test:overloaded",
                "title": "Overloaded",
                "status": 503,
                "detail": "busy",
                "errors": [],
            }
            payload = json.dumps(problem).encode()
            self.send_response(503)
            self.send_header("content-type", "application/problem+json")
            self.send_header("retry-after", type(self).retry_after)
        else:
            payload = type(self).body
            self.send_response(200)
            self.send_header("content-type", "application/msgpack")
        self.send_header("content-length", str(len(payload)))
        self.end_headers()
        self.wfile.write(payload)

    def log_message(self, format: str, *args: Any) -> None:
        pass


@pytest.fixture
def fake() -> Iterator[tuple[str, type[_Fake]]]:
    result = ibl.run(ibl.parse_case(plate()))
    handler = type("Handler", (_Fake,), {"body": msgspec.msgpack.encode(result), "seen": []})
    httpd = http.server.ThreadingHTTPServer((HOST, 0), handler)
    thread = threading.Thread(target=httpd.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://{HOST}:{httpd.server_address[1]}", handler
    finally:
        httpd.shutdown()
        httpd.server_close()
        thread.join(timeout=10)


def test_a_503_with_retry_after_is_retried(fake: tuple[str, type[_Fake]]) -> None:
    """RFC 9110 section 10.2.3: Retry-After says when to try again; 0 means at once."""
    base, handler = fake
    handler.refusals = 1
    with Client(base, retries=2) as client:
        answer = client.analyze(plate())
    assert answer == ibl.run(ibl.parse_case(plate()))
    assert handler.seen == ["/v1/analyses", "/v1/analyses"]


def test_retries_are_bounded(fake: tuple[str, type[_Fake]]) -> None:
    """Three refusals and two retries allowed: three attempts, then the 503 problem."""
    base, handler = fake
    handler.refusals = 3
    with Client(base, retries=2) as client, pytest.raises(Unavailable) as caught:
        client.analyze(plate())
    assert caught.value.status == 503
    assert len(handler.seen) == 3


def test_a_wait_beyond_the_budget_is_not_started(fake: tuple[str, type[_Fake]]) -> None:
    """Retry-After of an hour with a budget of a second: one attempt, then the problem."""
    base, handler = fake
    handler.refusals = 1
    handler.retry_after = "3600"
    with Client(base, retries=5, budget=1.0) as client, pytest.raises(Unavailable):
        client.analyze(plate())
    assert len(handler.seen) == 1


def test_an_unreachable_server_raises_after_the_retries() -> None:
    """Nothing listens on the port: connection refused, retried, then ClientError."""
    from ibl.client import ClientError

    with Client(f"http://{HOST}:{free_port()}", retries=1, budget=5.0) as client:
        with pytest.raises(ClientError, match="could not reach"):
            client.analyze(plate())


def test_importing_ibl_does_not_import_httpx() -> None:
    """The client's dependency is optional: a fresh interpreter imports ibl without it."""
    code = "import sys, ibl, ibl.client; print('httpx' in sys.modules)"
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=120
    )
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "False"


# ------------------------------------------------------------------- worked example


def test_the_recovery_example_runs_in_a_reduced_mode(
    server: str, capsys: pytest.CaptureFixture[str]
) -> None:
    """``examples/optimise_recovery.py`` with two SLSQP iterations against the live server:
    it ends inside its bounds, prints the optimum, the count of analyses and the caution;
    the printed pressure rise is Bernoulli's 1 - (Ue_end/Ue_roof)^2 of the printed drop."""
    import importlib.util

    spec = importlib.util.spec_from_file_location(
        "optimise_recovery", ROOT / "examples" / "optimise_recovery.py"
    )
    assert spec is not None and spec.loader is not None
    example = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(example)
    found = example.optimise(server, 2)
    (low, high), (shape_low, shape_high) = example.BOUNDS
    assert low <= found["drop"] <= high and shape_low <= found["shape"] <= shape_high
    assert found["iterations"] <= 2
    assert found["evaluations"] % 3 == 1  # batches of a point and its two neighbours, + 1
    assert found["pressure_rise"] == pytest.approx(1.0 - (1.0 - found["drop"]) ** 2)
    assert example.main(["--url", server, "--max-iterations", "2"]) == 0
    out = capsys.readouterr().out
    assert "optimum: drop =" in out and "analyses in" in out
    assert "Confirm them by testing" in out
