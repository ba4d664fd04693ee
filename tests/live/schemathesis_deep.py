"""schemathesis in depth against a live server: at least 10,000 requests, every operation.

    python tests/live/schemathesis_deep.py                    # about 10,000 requests
    python tests/live/schemathesis_deep.py --examples 200     # more or fewer per operation

Starts ``ibl serve`` with two workers on 127.0.0.1 (small limits, so that generated bodies
stay cheap: ``IBL_MAX_POINTS=400``, ``IBL_MAX_BATCH=8``; the served document states them),
then runs ``schemathesis run`` with every check and positive and negative data, in rounds.
Each round runs once for every operation but the batch and once for the batch, with the
seed 20250601 + round.  The first round runs every phase (examples, coverage, fuzzing,
stateful; about 2,200 requests); the coverage phase does not depend on the seed, so later
rounds run fuzzing and stateful only (about 900 requests each), until the server has
answered ``--minimum`` requests.  The exclusions are those of
``tests/live/schemathesis_live.sh``: ``positive_data_acceptance`` everywhere (the document
cannot express the library's cross-field rules, so a schema-valid case may rightly get
422), and for the batch ``negative_data_rejection`` (a schema-invalid case is answered in
place, 200 with a problem in its slot).

The requests are counted by the server itself (``ibl_requests_total`` in ``/metrics``,
the document fetches left out).  Exit status 0 when schemathesis found no failure and the
server answered at least ``--minimum`` requests, 1 otherwise, 2 when it cannot run.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[2]
HOST = "127.0.0.1"
SEED = 20250601
ALL_PHASES = "examples,coverage,fuzzing,stateful"
BATCH = "/v1/analyses/batch"


def free_port() -> int:
    import socket

    with socket.socket() as sock:
        sock.bind((HOST, 0))
        port: int = sock.getsockname()[1]
        return port


_SUMMARY = re.compile(r"\d+ generated|issues found|No issues|failures?\b", re.I)


#: MessagePack bodies and answers: serializer and deserializer in tests/schemathesis_hooks.py.
HOOKS_ENV = dict(
    os.environ,
    PYTHONPATH=os.pathsep.join(filter(None, [str(ROOT / "tests"), os.environ.get("PYTHONPATH")])),
    SCHEMATHESIS_HOOKS="schemathesis_hooks",
)


def commands(url: str, seed: str, phases: str, args: argparse.Namespace) -> list[list[str]]:
    """The two schemathesis runs of one round: every operation but the batch, the batch."""
    common = [
        "schemathesis",
        "run",
        url,
        "--checks",
        "all",
        "--mode",
        "all",
        "--max-examples",
        str(args.examples),
        "--seed",
        seed,
        "--workers",
        str(args.workers),
        "--request-timeout",
        "60",
        "--generation-database",
        "none",
        "--phases",
        phases,
        "--no-color",
    ]
    return [
        [*common, "--exclude-checks", "positive_data_acceptance", "--exclude-path", BATCH],
        [
            *common,
            "--exclude-checks",
            "positive_data_acceptance,negative_data_rejection",
            "--include-path",
            BATCH,
        ],
    ]


def requests_by_path(base: str) -> dict[str, int]:
    text = httpx.get(f"{base}/metrics", timeout=30).text
    counts: dict[str, int] = {}
    for labels, value in re.findall(r"^ibl_requests_total\{([^}]*)\} (\S+)$", text, re.M):
        path = re.search(r'path="([^"]*)"', labels)
        key = path.group(1) if path else "?"
        counts[key] = counts.get(key, 0) + int(float(value))
    return counts


def main() -> int:
    parser = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    parser.add_argument("--examples", type=int, default=300, help="per operation, each round")
    parser.add_argument("--max-rounds", type=int, default=40, help="seeds tried at most")
    parser.add_argument(
        "--later-phases",
        default="fuzzing,stateful",
        help="phases of the rounds after the first (the coverage phase does not depend on "
        "the seed, so repeating it repeats its requests)",
    )
    parser.add_argument("--minimum", type=int, default=10_000, help="requests the server answers")
    parser.add_argument("--workers", type=int, default=2, help="schemathesis workers")
    args = parser.parse_args()
    if shutil.which("schemathesis") is None:
        print("schemathesis is required: pip install '.[test]'", file=sys.stderr)
        return 2

    port = free_port()
    base = f"http://{HOST}:{port}"
    counts: dict[str, int] = {}
    failed, elapsed = True, 0.0
    with tempfile.TemporaryDirectory(prefix="ibl-st-") as tmp:
        log = Path(tmp) / "server.log"
        env = dict(
            os.environ,
            PYTHONPATH=os.pathsep.join([str(ROOT), str(ROOT / "service")]),
            IBL_MAX_POINTS="400",
            IBL_MAX_BATCH="8",
        )
        command = [sys.executable, "-m", "ibl_service.serve", "--host", HOST, "--port", str(port)]
        with log.open("wb") as sink:
            server = subprocess.Popen(
                [*command, "--workers", "2"], cwd=ROOT, env=env, stdout=sink, stderr=sink
            )
        try:
            for _ in range(1800):  # bounded: three minutes
                if server.poll() is not None:
                    print(log.read_text(), file=sys.stderr)
                    return 2
                if log.read_text(errors="replace").count("Application startup complete.") >= 2:
                    break
                time.sleep(0.1)
            else:
                print("the server did not start", file=sys.stderr)
                return 2
            url = f"{base}/schema/openapi.json"
            started = time.monotonic()
            failed = False
            for round_ in range(args.max_rounds):
                seed = str(SEED + round_)
                phases = ALL_PHASES if round_ == 0 else args.later_phases
                for run in commands(url, seed, phases, args):
                    done = subprocess.run(
                        run,
                        cwd=tmp,
                        env=HOOKS_ENV,
                        timeout=1800,
                        check=False,
                        stdout=subprocess.PIPE,
                        text=True,
                    )
                    summary = [line for line in done.stdout.splitlines() if _SUMMARY.search(line)]
                    print(f"  seed {seed}: {' '.join(run[-2:])}: {'; '.join(summary)}", flush=True)
                    if done.returncode != 0:
                        print(done.stdout)
                        failed = True
                counts = requests_by_path(base)
                total = sum(n for path, n in counts.items() if not path.startswith("/schema"))
                print(f"round {round_ + 1}: {total} requests so far", flush=True)
                if failed or total >= args.minimum:
                    break
            elapsed = time.monotonic() - started
        finally:
            server.send_signal(signal.SIGTERM)
            try:
                server.wait(timeout=60)
            except subprocess.TimeoutExpired:
                server.kill()
                server.wait(timeout=30)

    tested = {path: n for path, n in counts.items() if not path.startswith("/schema")}
    total = sum(tested.values())
    rate = total / elapsed if elapsed else 0.0
    print(f"requests answered by the server: {total} in {elapsed:.0f} s ({rate:.0f}/s)")
    for path, n in sorted(tested.items()):
        print(f"  {n:7d}  {path}")
    enough = total >= args.minimum
    if not enough:
        print(f"fewer than {args.minimum} requests: raise --max-rounds", file=sys.stderr)
    print("schemathesis in depth:", "FAIL" if failed or not enough else "PASS")
    return 1 if failed or not enough else 0


if __name__ == "__main__":
    raise SystemExit(main())
