"""Shape the pressure recovery of an invented 2-D aft-body through the HTTP service.

An invented scenario: the upper surface of a 2-D aft-body, 1 m of arc length at a
Reynolds number of 5e6 per metre, tripped at s = 0.05 m. The edge velocity is flat
(Ue/U_inf = 1) up to s = 0.3 m and then falls over the remaining 0.7 m as

    Ue/U_inf = 1 - drop * xi**shape,    xi = (s - 0.3) / 0.7,

two shape parameters: ``drop`` (how far the velocity falls) and ``shape`` (below 1 the
recovery is steep at its start and gentle later, above 1 the other way round). The
pressure rise Cp_rise = 1 - (1 - drop)**2 is to be as large as possible without turbulent
separation: the largest shape factor H of the turbulent layer must stay a margin below
the separation value of Head's method (``turbulent.separation_shape_factor``, 2.4 by
default). Each evaluation asks the service for the summary answer only
(``output: {"stations": false}``) and reads the side's ``separation`` and
``margins.turbulent.shape_factor``.

``scipy.optimize.minimize`` (SLSQP) drives it; the objective's gradient is exact, the
constraint's is a forward difference whose cases travel in one batch request with the
point itself. The classical answer to this design problem is Stratford's limiting
pressure distribution (Stratford 1959, J. Fluid Mech. 5, 1-16; recalled, not re-checked),
a recovery kept at the edge of separation all along, steep at its start; the optimum
here, within a two-parameter family, leans the same way: ``shape`` goes to its lower
bound and ``drop`` up to where the largest H meets the limit.

Early-design estimates only: integral boundary-layer methods give no more than a trend
near separation; confirm a recovery by testing or higher-fidelity analysis.

    python examples/optimise_recovery.py                  # starts its own server
    python examples/optimise_recovery.py --url http://127.0.0.1:8000
"""

from __future__ import annotations

import argparse
import contextlib
import os
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx
import numpy as np
from scipy.optimize import minimize

from ibl.client import Client
from ibl.schema import Result

ROOT = Path(__file__).resolve().parents[1]

#: The invented aft-body: arc length [m], Reynolds number per metre, trip [m], roof end [m].
POINTS = 200
REYNOLDS = 5.0e6
TRIP_S = 0.05
ROOF_END_S = 0.3
#: Head's separation shape factor (the library's default) and the margin kept below it.
SEPARATION_H = 2.4
MARGIN_H = 0.2
#: Bounds of (drop, shape) and the start of the search (a start whose largest H lies in
#: the recovery, not in the short overshoot just after the trip, where H does not
#: depend on the recovery).
BOUNDS = ((0.05, 0.6), (0.3, 1.5))
START = (0.3, 1.0)
#: Forward-difference step of the constraint gradient (in the parameters' own units).
STEP = 1e-3


def case(drop: float, shape: float) -> dict[str, Any]:
    """The case document of one recovery, asking for the summary answer."""
    s = np.linspace(0.01, 1.0, POINTS)
    xi = np.clip((s - ROOF_END_S) / (1.0 - ROOF_END_S), 0.0, 1.0)
    return {
        "name": f"recovery drop={drop:.4f} shape={shape:.4f}",
        "surface": {"s": s.tolist()},
        "pressure": {"edge_velocity": (1.0 - drop * xi**shape).tolist()},
        "flow": {"reynolds": REYNOLDS},
        "transition": {"trip": {"surface": TRIP_S}},
        "turbulent": {"separation_shape_factor": SEPARATION_H},
        "output": {"stations": False},
    }


def pressure_rise(drop: float) -> float:
    """Cp at the end of the recovery minus Cp on the roof: 1 - (1 - drop)^2."""
    return 1.0 - (1.0 - drop) ** 2


def headroom(result: Result) -> float:
    """(H_sep - margin) - H_max of the turbulent layer.

    A separated side counts as H_max = H_sep plus the fraction of the recovery lost beyond
    separation, so that the headroom keeps falling (and its gradient keeps pointing back)
    as separation moves forward, instead of sticking at H_sep."""
    side = result.sides[0]
    turbulent = side.margins.turbulent
    h_max = turbulent.shape_factor if turbulent is not None else 0.0
    if side.separation is not None:
        lost = (1.0 - side.separation.s) / (1.0 - ROOF_END_S)
        h_max = max(h_max, SEPARATION_H) + lost
    return SEPARATION_H - MARGIN_H - h_max


