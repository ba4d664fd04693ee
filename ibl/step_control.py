"""The turbulent march shared by every turbulent method: step control, events, stations.

Contents
--------
- ``march(method, ...)`` (``march`` for one method): one side's turbulent layer from
  its start by classical Runge-Kutta, for the method of code ``method``
  (``ibl.methods``): Head's equations (``ibl.head``; state theta, H1) or the
  lag-entrainment equations (``ibl.lag_entrainment``; state theta, H, C_E).  The
  state is (theta, y, c): y is H1 or H, c is C_E (zero and unused for Head).
- ``step_limit(method, ...)``: the largest step from a state (the shared limits, then the
  method's own); ``crossing(method, ...)``: where the method's separation function
  reaches zero inside a step.
- The method dispatch (``_rhs``, ``_start``, ``_stage_valid``, ``_end_valid``,
  ``_at_floor``, ``_shape_factor``, ``_criterion``, ``_separated``): one branch per method
  on its code, each calling the method's module.  A method is a module with these
  functions and a branch in each here.
- The shared constants of the step control and the thin-layer limit, and the tape
  layout of a recorded march (``ibl.sensitivity``).

The step control (DEVELOPERS.md, "Step control of the turbulent march"): every step
lies inside one interval between stations and ends on the next station when the limits
allow, so that each step sees one smooth cubic Ue; the step is a continuous function of
the state at its start (``step_limit``, clipped to the next station); a step whose end
state asks for a step more than ``RETAKE_FACTOR`` shorter is taken again with that step,
up to ``RETAKES`` times; only a state outside the equations' validity halves a step.

The method code is an argument of ``march``; ``march`` is compiled once and passes the
code on to the small dispatch functions, which are inlined (numba's ``inline="always"``),
so that each step's branch on the code costs a comparison.  Measured side by side, this
is within 3 % of holding one inlined copy of ``march`` per method (the batch march per
side: 63 to 67 us either way), and it compiles in about 30 s instead of about 78 s; with
the dispatch functions as plain calls too, the march was 10 to 40 % slower.
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

from ibl import head
from ibl import lag_entrainment as lag
from ibl.edge import _edge, _hermite
from ibl.methods import code

__all__ = [
    "MAX_STEP",
    "METHOD_HEAD",
    "METHOD_LAG_ENTRAINMENT",
    "STOP_BUDGET",
    "STOP_INVALID",
    "STOP_NONE",
    "STOP_THIN",
    "TAPE_COLUMNS",
    "THIN_LAYER_RATIO",
    "crossing",
    "march",
    "step_limit",
]

F64 = NDArray[np.float64]

#: The turbulent methods' codes (``ibl.methods``; column ``turbulent_method`` of ``ints``).
METHOD_HEAD = code("turbulent", "head")
METHOD_LAG_ENTRAINMENT = code("turbulent", "lag_entrainment")

#: Largest internal step of the turbulent march, as a fraction of the side length.
MAX_STEP = 0.06
#: Step limits of every turbulent method: largest relative change of Ue and theta per
#: step (each method adds its own on its other variables: ``head.STEP_H1``,
#: ``lag_entrainment.STEP_H`` and ``STEP_CE``; the convergence they give is stated
#: there).
STEP_UE, STEP_THETA = 0.15, 0.15
#: Largest step as a fraction of the distance from the side's origin (resolves the 1/s
#: terms of a start at a stagnation point, a nose or a sharp edge).
STEP_ORIGIN = 0.3
#: A step whose end state allows a step more than this factor shorter is taken again with
#: that shorter step (the continuous counterpart of rejecting the step), at most
#: ``RETAKES`` times.
RETAKE_FACTOR, RETAKES = 2.0, 3
#: Most Runge-Kutta steps (tries included) on one side beyond one per interval between
#: stations: a bound on the work for any input.
MAX_STEPS = 20_000
#: How a turbulent march ended: normally (attached or separated), out of steps, on a
#: state the equations cannot continue from (rough input data), or at the thin-layer limit
#: of a body of revolution (``THIN_LAYER_RATIO``; handled by the kernel, not reported
#: as a stop).
STOP_NONE, STOP_BUDGET, STOP_INVALID, STOP_THIN = 0, 1, 2, 3
#: How a recorded turbulent march ended (row 0 of the tape): attached to its end or
#: another stop, separated by H crossing its criterion inside the last step, separated at
#: the start of a step the equations cannot take, or separated at its start.
TAPE_ATTACHED, TAPE_CROSSING, TAPE_AT_STEP_START, TAPE_AT_START = 0, 1, 2, 3
#: Columns of a full tape row: start position, step, interval, theta, H1, landed flag, then
#: d theta/ds, d H1/ds and H at the four Runge-Kutta stages and at the step's end.
TAPE_COLUMNS = 21
#: The thin-layer limit of a body of revolution.  The axisymmetric forms of the momentum
#: and entrainment equations used here (Rott & Crabtree 1952; Head 1958; Mangler 1948)
#: treat the layer as thin against the body radius, delta99 << r; where it is not,
#: transverse curvature changes the layer at first order and these forms fail (on a tail
#: closing to a point, r -> 0 drives theta to infinity).  Downstream of a side's largest
#: radius, the stations end where delta99 reaches this multiple of the local radius r
#: (delta99 >= r: common practice for where transverse-curvature effects stop being a
#: correction).  Never applied upstream of the largest radius: at a nose on the axis the
#: Rott-Crabtree start is exact.
THIN_LAYER_RATIO = 1.0


@numba.njit(cache=True, error_model="numpy")
def _delta99_turbulent(theta: float, h: float) -> float:
    """Twin of ``ibl.mesh.delta99_power_law``: delta99 = theta H (H + 1) / (H - 1)."""
    return theta * h * (h + 1.0) / (h - 1.0)


# ----------------------------------------------------------------- the method dispatch


@numba.njit(cache=True, error_model="numpy", inline="always")
def _rhs(
    method: int,
    theta: float,
    y: float,
    c: float,
    ue: float,
    due: float,
    r: float,
    dr: float,
    inv_nu: float,
    law: int,
    axisymmetric: bool,
) -> tuple[float, float, float, float]:
    """d theta/ds, dy/ds, dc/ds of the method's equations, and H."""
    if method == METHOD_LAG_ENTRAINMENT:
        d_theta, d_h, d_ce = lag._rhs(theta, y, c, ue, due, r, dr, inv_nu, axisymmetric)
        return d_theta, d_h, d_ce, y
    d_theta, d_h1, h = head._rhs(theta, y, ue, due, r, dr, inv_nu, law, axisymmetric)
    return d_theta, d_h1, 0.0, h


