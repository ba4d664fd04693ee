"""The march of many sides in lockstep: stacking, the compiled kernel, unpacking.

Contents
--------
- ``march(sides)``: pads the sides into arrays (sides along axis 0, stations along
  axis 1), runs ``ibl.kernel.march_sides`` once over all of them and returns one
  ``SideState`` per side.  Sides whose case asks for the finite-difference laminar
  method get it first (``ibl.laminar_fd``), and the kernel takes their laminar station
  values from it.  Large marches are split between threads, one kernel call
  each, of the kernel variant that releases the interpreter lock, so that they run on
  separate cores.
- ``SideState``: the station arrays and events of one marched side.

Events are located between stations on the interpolated state, converged to rounding:
laminar ones by regula falsi on their margin (lambda, Re_theta), turbulent separation on
the cubic Hermite interpolant of H1 over the step where H reaches its threshold.
"""

from __future__ import annotations

import functools
import itertools
import os
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ibl import kernel
from ibl.columns import INT_COLUMNS, REAL_COLUMNS
from ibl.laminar_fd import Supplied, solve_side
from ibl.prepare import SideInput
from ibl.turbulent import METHODS, SKIN_FRICTION

__all__ = ["INT_COLUMNS", "REAL_COLUMNS", "SideState", "march", "march_released"]

F64 = NDArray[np.float64]

#: Sides per thread at least before a march is split between threads.
SIDES_PER_THREAD = 256
#: Threads a march may use: the cores this process may run on.
THREADS = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1

_START = {
    "stagnation": kernel.START_STAGNATION,
    "sharp": kernel.START_SHARP,
    "inflow": kernel.START_INFLOW,
}
_STOP = {
    kernel.STOP_NONE: "",
    kernel.STOP_BUDGET: "step budget",
    kernel.STOP_INVALID: "invalid state",
}
_CAUSE = {
    kernel.CAUSE_CRITERION: "criterion",
    kernel.CAUSE_TRIP: "trip",
    kernel.CAUSE_LAMINAR_SEPARATION: "laminar_separation",
}


@dataclass(slots=True)
class SideState:
    """One marched side, station arrays cut at separation; positions in the side's s."""

    count: int
    s: F64
    ue: F64
    theta: F64
    shape_factor: F64
    cf: F64  # NaN where undefined (Ue = 0 or theta = 0 at the start)
    re_theta: F64
    delta99: F64
    turbulent: NDArray[np.bool_]
    thwaites_lambda: F64  # Thwaites' lambda = theta^2 dUe/ds / nu (laminar stations' value)
    transition_s: float  # NaN when none
    transition_cause: str
    transition_re_theta: float
    laminar_separation_s: float
    laminar_separation_re_delta_star: float
    bubble_short: bool
    separation_s: float
    separation_turbulent: bool
    max_laminar_lambda: float
    turbulent_re_theta_range: tuple[float, float]
    transition_re_s: float
    lambda_mean_at_transition: float
    stop: str  # "" when the turbulent march ended normally
    stopped_s: float
    max_u_tau: float  # largest u_tau / U_inf (NaN when Cf is nowhere defined)
    max_u_tau_index: int
    max_delta99_index: int
    max_eddy_viscosity_ratio: float
    max_eddy_viscosity_ratio_index: int
    cut_non_finite: bool  # the stations end early, before one with a non-finite value
    # Where the layer reaches the thin-layer limit of a body of revolution (delta99 against
    # the body radius, ``kernel.THIN_LAYER_RATIO``) and the stations end; NaN if nowhere.
    thin_layer_s: float
    # The laminar method used ("thwaites" or "finite_difference"), and why the
    # finite-difference march failed when the case asked for it ("" otherwise; the side
    # then has Thwaites' laminar layer).
    laminar_method: str = "thwaites"
    laminar_failure: str = ""


def _stack(
    sides: list[SideInput],
) -> tuple[F64, F64, F64, NDArray[np.int64], NDArray[np.int64], F64]:
    """Pad the sides to one length (s continues with its last spacing, Ue and r are held)
    and gather their options as integer and real codes, by the named columns of
    ``ibl.columns`` (the laminar method is Thwaites' here)."""
    count = np.array([side.s.size for side in sides], dtype=np.int64)
    n = int(count.max())
    shape = (len(sides), n)
    s, ue, r = np.empty(shape), np.empty(shape), np.empty(shape)
    int_rows, real_rows = [], []
    for i, side in enumerate(sides):
        m = side.s.size
        s[i, :m], ue[i, :m], r[i, :m] = side.s, side.ue, side.r
        if m < n:
            s[i, m:] = side.s[-1] + (side.s[-1] - side.s[-2]) * np.arange(1, n - m + 1)
            ue[i, m:], r[i, m:] = side.ue[-1], side.r[-1]
        o = side.options
        start = kernel.START_TURBULENT if side.turbulent_start else _START[side.start]
        named_ints = {
            "start": start,
            "criterion": kernel.CRITERION_CODES[o.criterion],
            "closure": kernel.CLOSURE_CODES[o.closure],
            "skin_friction": SKIN_FRICTION[o.skin_friction].code,
            "axisymmetric": int(side.axisymmetric),
            "turbulent_method": METHODS[o.turbulent_method].code,
            # LAMINAR_SUPPLIED once ``_supplied`` solves the side
            "laminar_method": kernel.LAMINAR_THWAITES,
        }
        named_reals: dict[str, float] = {
            "nu": side.nu,
            "stagnation_slope": side.slope,
            "inflow_theta": side.theta0,
            "inflow_shape_factor": side.h0,
            "trip": np.inf if side.trip is None else side.trip,
            "tu_percent": 100.0 * (o.turbulence_intensity or 0.0),
            "separation_lambda": o.separation_lambda,
            "initial_shape_factor": o.initial_shape_factor,
            "separation_shape_factor": o.separation_shape_factor,
            "supplied_laminar_separation": 0.0,  # set by ``_supplied``
        }
        int_rows.append(tuple(named_ints[name] for name in INT_COLUMNS))
        real_rows.append(tuple(named_reals[name] for name in REAL_COLUMNS))
    # The codes of all sides converted at once.
    ints = np.array(int_rows, dtype=np.int64)
    reals = np.array(real_rows, dtype=np.float64)
    return s, ue, r, count, ints, reals


