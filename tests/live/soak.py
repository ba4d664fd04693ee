"""Load and soak test of the service: peak throughput, then a long run at 80 % of it.

    python tests/live/soak.py                 # ten minutes at 80 % of the measured peak
    python tests/live/soak.py --duration 30   # the short version run in CI (about a minute)

1. Starts ``ibl serve`` with two workers on 127.0.0.1 (nothing else is ever loaded).
2. Finds the peak throughput of ``POST /v1/analyses`` (the 399-point strut of
   ``tests/bench/bench_http.py``) with ``wrk`` (Debian package ``wrk``): a short
   warm-up, a few seconds at each of several connection counts, then more runs at the
   best count; the peak is the median of the runs at that count (a single short run on
   a shared machine can be well above what it sustains).
3. Drives 80 % of that rate for ``--duration`` seconds with an open-loop generator
   (below) and prints a line every ``--report`` seconds.
4. Reports throughput, p50/p99/max latency, errors (non-2xx answers, socket errors and
   timeouts) and each worker's resident memory at start and end, and checks: no error,
   no worker replaced, memory growth of each worker below 10 % over the run.  The exit
   status is 0 on pass, 1 on fail, 2 when it cannot run.

Why not wrk for the sustained phase: wrk is closed-loop (each connection sends its next
request when the previous answer arrives), so it cannot hold a rate, and tuning its
connection count only moves the rate in coarse, machine-dependent steps; it also hides
a slow server as lower throughput instead of waiting requests (coordinated omission).
The generator here is open-loop: request i is due at ``start + i / rate`` whatever
happened before, is sent then (within about a millisecond: the event loop's timer
resolution; the worst lateness is printed), and its latency is measured from that
moment, so waiting for a free connection counts.  It is built on asyncio protocols on
uvloop (no task per request) with a pre-encoded request and keep-alive connections (at
most ``--connections`` at once), so that it takes little of the CPU the server needs;
its own CPU share is printed so that the figures can be judged.
"""

from __future__ import annotations

import argparse
import asyncio
import json
import os
import re
import shutil
import signal
import statistics
import subprocess
import sys
import tempfile
import time
from array import array
from collections import Counter, deque
from pathlib import Path
from typing import Any

import httpx
import psutil

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests" / "bench"))
from bench_http import free_port, run_wrk, strut_case  # noqa: E402

HOST = "127.0.0.1"
PATH = "/v1/analyses"
FRACTION = 0.8
MAX_MEMORY_GROWTH = 0.10
#: Idle keep-alive connections are closed after this long [s] (the server's limit is 5 s).
IDLE_S = 2.0


# ---------------------------------------------------------------------------- server


class Server:
    """``ibl serve`` with its workers, on 127.0.0.1."""

    def __init__(self, workers: int, folder: Path) -> None:
        self.port = free_port()
        self.base = f"http://{HOST}:{self.port}"
        self.workers = workers
        self.log = folder / "server.log"
        env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(ROOT), str(ROOT / "service")]))
        command = [
            sys.executable,
            "-m",
            "ibl_service.serve",
            "--host",
            HOST,
            "--port",
            str(self.port),
        ]
        with self.log.open("wb") as sink:
            self.process = subprocess.Popen(
                [*command, "--workers", str(workers)],
                cwd=ROOT,
                env=env,
                stdout=sink,
                stderr=subprocess.STDOUT,
            )

    def wait_ready(self, timeout_s: float = 300.0) -> None:
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            if self.process.poll() is not None:
                raise SystemExit("the server stopped:\n" + self.log.read_text())
            started = self.log.read_text(errors="replace").count("Application startup complete.")
            if started >= self.workers:
                if httpx.get(f"{self.base}/health/ready", timeout=5).status_code == 200:
                    return
            time.sleep(0.2)
        raise SystemExit(f"the server was not ready within {timeout_s:.0f} s")

    def worker_pids(self) -> list[int]:
        pids = []
        for child in psutil.Process(self.process.pid).children():
            try:
                if "spawn_main" in " ".join(child.cmdline()):
                    pids.append(child.pid)
            except psutil.Error:
                pass
        return sorted(pids)

    def stop(self) -> int | None:
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGTERM)
            try:
                self.process.wait(timeout=60)
            except subprocess.TimeoutExpired:
                self.process.kill()
                self.process.wait(timeout=30)
        return self.process.returncode