@numba.njit(cache=True, error_model="numpy", inline="always")
def _start(method: int, theta: float, h: float, u: float, inv_nu: float) -> tuple[float, float]:
    """The state's y and c at the start from theta, H and Ue there."""
    if method == METHOD_LAG_ENTRAINMENT:
        return h, lag.start_state(theta, h, u, inv_nu)
    return head.start_state(h), 0.0


@numba.njit(cache=True, error_model="numpy", inline="always")
def _start_valid(method: int, theta: float, y: float, c: float) -> bool:
    """The start state is one the equations can march from."""
    if method == METHOD_LAG_ENTRAINMENT:
        return lag._valid(theta, y, c)
    return True


@numba.njit(cache=True, error_model="numpy", inline="always")
def _stage_valid(method: int, theta: float, y: float, c: float) -> bool:
    """A Runge-Kutta stage state the equations can take."""
    if method == METHOD_LAG_ENTRAINMENT:
        return lag._valid(theta, y, c)
    return head.stage_valid(theta, y)


@numba.njit(cache=True, error_model="numpy", inline="always")
def _end_valid(method: int, theta: float, y: float, c: float) -> bool:
    """A step's end state the march continues from."""
    if method == METHOD_LAG_ENTRAINMENT:
        return lag._valid(theta, y, c)
    return head.end_valid(theta, y)


@numba.njit(cache=True, error_model="numpy", inline="always")
def _at_floor(method: int, y: float) -> bool:
    """y at the floor of its range, where the layer separates (Head's H1 at 3.3)."""
    if method == METHOD_LAG_ENTRAINMENT:
        return False
    return y <= head.H1_FLOOR


@numba.njit(cache=True, error_model="numpy", inline="always")
def _shape_factor(method: int, y: float) -> float:
    """H of the state's y."""
    if method == METHOD_LAG_ENTRAINMENT:
        return y
    return head.h_from_h1(y)


@numba.njit(cache=True, error_model="numpy", inline="always")
def _criterion(
    method: int, y: float, theta: float, u: float, inv_nu: float, h_separation: float
) -> float:
    """The method's separation function of the state (>= 0 separated)."""
    if method == METHOD_LAG_ENTRAINMENT:
        return lag._criterion(y, theta, u, inv_nu, h_separation)
    return head.criterion(y, h_separation)


