"""Prometheus metrics: request counts and latencies per route, and the exposition.

With several worker processes, each must write its samples to files in the
folder named by ``PROMETHEUS_MULTIPROC_DIR``, set before the workers start
(``service.serve`` does this); the exposition then merges every worker's files.
Without it (one process, tests) the default in-process registry is used.

A worker that dies without stopping (SIGKILL, out of memory) cannot remove its live
gauges (requests in progress); the exposition drops those of processes that no longer
exist, so that a replaced worker does not leave its last requests counted for ever.
Counters and histograms of a dead worker are kept: they stay part of the totals.
"""

from __future__ import annotations

import os
from pathlib import Path

from litestar.plugins.prometheus import PrometheusConfig
from prometheus_client import (
    CONTENT_TYPE_LATEST,
    REGISTRY,
    CollectorRegistry,
    generate_latest,
    multiprocess,
)

__all__ = [
    "MULTIPROC_ENV",
    "exposition",
    "forget_gone_processes",
    "mark_worker_stopped",
    "prometheus_config",
]

MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"
#: The exposition's media type without its charset, which the framework appends itself.
CONTENT_TYPE = CONTENT_TYPE_LATEST.partition("; charset")[0]

#: Latency buckets [s]: from sub-millisecond single cases to multi-second batches.
BUCKETS = [0.0005, 0.001, 0.002, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30]


def prometheus_config() -> PrometheusConfig:
    """Request metrics labelled by route template (not raw path), method and status."""
    return PrometheusConfig(
        app_name="ibl",
        prefix="ibl",
        group_path=True,
        buckets=list(BUCKETS),
        exclude=["^/metrics$"],
    )


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # pragma: no cover - another user's process of that number
        return True
    return True


def forget_gone_processes(folder: Path) -> list[int]:
    """Drop the live gauges of processes that no longer exist; return their ids."""
    gone = set()
    for path in folder.glob("gauge_live*_*.db"):
        pid_text = path.stem.rpartition("_")[2]
        if pid_text.isdigit() and not _alive(int(pid_text)):
            gone.add(int(pid_text))
    for pid in gone:
        try:
            multiprocess.mark_process_dead(pid, str(folder))  # type: ignore[no-untyped-call]
        except FileNotFoundError:  # another worker's scrape removed it first
            pass
    return sorted(gone)


def exposition() -> bytes:
    """The metrics of every worker in the Prometheus text format."""
    folder = os.environ.get(MULTIPROC_ENV)
    if not folder:
        return generate_latest(REGISTRY)
    forget_gone_processes(Path(folder))
    registry = CollectorRegistry()
    multiprocess.MultiProcessCollector(registry)  # type: ignore[no-untyped-call]
    try:
        return generate_latest(registry)
    except FileNotFoundError:  # a file removed between listing and reading it: read again
        return generate_latest(registry)


def mark_worker_stopped() -> None:
    """Drop this process's live gauges from the shared files when it stops."""
    if os.environ.get(MULTIPROC_ENV):
        multiprocess.mark_process_dead(os.getpid())  # type: ignore[no-untyped-call]