def cpu_seconds(pids: list[int]) -> tuple[float, float]:
    """Busy CPU seconds of the whole machine (time taken by the hypervisor included), and of
    the given processes."""
    times = psutil.cpu_times()
    busy = sum(times) - times.idle - getattr(times, "iowait", 0.0)
    own = 0.0
    for pid in pids:
        try:
            t = psutil.Process(pid).cpu_times()
            own += t.user + t.system
        except psutil.Error:
            pass
    return busy, own


def rss_mb(pids: list[int]) -> dict[int, float]:
    out = {}
    for pid in pids:
        try:
            out[pid] = psutil.Process(pid).memory_info().rss / 2**20
        except psutil.Error:
            out[pid] = float("nan")
    return out


# ------------------------------------------------------------------------------- wrk


def wrk(url: str, body: Path, connections: int, seconds: int) -> dict[str, float]:
    """One bounded wrk run (``bench_http.run_wrk``), labelled with its connection count."""
    return {"connections": connections, **run_wrk(url, body, connections, seconds)}


# ------------------------------------------------------------------ open-loop generator

_LENGTH = re.compile(rb"\r\ncontent-length:\s*(\d+)", re.I)
_MAX_HEAD = 65536


class _Connection(asyncio.Protocol):
    """One keep-alive connection; parses just the status line and Content-Length."""

    def __init__(self, load: OpenLoop) -> None:
        self.load = load
        self.transport: asyncio.Transport | None = None
        self.due: float | None = None  # due time of the request in flight, if any
        self.head = bytearray()
        self.status = 0
        self.remaining: int | None = None  # body bytes still to come
        self.close_after = False
        self.idle_since = 0.0

    def connection_made(self, transport: asyncio.BaseTransport) -> None:
        self.transport = transport  # type: ignore[assignment]
        self.load.connected(self)

    def send(self, due: float) -> None:
        assert self.transport is not None
        self.due = due
        self.remaining = None
        self.transport.write(self.load.request)

    def data_received(self, data: bytes) -> None:
        if self.due is None:
            self.load.fail(self, "unexpected data")
            return
        if self.remaining is None:
            self.head += data
            end = self.head.find(b"\r\n\r\n")
            if end < 0:
                if len(self.head) > _MAX_HEAD:
                    self.load.fail(self, "head too long")
                return
            head = bytes(self.head[: end + 2])
            length = _LENGTH.search(head)
            if not head.startswith(b"HTTP/1.1 ") or length is None:
                self.load.fail(self, "answer without Content-Length")
                return
            self.status = int(head[9:12])
            self.close_after = b"\r\nconnection: close" in head.lower()
            self.remaining = int(length.group(1)) - (len(self.head) - end - 4)
            self.head.clear()
        else:
            self.remaining -= len(data)
        if self.remaining == 0:
            due, self.due = self.due, None
            self.load.answered(self, due, self.status)
        elif self.remaining < 0:
            self.load.fail(self, "answer longer than its Content-Length")

    def connection_lost(self, exc: Exception | None) -> None:
        self.load.lost(self, exc)