@numba.njit(cache=True, error_model="numpy", inline="always")
def _separated(
    method: int, h: float, theta: float, u: float, inv_nu: float, h_separation: float
) -> bool:
    """Whether a state of shape factor ``h`` is separated."""
    if method == METHOD_LAG_ENTRAINMENT:
        return lag._criterion(h, theta, u, inv_nu, h_separation) >= 0.0
    return h >= h_separation


# ----------------------------------------------------------------------- step control


@numba.njit(cache=True, error_model="numpy", inline="always")
def step_limit(
    method: int,
    scale: float,
    span: float,
    from_origin: float,
    min_step: float,
    theta: float,
    y: float,
    c: float,
    u: float,
    du: float,
    f_theta: float,
    f_y: float,
    f_c: float,
) -> float:
    """Largest step of the turbulent march from a state: the smallest of the shared step
    limits (``MAX_STEP``, ``STEP_ORIGIN``, ``STEP_UE``, ``STEP_THETA``) and the method's
    own, no smaller than ``min_step``.  A minimum of continuous functions, so continuous
    in the state."""
    limit = scale * MAX_STEP * span
    limit = min(limit, scale * STEP_ORIGIN * from_origin)
    limit = min(limit, scale * STEP_UE * u / max(abs(du), 1e-300))
    limit = min(limit, scale * STEP_THETA * theta / max(abs(f_theta), 1e-300))
    if method == METHOD_LAG_ENTRAINMENT:
        limit = lag.limit_state(limit, scale, y, c, f_y, f_c)
    else:
        limit = head.limit_state(limit, scale, y, f_y)
    return max(limit, min_step)


@numba.njit(cache=True, error_model="numpy")
def crossing(
    method: int,
    step: float,
    a: tuple[float, float, float, float, float],
    b: tuple[float, float, float, float, float],
    inv_nu: float,
    h_separation: float,
) -> float:
    """Fraction of a step at which the method's separation function (``_criterion``)
    reaches zero (below it at the start, at or above it at the end), on cubic Hermite
    interpolants of y and theta over the step (Ue linear), by the Illinois variant of
    regula falsi converged to rounding.  ``a``, ``b``: (y, dy/ds, theta, dtheta/ds, Ue)
    at the step's ends."""
    lo, hi = 0.0, 1.0
    g_lo = _criterion(method, a[0], a[2], a[4], inv_nu, h_separation)
    g_hi = _criterion(method, b[0], b[2], b[4], inv_nu, h_separation)
    side = 0
    for _ in range(100):
        if hi - lo <= 1e-15:
            break
        mid = (lo * g_hi - hi * g_lo) / (g_hi - g_lo)
        if not (lo < mid < hi):
            mid = 0.5 * (lo + hi)
        yv, _ = _hermite(mid, step, a[0], b[0], a[1], b[1])
        tv, _ = _hermite(mid, step, a[2], b[2], a[3], b[3])
        uv = a[4] + mid * (b[4] - a[4])
        g = _criterion(method, yv, tv, uv, inv_nu, h_separation)
        if g >= 0.0:
            hi, g_hi = mid, g
            if side == 1:
                g_lo *= 0.5
            side = 1
        else:
            lo, g_lo = mid, g
            if side == -1:
                g_hi *= 0.5
            side = -1
    return hi


# ------------------------------------------------------------------------- the march


