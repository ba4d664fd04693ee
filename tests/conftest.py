"""Set-up of the test session: the kernels compiled once, shared between the two workers.

On a fresh checkout numba compiles every kernel on its first call and caches it on disk
(``ibl/__pycache__``), which is most of a first test run. Each worker of the default run
(``-n 2``) would compile everything it calls, so both compile the same kernels side by
side. Instead, before its tests, each worker compiles a different part first, in an order
in which the other's part is cached by the time it is needed:

- ``gw0``: the march and a single surface's preparation, then the finite-difference
  laminar march, then a contour (whose preparation ``gw1`` has compiled meanwhile);
- ``gw1``: a contour's preparation, plateau search and smoothing, then the derivatives
  of a contour case (by then the march is cached by ``gw0``).

With the caches in place this takes a second or two. Without workers (``-n 0``) nothing
is compiled here: the tests compile what they call.
"""

from __future__ import annotations

import os

import msgspec

import ibl
from ibl.analysis import _plateaus
from ibl.prepare import prepare
from ibl.schema import SENSITIVITY_QUANTITIES, Output
from ibl_service.app import _warm_up_case


def _surface() -> ibl.Case:
    """A flat plate in a mild adverse gradient: transition and turbulent separation."""
    s = [0.01 * i for i in range(1, 101)]
    return ibl.parse_case(
        {
            "surface": {"s": s},
            "pressure": {"edge_velocity": [1.0 - 0.25 * v for v in s]},
            "flow": {"reynolds": 3e6},
        }
    )


def _first_part() -> None:
    surface = _surface()
    ibl.run(surface)
    laminar = msgspec.structs.replace(surface.laminar, method="finite_difference")
    ibl.run(msgspec.structs.replace(surface, laminar=laminar))
    ibl.run(_warm_up_case())


def _second_part() -> None:
    contour = _warm_up_case()
    _plateaus(contour, prepare(contour))
    smoothed = msgspec.structs.replace(contour.pressure, smoothing="auto")
    prepare(msgspec.structs.replace(contour, pressure=smoothed))
    ibl.run(
        msgspec.structs.replace(contour, output=Output(sensitivities=list(SENSITIVITY_QUANTITIES)))
    )


def pytest_sessionstart() -> None:
    worker = os.environ.get("PYTEST_XDIST_WORKER")
    if worker == "gw0":
        _first_part()
    elif worker == "gw1":
        _second_part()