class OpenLoop:
    """Requests at a fixed rate over keep-alive connections, latency from the due time.

    asyncio protocols and callbacks, no task per request: the generator stays cheap
    enough not to take the server's CPU on a small machine.
    """

    def __init__(self, port: int, request: bytes, connections: int, timeout_s: float) -> None:
        self.port = port
        self.request = request
        self.max_connections = connections
        self.timeout_s = timeout_s
        self.idle: list[_Connection] = []
        self.busy: set[_Connection] = set()
        self.opening = 0
        self.backlog: deque[float] = deque()  # due times waiting for a connection
        self.latencies = array("d")
        self.window = array("d")
        self.status: Counter[int] = Counter()
        self.socket_errors: Counter[str] = Counter()
        self.timeouts = 0
        self.sent = 0
        self.opened = 0
        self.lateness = 0.0  # largest delay of a send after its due time [s]
        self.lateness_sum = 0.0

    @property
    def errors(self) -> int:
        bad = sum(n for status, n in self.status.items() if not 200 <= status < 300)
        return bad + sum(self.socket_errors.values()) + self.timeouts

    @property
    def in_flight(self) -> int:
        return len(self.busy) + len(self.backlog)

    # -- connections
    def _open(self) -> None:
        loop = asyncio.get_running_loop()
        self.opening += 1
        self.opened += 1
        task = loop.create_task(loop.create_connection(lambda: _Connection(self), HOST, self.port))
        task.add_done_callback(self._opened)

    def _opened(self, task: asyncio.Task[Any]) -> None:
        if task.cancelled() or task.exception() is not None:
            self.opening -= 1
            error = task.exception() if not task.cancelled() else None
            self.socket_errors[type(error).__name__ if error else "cancelled"] += 1
            if self.backlog:
                self.backlog.popleft()  # that request could not be sent

    def connected(self, conn: _Connection) -> None:
        self.opening -= 1
        self._release(conn)

    def _release(self, conn: _Connection) -> None:
        if self.backlog:
            self.busy.add(conn)
            conn.send(self.backlog.popleft())
        else:
            conn.idle_since = time.perf_counter()
            self.idle.append(conn)

    # -- requests
    def fire(self, sent_at: float) -> None:
        self.sent += 1
        if self.idle:
            conn = self.idle.pop()
            self.busy.add(conn)
            conn.send(sent_at)
            return
        self.backlog.append(sent_at)
        if len(self.busy) + len(self.idle) + self.opening < self.max_connections:
            self._open()

    def answered(self, conn: _Connection, due: float, status: int) -> None:
        latency = time.perf_counter() - due
        self.status[status] += 1
        self.latencies.append(latency)
        self.window.append(latency)
        self.busy.discard(conn)
        if conn.close_after:
            assert conn.transport is not None
            conn.transport.close()
        else:
            self._release(conn)

    def fail(self, conn: _Connection, why: str) -> None:
        if conn.due is not None:
            conn.due = None
            self.socket_errors[why] += 1
        if conn.transport is not None:
            conn.transport.abort()

    def lost(self, conn: _Connection, exc: Exception | None) -> None:
        if conn.due is not None:  # the connection went away with a request in flight
            conn.due = None
            self.socket_errors[type(exc).__name__ if exc else "connection closed"] += 1
        self.busy.discard(conn)
        if conn in self.idle:
            self.idle.remove(conn)
        busy_or_open = len(self.busy) + len(self.idle) + self.opening
        if self.backlog and busy_or_open < self.max_connections:
            self._open()

    def sweep(self, now: float) -> None:
        """Count requests older than the timeout as timed out, and drop them; close
        connections idle for longer than ``IDLE_S``, before the server would (uvicorn
        closes idle keep-alive connections after 5 s, and a request sent just then
        would be lost with the connection)."""
        for conn in [c for c in self.idle if now - c.idle_since > IDLE_S]:
            self.idle.remove(conn)
            if conn.transport is not None:
                conn.transport.close()
        limit = now - self.timeout_s
        while self.backlog and self.backlog[0] < limit:
            self.backlog.popleft()
            self.timeouts += 1
        for conn in [c for c in self.busy if c.due is not None and c.due < limit]:
            conn.due = None
            self.timeouts += 1
            self.busy.discard(conn)
            if conn.transport is not None:
                conn.transport.abort()

    async def drive(self, rate: float, duration_s: float) -> float:
        """Send ``rate * duration_s`` requests on schedule; return the wall time taken.

        The event loop's timers have millisecond resolution, so requests are sent in
        small groups: each as soon as it is due, at most about a millisecond late (the
        lateness is recorded). Latency counts from the moment a request is sent.
        """
        total = int(rate * duration_s)
        start = time.perf_counter() + 0.05
        index = 0
        next_sweep = start
        while index < total:
            now = time.perf_counter()
            due_now = min(total, int((now - start) * rate) + 1)
            while index < due_now:
                due = start + index / rate
                self.lateness = max(self.lateness, now - due)
                self.lateness_sum += now - due
                self.fire(now)
                index += 1
            if now >= next_sweep:
                self.sweep(now)
                next_sweep = now + 0.1
            await asyncio.sleep(max(0.001, start + index / rate - time.perf_counter()))
        deadline = time.perf_counter() + self.timeout_s + 1
        while self.in_flight and time.perf_counter() < deadline:
            self.sweep(time.perf_counter())
            await asyncio.sleep(0.01)
        wall = time.perf_counter() - start
        for conn in [*self.idle, *self.busy]:
            if conn.transport is not None:
                conn.transport.close()
        return wall


