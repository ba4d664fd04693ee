"""The finite-difference laminar layer of a side, ready for the compiled march.

Contents
--------
- ``solve_side(side)``: marches the laminar boundary-layer equations along one side
  (``ibl.finite_difference.march_laminar``, Keller's box scheme) and returns its station
  values theta, H, Cf, delta99 and its laminar separation, in the form that
  ``ibl.kernel.march_sides`` takes as supplied laminar values (``ibl.march`` passes them).
  The kernel then locates transition (every criterion, the trip), the Owen-Klanfer bubble
  class and Head's start on these values instead of Thwaites'.
- ``Supplied``: that result, or why the march failed.

Start of the march: a stagnation point starts from Hiemenz's (planar) or Homann's (nose of
a body of revolution) profile with dUe/ds the side's stagnation slope; a sharp edge from
Blasius' profile; a laminar inflow from the Blasius profile grown to the inflow theta
(xi0 = (theta0 r0 Ue0 / I_B)^2 / (2 nu) with I_B = int u (1 - u) d eta of the Blasius
profile in Goertler's eta, 0.6641 / sqrt(2); its inflow H is not used, as with Thwaites).

delta99 of the laminar stations is an estimate, not read from the profiles:
``DELTA99_RATIO`` theta, the ratio of the Blasius layer (the same estimate as for
Thwaites' stations); it is only used by the mesh advice and the thin-layer limit.

A march that fails (Newton diverging away from separation, an edge velocity the equations
cannot start from) leaves the side to Thwaites' method; ``Supplied.failure`` says why and
the analysis reports it as the ``laminar_method_failed`` warning.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ibl.finite_difference import march_laminar
from ibl.prepare import SideInput

__all__ = ["BLASIUS_GOERTLER_THETA", "DELTA99_RATIO", "Supplied", "solve_side"]

F64 = NDArray[np.float64]

#: delta99 / theta of the Blasius layer, 4.91 / 0.664 (common practice; the same ratio as
#: ``ibl.kernel.LAMINAR_DELTA99_RATIO``).
DELTA99_RATIO = 4.91 / 0.664
#: int_0^inf u (1 - u) d eta of the Blasius profile in Goertler's eta = y sqrt(U / (2 nu x)):
#: 0.66411 / sqrt(2) (Blasius 1908; 0.66411 from Howarth 1938, common practice).
BLASIUS_GOERTLER_THETA = 0.66411 / math.sqrt(2.0)
#: A body radius at the first station below this fraction of the side length is a nose on
#: the axis (as in ``ibl.kernel``).
ON_AXIS = 1e-9


@dataclass(frozen=True, slots=True)
class Supplied:
    """The finite-difference laminar layer of one side.

    ``values`` (4, stations): theta, H, Cf (NaN at a stagnation point or leading edge),
    delta99, NaN beyond the last station solved; ``separation`` the arc length of
    laminar separation in the side's s (NaN if none); ``reached`` the last arc length
    solved; ``failure`` empty, or why the march failed (``values`` is then None).
    """

    values: F64 | None
    separation: float
    reached: float
    failure: str = ""


def solve_side(side: SideInput) -> Supplied:
    """March the laminar boundary-layer equations along ``side`` (see the module)."""
    s = side.s - side.s[0]
    length = float(s[-1])
    due = np.gradient(side.ue, s, edge_order=2)
    # The march ends before the first station after the start where Ue is not positive
    # (a rear stagnation point, beyond any laminar separation ahead of it).
    stop = side.ue[1:] <= 0.0
    m = 1 + int(np.argmax(stop)) if stop.any() else s.size
    if m < 3:
        return Supplied(None, math.nan, math.nan, "Ue is not positive after the start")
    ue, s, due = side.ue[:m], s[:m], due[:m]
    r = None
    if side.axisymmetric:
        r = side.r[:m].copy()
        if r[0] <= ON_AXIS * length:
            r[0] = 0.0
    start_beta = None
    xi0 = 0.0
    if side.start == "stagnation":
        due[0] = side.slope
        start = "stagnation"
    elif side.start == "sharp":
        start = "sharp"
    else:
        start, start_beta = "sharp", 0.0
        r0 = 1.0 if r is None else float(r[0])
        xi0 = (side.theta0 * r0 * float(ue[0]) / BLASIUS_GOERTLER_THETA) ** 2 / (2.0 * side.nu)
    try:
        with np.errstate(all="ignore"):
            sol = march_laminar(
                s, ue, side.nu, due=due, r=r, start=start, start_beta=start_beta, xi0=xi0
            )
    except Exception as error:  # any edge velocity must give a result, not a crash
        return Supplied(None, math.nan, math.nan, f"{type(error).__name__}: {error}")
    last = sol.last
    if sol.stop == "failed":
        where = float(sol.reached) + float(side.s[0]) + side.offset
        return Supplied(
            None, math.nan, sol.reached, f"Newton's iteration did not converge at s = {where:.4g}"
        )
    theta, shape = sol.theta[: last + 1], sol.shape_factor[: last + 1]
    if not (np.all(np.isfinite(theta)) and np.all(np.isfinite(shape))):
        return Supplied(None, math.nan, sol.reached, "non-finite values in the solution")
    values = np.full((4, side.s.size), np.nan)
    values[0, : last + 1] = theta
    values[1, : last + 1] = shape
    values[2, : last + 1] = sol.cf[: last + 1]
    values[3, : last + 1] = DELTA99_RATIO * theta
    separation = float(sol.separation) + float(side.s[0])
    return Supplied(values, separation, float(sol.reached) + float(side.s[0]))