def _supplied(
    sides: list[SideInput], ints: NDArray[np.int64], reals: F64, n: int
) -> tuple[F64 | None, list[Supplied | None]]:
    """The finite-difference laminar layers of the sides that ask for it, as the kernel's
    ``laminar`` array, with their method codes and separations set in ``ints`` (column
    ``laminar_method``) and ``reals`` (``supplied_laminar_separation``); None when no
    side asks."""
    solved: list[Supplied | None] = [
        solve_side(side)
        if side.options.laminar_method == "finite_difference" and not side.turbulent_start
        else None
        for side in sides
    ]
    if all(sol is None for sol in solved):
        return None, solved
    laminar = np.full((len(sides), 4, n), np.nan)
    for i, sol in enumerate(solved):
        if sol is not None and sol.values is not None:
            m = sol.values.shape[1]
            laminar[i, :, :m] = sol.values
            ints[i, INT_COLUMNS.index("laminar_method")] = kernel.LAMINAR_SUPPLIED
            reals[i, REAL_COLUMNS.index("supplied_laminar_separation")] = sol.separation
    return laminar, solved


def march(sides: list[SideInput]) -> list[SideState]:
    """March every side from its start to separation or its end.

    Up to ``SIDES_PER_THREAD`` sides per thread, all in one kernel call; more are split
    into one call per thread (the results do not depend on the split).
    """
    if not sides:
        return []
    threads = min(THREADS, len(sides) // SIDES_PER_THREAD)
    if threads < 2:
        return _march(sides)
    bounds = np.linspace(0, len(sides), threads + 1).astype(int).tolist()
    chunks = [sides[a:b] for a, b in itertools.pairwise(bounds)]
    with ThreadPoolExecutor(threads, thread_name_prefix="ibl-march") as pool:
        parts = pool.map(functools.partial(_march, compute=kernel.march_sides_nogil), chunks)
        return [state for part in parts for state in part]


def march_released(sides: list[SideInput]) -> list[SideState]:
    """``march`` in one kernel call that releases the interpreter lock: for a thread of the
    caller's that runs beside Python work."""
    return _march(sides, compute=kernel.march_sides_nogil) if sides else []


def _march(
    sides: list[SideInput], compute: Callable[..., int] = kernel.march_sides
) -> list[SideState]:
    """``march`` in one kernel call."""
    s, ue, r, count, ints, reals = _stack(sides)
    laminar, solved = _supplied(sides, ints, reals, s.shape[1])
    stations = np.empty((len(sides), kernel.N_STATION_FIELDS, s.shape[1]))
    events = np.empty((len(sides), kernel.N_EVENT_FIELDS))
    if laminar is None:
        compute(s, ue, r, count, ints, reals, stations, events)
    else:
        compute(s, ue, r, count, ints, reals, stations, events, laminar=laminar)
    turbulent = stations[:, 5, :] > 0.5
    states = []
    for i, ev in enumerate(events.tolist()):
        keep = int(ev[0])
        st = stations[i, :, :keep]
        states.append(
            SideState(
                count=keep,
                s=s[i, :keep],
                ue=ue[i, :keep],
                theta=st[0],
                shape_factor=st[1],
                cf=st[2],
                re_theta=st[3],
                delta99=st[4],
                turbulent=turbulent[i, :keep],
                thwaites_lambda=st[6],
                transition_s=ev[1],
                transition_cause=_CAUSE[int(ev[2])],
                transition_re_theta=ev[3],
                laminar_separation_s=ev[4],
                laminar_separation_re_delta_star=ev[5],
                bubble_short=ev[6] > 0.5,
                separation_s=ev[7],
                separation_turbulent=ev[8] > 0.5,
                max_laminar_lambda=ev[9],
                turbulent_re_theta_range=(ev[10], ev[11]),
                transition_re_s=ev[12],
                lambda_mean_at_transition=ev[13],
                stop=_STOP[int(ev[14])],
                stopped_s=ev[15],
                max_u_tau=ev[16],
                max_u_tau_index=int(ev[17]),
                max_delta99_index=int(ev[19]),
                max_eddy_viscosity_ratio=ev[20],
                max_eddy_viscosity_ratio_index=int(ev[21]),
                cut_non_finite=ev[22] > 0.5,
                thin_layer_s=ev[24] if ev[23] > 0.5 else float("nan"),
                laminar_method=(
                    "finite_difference"
                    if ints[i, INT_COLUMNS.index("laminar_method")]
                    else "thwaites"
                ),
                laminar_failure=(sol.failure if (sol := solved[i]) is not None else ""),
            )
        )
    return states