def percentile(sorted_values: list[float], fraction: float) -> float:
    if not sorted_values:
        return float("nan")
    return sorted_values[min(len(sorted_values) - 1, int(fraction * len(sorted_values)))]


async def soak(
    server: Server, pids: list[int], rate: float, args: argparse.Namespace
) -> tuple[OpenLoop, float, float, list[dict[str, Any]]]:
    body = json.dumps(strut_case()).encode()
    request = (
        f"POST {PATH} HTTP/1.1\r\nHost: {HOST}:{server.port}\r\n"
        f"Content-Type: application/json\r\nContent-Length: {len(body)}\r\n\r\n"
    ).encode() + body
    load = OpenLoop(server.port, request, args.connections, args.timeout)
    samples: list[dict[str, Any]] = []
    ours = [server.process.pid, *pids, os.getpid()]
    cpu_start = time.process_time()
    driver = asyncio.create_task(load.drive(rate, args.duration))
    started = last = time.monotonic()
    busy_last, own_last = cpu_seconds(ours)
    while not driver.done():
        await asyncio.wait({driver}, timeout=args.report)
        now = time.monotonic()
        elapsed, interval, last = now - started, now - last, now
        busy, own = cpu_seconds(ours)
        others = max(0.0, (busy - busy_last) - (own - own_last)) / interval
        busy_last, own_last = busy, own
        window = sorted(load.window)
        load.window = array("d")
        memory = rss_mb(pids)
        sample = {
            "t_s": round(elapsed, 1),
            "rps": round(len(window) / interval, 1),
            "p50_ms": round(percentile(window, 0.5) * 1e3, 2),
            "p99_ms": round(percentile(window, 0.99) * 1e3, 2),
            "errors": load.errors,
            "rss_mb": {str(pid): round(mb, 1) for pid, mb in memory.items()},
            "workers": server.worker_pids(),
            "other_cpu_cores": round(others, 2),
        }
        samples.append(sample)
        rss = " ".join(f"{mb:.1f}" for mb in memory.values())
        print(
            f"  t={elapsed:6.1f} s  {sample['rps']:6.0f} req/s  p50 {sample['p50_ms']:7.2f} ms  "
            f"p99 {sample['p99_ms']:8.2f} ms  errors {load.errors}  RSS MB {rss}  "
            f"others {others:.2f} CPUs",
            flush=True,
        )
    wall = driver.result()
    cpu = time.process_time() - cpu_start
    return load, wall, cpu, samples


# ------------------------------------------------------------------------------ main


