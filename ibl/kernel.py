"""The compiled march: every side from its start to separation or its end.

Contents
--------
- ``march_sides``: one compiled loop over sides (sides along axis 0 of padded arrays,
  stations along axis 1): Thwaites' integral, laminar separation, the transition
  criterion, the bubble class, then Head's equations from transition to separation (or
  the lag-entrainment equations of ``ibl.lag_entrainment``, by the side's method code).
- Scalar twins of the published correlations in ``ibl.laminar``, ``ibl.transition`` and
  ``ibl.turbulent``: those modules hold the documented, vectorised definitions; the twins
  here repeat the same formulas for the compiled loop, and ``tests/test_kernel.py`` checks
  that every twin agrees with its definition.

Why compiled: the turbulent layer is an initial-value problem, sequential along each side;
a per-station loop in Python costs milliseconds per side.  Compiling the whole side march
keeps one analysis well under a millisecond while a batch of sides still goes through
one call.
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

from ibl.laminar import GAUSS_NODES, GAUSS_WEIGHTS, LAMBDA_MAX, THWAITES_A, THWAITES_B
from ibl.transition import GRANVILLE_INSTABILITY_TABLE, OWEN_KLANFER_RE_DELTA_STAR
from ibl.turbulent import H1_HIGH_BRANCH_MAX, H1_LOW_BRANCH_MIN, H_BRANCH

__all__ = [
    "CAUSE_CRITERION",
    "CAUSE_LAMINAR_SEPARATION",
    "CAUSE_TRIP",
    "CLAUSER",
    "CLOSURE_CODES",
    "CRITERION_CODES",
    "LAMINAR_SUPPLIED",
    "LAMINAR_THWAITES",
    "N_EVENT_FIELDS",
    "N_STATION_FIELDS",
    "START_INFLOW",
    "START_SHARP",
    "START_STAGNATION",
    "START_TURBULENT",
    "THIN_LAYER_RATIO",
    "march_sides",
    "march_sides_nogil",
]

F64 = NDArray[np.float64]

#: Rows of the ``stations`` output and columns of the ``events`` output of ``march_sides``.
N_STATION_FIELDS, N_EVENT_FIELDS = 7, 25
CRITERION_CODES = {"none": 0, "michel": 1, "granville": 2, "abu_ghannam_shaw": 3}
CLOSURE_CODES = {"cebeci_bradshaw": 0, "white": 1}
#: Turbulent methods by their code in column 5 of ``ints`` (absent: Head): Head (1958)
#: here, the lag-entrainment method in ``ibl.lag_entrainment``.
METHOD_HEAD, METHOD_LAG_ENTRAINMENT = 0, 1
START_STAGNATION, START_SHARP, START_INFLOW, START_TURBULENT = 0, 1, 2, 3
CAUSE_CRITERION, CAUSE_TRIP, CAUSE_LAMINAR_SEPARATION = 0, 1, 2
#: The laminar layer of a side (column 6 of ``ints``, 0 when absent): Thwaites' integral,
#: or station values supplied by the caller (``laminar`` of ``march_sides``, for example
#: the finite-difference solution of ``ibl.finite_difference``).
LAMINAR_THWAITES, LAMINAR_SUPPLIED = 0, 1

#: A turbulent layer tripped at a stagnation point or sharp edge starts this fraction of
#: the side length downstream, where Ue and theta are positive.
START_OFFSET = 1e-4
#: Largest internal step of the turbulent march, as a fraction of the side length.
MAX_STEP = 0.06
#: Step limits of the turbulent march: largest relative change of Ue and theta per step,
#: and largest relative change of H1 - 3.3 per step.  With steps ending on the stations,
#: a run with twenty times smaller steps moves separation by less than 1e-5 % of the side
#: length and theta and H by less than 0.02 % on the reference cases
#: (tests/test_kernel.py), and by less than 0.006 % and 0.3 % on noisy taps
#: (tests/test_continuity.py).
STEP_UE, STEP_THETA, STEP_H1 = 0.15, 0.15, 0.045
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
#: of a body of revolution (``THIN_LAYER_RATIO``; handled by ``march_sides``, not reported
#: as a stop).
STOP_NONE, STOP_BUDGET, STOP_INVALID, STOP_THIN = 0, 1, 2, 3
#: How a recorded turbulent march ended (row 0 of ``_head``'s tape): attached to its end or
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
#: Clauser's outer eddy-viscosity constant (twin of ``ibl.mesh.CLAUSER_CONSTANT``).
CLAUSER = 0.0168
#: Laminar delta99/theta of the Blasius layer, 4.91/0.664 (common practice).
LAMINAR_DELTA99_RATIO = 4.91 / 0.664

_LN10 = float(np.log(10.0))
_GN = GAUSS_NODES.copy()
_GW = GAUSS_WEIGHTS.copy()
_G_LAM = GRANVILLE_INSTABILITY_TABLE[:, 0].copy()
_G_LOG_RE = np.log(GRANVILLE_INSTABILITY_TABLE[:, 1])

# ----------------------------------------------------------------------------- twins


@numba.njit(cache=True, error_model="numpy")
def shear(closure: int, lam: float) -> float:
    """Twin of ``ibl.laminar`` l(lambda) closures."""
    if closure == 1:
        return max(lam + 0.09, 0.0) ** 0.62
    if lam >= 0.0:
        return 0.22 + 1.57 * lam - 1.8 * lam * lam
    return 0.22 + 1.402 * lam + 0.018 * lam / (lam + 0.107)


@numba.njit(cache=True, error_model="numpy")
def shape_factor(closure: int, lam: float) -> float:
    """Twin of ``ibl.laminar`` H(lambda) closures."""
    if closure == 1:
        z = 0.25 - lam
        return 2.0 + z * (4.14 + z * (-83.5 + z * (854.0 + z * (-3337.0 + z * 4576.0))))
    if lam >= 0.0:
        return 2.61 - 3.75 * lam + 5.24 * lam * lam
    return 2.088 + 0.0731 / (lam + 0.14)


@numba.njit(cache=True, error_model="numpy")
def michel(re_s: float) -> float:
    """Twin of ``ibl.transition.re_theta_transition_michel_1951``."""
    return 1.174 * (1.0 + 22400.0 / re_s) * re_s**0.46


@numba.njit(cache=True, error_model="numpy")
def granville_instability(lam: float) -> float:
    """Twin of ``ibl.transition.re_theta_instability_granville_1953``."""
    return float(np.exp(np.interp(lam, _G_LAM, _G_LOG_RE)))


@numba.njit(cache=True, error_model="numpy")
def granville_growth(lam_mean: float) -> float:
    """Twin of ``ibl.transition.re_theta_growth_granville_1953``."""
    return 375.0 + np.exp(6.1 + 55.0 * min(max(lam_mean, -0.04), 0.04))


@numba.njit(cache=True, error_model="numpy")
def abu_ghannam_shaw(lam: float, tu_percent: float) -> float:
    """Twin of ``ibl.transition.re_theta_transition_abu_ghannam_shaw_1980``."""
    lam = min(max(lam, -0.1), 0.1)
    if lam <= 0.0:
        f = 6.91 + 12.75 * lam + 63.64 * lam * lam
    else:
        f = 6.91 + 2.48 * lam - 12.27 * lam * lam
    return 163.0 + np.exp(f - f * tu_percent / 6.91)


@numba.njit(cache=True, error_model="numpy")
def h1_from_h(h: float) -> float:
    """Twin of ``ibl.turbulent.entrainment_shape_factor_head_1958``."""
    if h <= 1.6:
        return 3.3 + 0.8234 * max(h - 1.1, 1e-12) ** -1.287
    return 3.3 + 1.5501 * max(h - 0.6778, 1e-12) ** -3.064


@numba.njit(cache=True, error_model="numpy")
def h_from_h1(h1: float) -> float:
    """Twin of ``ibl.turbulent.shape_factor_from_h1_head_1958``."""
    excess = max(h1 - 3.3, 1e-12)
    if excess >= H1_LOW_BRANCH_MIN - 3.3:
        return 1.1 + (excess / 0.8234) ** (-1.0 / 1.287)
    if excess <= H1_HIGH_BRANCH_MAX - 3.3:
        return 0.6778 + (excess / 1.5501) ** (-1.0 / 3.064)
    return H_BRANCH


@numba.njit(cache=True, error_model="numpy")
def entrainment(h1: float) -> float:
    """Twin of ``ibl.turbulent.entrainment_coefficient_head_1958``."""
    return 0.0306 * max(h1 - 3.0, 1e-12) ** -0.6169


@numba.njit(cache=True, error_model="numpy")
def cf_turbulent(law: int, h: float, re_theta: float) -> float:
    """Twins of ``ibl.turbulent.cf_ludwieg_tillmann_1949`` (law 0), ``cf_white_1974`` (1)."""
    if law == 0:
        # 0.246 10^(-0.678 H) Re_theta^-0.268, with one exp and one log
        return 0.246 * np.exp(-0.678 * _LN10 * h - 0.268 * np.log(max(re_theta, 1e-300)))
    log_re = np.log10(max(re_theta, 20.0))
    return 0.3 * np.exp(-1.33 * h) / log_re ** (1.74 + 0.31 * h)


# ----------------------------------------------------------------------------- helpers


@numba.njit(cache=True, error_model="numpy")
def _delta99_turbulent(theta: float, h: float) -> float:
    """Twin of ``ibl.mesh.delta99_power_law``: delta99 = theta H (H + 1) / (H - 1)."""
    return theta * h * (h + 1.0) / (h - 1.0)


@numba.njit(cache=True, error_model="numpy")
def _hermite(t: float, h: float, f0: float, f1: float, d0: float, d1: float) -> tuple[float, float]:
    """Cubic Hermite value and derivative at fraction t of an interval of length h."""
    t2 = t * t
    t3 = t2 * t
    value = (
        (2 * t3 - 3 * t2 + 1) * f0
        + (t3 - 2 * t2 + t) * h * d0
        + (-2 * t3 + 3 * t2) * f1
        + (t3 - t2) * h * d1
    )
    slope = (6 * t2 - 6 * t) * (f0 - f1) / h + (3 * t2 - 4 * t + 1) * d0 + (3 * t2 - 2 * t) * d1
    return value, slope


@numba.njit(cache=True, error_model="numpy")
def _derivative(s: F64, f: F64, n: int, out: F64) -> None:
    """Three-point, second-order derivative on a non-uniform grid (one-sided at the ends),
    then limited so that the Hermite interpolant does not overshoot."""
    _stencil(s, f, n, out)
    _limit(s, f, n, out)


@numba.njit(cache=True, error_model="numpy")
def _radius_peak(s: F64, r: F64, n: int, axisym: bool) -> tuple[int, float]:
    """The last station of largest radius and its s on a body of revolution (the thin-layer
    limit applies downstream of it); (n, inf) on a planar side."""
    if not axisym:
        return n, np.inf
    i_peak = 0
    for i in range(1, n):
        if r[i] >= r[i_peak]:
            i_peak = i
    return i_peak, s[i_peak]


@numba.njit(cache=True, error_model="numpy")
def _stencil(s: F64, f: F64, n: int, out: F64) -> None:
    """Three-point, second-order derivative on a non-uniform grid (one-sided at the ends)."""
    for i in range(1, n - 1):
        h1 = s[i] - s[i - 1]
        h2 = s[i + 1] - s[i]
        out[i] = (
            -h2 / (h1 * (h1 + h2)) * f[i - 1]
            + (h2 - h1) / (h1 * h2) * f[i]
            + h1 / (h2 * (h1 + h2)) * f[i + 1]
        )
    a = s[1] - s[0]
    b = s[2] - s[1]
    out[0] = (
        -(2 * a + b) / (a * (a + b)) * f[0] + (a + b) / (a * b) * f[1] - a / (b * (a + b)) * f[2]
    )
    a = s[n - 1] - s[n - 2]
    b = s[n - 2] - s[n - 3]
    out[n - 1] = (
        (2 * a + b) / (a * (a + b)) * f[n - 1]
        - (a + b) / (a * b) * f[n - 2]
        + a / (b * (a + b)) * f[n - 3]
    )


@numba.njit(cache=True, error_model="numpy")
def _limit(s: F64, f: F64, n: int, d: F64) -> None:
    """Fritsch & Carlson (1980) limiter: node derivatives that would make the cubic Hermite
    interpolant overshoot (a derivative against the secant, or alpha^2 + beta^2 > 9) are
    reduced, so that Ue and r never dip below their data between stations (rough or very
    unevenly spaced data). Smooth, well-sampled data are left as they are.

    Fritsch, F. N. & Carlson, R. E. (1980) SIAM J. Numer. Anal. 17(2), 238-246.
    """
    for i in range(n - 1):
        _limit_interval(s, f, d, i)


@numba.njit(cache=True, error_model="numpy")
def _limit_interval(s: F64, f: F64, d: F64, i: int) -> None:
    """The limiter of ``_limit`` on the interval from station i to i + 1."""
    delta = (f[i + 1] - f[i]) / (s[i + 1] - s[i])
    if delta == 0.0:
        d[i] = 0.0
        d[i + 1] = 0.0
        return
    a = d[i] / delta
    b = d[i + 1] / delta
    if a < 0.0:
        d[i] = 0.0
        a = 0.0
    if b < 0.0:
        d[i + 1] = 0.0
        b = 0.0
    norm = a * a + b * b
    if norm > 9.0:
        t = 3.0 / np.sqrt(norm)
        d[i] = t * a * delta
        d[i + 1] = t * b * delta


@numba.njit(cache=True, error_model="numpy")
def _interp(s: F64, v: F64, n: int, at: float) -> float:
    """Linear interpolation of v(s) at one position inside [s[0], s[n-1]]."""
    if at <= s[0]:
        return v[0]
    j = 1
    while j < n - 1 and s[j] < at:
        j += 1
    frac = (at - s[j - 1]) / (s[j] - s[j - 1])
    return v[j - 1] + min(max(frac, 0.0), 1.0) * (v[j] - v[j - 1])


@numba.njit(cache=True, error_model="numpy")
def _rhs(
    theta: float,
    h1: float,
    ue: float,
    due: float,
    r: float,
    dr: float,
    inv_nu: float,
    law: int,
    axisymmetric: bool,
) -> tuple[float, float, float]:
    r"""Head (1958): d theta/ds and d H1/ds (r eliminated from the entrainment equation),
    and H."""
    h = h_from_h1(h1)
    cf = cf_turbulent(law, h, ue * theta * inv_nu)
    grad = theta * due / ue
    dtheta = 0.5 * cf - (h + 2.0) * grad
    if axisymmetric:
        dtheta -= theta * dr / r
    dh1 = (entrainment(h1) - h1 * (0.5 * cf - (h + 1.0) * grad)) / theta
    return dtheta, dh1, h


@numba.njit(cache=True, error_model="numpy")
def _edge(
    s: F64, ue: F64, due: F64, r: F64, dr: F64, j: int, t: float, axisymmetric: bool
) -> tuple[float, float, float, float]:
    """Hermite-interpolated Ue, Ue', r, r' at fraction ``t`` of the interval from s[j]
    (r = 1, r' = 0 when planar)."""
    length = s[j + 1] - s[j]
    u, du = _hermite(t, length, ue[j], ue[j + 1], due[j], due[j + 1])
    if not axisymmetric:
        return u, du, 1.0, 0.0
    rr, drr = _hermite(t, length, r[j], r[j + 1], dr[j], dr[j + 1])
    return u, du, rr, drr


@numba.njit(cache=True, error_model="numpy")
def _step_limit(
    scale: float,
    span: float,
    from_origin: float,
    min_step: float,
    theta: float,
    h1: float,
    u: float,
    du: float,
    f_theta: float,
    f_h1: float,
) -> float:
    """Largest step of the turbulent march from a state: the smallest of the step limits
    (``MAX_STEP``, ``STEP_ORIGIN``, ``STEP_UE``, ``STEP_THETA``, ``STEP_H1``), no smaller
    than ``min_step``.  A minimum of continuous functions, so continuous in the state."""
    limit = scale * MAX_STEP * span
    limit = min(limit, scale * STEP_ORIGIN * from_origin)
    limit = min(limit, scale * STEP_UE * u / max(abs(du), 1e-300))
    limit = min(limit, scale * STEP_THETA * theta / max(abs(f_theta), 1e-300))
    limit = min(limit, scale * STEP_H1 * (h1 - 3.3) / max(abs(f_h1), 1e-300))
    return max(limit, min_step)


@numba.njit(cache=True, error_model="numpy")
def _crossing(
    step: float, h1_a: float, h1_b: float, d_a: float, d_b: float, h_separation: float
) -> float:
    """Fraction of a step at which H, from the cubic Hermite interpolant of H1 over the
    step, reaches ``h_separation`` (below it at the start, at or above it at the end), by
    the Illinois variant of regula falsi, converged to rounding."""
    lo, hi = 0.0, 1.0
    g_lo = h_from_h1(h1_a) - h_separation
    g_hi = h_from_h1(h1_b) - h_separation
    side = 0
    for _ in range(100):
        if hi - lo <= 1e-15:
            break
        mid = (lo * g_hi - hi * g_lo) / (g_hi - g_lo)
        if not (lo < mid < hi):
            mid = 0.5 * (lo + hi)
        value, _ = _hermite(mid, step, h1_a, h1_b, d_a, d_b)
        g = h_from_h1(value) - h_separation
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


@numba.njit(cache=True, error_model="numpy")
def _head(
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
    scale: float,
    s_peak: float,
    tape: F64,
) -> tuple[float, int, int]:
    """Head's equations from ``start`` by classical Runge-Kutta with limited steps.

    Every step lies inside one interval between stations (it ends on the next station
    when the step limits allow), so that each step sees one smooth cubic Ue.  The step
    size is a continuous function of the state at the step's start (``_step_limit``,
    clipped to the next station); a step whose end state asks for a step smaller by
    more than ``RETAKE_FACTOR`` is taken again with the step that state asks for, up to
    ``RETAKES`` times, which is again a continuous rule.  Only a state outside the
    equations' validity (Ue, theta or H1 - 3.3 not positive, non-finite) halves a step.
    The result is then continuous in the inputs, short of a separation criterion
    touched tangentially.

    Returns the separation position (NaN when attached to the end; where the march
    stopped for ``STOP_BUDGET``, ``STOP_INVALID`` or ``STOP_THIN``), the step count and
    the stop code.  Downstream of ``s_peak`` (the largest body radius; inf when planar)
    the march stops where delta99 reaches ``THIN_LAYER_RATIO`` times the radius.
    A start at or beyond separation (an inflow with H >= ``h_separation``) fills the
    station at the start with the start state and separates there.

    ``tape`` (rows, ``TAPE_COLUMNS``) records the march for its derivatives
    (``ibl.sensitivity``) when it has more than one row: row 0 holds the record count, how
    the march ended (``TAPE_*``) and 1 if more steps were taken than it holds; each further
    row one step taken (its start position, step, interval, theta, H1, whether it ended
    on the station at the interval's end, and the right-hand side and H at its stages and
    its end).  With one row nothing is written.
    """
    record = tape.shape[0] > 1
    if record:
        tape[0, 0] = 0.0
        tape[0, 1] = TAPE_ATTACHED
        tape[0, 2] = 0.0
    origin = s[0]
    end = s[n - 1]
    span = end - origin
    # The smallest step also resolves the relaxation of H1 over a few theta from a start
    # with a very thin layer.
    min_step = 1e-9 * span
    budget = MAX_STEPS + 2 * n
    if theta0 > 0.0:
        min_step = min(min_step, 1e-3 * theta0)
    pos = start
    theta = theta0
    h1 = h1_from_h(h0)
    j = 0
    while j < n - 2 and s[j + 1] <= pos:
        j += 1
    m = j if s[j] >= pos else j + 1  # next station to fill
    u, du, rr, drr = _edge(s, ue, due, r, dr, j, (pos - s[j]) / (s[j + 1] - s[j]), axisymmetric)
    if not (u > 0.0 and rr > 0.0):
        return pos, 0, STOP_NONE
    if h0 >= h_separation:
        while m < n and s[m] <= pos:
            theta_out[m] = theta
            h_out[m] = h0
            m += 1
        if record:
            tape[0, 1] = TAPE_AT_START
        return pos, 0, STOP_NONE
    if pos > s_peak and _delta99_turbulent(theta, h0) >= THIN_LAYER_RATIO * rr:
        return pos, 0, STOP_THIN
    f_theta, f_h1, f_h = _rhs(theta, h1, u, du, rr, drr, inv_nu, law, axisymmetric)
    steps = 0
    while True:
        while m < n and s[m] <= pos:
            theta_out[m] = theta
            h_out[m] = h_from_h1(h1)
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
        limit = _step_limit(scale, span, pos - origin, min_step, theta, h1, u, du, f_theta, f_h1)
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
            th2 = theta + 0.5 * step * f_theta
            hh2 = h1 + 0.5 * step * f_h1
            ok = u2 > 0.0 and th2 > 0.0 and hh2 > 3.3 and r2 > 0.0
            if ok:
                a_theta, a_h1, a_h = _rhs(th2, hh2, u2, du2, r2, dr2, inv_nu, law, axisymmetric)
                th3 = theta + 0.5 * step * a_theta
                hh3 = h1 + 0.5 * step * a_h1
                ok = th3 > 0.0 and hh3 > 3.3
            if ok:
                b_theta, b_h1, b_h = _rhs(th3, hh3, u2, du2, r2, dr2, inv_nu, law, axisymmetric)
                t_end = 1.0 if land else (at_end - left) / length
                u4, du4, r4, dr4 = _edge(s, ue, due, r, dr, j, t_end, axisymmetric)
                th4 = theta + step * b_theta
                hh4 = h1 + step * b_h1
                ok = u4 > 0.0 and th4 > 0.0 and hh4 > 3.3 and r4 > 0.0
            if ok:
                c_theta, c_h1, c_h = _rhs(th4, hh4, u4, du4, r4, dr4, inv_nu, law, axisymmetric)
                theta_new = theta + step / 6.0 * (f_theta + 2.0 * (a_theta + b_theta) + c_theta)
                h1_new = h1 + step / 6.0 * (f_h1 + 2.0 * (a_h1 + b_h1) + c_h1)
                ok = theta_new > 0.0 and h1_new > 3.3 and np.isfinite(theta_new + h1_new)
            if not ok:
                # Outside the equations' validity: the only discrete branch of the step.
                if step <= min_step or steps >= budget:
                    # H1 at its floor or Ue at zero: the layer separates; anything else
                    # is a numerical stop.
                    if hh2 <= 3.3 or u2 <= 0.0:
                        if record:
                            tape[0, 1] = TAPE_AT_STEP_START
                        return pos, steps, STOP_NONE
                    return pos, steps, STOP_INVALID
                step = max(0.5 * step, min_step)
                continue
            g_theta, g_h1, h_new = _rhs(
                theta_new, h1_new, u4, du4, r4, dr4, inv_nu, law, axisymmetric
            )
            if retakes < RETAKES and steps < budget:
                shorter = RETAKE_FACTOR * _step_limit(
                    scale,
                    span,
                    at_end - origin,
                    min_step,
                    theta_new,
                    h1_new,
                    u4,
                    du4,
                    g_theta,
                    g_h1,
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
                tape[row, 4] = h1
                tape[row, 5] = 1.0 if land else 0.0
                if tape.shape[1] >= TAPE_COLUMNS:
                    stages = (
                        (f_theta, f_h1, f_h),
                        (a_theta, a_h1, a_h),
                        (b_theta, b_h1, b_h),
                        (c_theta, c_h1, c_h),
                        (g_theta, g_h1, h_new),
                    )
                    for q in range(5):
                        tape[row, 6 + 3 * q] = stages[q][0]
                        tape[row, 7 + 3 * q] = stages[q][1]
                        tape[row, 8 + 3 * q] = stages[q][2]
                tape[0, 0] = row
            else:
                tape[0, 2] = 1.0  # more steps than the tape holds
        if h_new >= h_separation:
            if record:
                tape[0, 1] = TAPE_CROSSING
            frac = _crossing(step, h1, h1_new, f_h1, g_h1, h_separation)
            separation = pos + frac * step
            while m < n and s[m] <= separation:  # the step's end, when separation is there
                t = (s[m] - pos) / step
                theta_out[m], _ = _hermite(t, step, theta, theta_new, f_theta, g_theta)
                h1_m, _ = _hermite(t, step, h1, h1_new, f_h1, g_h1)
                h_out[m] = min(h_from_h1(h1_m), h_separation)
                m += 1
            return separation, steps, STOP_NONE
        if pos + step > s_peak:
            # The thin-layer limit: where delta99 - ratio r crosses zero (linear).
            g_new = _delta99_turbulent(theta_new, h_new) - THIN_LAYER_RATIO * r4
            if g_new >= 0.0:
                g_old = _delta99_turbulent(theta, h_from_h1(h1)) - THIN_LAYER_RATIO * rr
                frac = g_old / (g_old - g_new) if g_old < 0.0 else 0.0
                reached = min(max(pos + frac * step, s_peak), pos + step)
                while m < n and s[m] <= reached:
                    t = (s[m] - pos) / step
                    theta_out[m], _ = _hermite(t, step, theta, theta_new, f_theta, g_theta)
                    h1_m, _ = _hermite(t, step, h1, h1_new, f_h1, g_h1)
                    h_out[m] = h_from_h1(h1_m)
                    m += 1
                return reached, steps, STOP_THIN
        # No station lies inside a step: the station at its end is filled from the state.
        pos = at_end
        theta, h1 = theta_new, h1_new
        f_theta, f_h1, f_h = g_theta, g_h1, h_new
        u, du, rr, drr = u4, du4, r4, dr4


@numba.njit(cache=True, error_model="numpy")
def _laminar_at(
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    at: float,
) -> tuple[float, float, float, float]:
    """theta^2, lambda, Re_theta and Ue at any arc length, between stations included.

    Thwaites' integral up to the station before ``at`` is completed by four-point Gauss
    quadrature of the Hermite interpolants over the rest of the interval.  ``layer`` holds
    the side's s, Ue, Ue', r, r' and the cumulative integral at the stations; ``params``
    its station count, start term theta0^2 r0^2 Ue0^6, start theta^2, nu and whether it
    is axisymmetric.
    """
    sk, uk, due, rk, dr, integral = layer
    n, c0, start_theta2, nu, axisym = params
    j = 0
    while j < n - 2 and sk[j + 1] < at:
        j += 1
    h = sk[j + 1] - sk[j]
    t_end = min(max((at - sk[j]) / h, 0.0), 1.0)
    acc = 0.0
    for q in range(4):
        u, _ = _hermite(_GN[q] * t_end, h, uk[j], uk[j + 1], due[j], due[j + 1])
        u = max(u, 0.0)
        w = u**4 * u
        if axisym:
            rr, _ = _hermite(_GN[q] * t_end, h, rk[j], rk[j + 1], dr[j], dr[j + 1])
            w *= rr * rr
        acc += _GW[q] * w
    total = integral[j] + acc * h * t_end
    u, du = _hermite(t_end, h, uk[j], uk[j + 1], due[j], due[j + 1])
    u = max(u, 0.0)
    rr = 1.0
    if axisym:
        rr, _ = _hermite(t_end, h, rk[j], rk[j + 1], dr[j], dr[j + 1])
    weight = rr * rr * u**THWAITES_B
    theta2 = (c0 + THWAITES_A * nu * total) / weight if weight > 0.0 else start_theta2
    return theta2, theta2 * du / nu, u * np.sqrt(theta2) / nu, u


@numba.njit(cache=True, error_model="numpy")
def _supplied_at(
    layer: tuple[F64, F64, F64, F64, F64, F64], n: int, nu: float, sup: F64, at: float
) -> tuple[float, float, float, float, float]:
    """theta^2, lambda, Re_theta, Ue and H at any arc length from supplied laminar station
    values (``sup`` rows theta, H): theta^2 and H linear in s between stations (Ue and
    Ue' by the Hermite interpolant); past the last finite station, extrapolated linearly
    from the two before it (a solution ending just ahead of separation), theta^2 at least
    its last value."""
    sk, uk, due = layer[0], layer[1], layer[2]
    j = 0
    while j < n - 2 and sk[j + 1] < at:
        j += 1
    h = sk[j + 1] - sk[j]
    t_end = min(max((at - sk[j]) / h, 0.0), 1.0)
    u, du = _hermite(t_end, h, uk[j], uk[j + 1], due[j], due[j + 1])
    u = max(u, 0.0)
    a, b = j, j + 1
    while a > 0 and not np.isfinite(sup[0, b]):
        b = a
        a -= 1
    if np.isfinite(sup[0, b]):
        frac = (at - sk[a]) / (sk[b] - sk[a])
        t0, t1 = sup[0, a] ** 2, sup[0, b] ** 2
        theta2 = max(t0 + frac * (t1 - t0), min(t0, t1))
        hh = sup[1, a] + frac * (sup[1, b] - sup[1, a])
    else:
        theta2, hh = sup[0, a] ** 2, sup[1, a]
    return theta2, theta2 * du / nu, u * np.sqrt(theta2) / nu, u, hh


@numba.njit(cache=True, error_model="numpy")
def _laminar_state(
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    sup: F64,
    supplied: bool,
    at: float,
) -> tuple[float, float, float, float]:
    """``_laminar_at``, or ``_supplied_at`` on a side whose laminar values are supplied."""
    if supplied:
        theta2, lam, re, u, _ = _supplied_at(layer, params[0], params[3], sup, at)
        return theta2, lam, re, u
    return _laminar_at(layer, params, at)


@numba.njit(cache=True, error_model="numpy")
def _margin(
    kind: int,
    theta2: float,
    lam: float,
    re: float,
    u: float,
    sigma: float,
    nu: float,
    lam_sep: float,
    tu: float,
) -> float:
    """How far past its threshold an event is (>= 0 once it happens).

    kind 0: laminar separation; 1: Michel; 2: Granville instability; 3: Abu-Ghannam & Shaw.
    """
    lc = min(max(lam, lam_sep), LAMBDA_MAX)
    if kind == 0:
        return lam_sep - lam
    if kind == 1:
        return re - michel(u * sigma / nu) if sigma > 0.0 else -np.inf
    if kind == 2:
        return re - granville_instability(lc)
    return re - abu_ghannam_shaw(lc, tu)


@numba.njit(cache=True, error_model="numpy")
def _refine(
    kind: int,
    lo: float,
    hi: float,
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    lam_sep: float,
    tu: float,
    sup: F64,
    supplied: bool,
) -> float:
    """Where an event's margin crosses zero between ``lo`` (before) and ``hi`` (after),
    by the Illinois variant of regula falsi on the interpolated laminar state, so that the
    position does not depend on how far apart the stations are."""
    sk = layer[0]
    n, nu = params[0], params[3]
    origin = sk[0]
    th, lam, re, u = _laminar_state(layer, params, sup, supplied, lo)
    g_lo = _margin(kind, th, lam, re, u, lo - origin, nu, lam_sep, tu)
    th, lam, re, u = _laminar_state(layer, params, sup, supplied, hi)
    g_hi = _margin(kind, th, lam, re, u, hi - origin, nu, lam_sep, tu)
    if not g_hi >= 0.0:
        return hi
    if not g_lo < 0.0:
        return lo
    # Converged to rounding, so that the position is continuous in the inputs (a coarser
    # tolerance makes it jump by up to the tolerance when the iteration count changes).
    tol = 1e-14 * (sk[n - 1] - origin)
    side = 0
    for _ in range(100):
        if hi - lo <= tol:
            break
        if np.isfinite(g_lo):
            mid = (lo * g_hi - hi * g_lo) / (g_hi - g_lo)
            if not (lo < mid < hi):
                mid = 0.5 * (lo + hi)
        else:
            mid = 0.5 * (lo + hi)
        th, lam, re, u = _laminar_state(layer, params, sup, supplied, mid)
        g = _margin(kind, th, lam, re, u, mid - origin, nu, lam_sep, tu)
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


# ----------------------------------------------------------------------------- the march


@numba.njit(cache=True, error_model="numpy")
def march_sides(
    s: F64,
    ue: F64,
    r: F64,
    count: NDArray[np.int64],
    ints: NDArray[np.int64],
    reals: F64,
    stations: F64,
    events: F64,
    step_scale: float = 1.0,
    laminar: F64 | None = None,
) -> int:
    """March every side; see the module docstring.

    Parameters (sides along axis 0)
    -------------------------------
    s, ue, r : (sides, n) arc length from the side's origin, Ue/U_inf, body radius
        (ones when planar); only the first ``count`` stations of a row are read.
    ints : (sides, 5 to 7) start kind, criterion code, closure code, skin-friction law,
        axisymmetric flag, turbulent method (``METHOD_HEAD`` when absent), laminar method
        (``LAMINAR_THWAITES`` when absent, or ``LAMINAR_SUPPLIED``).
    reals : (sides, 10) nu/U_inf, stagnation slope dUe/ds, inflow theta, inflow H,
        trip position (inf for none), Tu [%], separation lambda, initial H, separation H,
        supplied laminar separation s (read on supplied sides only; NaN or inf for none).
    stations : (sides, 7, n) output: theta, H, cf (NaN where undefined), Re_theta,
        delta99, turbulent flag (0/1), lambda.
    events : (sides, N_EVENT_FIELDS) output: kept station count, transition s, cause, Re_theta,
        laminar separation s, its Re_delta*, short-bubble flag, separation s,
        separation-is-turbulent flag, largest laminar lambda, smallest and largest
        turbulent Re_theta, Re_s at transition, mean lambda at transition, stop code of
        the turbulent march, and where it stopped (NaN unless the code is not STOP_NONE),
        then mesh figures: largest u_tau/U_inf (NaN if none) and its station, largest delta99
        and its station, largest nu_t/nu and its station; then the flag of stations cut
        before a non-finite value, the flag of stations cut at the thin-layer limit
        (``THIN_LAYER_RATIO``) and where that limit lies (NaN if nowhere).  Events beyond
        the thin-layer limit are dropped.
    step_scale : multiplies every step limit of the turbulent march (1 by default;
        smaller for convergence checks).
    laminar : (sides, 4, n) supplied laminar station values theta, H, Cf, delta99 (NaN
        where none), read on the sides whose ``ints`` column 5 is ``LAMINAR_SUPPLIED``,
        with the supplied laminar separation position in ``reals`` column 9 (NaN or inf
        for none).  There theta^2, H and Re_theta come from these values, lambda =
        theta^2 Ue'/nu, events between stations are located on theta^2 and H interpolated
        linearly in s (``_supplied_at``), laminar separation is the supplied one (its
        Re_delta* from the supplied H), and the laminar Cf and delta99 are the supplied
        ones; the criteria, the trip, the bubble class, Head's march and the thin-layer
        limit are unchanged.
    Positions are NaN when an event does not happen.  Returns the turbulent step count.
    """
    n_sides, n_max = s.shape
    assert stations.shape[0] == n_sides and stations.shape[1] == N_STATION_FIELDS
    assert stations.shape[2] >= n_max and events.shape[1] == N_EVENT_FIELDS
    assert ints.shape[1] >= 5 and reals.shape[1] >= 9
    due = np.empty(n_max)
    dr = np.empty(n_max)
    integral = np.empty(n_max)
    theta2 = np.empty(n_max)
    lam = np.empty(n_max)
    h_lam = np.empty(n_max)
    re_lam = np.empty(n_max)
    running = np.empty(n_max)
    theta_t = np.empty(n_max)
    h_t = np.empty(n_max)
    no_tape = np.zeros((1, TAPE_COLUMNS))
    ce_t = np.empty(n_max)
    steps = 0
    no_supply = np.full((4, n_max), np.nan)
    for k in range(n_sides):
        if laminar is not None:
            sup = laminar[k]
        else:
            sup = no_supply
        laminar_method = ints[k, 6] if ints.shape[1] > 6 else LAMINAR_THWAITES
        supplied = laminar is not None and laminar_method == LAMINAR_SUPPLIED
        n = count[k]
        sk, uk, rk = s[k], ue[k], r[k]
        start_kind, criterion, closure, law, axisym = (
            ints[k, 0],
            ints[k, 1],
            ints[k, 2],
            ints[k, 3],
            ints[k, 4] != 0,
        )
        nu, slope, theta_in, h_in, trip, tu = (
            reals[k, 0],
            reals[k, 1],
            reals[k, 2],
            reals[k, 3],
            reals[k, 4],
            reals[k, 5],
        )
        lam_sep, h_init, h_sep = reals[k, 6], reals[k, 7], reals[k, 8]
        method = ints[k, 5] if ints.shape[1] > 5 else METHOD_HEAD
        length = sk[n - 1] - sk[0]

        # Gradients at the stations.
        _derivative(sk, uk, n, due)
        if start_kind == START_STAGNATION:
            due[0] = slope
        if axisym:
            _derivative(sk, rk, n, dr)
        else:
            for i in range(n):
                dr[i] = 0.0

        # Thwaites (1949), planar or axisymmetric (Rott & Crabtree 1952): the integral of
        # r^2 Ue^5 by four-point Gauss quadrature on the Hermite interpolants.
        integral[0] = 0.0
        for i in range(n - 1):
            h = sk[i + 1] - sk[i]
            acc = 0.0
            for q in range(4):
                u, _ = _hermite(_GN[q], h, uk[i], uk[i + 1], due[i], due[i + 1])
                u = max(u, 0.0)
                w = u**4 * u
                if axisym:
                    rr, _ = _hermite(_GN[q], h, rk[i], rk[i + 1], dr[i], dr[i + 1])
                    w *= rr * rr
                acc += _GW[q] * w
            integral[i + 1] = integral[i] + h * acc
        if start_kind == START_STAGNATION:
            on_axis = axisym and rk[0] <= 1e-9 * length
            power = THWAITES_B + 2.0 if on_axis else THWAITES_B
            start_theta2 = THWAITES_A * nu / (power * slope)
        else:
            start_theta2 = theta_in * theta_in
        start_weight = rk[0] ** 2 * uk[0] ** THWAITES_B
        lam_max_seen = 0.0
        for i in range(n):
            if supplied:
                theta2[i] = sup[0, i] * sup[0, i]
                lam[i] = theta2[i] * due[i] / nu
                h_lam[i] = sup[1, i]
                re_lam[i] = uk[i] * sup[0, i] / nu
                continue
            weight = rk[i] ** 2 * uk[i] ** THWAITES_B
            if i == 0 or weight <= 0.0:
                theta2[i] = start_theta2
            else:
                theta2[i] = (start_theta2 * start_weight + THWAITES_A * nu * integral[i]) / weight
            lam[i] = theta2[i] * due[i] / nu
            lc = min(max(lam[i], lam_sep), LAMBDA_MAX)
            h_lam[i] = shape_factor(closure, lc)
            re_lam[i] = uk[i] * np.sqrt(theta2[i]) / nu

        # Laminar separation: lambda falls to the separation value.
        c0 = start_theta2 * start_weight
        layer = (sk, uk, due, rk, dr, integral)
        params = (n, c0, start_theta2, nu, axisym)
        lsep = np.inf
        lsep_re_dstar = np.nan
        for i in range(1, n):
            if lam[i] <= lam_sep and not supplied:
                lsep = _refine(0, sk[i - 1], sk[i], layer, params, lam_sep, tu, sup, supplied)
                _, _, re_sep, _ = _laminar_at(layer, params, lsep)
                lsep_re_dstar = re_sep * shape_factor(closure, lam_sep)
                break
        if supplied and reals[k, 9] <= sk[n - 1]:
            lsep = reals[k, 9]
            _, _, re_sep, _, h_at = _supplied_at(layer, n, nu, sup, lsep)
            lsep_re_dstar = re_sep * h_at

        # Natural transition.
        crit = np.inf
        lam_mean_tr = np.nan
        if criterion == 2:
            # Granville (1953): instability, then growth on the mean lambda since then.
            running[0] = 0.0
            for i in range(1, n):
                l0 = min(max(lam[i - 1], lam_sep), LAMBDA_MAX)
                l1 = min(max(lam[i], lam_sep), LAMBDA_MAX)
                running[i] = running[i - 1] + 0.5 * (l0 + l1) * (sk[i] - sk[i - 1])
            s_i = np.inf
            for i in range(1, n):
                lc = min(max(lam[i], lam_sep), LAMBDA_MAX)
                if re_lam[i] >= granville_instability(lc):
                    s_i = _refine(2, sk[i - 1], sk[i], layer, params, lam_sep, tu, sup, supplied)
                    _, _, re_i, _ = _laminar_state(layer, params, sup, supplied, s_i)
                    run_i = _interp(sk, running, n, s_i)
                    break
            if np.isfinite(s_i):
                s_prev = s_i
                lc = min(max(_interp(sk, lam, n, s_i), lam_sep), LAMBDA_MAX)
                g_prev = -granville_growth(lc)
                for i in range(1, n):
                    if sk[i] <= s_i:
                        continue
                    mean = (running[i] - run_i) / (sk[i] - s_i)
                    gi = re_lam[i] - re_i - granville_growth(mean)
                    if gi >= 0.0:
                        frac = min(max(g_prev / (g_prev - gi), 0.0), 1.0)
                        crit = s_prev + frac * (sk[i] - s_prev)
                        lam_mean_tr = mean
                        break
                    g_prev = gi
                    s_prev = sk[i]
        elif criterion != 0:
            for i in range(1, n):
                if criterion == 1:
                    gi = re_lam[i] - michel(uk[i] * (sk[i] - sk[0]) / nu)
                else:
                    lc = min(max(lam[i], lam_sep), LAMBDA_MAX)
                    gi = re_lam[i] - abu_ghannam_shaw(lc, tu)
                if gi >= 0.0:
                    crit = _refine(
                        criterion, sk[i - 1], sk[i], layer, params, lam_sep, tu, sup, supplied
                    )
                    break

        natural = min(crit, trip)
        if natural > sk[n - 1]:
            natural = np.inf
        short = lsep_re_dstar > OWEN_KLANFER_RE_DELTA_STAR
        lsep_first = lsep < natural
        lam_separates = lsep_first and (criterion == 0 or not short)
        if start_kind == START_TURBULENT:
            tr = sk[0]
            cause = CAUSE_TRIP
            lsep_first = False
            lam_separates = False
        elif lsep_first:
            tr = lsep if not lam_separates else np.inf
            cause = CAUSE_LAMINAR_SEPARATION
        else:
            tr = natural
            cause = CAUSE_TRIP if trip <= crit else CAUSE_CRITERION

        # The thin-layer limit applies downstream of the last station of largest radius.
        i_peak, s_peak = _radius_peak(sk, rk, n, axisym)

        # Head (1958) from transition, theta continuous.
        for i in range(n):
            theta_t[i] = np.nan
            h_t[i] = np.nan
        separation = lsep if lam_separates else np.nan
        stop = STOP_NONE
        if np.isfinite(tr):
            if start_kind == START_TURBULENT:
                start, th0, hh0 = sk[0], theta_in, h_in
            else:
                start = tr
                if start_kind != START_INFLOW:
                    start = max(tr, sk[0] + START_OFFSET * length)
                th2_start, _, _, _ = _laminar_state(layer, params, sup, supplied, start)
                th0 = np.sqrt(th2_start)
                hh0 = h_init
            if method == METHOD_LAG_ENTRAINMENT:
                separation, taken, stop = _lag.march(
                    sk,
                    uk,
                    due,
                    rk,
                    dr,
                    n,
                    start,
                    th0,
                    hh0,
                    1.0 / nu,
                    h_sep,
                    axisym,
                    theta_t,
                    h_t,
                    ce_t,
                    step_scale,
                    s_peak,
                )
            else:
                separation, taken, stop = _head(
                    sk,
                    uk,
                    due,
                    rk,
                    dr,
                    n,
                    start,
                    th0,
                    hh0,
                    1.0 / nu,
                    h_sep,
                    law,
                    axisym,
                    theta_t,
                    h_t,
                    step_scale,
                    s_peak,
                    no_tape,
                )
            steps += taken
        thin_s = np.nan  # where the thin-layer limit is reached (NaN if nowhere)
        if stop == STOP_THIN:
            thin_s, separation, stop = separation, np.nan, STOP_NONE
        stopped = np.nan
        if stop != STOP_NONE:
            stopped, separation = separation, np.nan

        # Station values up to separation (or where the march stopped, or the thin-layer
        # limit).
        cut = stopped if stop != STOP_NONE else separation
        if np.isfinite(thin_s):
            cut = thin_s
        keep = n
        if np.isfinite(cut):
            keep = 1
            while keep < n and sk[keep] <= cut:
                keep += 1
        re_min = np.inf
        re_max = -np.inf
        cut_non_finite = 0.0
        out = stations[k]
        for i in range(keep):
            turb = np.isfinite(theta_t[i])
            if turb:
                th = theta_t[i]
                hh = h_t[i]
                re = uk[i] * th / nu
                if method == METHOD_LAG_ENTRAINMENT:
                    cf = _lag.cf_nb(hh, re)
                else:
                    cf = cf_turbulent(law, hh, re)
                d99 = _delta99_turbulent(th, hh)
            else:
                th = np.sqrt(theta2[i])
                hh = h_lam[i]
                re = re_lam[i]
                lc = min(max(lam[i], lam_sep), LAMBDA_MAX)
                # The fits give l slightly below zero at lambda = -0.09 (-0.0015): clip.
                cf = 2.0 * max(shear(closure, lc), 0.0) / re if re > 0.0 else np.nan
                d99 = LAMINAR_DELTA99_RATIO * th
                if supplied:
                    cf, d99 = sup[2, i], sup[3, i]
            if not (np.isfinite(th) and np.isfinite(hh) and np.isfinite(re) and np.isfinite(d99)):
                keep, cut_non_finite = i, 1.0  # the stations end before the first bad one
                break
            if i > i_peak and d99 >= THIN_LAYER_RATIO * rk[i]:
                # The stations end before the first one past the thin-layer limit, which
                # lies where delta99 - ratio r crosses zero (linear between stations).
                g_i = d99 - THIN_LAYER_RATIO * rk[i]
                g_prev = out[4, i - 1] - THIN_LAYER_RATIO * rk[i - 1]
                frac = g_prev / (g_prev - g_i) if g_prev < 0.0 else 0.0
                thin_s = sk[i - 1] + frac * (sk[i] - sk[i - 1])
                keep = i
                break
            if turb:
                re_min = min(re_min, re)
                re_max = max(re_max, re)
            else:
                lam_max_seen = max(lam_max_seen, lam[i])
            out[0, i] = th
            out[1, i] = hh
            out[2, i] = cf if (uk[i] > 0.0 and np.isfinite(cf)) else np.nan
            out[3, i] = re
            out[4, i] = d99
            out[5, i] = 1.0 if turb else 0.0
            out[6, i] = lam[i]
        if np.isfinite(thin_s):
            # Events beyond the thin-layer limit did not happen on the stations kept.
            if tr > thin_s:
                tr = np.inf
                lam_mean_tr = np.nan
            if lsep > thin_s:
                lsep = np.inf
            if separation > thin_s:
                separation = np.nan
            if stopped > thin_s:
                stop, stopped = STOP_NONE, np.nan
        ev = events[k]
        ev[0] = keep
        if start_kind == START_TURBULENT:
            tr = np.inf  # turbulent from the first station: no transition on this surface
        ev[1] = tr if np.isfinite(tr) else np.nan
        ev[2] = cause
        ev[3] = np.nan
        ev[12] = np.nan
        if np.isfinite(tr):
            _, _, ev[3], u_tr = _laminar_state(layer, params, sup, supplied, tr)
            ev[12] = u_tr * (tr - sk[0]) / nu
        shown = lsep_first and np.isfinite(lsep)
        ev[4] = lsep if shown else np.nan
        ev[5] = lsep_re_dstar
        ev[6] = 1.0 if short else 0.0
        ev[7] = separation
        ev[8] = 1.0 if (np.isfinite(separation) and not lam_separates) else 0.0
        ev[9] = lam_max_seen
        ev[10] = re_min if re_min <= re_max else np.nan
        ev[11] = re_max if re_min <= re_max else np.nan
        ev[13] = lam_mean_tr
        ev[14] = stop
        ev[15] = stopped
        # Mesh figures: the largest friction velocity (smallest first cell), the largest
        # delta99, the largest outer eddy viscosity (Clauser: 0.0168 Re_delta*, turbulent).
        i_tau, i_d99, i_nut = -1, 0, -1
        tau_max, nut_max = 0.0, 0.0
        for i in range(keep):
            cf = out[2, i]
            if np.isfinite(cf) and cf > 0.0 and uk[i] > 0.0:
                u_tau = uk[i] * np.sqrt(0.5 * cf)
                if u_tau > tau_max:
                    tau_max, i_tau = u_tau, i
            if out[4, i] > out[4, i_d99]:
                i_d99 = i
            if out[5, i] > 0.5:
                nut = CLAUSER * out[3, i] * out[1, i]
                if nut > nut_max:
                    nut_max, i_nut = nut, i
        ev[16] = tau_max if i_tau >= 0 else np.nan
        ev[17] = i_tau
        ev[18] = out[4, i_d99]
        ev[19] = i_d99
        ev[20] = nut_max
        ev[21] = max(i_nut, 0)
        ev[22] = cut_non_finite
        ev[23] = 1.0 if np.isfinite(thin_s) else 0.0
        ev[24] = thin_s
    return steps


@numba.njit(cache=True, error_model="numpy", nogil=True)
def march_sides_nogil(
    s: F64,
    ue: F64,
    r: F64,
    count: NDArray[np.int64],
    ints: NDArray[np.int64],
    reals: F64,
    stations: F64,
    events: F64,
    laminar: F64 | None = None,
) -> int:
    """``march_sides``, releasing the interpreter lock while it runs: for marches split
    between threads.  A lone march keeps the lock: in the service, handing it to the event
    loop's thread and waiting to get it back costs more than the march itself."""
    return march_sides(s, ue, r, count, ints, reals, stations, events, 1.0, laminar)


# The lag-entrainment march calls this module's helpers; imported last for that reason.
from ibl import lag_entrainment as _lag  # noqa: E402
