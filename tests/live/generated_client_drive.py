"""Drive a live server with the Python client generated from ``openapi/openapi.json``.

Run by ``tests/live/clients_check.sh`` in a virtual environment where the generated
package ``ibl_client`` is installed (it does not import ``ibl``): starts ``ibl_service.serve``
with ``--server-python`` (an interpreter that has ``ibl`` and the service) on 127.0.0.1
and a free port, then, through the generated client only:

- an analysis of ``examples/strut.json``, built as the generated ``Case`` model;
- a batch of that case and one with a negative speed, whose problem stands in its place;
- the method catalogue, as the generated ``MethodCatalogue`` model;
- the figure as PNG and as SVG (bytes: the PNG signature, an ``<svg`` element);
- a case whose pressure list is shorter than its surface: 422 problem details whose
  errors name the field by JSON pointer.

Prints one line per check and exits non-zero on the first failure.

    python tests/live/generated_client_drive.py --server-python .venv/bin/python
"""

from __future__ import annotations

import argparse
import copy
import json
import os
import socket
import subprocess
import sys
import tempfile
import time
from http import HTTPStatus
from pathlib import Path
from typing import Any

import httpx

try:
    from ibl_client import Client
    from ibl_client.api.analyses import analyse, analyse_batch, analyse_figure, list_methods
    from ibl_client.api.health import ready
    from ibl_client.models import (
        AnalyseFigureAccept,
        BatchRequest,
        BatchResponse,
        Case,
        MethodCatalogue,
        Problem,
        Result,
    )
    from ibl_client.types import File
except ModuleNotFoundError:
    # pytest imports every module under tests/ for its doctests, where no client is generated.
    if __name__ == "__main__":
        raise

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"
#: PNG file signature (PNG specification, section 5.2).
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
#: Seconds to wait for the server to be ready (numba may compile the kernel first).
READY_TIMEOUT_S = 300.0


class CheckFailed(Exception):
    """A check of the generated client against the live server failed."""


def check(condition: bool, what: str) -> None:
    if not condition:
        raise CheckFailed(what)
    print(f"ok: {what}")


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind((HOST, 0))
        port: int = sock.getsockname()[1]
        return port


def wait_ready(client: Client, server: subprocess.Popen[bytes], log: Path) -> None:
    deadline = time.monotonic() + READY_TIMEOUT_S
    while time.monotonic() < deadline:
        if server.poll() is not None:
            sys.stderr.write(log.read_text(errors="replace"))
            raise CheckFailed("the server exited before it was ready")
        try:
            if ready.sync_detailed(client=client).status_code == HTTPStatus.OK:
                return
        except httpx.HTTPError:
            pass
        time.sleep(0.5)
    raise CheckFailed(f"the server was not ready within {READY_TIMEOUT_S:.0f} s")


def strut_document() -> dict[str, Any]:
    doc: dict[str, Any] = json.loads((ROOT / "examples" / "strut.json").read_text())
    return doc


def check_analysis(client: Client, doc: dict[str, Any]) -> None:
    case = Case.from_dict(doc)
    check(case.to_dict() == doc, "the generated Case model keeps every member of strut.json")
    response = analyse.sync_detailed(client=client, body=case)
    result = response.parsed
    check(
        response.status_code == HTTPStatus.OK and isinstance(result, Result),
        f"analysis of strut.json: {response.status_code} with a Result",
    )
    assert isinstance(result, Result)
    check(result.name == doc["name"], "the result carries the case's name")
    names = sorted(str(side.name) for side in result.sides)
    check(names == ["lower", "upper"], f"two sides, named {names}")
    for side in result.sides:
        theta = side.theta if isinstance(side.theta, list) else []
        check(
            bool(theta) and all(t > 0 for t in theta),
            f"{side.name}: {len(theta)} stations of positive momentum thickness",
        )