def main() -> int:
    parser = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    parser.add_argument("--duration", type=float, default=600.0, help="soak length [s]")
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--peak-seconds", type=int, default=4, help="length of each wrk run")
    parser.add_argument("--peak-connections", default="4,8,16", help="wrk connection counts to try")
    parser.add_argument(
        "--peak-repeats", type=int, default=2, help="more wrk runs at the best count"
    )
    parser.add_argument("--fraction", type=float, default=FRACTION, help="of the peak rate")
    parser.add_argument("--connections", type=int, default=64, help="most open at once")
    parser.add_argument("--timeout", type=float, default=10.0, help="per request [s]")
    parser.add_argument("--report", type=float, default=10.0, help="seconds between lines")
    parser.add_argument("--json", type=Path, help="write the figures to this file")
    args = parser.parse_args()
    if shutil.which("wrk") is None:
        print("wrk is required: apt-get install -y wrk", file=sys.stderr)
        return 2
    if not (0 < args.fraction <= 1 and args.duration > 0 and args.workers >= 1):
        parser.error("need 0 < --fraction <= 1, --duration > 0, --workers >= 1")

    with tempfile.TemporaryDirectory(prefix="ibl-soak-") as tmp:
        folder = Path(tmp)
        server = Server(args.workers, folder)
        try:
            server.wait_ready()
            return run(server, folder, args)
        except (subprocess.CalledProcessError, subprocess.TimeoutExpired) as exc:
            state = "running" if server.process.poll() is None else "stopped"
            log = server.log.read_text(errors="replace")[-4000:]
            print(f"FAIL: wrk did not complete ({exc}); the server is {state}", file=sys.stderr)
            print(f"server log (end):\n{log}", file=sys.stderr)
            return 1
        finally:
            code = server.stop()
            print(f"server stopped (exit status {code})")


