"""HTTP benchmark of the service: latency, throughput and a large batch.

Starts the server with two workers on 127.0.0.1, loads it for a bounded time with
``wrk`` (Debian package ``wrk``), and prints figures; it asserts nothing.

    python tests/bench/bench_http.py                  # the production launcher
    python tests/bench/bench_http.py --server uvicorn # uvicorn, uvloop + httptools
    python tests/bench/bench_http.py --server granian # granian, ASGI interface

Figures are for one case of two sides with 200 points each (a closed contour
of 399 points), against these targets: p50 <= 2 ms and p99 <= 10 ms with one
connection, >= 1500 requests/s with several, a batch of 1000 such cases <= 0.5 s (timed
with JSON and with MessagePack bodies, from the first byte sent to the last received).
Ratios measured in the same run (absolute figures move twofold between machines): summary
answers (``output.stations = false``) at least twice the requests per second of full
answers at 8 connections, and the JSON batch within 1.5 times the MessagePack one.
Not part of the test suite.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import httpx
import msgspec

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"
TARGETS = {"p50_ms": 2.0, "p99_ms": 10.0, "rps": 1500.0, "batch_s": 0.5}
#: Ratio targets: summary to full answers' requests per second at ``RATIO_CONNECTIONS``
#: connections (at least), the JSON batch's time to the MessagePack one's (at most).
RATIO_TARGETS = {"summary_rps": 2.0, "json_batch": 1.5}
RATIO_CONNECTIONS = 8
#: The batch is timed with both bodies in each format the service reads and writes.
BATCH_FORMATS = {"json": "JSON", "msgpack": "MessagePack"}


def strut_case(points_per_side: int = 200, thickness: float = 0.12) -> dict[str, Any]:
    """An elliptic strut of unit chord at zero incidence, with its potential-flow Cp.

    On the ellipse (a cos t, b sin t) the surface speed is
    U (1 + b/a) |sin t| / sqrt(sin^2 t + (b/a)^2 cos^2 t).  The contour runs from
    the trailing edge over the upper side to the leading edge, where one point sits
    on the stagnation point, and back along the lower side: two sides of
    ``points_per_side`` points each, sharing the leading-edge point.
    """
    a, b = 0.5, 0.5 * thickness
    n = 2 * points_per_side - 1
    ts = [math.pi * (2 * i + 1) / n for i in range(n)]
    ratio = b / a
    speed = [
        (1 + ratio) * abs(math.sin(t)) / math.sqrt(math.sin(t) ** 2 + (ratio * math.cos(t)) ** 2)
        for t in ts
    ]
    return {
        "name": f"elliptic strut, {thickness:.0%} thick",
        "surface": {"x": [a + a * math.cos(t) for t in ts], "y": [b * math.sin(t) for t in ts]},
        "pressure": {"cp": [1 - u * u for u in speed]},
        "flow": {"reynolds": 2.0e6},
    }


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind((HOST, 0))
        port: int = sock.getsockname()[1]
        return port


def server_command(server: str, port: int, workers: int) -> list[str]:
    target = "ibl_service.app:create_app"
    if server == "uvicorn":
        return [
            sys.executable,
            "-m",
            "uvicorn",
            "--factory",
            target,
            "--host",
            HOST,
            "--port",
            str(port),
            "--workers",
            str(workers),
            "--loop",
            "uvloop",
            "--http",
            "httptools",
            "--no-access-log",
            "--log-level",
            "warning",
        ]
    if server == "granian":
        return [
            sys.executable,
            "-m",
            "granian",
            "--interface",
            "asgi",
            "--factory",
            "--host",
            HOST,
            "--port",
            str(port),
            "--workers",
            str(workers),
            "--log-level",
            "warning",
            target,
        ]
    return [
        sys.executable,
        "-m",
        "ibl_service.serve",
        "--host",
        HOST,
        "--port",
        str(port),
        "--workers",
        str(workers),
    ]


def wait_ready(base: str, timeout_s: float = 180.0) -> None:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        try:
            if httpx.get(f"{base}/health/ready", timeout=1.0).status_code == 200:
                return
        except httpx.HTTPError:
            pass
        time.sleep(0.2)
    raise SystemExit(f"the server at {base} did not become ready within {timeout_s} s")


_UNITS = {"us": 1e-3, "ms": 1.0, "s": 1e3}


def run_wrk(url: str, body_file: Path, connections: int, seconds: int) -> dict[str, float]:
    """One bounded wrk run: throughput, p50/p99, non-2xx answers and socket errors."""
    script = body_file.with_suffix(".lua")
    script.write_text(
        f'local f = io.open("{body_file}", "rb")\nwrk.body = f:read("*a")\nf:close()\n'
        'wrk.method = "POST"\nwrk.headers["Content-Type"] = "application/json"\n'
    )
    threads = min(2, connections)
    command = ["wrk", f"-t{threads}", f"-c{connections}", f"-d{seconds}s", "--latency"]
    out = subprocess.run(
        [*command, "-s", str(script), url],
        capture_output=True,
        text=True,
        check=True,
        timeout=seconds + 30,
    ).stdout
    figures: dict[str, float] = {}
    rps = re.search(r"Requests/sec:\s+([\d.]+)", out)
    figures["rps"] = float(rps.group(1)) if rps else 0.0
    for pct in ("50", "99"):
        match = re.search(rf"^\s+{pct}(?:\.0+)?%\s+([\d.]+)(us|ms|s)\s*$", out, re.M)
        figures[f"p{pct}_ms"] = float(match.group(1)) * _UNITS[match.group(2)] if match else 0.0
    non_2xx = re.search(r"Non-2xx or 3xx responses:\s+(\d+)", out)
    figures["non_2xx"] = float(non_2xx.group(1)) if non_2xx else 0.0
    sockets = re.search(
        r"Socket errors: connect (\d+), read (\d+), write (\d+), timeout (\d+)", out
    )
    figures["socket_errors"] = float(sum(map(int, sockets.groups()))) if sockets else 0.0
    return figures


def median_of(runs: list[dict[str, float]]) -> dict[str, float]:
    """Median of each figure over repeated runs, plus the throughput range."""
    out = {key: statistics.median(run[key] for run in runs) for key in runs[0]}
    out["rps_min"] = min(run["rps"] for run in runs)
    out["rps_max"] = max(run["rps"] for run in runs)
    out["non_2xx"] = sum(run["non_2xx"] for run in runs)
    return out


def time_batch(
    base: str, case: dict[str, Any], count: int, repeats: int, fmt: str = "json"
) -> tuple[float, int, int, int]:
    """Best time of ``repeats`` batch requests, body and answer both JSON or both
    MessagePack; also the bytes sent, the bytes received and the entries in the answer."""
    doc = {"cases": [case] * count}
    if fmt == "msgpack":
        body = msgspec.msgpack.encode(doc)
        media = "application/msgpack"
    else:
        body = json.dumps(doc).encode()
        media = "application/json"
    best = math.inf
    with httpx.Client(timeout=120.0) as client:
        for _ in range(repeats):
            start = time.perf_counter()
            response = client.post(
                f"{base}/v1/analyses/batch",
                content=body,
                headers={"content-type": media, "accept": media},
            )
            best = min(best, time.perf_counter() - start)
            response.raise_for_status()
    decode = msgspec.msgpack.decode if fmt == "msgpack" else msgspec.json.decode
    entries = len(decode(response.content)["results"])
    return best, len(body), len(response.content), entries


def main() -> int:
    parser = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    parser.add_argument("--server", choices=("serve", "uvicorn", "granian"), default="serve")
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--seconds", type=int, default=5, help="length of each wrk run")
    parser.add_argument("--repeats", type=int, default=3, help="wrk runs per figure (median)")
    parser.add_argument(
        "--connections", default="8,16", help="connection counts of the throughput runs"
    )
    parser.add_argument("--batch", type=int, default=1000, help="cases in the batch")
    args = parser.parse_args()
    if shutil.which("wrk") is None:
        print("wrk is required: apt-get install -y wrk", file=sys.stderr)
        return 2

    case = strut_case()
    port = free_port()
    base = f"http://{HOST}:{port}"
    with tempfile.TemporaryDirectory(prefix="ibl-bench-") as tmp:
        env = dict(
            os.environ,
            PYTHONPATH=os.pathsep.join([str(ROOT), str(ROOT / "service")]),
            IBL_MAX_BATCH=str(max(1000, args.batch)),
        )
        if args.server != "serve":
            env["PROMETHEUS_MULTIPROC_DIR"] = tmp
        body_file = Path(tmp) / "case.json"
        body_file.write_bytes(json.dumps(case).encode())
        summary_file = Path(tmp) / "summary.json"
        summary_file.write_bytes(json.dumps({**case, "output": {"stations": False}}).encode())
        proc = subprocess.Popen(
            server_command(args.server, port, args.workers),
            cwd=ROOT,
            env=env,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.PIPE,
            text=True,
        )
        try:
            wait_ready(base)
            body = body_file.read_bytes()
            probe = httpx.post(f"{base}/v1/analyses", content=body, timeout=30.0)
            probe.raise_for_status()
            points = len(case["surface"]["x"])
            print(f"server: {args.server}, {args.workers} workers; case: {points} points")
            print(f"one case: {len(body)} B in, {len(probe.content)} B out")
            url = f"{base}/v1/analyses"
            run_wrk(url, body_file, 2, 2)  # warm-up
            one = median_of([run_wrk(url, body_file, 1, args.seconds) for _ in range(args.repeats)])
            many = {
                int(c): median_of(
                    [run_wrk(url, body_file, int(c), args.seconds) for _ in range(args.repeats)]
                )
                for c in args.connections.split(",")
            }
            # Summary and full answers at the ratio's connection count, in turn.
            pairs = [
                (
                    run_wrk(url, body_file, RATIO_CONNECTIONS, args.seconds),
                    run_wrk(url, summary_file, RATIO_CONNECTIONS, args.seconds),
                )
                for _ in range(args.repeats)
            ]
            # The formats in turn, best of 3 each: a change in the machine's load then
            # touches both alike, and their ratio holds.
            batches: dict[str, tuple[float, int, int, int]] = {}
            for _ in range(3):
                for fmt in BATCH_FORMATS:
                    timed = time_batch(base, case, args.batch, 1, fmt)
                    if fmt not in batches or timed[0] < batches[fmt][0]:
                        batches[fmt] = timed
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                proc.kill()

    print(f"medians of {args.repeats} wrk runs of {args.seconds} s each:")
    print(
        f"  1 connection: p50 {one['p50_ms']:.2f} ms (target <= {TARGETS['p50_ms']}), "
        f"p99 {one['p99_ms']:.2f} ms (target <= {TARGETS['p99_ms']}), {one['rps']:.0f} req/s"
    )
    for connections, figures in many.items():
        print(
            f"  {connections} connections: p50 {figures['p50_ms']:.2f} ms, "
            f"p99 {figures['p99_ms']:.2f} ms, {figures['rps']:.0f} req/s "
            f"(range {figures['rps_min']:.0f}-{figures['rps_max']:.0f}; "
            f"target >= {TARGETS['rps']:.0f})"
        )
    others = one["non_2xx"] + sum(figures["non_2xx"] for figures in many.values())
    print(f"  responses other than 2xx: {others:.0f}")
    for fmt, (batch_s, sent, received, entries) in batches.items():
        print(
            f"batch of {args.batch}, {BATCH_FORMATS[fmt]}: {batch_s:.3f} s best of 3 "
            f"(target <= {TARGETS['batch_s']}), {sent / 1e6:.1f} MB in, "
            f"{received / 1e6:.1f} MB out, {entries} entries"
        )
    full_rps = statistics.median(full["rps"] for full, _ in pairs)
    summary_rps = statistics.median(short["rps"] for _, short in pairs)
    ratio = summary_rps / full_rps if full_rps else math.nan
    goal = RATIO_TARGETS["summary_rps"]
    print(
        f"ratios in this run: at {RATIO_CONNECTIONS} connections, summary answers "
        f"{summary_rps:.0f} req/s, full {full_rps:.0f} req/s: {ratio:.2f} times "
        f"(target >= {goal}: {'met' if ratio >= goal else 'not met'})"
    )
    if set(batches) == set(BATCH_FORMATS):
        ratio = batches["json"][0] / batches["msgpack"][0]
        goal = RATIO_TARGETS["json_batch"]
        print(
            f"  batch of {args.batch}: JSON {ratio:.2f} times the MessagePack time "
            f"(target <= {goal}: {'met' if ratio <= goal else 'not met'})"
        )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
