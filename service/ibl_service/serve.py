"""``ibl serve``: run the HTTP service with several worker processes.

The server is uvicorn with the uvloop event loop and the httptools parser (see
DEVELOPERS.md for the measurements behind this choice).  Each worker builds the
application with ``ibl_service.app.create_app``, reading the ``IBL_*`` limits from
the environment; they are checked here first, so that a bad value stops the
launch with a message instead of failing in every worker.

Prometheus samples of all workers are merged through files in
``PROMETHEUS_MULTIPROC_DIR``: this function sets it (to a fresh temporary folder,
removed on exit) before any worker starts, or empties the folder given.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
from collections.abc import Mapping, Sequence
from pathlib import Path

from ibl_service.config import ENV_VARS, Settings

__all__ = ["main"]

MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"
APP_FACTORY = "ibl_service.app:create_app"


def _usable_cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - platforms without affinity
        return os.cpu_count() or 1


def _positive_int(text: str) -> int:
    value = int(text)
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be >= 1; got {value}")
    return value


def _port(text: str) -> int:
    value = int(text)
    if not 0 < value < 65536:
        raise argparse.ArgumentTypeError(f"must be between 1 and 65535; got {value}")
    return value


def build_parser(environ: Mapping[str, str] | None = None) -> argparse.ArgumentParser:
    """The command line; defaults come from ``IBL_HOST``, ``IBL_PORT``, ``IBL_WORKERS``."""
    env = os.environ if environ is None else environ
    limits = "\n".join(f"  {var:<21} {meaning}" for var, (_, meaning) in ENV_VARS.items())
    parser = argparse.ArgumentParser(
        prog="ibl serve",
        description="Serve the ibl HTTP API (OpenAPI document at /schema/openapi.json).",
        epilog=f"Limits, read by each worker from the environment:\n{limits}",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument(
        "--host",
        default=env.get("IBL_HOST") or "127.0.0.1",
        help="address to bind (env IBL_HOST; default %(default)s)",
    )
    parser.add_argument(
        "--port",
        type=_port,
        default=env.get("IBL_PORT") or "8000",
        help="port to bind (env IBL_PORT; default %(default)s)",
    )
    parser.add_argument(
        "--workers",
        type=_positive_int,
        default=env.get("IBL_WORKERS") or str(_usable_cpus()),
        help="worker processes (env IBL_WORKERS; default: usable CPUs, %(default)s here)",
    )
    return parser


def _prepare_metrics_dir() -> Path | None:
    """Set ``PROMETHEUS_MULTIPROC_DIR``; return the folder to remove on exit, if ours."""
    given = os.environ.get(MULTIPROC_ENV)
    if given:
        folder = Path(given)
        folder.mkdir(parents=True, exist_ok=True)
        for stale in folder.glob("*.db"):
            stale.unlink()
        return None
    folder = Path(tempfile.mkdtemp(prefix="ibl-metrics-"))
    os.environ[MULTIPROC_ENV] = str(folder)
    return folder


def main(argv: Sequence[str] | None = None) -> int:
    """Parse ``argv``, check the limits and run the server until it is stopped."""
    args = build_parser().parse_args(None if argv is None else list(argv))
    try:
        Settings.from_env()
    except ValueError as exc:
        print(f"ibl serve: {exc}", file=sys.stderr)
        return 2
    try:
        import uvicorn
    except ImportError:
        print(
            "ibl serve: uvicorn is missing; reinstall the package: pip install ibl-estimator",
            file=sys.stderr,
        )
        return 2
    ours = _prepare_metrics_dir()
    try:
        uvicorn.run(
            APP_FACTORY,
            factory=True,
            host=args.host,
            port=args.port,
            workers=args.workers,
            loop="uvloop",
            http="httptools",
            access_log=False,
            server_header=False,
            timeout_graceful_shutdown=30,
        )
    finally:
        if ours is not None:
            shutil.rmtree(ours, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