@numba.njit(cache=True, error_model="numpy")
def march(
    method: int,
    s: F64,
    ue: F64,
    due: F64,
    r: F64,
    dr: F64,
    n: int,
    start: float,
    theta0: float,
    h0: float,
    inv_nu: float,
    h_separation: float,
    law: int,
    axisymmetric: bool,
    theta_out: F64,
    h_out: F64,
    c_out: F64,
    scale: float,
    s_peak: float,
    tape: F64,
) -> tuple[float, int, int]:
    """A turbulent method's equations from ``start`` by classical Runge-Kutta with
    limited steps (the module docstring); the result is continuous in the inputs, short
    of a separation criterion touched tangentially.

    Fills theta, H and c (C_E of the lag-entrainment method; not written when ``c_out``
    is empty) at the stations from ``start`` on.  Returns the separation position (NaN
    when attached to the end; where the march stopped for ``STOP_BUDGET``,
    ``STOP_INVALID`` or ``STOP_THIN``), the step count and the stop code.  Downstream of
    ``s_peak`` (the largest body radius; inf when planar) the march stops where delta99
    reaches ``THIN_LAYER_RATIO`` times the radius.  A start at or beyond separation fills
    the station at the start with the start state and separates there.

    ``tape`` (rows, ``TAPE_COLUMNS``) records the march for its derivatives
    (``ibl.sensitivity``, Head's method) when it has more than one row: row 0 holds the
    record count, how the march ended (``TAPE_*``) and 1 if more steps were taken than it
    holds; each further row one step taken (its start position, step, interval, theta,
    y, whether it ended on the station at the interval's end, and the right-hand side
    and H at its stages and its end).  With one row nothing is written.
    """
    record = tape.shape[0] > 1
    write_c = c_out.shape[0] > 0
    if record:
        tape[0, 0] = 0.0
        tape[0, 1] = TAPE_ATTACHED
        tape[0, 2] = 0.0
    origin = s[0]
    end = s[n - 1]
    span = end - origin
    # The smallest step also resolves the relaxation of the state over a few theta from
    # a start with a very thin layer.
    min_step = 1e-9 * span
    budget = MAX_STEPS + 2 * n
    if theta0 > 0.0:
        min_step = min(min_step, 1e-3 * theta0)
    pos = start
    theta = theta0
    j = 0
    while j < n - 2 and s[j + 1] <= pos:
        j += 1
    m = j if s[j] >= pos else j + 1  # next station to fill
    u, du, rr, drr = _edge(s, ue, due, r, dr, j, (pos - s[j]) / (s[j + 1] - s[j]), axisymmetric)
    if not (u > 0.0 and rr > 0.0):
        return pos, 0, STOP_NONE
    y, c = _start(method, theta, h0, u, inv_nu)
    if _separated(method, h0, theta, u, inv_nu, h_separation):
        while m < n and s[m] <= pos:
            theta_out[m] = theta
            h_out[m] = h0
            if write_c:
                c_out[m] = c
            m += 1
        if record:
            tape[0, 1] = TAPE_AT_START
        return pos, 0, STOP_NONE
    if pos > s_peak and _delta99_turbulent(theta, h0) >= THIN_LAYER_RATIO * rr:
        return pos, 0, STOP_THIN
    if not _start_valid(method, theta, y, c):
        return pos, 0, STOP_INVALID
    f_t, f_y, f_c, f_h = _rhs(method, theta, y, c, u, du, rr, drr, inv_nu, law, axisymmetric)
    steps = 0
    while True:
        while m < n and s[m] <= pos:
            theta_out[m] = theta
            h_out[m] = _shape_factor(method, y)
            if write_c:
                c_out[m] = c
            m += 1
        if m >= n or pos >= end:
            return np.nan, steps, STOP_NONE
        if steps >= budget:
            return pos, steps, STOP_BUDGET
        while j < n - 2 and s[j + 1] <= pos:
            j += 1
        left = s[j]
        length = s[j + 1] - left
        room = max(s[j + 1] - pos, 0.0)
        limit = step_limit(
            method, scale, span, pos - origin, min_step, theta, y, c, u, du, f_t, f_y, f_c
        )
        step = min(limit, room)
        retakes = 0
        while True:
            steps += 1
            land = step >= room
            at_end = s[j + 1] if land else pos + step
            # Classical Runge-Kutta inside interval j.
            u2, du2, r2, dr2 = _edge(
                s, ue, due, r, dr, j, (pos + 0.5 * step - left) / length, axisymmetric
            )
            t2 = theta + 0.5 * step * f_t
            y2 = y + 0.5 * step * f_y
            c2 = c + 0.5 * step * f_c
            ok = u2 > 0.0 and r2 > 0.0 and _stage_valid(method, t2, y2, c2)
            if ok:
                a_t, a_y, a_c, a_h = _rhs(
                    method, t2, y2, c2, u2, du2, r2, dr2, inv_nu, law, axisymmetric
                )
                t3 = theta + 0.5 * step * a_t
                y3 = y + 0.5 * step * a_y
                c3 = c + 0.5 * step * a_c
                ok = _stage_valid(method, t3, y3, c3)
            if ok:
                b_t, b_y, b_c, b_h = _rhs(
                    method, t3, y3, c3, u2, du2, r2, dr2, inv_nu, law, axisymmetric
                )
                t_end = 1.0 if land else (at_end - left) / length
                u4, du4, r4, dr4 = _edge(s, ue, due, r, dr, j, t_end, axisymmetric)
                t4 = theta + step * b_t
                y4 = y + step * b_y
                c4 = c + step * b_c
                ok = u4 > 0.0 and r4 > 0.0 and _stage_valid(method, t4, y4, c4)
            if ok:
                c_t, c_y, c_c, c_h = _rhs(
                    method, t4, y4, c4, u4, du4, r4, dr4, inv_nu, law, axisymmetric
                )
                theta_new = theta + step / 6.0 * (f_t + 2.0 * (a_t + b_t) + c_t)
                y_new = y + step / 6.0 * (f_y + 2.0 * (a_y + b_y) + c_y)
                c_new = c + step / 6.0 * (f_c + 2.0 * (a_c + b_c) + c_c)
                ok = _end_valid(method, theta_new, y_new, c_new)
            if not ok:
                # Outside the equations' validity: the only discrete branch of the step.
                if step <= min_step or steps >= budget:
                    # y at its floor or Ue at zero: the layer separates; anything else
                    # is a numerical stop.
                    if _at_floor(method, y2) or u2 <= 0.0:
                        if record:
                            tape[0, 1] = TAPE_AT_STEP_START
                        return pos, steps, STOP_NONE
                    return pos, steps, STOP_INVALID
                step = max(0.5 * step, min_step)
                continue
            g_t, g_y, g_c, h_new = _rhs(
                method, theta_new, y_new, c_new, u4, du4, r4, dr4, inv_nu, law, axisymmetric
            )
            if retakes < RETAKES and steps < budget:
                shorter = RETAKE_FACTOR * step_limit(
                    method,
                    scale,
                    span,
                    at_end - origin,
                    min_step,
                    theta_new,
                    y_new,
                    c_new,
                    u4,
                    du4,
                    g_t,
                    g_y,
                    g_c,
                )
                if shorter < step:
                    step = shorter
                    retakes += 1
                    continue
            break
        if record:
            row = int(tape[0, 0]) + 1
            if row < tape.shape[0]:
                tape[row, 0] = pos
                tape[row, 1] = step
                tape[row, 2] = j
                tape[row, 3] = theta
                tape[row, 4] = y
                tape[row, 5] = 1.0 if land else 0.0
                if tape.shape[1] >= TAPE_COLUMNS:
                    stages = (
                        (f_t, f_y, f_h),
                        (a_t, a_y, a_h),
                        (b_t, b_y, b_h),
                        (c_t, c_y, c_h),
                        (g_t, g_y, h_new),
                    )
                    for q in range(5):
                        tape[row, 6 + 3 * q] = stages[q][0]
                        tape[row, 7 + 3 * q] = stages[q][1]
                        tape[row, 8 + 3 * q] = stages[q][2]
                tape[0, 0] = row
            else:
                tape[0, 2] = 1.0  # more steps than the tape holds
        if _separated(method, h_new, theta_new, u4, inv_nu, h_separation):
            if record:
                tape[0, 1] = TAPE_CROSSING
            frac = crossing(
                method,
                step,
                (y, f_y, theta, f_t, u),
                (y_new, g_y, theta_new, g_t, u4),
                inv_nu,
                h_separation,
            )
            separation = pos + frac * step
            while m < n and s[m] <= separation:  # the step's end, when separation is there
                t = (s[m] - pos) / step
                theta_out[m], _ = _hermite(t, step, theta, theta_new, f_t, g_t)
                y_m, _ = _hermite(t, step, y, y_new, f_y, g_y)
                h_out[m] = min(_shape_factor(method, y_m), h_separation)
                if write_c:
                    c_out[m], _ = _hermite(t, step, c, c_new, f_c, g_c)
                m += 1
            return separation, steps, STOP_NONE
        if pos + step > s_peak:
            # The thin-layer limit: where delta99 - ratio r crosses zero (linear).
            g_new = _delta99_turbulent(theta_new, h_new) - THIN_LAYER_RATIO * r4
            if g_new >= 0.0:
                g_old = _delta99_turbulent(theta, _shape_factor(method, y)) - THIN_LAYER_RATIO * rr
                frac = g_old / (g_old - g_new) if g_old < 0.0 else 0.0
                reached = min(max(pos + frac * step, s_peak), pos + step)
                while m < n and s[m] <= reached:
                    t = (s[m] - pos) / step
                    theta_out[m], _ = _hermite(t, step, theta, theta_new, f_t, g_t)
                    y_m, _ = _hermite(t, step, y, y_new, f_y, g_y)
                    h_out[m] = _shape_factor(method, y_m)
                    if write_c:
                        c_out[m], _ = _hermite(t, step, c, c_new, f_c, g_c)
                    m += 1
                return reached, steps, STOP_THIN
        # No station lies inside a step: the station at its end is filled from the state.
        pos = at_end
        theta, y, c = theta_new, y_new, c_new
        f_t, f_y, f_c, f_h = g_t, g_y, g_c, h_new
        u, du, rr, drr = u4, du4, r4, dr4