class Recovery:
    """The constraint and its gradient from one batch per point, cached by point."""

    def __init__(self, client: Client) -> None:
        self.client = client
        self.cache: dict[tuple[float, ...], tuple[float, np.ndarray]] = {}
        self.evaluations = 0

    def _at(self, x: np.ndarray) -> tuple[float, np.ndarray]:
        key = tuple(float(v) for v in x)
        if key not in self.cache:
            points = [x] + [x + STEP * np.eye(len(x))[i] for i in range(len(x))]
            answers = self.client.analyze_batch([case(*p) for p in points])
            self.evaluations += len(answers)
            values = []
            for answer in answers:
                if not isinstance(answer, Result):
                    raise SystemExit(f"the service refused a case: {answer}")
                values.append(headroom(answer))
            gradient = (np.array(values[1:]) - values[0]) / STEP
            self.cache[key] = (values[0], gradient)
        return self.cache[key]

    def constraint(self, x: np.ndarray) -> float:
        return self._at(x)[0]

    def constraint_gradient(self, x: np.ndarray) -> np.ndarray:
        return self._at(x)[1]


def optimise(url: str, max_iterations: int) -> dict[str, Any]:
    with Client(url) as client:
        recovery = Recovery(client)
        solution = minimize(
            lambda x: -pressure_rise(x[0]),
            np.array(START),
            jac=lambda x: np.array([-2.0 * (1.0 - x[0]), 0.0]),
            method="SLSQP",
            bounds=BOUNDS,
            constraints=[
                {
                    "type": "ineq",
                    "fun": recovery.constraint,
                    "jac": recovery.constraint_gradient,
                }
            ],
            options={"maxiter": max_iterations, "ftol": 1e-6},
        )
        drop, shape = (float(v) for v in solution.x)
        final = client.analyze(case(drop, shape))
    side = final.sides[0]
    return {
        "drop": drop,
        "shape": shape,
        "pressure_rise": pressure_rise(drop),
        "h_max": side.margins.turbulent.shape_factor if side.margins.turbulent else None,
        "separated": side.separation is not None,
        "evaluations": recovery.evaluations + 1,
        "iterations": int(solution.nit),
        "message": str(solution.message),
        "caution": final.caution,
    }


@contextlib.contextmanager
def own_server() -> Iterator[str]:
    """``ibl serve`` with one worker on a free port of 127.0.0.1, stopped at the end."""
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port = sock.getsockname()[1]
    env = dict(
        os.environ,
        PYTHONPATH=os.pathsep.join(
            [str(ROOT), str(ROOT / "service"), os.environ.get("PYTHONPATH", "")]
        ),
    )
    command = [
        sys.executable,
        "-m",
        "ibl_service.serve",
        "--host",
        "127.0.0.1",
        "--port",
        str(port),
    ]
    process = subprocess.Popen(
        [*command, "--workers", "1"],
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    url = f"http://127.0.0.1:{port}"
    try:
        for _ in range(1200):  # at most two minutes
            if process.poll() is not None:
                raise SystemExit("the server did not start")
            with contextlib.suppress(httpx.TransportError):
                if httpx.get(f"{url}/health/ready", timeout=5).status_code == 200:
                    break
            time.sleep(0.1)
        else:
            raise SystemExit("the server did not become ready")
        yield url
    finally:
        process.terminate()
        try:
            process.wait(timeout=60)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait(timeout=30)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0] if __doc__ else None)
    parser.add_argument("--url", help="a running service; by default one is started")
    parser.add_argument("--max-iterations", type=int, default=30, help="SLSQP iterations")
    args = parser.parse_args(argv)
    with contextlib.ExitStack() as stack:
        url = args.url or stack.enter_context(own_server())
        found = optimise(url, args.max_iterations)
    print(f"optimum: drop = {found['drop']:.4f}, shape = {found['shape']:.4f}")
    print(f"pressure rise Cp_end - Cp_roof = {found['pressure_rise']:.4f}")
    h_max = found["h_max"]
    print(
        f"largest H = {h_max:.3f} (limit {SEPARATION_H - MARGIN_H:.2f}: "
        f"{SEPARATION_H} less a margin of {MARGIN_H}); separated: {found['separated']}"
    )
    print(
        f"{found['evaluations']} analyses in {found['iterations']} iterations ({found['message']})"
    )
    print(f"caution: {found['caution']}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
