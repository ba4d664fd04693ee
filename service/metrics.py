"""Prometheus metrics: request counts and latencies per route, and the exposition.

With several worker processes, each must write its samples to files in the
folder named by ``PROMETHEUS_MULTIPROC_DIR``, set before the workers start
(``service.serve`` does this); the exposition then merges every worker's files.
Without it (one process, tests) the default in-process registry is used.
"""

from __future__ import annotations

import os

from litestar.plugins.prometheus import PrometheusConfig
from prometheus_client import (
    CONTENT_TYPE_LATEST,
    REGISTRY,
    CollectorRegistry,
    generate_latest,
    multiprocess,
)

__all__ = ["MULTIPROC_ENV", "exposition", "mark_worker_stopped", "prometheus_config"]

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


def exposition() -> bytes:
    """The metrics of every worker in the Prometheus text format."""
    if os.environ.get(MULTIPROC_ENV):
        registry = CollectorRegistry()
        multiprocess.MultiProcessCollector(registry)  # type: ignore[no-untyped-call]
        return generate_latest(registry)
    return generate_latest(REGISTRY)


def mark_worker_stopped() -> None:
    """Drop this process's live gauges from the shared files when it stops."""
    if os.environ.get(MULTIPROC_ENV):
        multiprocess.mark_process_dead(os.getpid())  # type: ignore[no-untyped-call]
