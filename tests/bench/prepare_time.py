"""Time of ``prepare`` and of ``prepare`` + ``analysis._plateaus`` per case, for this
checkout against another one, in one process (calls taken in turn; the least of many
single calls, as the machines are shared and their load changes twofold).

    git archive REV ibl | tar -x -C /tmp/old        # the other checkout's package
    python tests/bench/prepare_time.py /tmp/old

Cases: the 2 x 200-point ellipse (``ibl.bench.ellipse_case``), a 200-point single surface
given by s and edge velocity, the same given by Cp, and a 200-point sphere meridian
(axisymmetric contour).
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path
from types import ModuleType
from typing import Any

import numpy as np

ROOT = Path(__file__).resolve().parents[2]


def _load(path: str) -> tuple[ModuleType, ModuleType, ModuleType]:
    """``ibl.analysis``, ``ibl.prepare`` and ``ibl.bench`` of the checkout at ``path``."""
    for name in [k for k in sys.modules if k == "ibl" or k.startswith("ibl.")]:
        del sys.modules[name]
    sys.path.insert(0, path)
    import ibl.analysis
    import ibl.bench
    import ibl.prepare

    sys.path.remove(path)
    return ibl.analysis, ibl.prepare, ibl.bench


def _documents(bench: ModuleType, n: int = 200) -> dict[str, dict[str, Any]]:
    s = np.linspace(0.0, 1.0, n)
    phi = np.linspace(0.0, math.pi, n)
    ue = 1.0 - 0.3 * s
    return {
        "ellipse 2x200": bench.ellipse_case(n),
        "surface s+Ue": {
            "surface": {"s": s.tolist()},
            "pressure": {"edge_velocity": ue.tolist()},
            "flow": {"reynolds": 2e6},
        },
        "surface s+Cp": {
            "surface": {"s": s.tolist()},
            "pressure": {"cp": (1.0 - ue**2).tolist()},
            "flow": {"reynolds": 2e6},
        },
        "sphere 200": {
            "surface": {"x": (-np.cos(phi)).tolist(), "y": np.sin(phi).tolist()},
            "pressure": {"cp": (1.0 - 2.25 * np.sin(phi) ** 2).tolist()},
            "flow": {"reynolds": 2e5},
            "body": {"kind": "axisymmetric"},
        },
    }


def main(argv: list[str]) -> int:
    if len(argv) != 1:
        print(__doc__)
        return 2
    trees = {"other": argv[0], "this": str(ROOT)}
    calls = {}
    for tag, path in trees.items():
        analysis, prepare, bench = _load(path)
        for name, doc in _documents(bench).items():
            case = analysis.parse_case(doc)
            calls[tag, name, "prepare"] = lambda p=prepare, c=case: p.prepare(c)
            calls[tag, name, "both"] = lambda a=analysis, p=prepare, c=case: a._plateaus(
                c, p.prepare(c)
            )
    for call in calls.values():
        call()
    best: dict[tuple[str, str, str], float] = {}
    clock = time.perf_counter_ns
    for _ in range(30):
        for key, call in calls.items():
            least = math.inf
            for _ in range(60):
                start = clock()
                call()
                least = min(least, clock() - start)
            best[key] = min(best.get(key, math.inf), least / 1e3)
    print("per case, us: other checkout -> this one")
    for name in _documents(_load(str(ROOT))[2]):
        a, b = best["other", name, "prepare"], best["this", name, "prepare"]
        c, d = best["other", name, "both"], best["this", name, "both"]
        print(
            f"  {name:14s} prepare {a:6.1f} -> {b:6.1f}   "
            f"prepare + _plateaus {c:6.1f} -> {d:6.1f} ({d / c:.2f} x)"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