def run(server: Server, folder: Path, args: argparse.Namespace) -> int:
    pids = server.worker_pids()
    print(f"server: ibl serve, {args.workers} workers {pids}, http://{HOST}:{server.port}")
    print(f"machine: {os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.2f} at start")
    idle = rss_mb(pids)
    body = folder / "case.json"
    body.write_bytes(json.dumps(strut_case()).encode())
    url = f"{server.base}{PATH}"

    print(
        f"peak: wrk, {args.peak_seconds} s at each of {args.peak_connections} connections, "
        f"then {args.peak_repeats} more at the best; the median at the best counts"
    )
    wrk(url, body, 4, 2)  # warm-up
    peaks = []

    def measure(connections: int) -> dict[str, float]:
        figures = wrk(url, body, connections, args.peak_seconds)
        peaks.append(figures)
        print(
            f"  {connections:3d} connections: {figures['rps']:7.0f} req/s, "
            f"p50 {figures['p50_ms']:.2f} ms, p99 {figures['p99_ms']:.2f} ms, "
            f"errors {figures['non_2xx'] + figures['socket_errors']:.0f}",
            flush=True,
        )
        return figures

    scan = [measure(int(c)) for c in args.peak_connections.split(",")]
    best = int(max(scan, key=lambda f: f["rps"])["connections"])
    for _ in range(args.peak_repeats):
        measure(best)
    at_best = [f for f in peaks if f["connections"] == best]
    peak = dict(at_best[0], rps=statistics.median(f["rps"] for f in at_best))
    wrk_errors = sum(f["non_2xx"] + f["socket_errors"] for f in peaks)
    rate = args.fraction * peak["rps"]
    start_rss = rss_mb(pids)
    print(
        f"soak: {rate:.0f} req/s ({args.fraction:.0%} of {peak['rps']:.0f}) for "
        f"{args.duration:.0f} s, open loop, at most {args.connections} connections"
    )

    try:
        import uvloop

        runner = uvloop.run
    except ImportError:  # pragma: no cover - uvloop is a dependency of the service
        runner = asyncio.run
    load, wall, cpu, samples = runner(soak(server, pids, rate, args))
    end_rss = rss_mb(pids)
    end_pids = server.worker_pids()

    latencies = sorted(load.latencies)
    answered = len(latencies)
    growth = {pid: (end_rss[pid] - start_rss[pid]) / start_rss[pid] for pid in pids}
    checks = {
        "no errors under wrk": wrk_errors == 0,
        "no errors": load.errors == 0,
        "every request answered": answered == load.sent,
        "no worker replaced": end_pids == pids,
        f"memory growth < {MAX_MEMORY_GROWTH:.0%}": all(
            g < MAX_MEMORY_GROWTH for g in growth.values()
        ),
    }
    figures = {
        "duration_s": args.duration,
        "peak": peak,
        "peak_runs": peaks,
        "target_rps": round(rate, 1),
        "sent": load.sent,
        "answered": answered,
        "throughput_rps": round(answered / wall, 1),
        "p50_ms": round(percentile(latencies, 0.50) * 1e3, 3),
        "p99_ms": round(percentile(latencies, 0.99) * 1e3, 3),
        "max_ms": round(latencies[-1] * 1e3, 3) if latencies else None,
        "mean_ms": round(statistics.fmean(latencies) * 1e3, 3) if latencies else None,
        "status": dict(load.status),
        "socket_errors": dict(load.socket_errors),
        "timeouts": load.timeouts,
        "errors": load.errors,
        "connections_opened": load.opened,
        "generator_cpu_share": round(cpu / wall, 3),
        "generator_lateness_ms": round(load.lateness_sum / max(1, load.sent) * 1e3, 3),
        "generator_lateness_max_ms": round(load.lateness * 1e3, 3),
        "rss_mb": {
            str(pid): {
                "idle": round(idle[pid], 1),
                "start": round(start_rss[pid], 1),
                "end": round(end_rss[pid], 1),
                "growth": round(growth[pid], 4),
            }
            for pid in pids
        },
        "workers_at_end": end_pids,
        "load_average_end": os.getloadavg()[0],
        "checks": checks,
        "samples": samples,
    }
    print("result:")
    print(
        f"  throughput {figures['throughput_rps']:.0f} req/s (target {rate:.0f}); "
        f"{answered} answered of {load.sent} sent in {wall:.1f} s"
    )
    print(
        f"  latency p50 {figures['p50_ms']:.2f} ms, p99 {figures['p99_ms']:.2f} ms, "
        f"max {figures['max_ms']} ms (from each send, waiting for a connection included)"
    )
    print(
        f"  errors {load.errors}: status {dict(load.status)}, socket {dict(load.socket_errors)}, "
        f"timeouts {load.timeouts}; {load.opened} connections opened"
    )
    for pid in pids:
        print(
            f"  worker {pid}: RSS {idle[pid]:.1f} MB idle, {start_rss[pid]:.1f} MB at start, "
            f"{end_rss[pid]:.1f} MB at end ({growth[pid]:+.1%})"
        )
    other = [sample["other_cpu_cores"] for sample in samples]
    print(
        f"  CPU taken by other processes or the hypervisor: {statistics.fmean(other):.2f} CPUs "
        "on average, "
        f"{max(other):.2f} at most (over {args.report:g} s)"
    )
    print(
        f"  generator: CPU {cpu / wall:.1%} of one core; sends {figures['generator_lateness_ms']}"
        f" ms late on average, {load.lateness * 1e3:.1f} ms at worst; "
        f"load average {figures['load_average_end']:.2f} at end"
    )
    for name, ok in checks.items():
        print(f"  {'PASS' if ok else 'FAIL'}  {name}")
    if args.json:
        args.json.write_text(json.dumps(figures, indent=2) + "\n")
    passed = all(checks.values())
    if not passed and max(other) > 0.2:
        print(
            "  note: CPU was taken from the server during the run; if the errors are timeouts "
            "and 503s, the rate was above what it could keep with what was left"
        )
    print("soak:", "PASS" if passed else "FAIL")
    return 0 if passed else 1


if __name__ == "__main__":
    raise SystemExit(main())