def check_batch(client: Client, doc: dict[str, Any]) -> None:
    bad = copy.deepcopy(doc)
    bad["flow"]["speed"] = -abs(bad["flow"]["speed"])
    body = BatchRequest(cases=[Case.from_dict(doc), Case.from_dict(bad)])
    response = analyse_batch.sync_detailed(client=client, body=body)
    answer = response.parsed
    check(
        response.status_code == HTTPStatus.OK and isinstance(answer, BatchResponse),
        f"batch of a good and a bad case: {response.status_code} with a BatchResponse",
    )
    assert isinstance(answer, BatchResponse)
    good_entry, bad_entry = answer.results
    check(isinstance(good_entry, Result), "the good case's entry is a Result")
    check(isinstance(bad_entry, Problem), "the bad case's entry is a Problem in its place")
    assert isinstance(bad_entry, Problem)
    pointers = [e.pointer for e in bad_entry.errors] if isinstance(bad_entry.errors, list) else []
    check(
        bad_entry.status == 422 and pointers == ["/cases/1/flow/speed"],
        f"its problem: status {bad_entry.status}, pointers {pointers}",
    )


def check_catalogue(client: Client) -> None:
    response = list_methods.sync_detailed(client=client)
    catalogue = response.parsed
    check(
        response.status_code == HTTPStatus.OK and isinstance(catalogue, MethodCatalogue),
        f"method catalogue: {response.status_code} with a MethodCatalogue",
    )
    assert isinstance(catalogue, MethodCatalogue)
    criteria = catalogue.transition.criteria.additional_properties
    check(
        catalogue.transition.default in criteria,
        f"the default transition criterion {catalogue.transition.default!r} is among "
        f"{sorted(criteria)}",
    )


def check_figure(client: Client, doc: dict[str, Any]) -> None:
    case = Case.from_dict(doc)
    for accept, media, looks_right in (
        (AnalyseFigureAccept.IMAGEPNG, "image/png", lambda b: b.startswith(PNG_SIGNATURE)),
        (AnalyseFigureAccept.IMAGESVGXML, "image/svg+xml", lambda b: b"<svg" in b[:2000]),
    ):
        response = analyse_figure.sync_detailed(client=client, body=case, accept=accept)
        figure = response.parsed
        check(
            response.status_code == HTTPStatus.OK and isinstance(figure, File),
            f"figure as {media}: {response.status_code} with a File",
        )
        assert isinstance(figure, File)
        data = figure.payload.read()
        check(
            response.headers.get("content-type", "").startswith(media) and looks_right(data),
            f"figure as {media}: {len(data)} bytes of {media}",
        )


def check_unprocessable(client: Client, doc: dict[str, Any]) -> None:
    short = copy.deepcopy(doc)
    short["pressure"]["cp"] = short["pressure"]["cp"][:-3]
    response = analyse.sync_detailed(client=client, body=Case.from_dict(short))
    problem = response.parsed
    check(
        response.status_code == HTTPStatus.UNPROCESSABLE_ENTITY and isinstance(problem, Problem),
        f"a pressure list shorter than the surface: {response.status_code} with a Problem",
    )
    assert isinstance(problem, Problem)
    pointers = [e.pointer for e in problem.errors] if isinstance(problem.errors, list) else []
    check(
        bool(pointers) and all(p.startswith("/pressure/cp") for p in pointers),
        f"its errors point at the field: {pointers}",
    )


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument(
        "--server-python",
        default=sys.executable,
        help="interpreter that runs the service (default: this one)",
    )
    args = parser.parse_args(argv)
    port = free_port()
    base = f"http://{HOST}:{port}"
    command = [args.server_python, "-m", "ibl_service.serve", "--host", HOST, "--port", str(port)]
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "server.log"
        with log.open("wb") as sink:
            server = subprocess.Popen(
                [*command, "--workers", "1"],
                cwd=ROOT,
                stdout=sink,
                stderr=subprocess.STDOUT,
                env=os.environ | {"IBL_MAX_BATCH": "8"},
            )
        try:
            with Client(base_url=base, timeout=httpx.Timeout(120.0)) as client:
                wait_ready(client, server, log)
                doc = strut_document()
                check_analysis(client, doc)
                check_batch(client, doc)
                check_catalogue(client)
                check_figure(client, doc)
                check_unprocessable(client, doc)
        except CheckFailed as failure:
            print(f"FAILED: {failure}", file=sys.stderr)
            return 1
        finally:
            server.terminate()
            try:
                server.wait(timeout=30)
            except subprocess.TimeoutExpired:
                server.kill()
                server.wait()
    print("generated Python client: all checks passed")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
