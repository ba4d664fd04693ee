"""Derivatives of a side's events and friction drag with respect to its edge velocities.

Reverse-mode (adjoint) differentiation of the discrete march of ``ibl.kernel``, compiled:
the side's laminar part is recomputed (node gradients, Thwaites' integral), Head's march
is run again with its steps recorded (``kernel._head``'s tape), and one backward sweep
carries the derivatives of every quantity asked for at once, through:

- each event located between stations (laminar separation, Michel's, Granville's
  instability and Abu-Ghannam & Shaw's criteria) by the implicit-function rule
  ds*/dp = -(dg/dp)/(dg/ds), g the event's margin (``kernel._margin``) on the
  interpolated laminar state; Granville's growth step, crossed by linear interpolation
  between stations, through that interpolation;
- Thwaites' integral (four-point Gauss quadrature of the cubic Hermite interpolant of Ue),
  theta^2 = (c0 + a nu integral)/Ue^b, lambda = theta^2 Ue'/nu, Re_theta = Ue theta/nu;
- the node gradients Ue' (three-point stencil and the Fritsch-Carlson limiter), and the
  stagnation-point slope Ue[1]/s[1] of a single surface that starts at Ue = 0;
- each Runge-Kutta step of Head's equations (the right-hand side's partial derivatives in
  ``_rhs_partials``), the start of the turbulent march at transition (its position and
  the laminar theta there), and separation located inside the last step on the Hermite
  interpolant of H1;
- the friction drag's trapezoids and its power-law first panel (``ibl.drag``).

Held fixed (the derivative is that of the march with these choices frozen): the step
sizes of the turbulent march that do not end on a station (a continuous function of the
state whose influence on the result is of the order of the truncation error), which
stations are laminar or turbulent and how many are kept (discrete).

Covered: sides of a single surface (``surface.s`` with edge velocity, Cp or p at any
Mach number: the isentropic relation's dq/dCp in ``_isentropic_q_slope``), planar or
axisymmetric (stations that end at the thin-layer limit are a count kept, held), smoothed
or not (the spline's transpose at its
penalty, ``_smoothing_transpose``), every transition criterion (Granville's two steps in
``_granville_bar``), trips; the sides of a contour, smoothed or not (the stagnation point
fitted to the smoothed values, the spline's transpose applied to the sum over the input
points), cut or not where the edge velocity vanishes again (``_cut_side``: the cut held),
where the stagnation point's position s0 and slope come
from a model fitted to the nose values (``prepare.Nose``): the slope's bar is kept apart,
and the same backward sweep carries the derivatives with respect to every station's s
(each piece above through its interval's length and the distance from its start: the
Hermite basis ``_basis_dh``, the stencil and limiter, the quadrature, the Runge-Kutta
steps' points and the steps that end on a station, the start offset, Michel's Re_s,
Granville's running integral, the friction drag's first panel), r (on a body of
revolution) and x (the friction drag's abscissa); ``_stagnation_shift`` turns them into
d/ds0 (every station beyond the stagnation point moves by +-ds0, the stagnation
station's x and r along its segment) and ``_contour_to_q`` sums the three parts over the
input points; the profile drag's share at the last station (seeded in ``_head_bar``).
Anything else returns a status code naming the reason (``REASONS``).
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Literal

import numba
import numpy as np
from numpy.typing import NDArray

from ibl import kernel
from ibl import march as march_module
from ibl import prepare as prepare_module
from ibl import smoothing as smoothing_module
from ibl.drag import FIRST_PANEL_EXPONENTS
from ibl.laminar import GAUSS_NODES, GAUSS_WEIGHTS, LAMBDA_MAX, THWAITES_A, THWAITES_B
from ibl.march import SideState
from ibl.prepare import SideInput, _dynamic_pressure
from ibl.schema import Case, Notice, Sensitivities
from ibl.turbulent import H1_HIGH_BRANCH_MAX, H1_LOW_BRANCH_MIN

__all__ = ["QUANTITIES", "REASONS", "derivatives", "side_arrays", "side_sensitivities"]

F64 = NDArray[np.float64]

#: The quantities, in the order of the rows of ``side_sensitivities``' output.
QUANTITIES = ("transition", "laminar_separation", "separation", "friction_drag", "profile_drag")
#: Status codes of ``side_sensitivities`` per quantity: derivatives computed, the event
#: does not occur (or no friction drag), and the reasons why no derivative is given.
OK, ABSENT, TANGENTIAL, TAPE_FULL, NOT_COVERED, LAMINAR_EDGE = 0, 1, 3, 4, 5, 6
REASONS = {
    LAMINAR_EDGE: "the layer is laminar at the trailing edge: the profile drag of a laminar "
    "trailing edge is not differentiated",
    TANGENTIAL: "the criterion is crossed tangentially: the position has no derivative",
    TAPE_FULL: "the turbulent march took more steps than recorded",
    NOT_COVERED: "the march ended in a way that is not differentiated (numerical stop)",
}
#: Most recorded steps of the turbulent march per side beyond two per station, and the
#: rows of the tape tried first (the march usually takes fewer than two steps per station).
TAPE_STEPS, TAPE_FIRST_ROWS = 4000, 64

_GN = GAUSS_NODES.copy()
_GW = GAUSS_WEIGHTS.copy()
_LN10 = float(np.log(10.0))
_P_LOW, _P_HIGH = FIRST_PANEL_EXPONENTS


# ----------------------------------------------------------------------------- pieces


@numba.njit(cache=True, error_model="numpy")
def _basis(t: float, h: float) -> tuple[float, ...]:
    """Coefficients of (f0, f1, d0, d1) in the cubic Hermite value, its slope d/ds and its
    second derivative d2/ds2 at fraction t of an interval of length h."""
    t2 = t * t
    t3 = t2 * t
    return (
        2 * t3 - 3 * t2 + 1,
        -2 * t3 + 3 * t2,
        (t3 - 2 * t2 + t) * h,
        (t3 - t2) * h,
        (6 * t2 - 6 * t) / h,
        -(6 * t2 - 6 * t) / h,
        3 * t2 - 4 * t + 1,
        3 * t2 - 2 * t,
        (12 * t - 6) / (h * h),
        -(12 * t - 6) / (h * h),
        (6 * t - 4) / h,
        (6 * t - 2) / h,
    )


@numba.njit(cache=True, error_model="numpy")
def _edge_at(uk: F64, due: F64, j: int, b: tuple[float, ...]) -> tuple[float, float, float]:
    """Ue, Ue' and Ue'' of the Hermite interpolant on interval j from its ``_basis``."""
    f0, f1, d0, d1 = uk[j], uk[j + 1], due[j], due[j + 1]
    u = b[0] * f0 + b[1] * f1 + b[2] * d0 + b[3] * d1
    us = b[4] * f0 + b[5] * f1 + b[6] * d0 + b[7] * d1
    uu = b[8] * f0 + b[9] * f1 + b[10] * d0 + b[11] * d1
    return u, us, uu


@numba.njit(cache=True, error_model="numpy")
def _edge_bar(bu: F64, bdu: F64, j: int, b: tuple[float, ...], u_bar: float, us_bar: float) -> None:
    """Adds the derivatives of (Ue, Ue') on interval j to the bars of the node values."""
    bu[j] += u_bar * b[0] + us_bar * b[4]
    bu[j + 1] += u_bar * b[1] + us_bar * b[5]
    bdu[j] += u_bar * b[2] + us_bar * b[6]
    bdu[j + 1] += u_bar * b[3] + us_bar * b[7]


@numba.njit(cache=True, error_model="numpy")
def _basis_dh(t: float, h: float) -> tuple[float, ...]:
    """Derivatives of the first eight coefficients of ``_basis`` (value and slope) with
    respect to the interval's length h at a fixed distance t h from its start."""
    t2 = t * t
    t3 = t2 * t
    a = (6 * t3 - 6 * t2) / h
    return (
        -a,
        a,
        -2 * t3 + 2 * t2,
        -2 * t3 + t2,
        (-18 * t2 + 12 * t) / (h * h),
        (18 * t2 - 12 * t) / (h * h),
        -(6 * t2 - 4 * t) / h,
        -(6 * t2 - 2 * t) / h,
    )


@numba.njit(cache=True, error_model="numpy")
def _edge_dh(uk: F64, due: F64, j: int, d: tuple[float, ...]) -> tuple[float, float]:
    """d/dh of the Hermite interpolant's value and slope on interval j (``_basis_dh``),
    the node values and gradients held."""
    f0, f1, d0, d1 = uk[j], uk[j + 1], due[j], due[j + 1]
    return (
        d[0] * f0 + d[1] * f1 + d[2] * d0 + d[3] * d1,
        d[4] * f0 + d[5] * f1 + d[6] * d0 + d[7] * d1,
    )


@numba.njit(cache=True, error_model="numpy")
def _interval_bar(bs: F64, j: int, b_tau: float, b_h: float) -> None:
    """Adds the bars of a quantity that depends on interval j through the distance tau
    from its start (bar ``b_tau``, at a fixed position) and its length (bar ``b_h``, at a
    fixed tau) to the bars of the station positions s_j and s_j+1."""
    bs[j] -= b_tau + b_h
    bs[j + 1] += b_h


@numba.njit(cache=True, error_model="numpy")
def _h_and_slope(h1: float) -> tuple[float, float]:
    """``kernel.h_from_h1`` and dH/dH1 (zero between the branches), with one power."""
    excess = max(h1 - 3.3, 1e-12)
    if excess >= H1_LOW_BRANCH_MIN - 3.3:
        h = 1.1 + (excess / 0.8234) ** (-1.0 / 1.287)
        return h, -(h - 1.1) / (1.287 * excess)
    if excess <= H1_HIGH_BRANCH_MAX - 3.3:
        h = 0.6778 + (excess / 1.5501) ** (-1.0 / 3.064)
        return h, -(h - 0.6778) / (3.064 * excess)
    return kernel.h_from_h1(h1), 0.0


@numba.njit(cache=True, error_model="numpy")
def _cf_partials(law: int, h: float, re: float) -> tuple[float, float, float]:
    """``kernel.cf_turbulent`` and its derivatives with respect to H and Re_theta."""
    cf = kernel.cf_turbulent(law, h, re)
    if law == 0:
        c_re = -0.268 * cf / re if re > 1e-300 else 0.0
        return cf, -0.678 * _LN10 * cf, c_re
    log_re = np.log10(max(re, 20.0))
    c_h = cf * (-1.33 - 0.31 * np.log(log_re))
    c_re = -cf * (1.74 + 0.31 * h) / log_re / (re * _LN10) if re > 20.0 else 0.0
    return cf, c_h, c_re


@numba.njit(cache=True, error_model="numpy")
def _rhs_partials_stored(
    theta: float,
    h1: float,
    u: float,
    du: float,
    inv_nu: float,
    law: int,
    ft: float,
    fh: float,
    h: float,
    rho: float,
) -> tuple[float, ...]:
    """``kernel._rhs``: d theta/ds, d H1/ds and their derivatives with respect to theta,
    H1, Ue and Ue' (in that order, first of d theta/ds then of d H1/ds), then that of
    d theta/ds with respect to rho = r'/r (zero when planar), from the
    right-hand side (ft, fh) and H the march computed at this state: Cf and F(H1)
    follow from them by arithmetic, so no power, exponential or logarithm is evaluated
    again (Ludwieg-Tillmann; White's law takes two logarithms)."""
    excess = max(h1 - 3.3, 1e-12)
    if excess >= H1_LOW_BRANCH_MIN - 3.3:
        hp = -(h - 1.1) / (1.287 * excess)
    elif excess <= H1_HIGH_BRANCH_MAX - 3.3:
        hp = -(h - 0.6778) / (3.064 * excess)
    else:
        hp = 0.0
    grad = theta * du / u
    cf = 2.0 * (ft + (h + 2.0) * grad + theta * rho)
    q = 0.5 * cf - (h + 1.0) * grad
    e = fh * theta + h1 * q
    ep = -0.6169 * e / (h1 - 3.0) if h1 - 3.0 > 1e-12 else 0.0
    re = u * theta * inv_nu
    if law == 0:
        c_h = -0.678 * _LN10 * cf
        c_re = -0.268 * cf / re if re > 1e-300 else 0.0
    else:
        log_re = np.log10(max(re, 20.0))
        c_h = cf * (-1.33 - 0.31 * np.log(log_re))
        c_re = -cf * (1.74 + 0.31 * h) / log_re / (re * _LN10) if re > 20.0 else 0.0
    cf_t, cf_u, cf_h = c_re * u * inv_nu, c_re * theta * inv_nu, c_h * hp
    g_t, g_u, g_du = du / u, -theta * du / (u * u), theta / u
    ft_t = 0.5 * cf_t - (h + 2.0) * g_t - rho
    ft_h = 0.5 * cf_h - hp * grad
    ft_u = 0.5 * cf_u - (h + 2.0) * g_u
    ft_du = -(h + 2.0) * g_du
    q_t = 0.5 * cf_t - (h + 1.0) * g_t
    q_h = 0.5 * cf_h - hp * grad
    q_u = 0.5 * cf_u - (h + 1.0) * g_u
    q_du = -(h + 1.0) * g_du
    fh_t = -h1 * q_t / theta - fh / theta
    fh_h = (ep - q - h1 * q_h) / theta
    fh_u = -h1 * q_u / theta
    fh_du = -h1 * q_du / theta
    return ft, fh, ft_t, ft_h, ft_u, ft_du, fh_t, fh_h, fh_u, fh_du, -theta


@numba.njit(cache=True, error_model="numpy")
def _shear_slope(closure: int, lam: float) -> float:
    """dl/dlambda of ``kernel.shear``."""
    if closure == 1:
        return 0.62 * (lam + 0.09) ** -0.38 if lam + 0.09 > 0.0 else 0.0
    if lam >= 0.0:
        return 1.57 - 3.6 * lam
    return 1.402 + 0.018 * 0.107 / (lam + 0.107) ** 2


@numba.njit(cache=True, error_model="numpy")
def _michel_slope(re_s: float) -> float:
    """d/dRe_s of ``kernel.michel``."""
    return float(1.174 * (0.46 * re_s**-0.54 - 0.54 * 22400.0 * re_s**-1.54))


@numba.njit(cache=True, error_model="numpy")
def _granville_instability_slope(lam: float) -> float:
    """d/dlambda of ``kernel.granville_instability`` (exp of a piecewise-linear table:
    zero outside the table; at a table point the derivative does not exist and the
    segment above is taken)."""
    table = kernel._G_LAM
    if not table[0] <= lam < table[-1]:
        return 0.0
    j = np.searchsorted(table, lam, side="right") - 1
    rise = (kernel._G_LOG_RE[j + 1] - kernel._G_LOG_RE[j]) / (table[j + 1] - table[j])
    return float(kernel.granville_instability(lam) * rise)


@numba.njit(cache=True, error_model="numpy")
def _granville_growth_slope(mean: float) -> float:
    """d/dlambda_mean of ``kernel.granville_growth`` (zero where the mean is clipped)."""
    if not -0.04 < mean < 0.04:
        return 0.0
    return float(55.0 * np.exp(6.1 + 55.0 * mean))


@numba.njit(cache=True, error_model="numpy")
def _ags_slope(lam: float, tu_percent: float) -> float:
    """d/dlambda of ``kernel.abu_ghannam_shaw`` (zero where lambda is clipped)."""
    if not -0.1 < lam < 0.1:
        return 0.0
    if lam <= 0.0:
        f, fp = 6.91 + 12.75 * lam + 63.64 * lam * lam, 12.75 + 2 * 63.64 * lam
    else:
        f, fp = 6.91 + 2.48 * lam - 12.27 * lam * lam, 2.48 - 2 * 12.27 * lam
    k = 1.0 - tu_percent / 6.91
    return float(np.exp(f * k) * k * fp)


# ----------------------------------------------------------------------------- laminar


@numba.njit(cache=True, error_model="numpy")
def _laminar_bar(
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    integral: F64,
    n: int,
    c0: float,
    c0_slope: float,
    nu: float,
    at: float,
    b_th2: float,
    b_lam: float,
    b_re: float,
    b_u: float,
    accumulate: bool,
    bu: F64,
    bdu: F64,
    bint: F64,
    geo: tuple[F64, F64, F64],
) -> float:
    """Reverse of ``kernel._laminar_at``: adds bars times the derivatives of theta^2,
    lambda, Re_theta and Ue at ``at`` to the bars of Ue, Ue' and the cumulative integral at
    the stations (when ``accumulate``), and returns the same combination of their
    derivatives with respect to ``at``.  ``c0_slope`` is dc0/dUe[0]; r and r' are ones and
    zeros when planar (the same arithmetic as the march's).  ``geo`` holds the bars of
    the station positions, radii and radius gradients (filled when it has columns: the
    position ``at`` held, the interval's stations move)."""
    j = 0
    while j < n - 2 and sk[j + 1] < at:
        j += 1
    h = sk[j + 1] - sk[j]
    t = min(max((at - sk[j]) / h, 0.0), 1.0)
    acc = 0.0
    dacc = 0.0
    for q in range(4):
        b = _basis(_GN[q] * t, h)
        u, us, _ = _edge_at(uk, due, j, b)
        rq, rs, _ = _edge_at(rk, dr, j, b)
        if u > 0.0:
            acc += _GW[q] * u**5 * rq * rq
            dacc += _GW[q] * (5.0 * u**4 * us * rq * rq + u**5 * 2.0 * rq * rs) * h * _GN[q]
    total = integral[j] + acc * h * t
    d_total = acc + t * dacc  # d total / d at
    b = _basis(t, h)
    u, us, uu = _edge_at(uk, due, j, b)
    rr, rs, _ = _edge_at(rk, dr, j, b)
    u = max(u, 0.0)
    weight = rr * rr * u**THWAITES_B
    theta2 = (c0 + THWAITES_A * nu * total) / weight
    root = np.sqrt(theta2)
    bt = b_th2 + b_lam * us / nu + b_re * u / (2.0 * nu * root)
    bus = b_lam * theta2 / nu
    b_weight = -bt * theta2 / weight
    bu_ = b_u + b_re * root / nu + b_weight * rr * rr * THWAITES_B * u ** (THWAITES_B - 1.0)
    brr = b_weight * 2.0 * rr * u**THWAITES_B
    btotal = bt * THWAITES_A * nu / weight
    b_at = btotal * d_total + bu_ * us + bus * uu + brr * rs
    if accumulate:
        _edge_bar(bu, bdu, j, b, bu_, bus)
        bint[j] += btotal
        bu[0] += bt / weight * c0_slope
        bs, br, bdr = geo
        geometry = bs.shape[0] > 0
        h_acc = 0.0  # d acc / dh at a fixed tau
        for q in range(4):
            bq = _basis(_GN[q] * t, h)
            uq, _, _ = _edge_at(uk, due, j, bq)
            rq, _, _ = _edge_at(rk, dr, j, bq)
            if uq > 0.0:
                w = btotal * h * t * _GW[q] * 5.0 * uq**4 * rq * rq
                _edge_bar(bu, bdu, j, bq, w, 0.0)
                if geometry:
                    wr = btotal * h * t * _GW[q] * uq**5 * 2.0 * rq
                    _edge_bar(br, bdr, j, bq, wr, 0.0)
                    dq = _basis_dh(_GN[q] * t, h)
                    uh, _ = _edge_dh(uk, due, j, dq)
                    rh, _ = _edge_dh(rk, dr, j, dq)
                    h_acc += _GW[q] * (5.0 * uq**4 * rq * rq * uh + uq**5 * 2.0 * rq * rh)
        if geometry:
            _edge_bar(br, bdr, j, b, brr, 0.0)
            d = _basis_dh(t, h)
            uh, ush = _edge_dh(uk, due, j, d)
            rh, _ = _edge_dh(rk, dr, j, d)
            b_h = btotal * h * t * h_acc + bu_ * uh + bus * ush + brr * rh
            _interval_bar(bs, j, b_at, b_h)
    return float(b_at)


@numba.njit(cache=True, error_model="numpy")
def _integral_bar(
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    n: int,
    bint: F64,
    bu: F64,
    bdu: F64,
    wanted: NDArray[np.bool_],
    bs: F64,
    br: F64,
    bdr: F64,
) -> None:
    """Reverse of the cumulative Thwaites integral at the stations (``kernel.march_sides``)
    for every wanted row of the bars (k, n); also to the bars of the station positions,
    radii and radius gradients when ``bs`` has columns."""
    rows = bint.shape[0]
    geometry = bs.shape[1] > 0
    suffix = np.zeros(rows)
    for i in range(n - 1, 0, -1):
        for k in range(rows):
            suffix[k] += bint[k, i]  # the bar of the piece over interval i - 1
        iv = i - 1
        h = sk[iv + 1] - sk[iv]
        piece_h = 0.0  # d(piece)/dh, the Gauss nodes at fixed fractions of the interval
        for q in range(4):
            b = _basis(_GN[q], h)
            u, _, _ = _edge_at(uk, due, iv, b)
            rq, _, _ = _edge_at(rk, dr, iv, b)
            if u > 0.0:
                w = h * _GW[q] * 5.0 * u**4 * rq * rq
                for k in range(rows):
                    if wanted[k] and suffix[k] != 0.0:
                        _edge_bar(bu[k], bdu[k], iv, b, suffix[k] * w, 0.0)
                if geometry:
                    wr = h * _GW[q] * u**5 * 2.0 * rq
                    uh = (b[2] * due[iv] + b[3] * due[iv + 1]) / h
                    rh = (b[2] * dr[iv] + b[3] * dr[iv + 1]) / h
                    piece_h += _GW[q] * u**4 * rq * (u * rq + h * (5.0 * rq * uh + 2.0 * u * rh))
                    for k in range(rows):
                        if wanted[k] and suffix[k] != 0.0:
                            _edge_bar(br[k], bdr[k], iv, b, suffix[k] * wr, 0.0)
        if geometry:
            for k in range(rows):
                if wanted[k] and suffix[k] != 0.0:
                    bs[k, iv + 1] += suffix[k] * piece_h
                    bs[k, iv] -= suffix[k] * piece_h


@numba.njit(cache=True, error_model="numpy")
def _derivative_bar(
    s: F64, f: F64, n: int, dbars: F64, fbars: F64, wanted: NDArray[np.bool_], sbars: F64
) -> None:
    """Reverse of ``kernel._derivative`` (stencil, then the limiter): adds the derivatives
    of the node gradients, weighted by each wanted row of ``dbars`` (k, n; overwritten),
    to the same row of ``fbars``, and to that of ``sbars`` (the station positions) when it
    has columns."""
    d = np.empty(n)
    kernel._stencil(s, f, n, d)
    # The limiter forward, keeping the values entering each interval's pass.
    enter = np.empty((n, 2))
    for i in range(n - 1):
        enter[i, 0], enter[i, 1] = d[i], d[i + 1]
        kernel._limit_interval(s, f, d, i)
    geometry = sbars.shape[1] > 0
    for k in range(dbars.shape[0]):
        if wanted[k]:
            sbar = sbars[k] if geometry else sbars[0]
            _derivative_row_bar(s, f, n, enter, dbars[k], fbars[k], sbar, geometry)


@numba.njit(cache=True, error_model="numpy")
def _end_stencil_bar(
    a: float, b: float, f0: float, f1: float, f2: float, bar: float
) -> tuple[float, float]:
    """Bars of the spacings a = s1 - s0 and b = s2 - s1 of the one-sided stencil
    (-(2a + b) b f0 + (a + b)^2 f1 - a^2 f2) / (a b (a + b)) from the bar of its value."""
    q = a * b * (a + b)
    value = (-(2 * a + b) * b * f0 + (a + b) ** 2 * f1 - a * a * f2) / q
    n_a = -2 * b * f0 + 2 * (a + b) * f1 - 2 * a * f2
    n_b = 2 * (a + b) * (f1 - f0)
    return (
        bar * (n_a - value * (2 * a * b + b * b)) / q,
        bar * (n_b - value * (a * a + 2 * a * b)) / q,
    )


@numba.njit(cache=True, error_model="numpy")
def _derivative_row_bar(
    s: F64, f: F64, n: int, enter: F64, dbar: F64, fbar: F64, sbar: F64, geometry: bool
) -> None:
    """The backward part of ``_derivative_bar`` for one row."""
    # The limiter backward.
    for i in range(n - 2, -1, -1):
        hs = s[i + 1] - s[i]
        delta = (f[i + 1] - f[i]) / hs
        if delta == 0.0:
            dbar[i] = 0.0
            dbar[i + 1] = 0.0
            continue
        di, dj = enter[i, 0], enter[i, 1]
        clip_i = di / delta < 0.0
        clip_j = dj / delta < 0.0
        if clip_i:
            di = 0.0
        if clip_j:
            dj = 0.0
        norm = (di * di + dj * dj) / (delta * delta)
        bi, bj = dbar[i], dbar[i + 1]
        if norm > 9.0:
            r = np.sqrt(di * di + dj * dj)
            ad = abs(delta)
            r3 = r * r * r
            bdi = bi * (3 * ad / r - 3 * di * di * ad / r3) - bj * 3 * dj * di * ad / r3
            bdj = -bi * 3 * di * dj * ad / r3 + bj * (3 * ad / r - 3 * dj * dj * ad / r3)
            bdelta = (bi * 3 * di + bj * 3 * dj) * np.sign(delta) / r
            bi, bj = bdi, bdj
            fbar[i + 1] += bdelta / hs
            fbar[i] -= bdelta / hs
            if geometry:
                sbar[i + 1] -= bdelta * delta / hs
                sbar[i] += bdelta * delta / hs
        dbar[i] = 0.0 if clip_i else bi
        dbar[i + 1] = 0.0 if clip_j else bj
    # The stencil backward.
    a0 = s[1] - s[0]
    b0 = s[2] - s[1]
    a1 = s[n - 1] - s[n - 2]
    b1 = s[n - 2] - s[n - 3]
    for i in range(1, n - 1):
        h1 = s[i] - s[i - 1]
        h2 = s[i + 1] - s[i]
        fbar[i - 1] += -h2 / (h1 * (h1 + h2)) * dbar[i]
        fbar[i] += (h2 - h1) / (h1 * h2) * dbar[i]
        fbar[i + 1] += h1 / (h2 * (h1 + h2)) * dbar[i]
        if geometry and dbar[i] != 0.0:
            # value = N / Q, N = -h2^2 f_i-1 + (h2^2 - h1^2) f_i + h1^2 f_i+1,
            # Q = h1 h2 (h1 + h2).
            q = h1 * h2 * (h1 + h2)
            value = (-h2 * h2 * f[i - 1] + (h2 * h2 - h1 * h1) * f[i] + h1 * h1 * f[i + 1]) / q
            b_h1 = dbar[i] * (2 * h1 * (f[i + 1] - f[i]) - value * (2 * h1 * h2 + h2 * h2)) / q
            b_h2 = dbar[i] * (2 * h2 * (f[i] - f[i - 1]) - value * (h1 * h1 + 2 * h1 * h2)) / q
            sbar[i - 1] -= b_h1
            sbar[i] += b_h1 - b_h2
            sbar[i + 1] += b_h2
    fbar[0] += -(2 * a0 + b0) / (a0 * (a0 + b0)) * dbar[0]
    fbar[1] += (a0 + b0) / (a0 * b0) * dbar[0]
    fbar[2] += -a0 / (b0 * (a0 + b0)) * dbar[0]
    fbar[n - 1] += (2 * a1 + b1) / (a1 * (a1 + b1)) * dbar[n - 1]
    fbar[n - 2] += -(a1 + b1) / (a1 * b1) * dbar[n - 1]
    fbar[n - 3] += a1 / (b1 * (a1 + b1)) * dbar[n - 1]
    if geometry:
        b_a, b_b = _end_stencil_bar(a0, b0, f[0], f[1], f[2], dbar[0])
        sbar[0] -= b_a
        sbar[1] += b_a - b_b
        sbar[2] += b_b
        # The last node's stencil is minus the first one's on the reversed stations.
        b_a, b_b = _end_stencil_bar(a1, b1, f[n - 1], f[n - 2], f[n - 3], -dbar[n - 1])
        sbar[n - 1] += b_a
        sbar[n - 2] += b_b - b_a
        sbar[n - 3] -= b_b


@numba.njit(cache=True, error_model="numpy")
def _event_bar(
    kind: int,
    at: float,
    scale: float,
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    integral: F64,
    n: int,
    c0: float,
    c0_slope: float,
    nu: float,
    axisym: bool,
    lam_sep: float,
    tu: float,
    bu: F64,
    bdu: F64,
    bint: F64,
    geo: tuple[F64, F64, F64],
) -> bool:
    """Adds ``scale`` times the derivatives of an event position ``at`` (the zero of
    ``kernel._margin`` of ``kind``) by the implicit-function rule; False when the margin
    is crossed tangentially (no derivative); and to the bars of the station positions and
    radii in ``geo`` (``_laminar_bar``; Michel's Re_s counts from the first station)."""
    params = (n, c0, c0, nu, axisym)
    layer = (sk, uk, due, rk, dr, integral)
    _, lam, _, u = kernel._laminar_at(layer, params, at)
    b_lam = b_re = b_u = direct = 0.0
    if kind == 0:
        b_lam = -1.0
    elif kind == 1:
        sigma = at - sk[0]
        slope = _michel_slope(u * sigma / nu)
        b_re, b_u, direct = 1.0, -slope * sigma / nu, -slope * u / nu
    elif kind == 2:
        b_re = 1.0
        if lam_sep < lam < LAMBDA_MAX:
            b_lam = -_granville_instability_slope(lam)
    else:
        b_re = 1.0
        if lam_sep < lam < LAMBDA_MAX:
            b_lam = -_ags_slope(lam, tu)
    g_s = direct + _laminar_bar(
        sk,
        uk,
        due,
        rk,
        dr,
        integral,
        n,
        c0,
        c0_slope,
        nu,
        at,
        0.0,
        b_lam,
        b_re,
        b_u,
        False,
        bu,
        bdu,
        bint,
        geo,
    )
    if not (g_s > 0.0 and np.isfinite(g_s)):
        return False
    w = -scale / g_s
    _laminar_bar(
        sk,
        uk,
        due,
        rk,
        dr,
        integral,
        n,
        c0,
        c0_slope,
        nu,
        at,
        0.0,
        w * b_lam,
        w * b_re,
        w * b_u,
        True,
        bu,
        bdu,
        bint,
        geo,
    )
    if direct != 0.0 and geo[0].shape[0] > 0:
        geo[0][0] -= w * direct  # sigma = at - s[0]
    return True


@numba.njit(cache=True, error_model="numpy")
def _granville_bar(
    scale: float,
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    integral: F64,
    n: int,
    c0: float,
    c0_slope: float,
    start_theta2: float,
    nu: float,
    axisym: bool,
    lam_sep: float,
    tu: float,
    bu: F64,
    bdu: F64,
    bint: F64,
    geo: tuple[F64, F64, F64],
) -> bool:
    """Adds ``scale`` times the derivatives of Granville's transition position (the
    instability point located by ``kernel._refine``, then the growth criterion crossed
    between stations by linear interpolation of its margin, as ``kernel.march_sides``
    does), also to the bars of the station positions and radii in ``geo`` when it has
    columns; False when a crossing has no derivative."""
    bs, br, _ = geo
    geometry = bs.shape[0] > 0
    lam = np.empty(n)
    re = np.empty(n)
    theta2 = np.empty(n)
    for k in range(n):
        weight = rk[k] ** 2 * uk[k] ** THWAITES_B
        theta2[k] = (c0 + THWAITES_A * nu * integral[k]) / weight if k > 0 else start_theta2
        lam[k] = theta2[k] * due[k] / nu
        re[k] = uk[k] * np.sqrt(theta2[k]) / nu
    running = np.zeros(n)
    for k in range(1, n):
        l0 = min(max(lam[k - 1], lam_sep), LAMBDA_MAX)
        l1 = min(max(lam[k], lam_sep), LAMBDA_MAX)
        running[k] = running[k - 1] + 0.5 * (l0 + l1) * (sk[k] - sk[k - 1])
    params = (n, c0, c0, nu, axisym)
    layer = (sk, uk, due, rk, dr, integral)
    s_i = np.inf
    for k in range(1, n):
        lc = min(max(lam[k], lam_sep), LAMBDA_MAX)
        if re[k] >= kernel.granville_instability(lc):
            # Plain integer and flag and a writable array: the same compilation of ``_refine`` as
            # the kernel's (literal or read-only arguments would each be one more).
            no_supply = np.full((4, 1), np.nan)
            kind, supplied = int(np.int64(2)), bool(np.bool_(False))
            s_i = kernel._refine(
                kind, sk[k - 1], sk[k], layer, params, lam_sep, tu, no_supply, supplied
            )
            break
    if not np.isfinite(s_i) or s_i <= sk[0]:
        return False
    _, _, re_i, _ = kernel._laminar_at(layer, params, s_i)
    run_i = kernel._interp(sk, running, n, s_i)
    # The station interval of the linear interpolations at s_i (``kernel._interp``).
    ji = 1
    while ji < n - 1 and sk[ji] < s_i:
        ji += 1
    frac_i = (s_i - sk[ji - 1]) / (sk[ji] - sk[ji - 1])
    lam_i = kernel._interp(sk, lam, n, s_i)
    lc_i = min(max(lam_i, lam_sep), LAMBDA_MAX)
    g_prev = -kernel.granville_growth(lc_i)
    first = True
    hit = -1
    mean_hit = 0.0
    g_hit = 0.0
    for k in range(1, n):
        if sk[k] <= s_i:
            continue
        mean = (running[k] - run_i) / (sk[k] - s_i)
        gk = re[k] - re_i - kernel.granville_growth(mean)
        if gk >= 0.0:
            hit, mean_hit, g_hit = k, mean, gk
            break
        g_prev = gk
        first = False
    if hit < 0:
        return False
    span = g_prev - g_hit
    frac = g_prev / span
    if not 0.0 < frac < 1.0:
        return False  # at a station: the interpolation switches interval there
    s_prev = s_i if first else sk[hit - 1]
    # Bars, backward from crit = s_prev + frac (s_hit - s_prev).
    b_lam = np.zeros(n)
    b_re = np.zeros(n)
    b_run = np.zeros(n)
    b_frac = scale * (sk[hit] - s_prev)
    b_si = 0.0
    if first:
        b_si += scale * (1.0 - frac)
    elif geometry:
        bs[hit - 1] += scale * (1.0 - frac)
    if geometry:
        bs[hit] += scale * frac
    b_gprev = b_frac * (-g_hit / (span * span))
    b_ghit = b_frac * (g_prev / (span * span))
    b_rei = 0.0
    b_runi = 0.0

    # g at the station where the criterion is met.
    b_re[hit] += b_ghit
    b_rei -= b_ghit
    b_mean = -b_ghit * _granville_growth_slope(mean_hit)
    d = sk[hit] - s_i
    b_run[hit] += b_mean / d
    b_runi -= b_mean / d
    b_si += b_mean * mean_hit / d
    if geometry:
        bs[hit] -= b_mean * mean_hit / d
    if first:
        # g_prev = -growth(clip(lambda interpolated at s_i)).
        b_lc = -b_gprev * (_granville_growth_slope(lc_i) if -0.04 < lc_i < 0.04 else 0.0)
        if lam_sep < lam_i < LAMBDA_MAX:
            b_lam[ji - 1] += b_lc * (1.0 - frac_i)
            b_lam[ji] += b_lc * frac_i
            rise = (lam[ji] - lam[ji - 1]) / (sk[ji] - sk[ji - 1])
            b_si += b_lc * rise
            if geometry:
                bs[ji - 1] -= b_lc * rise * (1.0 - frac_i)
                bs[ji] -= b_lc * rise * frac_i
    else:
        kp = hit - 1
        mean_p = (running[kp] - run_i) / (sk[kp] - s_i)
        b_re[kp] += b_gprev
        b_rei -= b_gprev
        b_mp = -b_gprev * _granville_growth_slope(mean_p)
        dp = sk[kp] - s_i
        b_run[kp] += b_mp / dp
        b_runi -= b_mp / dp
        b_si += b_mp * mean_p / dp
        if geometry:
            bs[kp] -= b_mp * mean_p / dp
    # run_i = running interpolated at s_i.
    b_run[ji - 1] += b_runi * (1.0 - frac_i)
    b_run[ji] += b_runi * frac_i
    rise = (running[ji] - running[ji - 1]) / (sk[ji] - sk[ji - 1])
    b_si += b_runi * rise
    if geometry:
        bs[ji - 1] -= b_runi * rise * (1.0 - frac_i)
        bs[ji] -= b_runi * rise * frac_i
    # re_i: Thwaites' state at s_i.
    b_si += _laminar_bar(
        sk,
        uk,
        due,
        rk,
        dr,
        integral,
        n,
        c0,
        c0_slope,
        nu,
        s_i,
        0.0,
        0.0,
        b_rei,
        0.0,
        True,
        bu,
        bdu,
        bint,
        geo,
    )
    # The running integral of the clipped lambda (trapezoids).
    acc = 0.0
    for k in range(n - 1, 0, -1):
        acc += b_run[k]
        if acc == 0.0:
            continue
        half = 0.5 * acc * (sk[k] - sk[k - 1])
        if geometry:
            l0 = min(max(lam[k - 1], lam_sep), LAMBDA_MAX)
            l1 = min(max(lam[k], lam_sep), LAMBDA_MAX)
            bs[k] += 0.5 * acc * (l0 + l1)
            bs[k - 1] -= 0.5 * acc * (l0 + l1)
        if lam_sep < lam[k] < LAMBDA_MAX:
            b_lam[k] += half
        if lam_sep < lam[k - 1] < LAMBDA_MAX:
            b_lam[k - 1] += half
    # Station values: lambda = theta^2 Ue'/nu, Re_theta = Ue theta/nu, theta^2 from the
    # integral at the station.
    bdu[0] += b_lam[0] * start_theta2 / nu  # the start's theta is fixed data
    for k in range(1, n):
        if b_lam[k] == 0.0 and b_re[k] == 0.0:
            continue
        weight = rk[k] ** 2 * uk[k] ** THWAITES_B
        root = np.sqrt(theta2[k])
        bt = b_lam[k] * due[k] / nu + b_re[k] * uk[k] / (2.0 * nu * root)
        bdu[k] += b_lam[k] * theta2[k] / nu
        bu[k] += b_re[k] * root / nu - bt * theta2[k] * THWAITES_B / uk[k]
        bint[k] += bt * THWAITES_A * nu / weight
        bu[0] += bt / weight * c0_slope
        if geometry:
            br[k] -= bt * theta2[k] * 2.0 / rk[k]
    # The instability point itself.
    return _event_bar(
        int(np.int64(2)),
        s_i,
        b_si,
        sk,
        uk,
        due,
        rk,
        dr,
        integral,
        n,
        c0,
        c0_slope,
        nu,
        axisym,
        lam_sep,
        tu,
        bu,
        bdu,
        bint,
        geo,
    )


# ----------------------------------------------------------------------------- turbulent


@numba.njit(cache=True, error_model="numpy")
def _k_bar(p: tuple[float, ...], kt: float, kh: float) -> tuple[float, float, float, float, float]:
    """Transposed Jacobian of Head's right-hand side times the bars (kt, kh) of its two
    components: the bars of theta, H1, Ue, Ue' and r'/r."""
    return (
        kt * p[2] + kh * p[6],
        kt * p[3] + kh * p[7],
        kt * p[4] + kh * p[8],
        kt * p[5] + kh * p[9],
        kt * p[10],
    )


@numba.njit(cache=True, error_model="numpy")
def _station_cf_bar(
    law: int, theta: float, h1: float, u: float, inv_nu: float, b: float
) -> tuple[float, float, float]:
    """Bars of theta, H1 and Ue from the bar ``b`` of a turbulent station's Cf."""
    h, hp = _h_and_slope(h1)
    _, c_h, c_re = _cf_partials(law, h, u * theta * inv_nu)
    return b * c_re * u * inv_nu, b * c_h * hp, b * c_re * theta * inv_nu


@numba.njit(cache=True, error_model="numpy")
def _point_dh(
    uk: F64, due: F64, rk: F64, dr: F64, j: int, t: float, h: float
) -> tuple[float, float, float]:
    """d/dh of Ue, Ue' and r'/r at fraction t of interval j of length h, the point held."""
    d = _basis_dh(t, h)
    b = _basis(t, h)
    uh, ush = _edge_dh(uk, due, j, d)
    rh, rsh = _edge_dh(rk, dr, j, d)
    r, rs, _ = _edge_at(rk, dr, j, b)
    return uh, ush, (rsh * r - rs * rh) / (r * r)


@numba.njit(cache=True, error_model="numpy")
def _rho_bar(
    br: F64, bdr: F64, j: int, b: tuple[float, ...], bar: float, r: float, rs: float
) -> None:
    """Adds the bar of r'/r at a point of interval j to the bars of the node radii and
    their gradients."""
    _edge_bar(br, bdr, j, b, -bar * rs / (r * r), bar / r)


@numba.njit(cache=True, error_model="numpy")
def _head_bar(
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    n: int,
    tape: F64,
    inv_nu: float,
    law: int,
    h_sep: float,
    sep_seed: F64,
    bcf: F64,
    turb: NDArray[np.bool_],
    keep: int,
    bu: F64,
    bdu: F64,
    end_seed: F64,
    bs: F64,
    br: F64,
    bdr: F64,
) -> tuple[F64, F64]:
    """Reverse of the recorded turbulent march (``kernel._head`` and its tape) for every
    row k of the seeds: ``sep_seed[k]`` on the separation position, ``bcf[k, m]`` on Cf of
    the turbulent station m, ``end_seed[k]`` the factor f of the profile drag's share
    f theta Ue^((H + 5)/2) at the last station.
    Adds to ``bu``/``bdu`` (k, n), and when ``bs`` has columns to the bars of the station
    positions ``bs`` and of the radii and their gradients ``br``/``bdr`` (each step's
    points held where they are, its interval's stations moved; a step that ends on a
    station moves with it); returns the bars of the start position and of the start
    theta."""
    geometry = bs.shape[1] > 0
    rows = sep_seed.shape[0]
    count = int(tape[0, 0])
    end_kind = int(tape[0, 1])
    yt = np.zeros(rows)
    yh = np.zeros(rows)
    pb = np.zeros(rows)
    for rec in range(count, 0, -1):
        pos, step = tape[rec, 0], tape[rec, 1]
        j = int(tape[rec, 2])
        theta, h1 = tape[rec, 3], tape[rec, 4]
        land = tape[rec, 5] > 0.5
        left = sk[j]
        length = sk[j + 1] - left
        at_end = sk[j + 1] if land else pos + step
        b1 = _basis((pos - left) / length, length)
        b2 = _basis((pos + 0.5 * step - left) / length, length)
        b4 = _basis(1.0 if land else (at_end - left) / length, length)
        u1, us1, uu1 = _edge_at(uk, due, j, b1)
        u2, us2, uu2 = _edge_at(uk, due, j, b2)
        u4, us4, uu4 = _edge_at(uk, due, j, b4)
        # r'/r at the three positions and its derivative along s (zero when planar).
        ra1, rs1, rra = _edge_at(rk, dr, j, b1)
        rho1, drho1 = rs1 / ra1, rra / ra1 - (rs1 / ra1) ** 2
        ra2, rs2, rra = _edge_at(rk, dr, j, b2)
        rho2, drho2 = rs2 / ra2, rra / ra2 - (rs2 / ra2) ** 2
        ra4, rs4, rra = _edge_at(rk, dr, j, b4)
        rho4, drho4 = rs4 / ra4, rra / ra4 - (rs4 / ra4) ** 2
        if geometry:
            # d/dh of Ue, Ue' and r'/r at the step's points (the points held).
            u1h, us1h, rho1h = _point_dh(uk, due, rk, dr, j, (pos - left) / length, length)
            t2 = (pos + 0.5 * step - left) / length
            u2h, us2h, rho2h = _point_dh(uk, due, rk, dr, j, t2, length)
            u4h, us4h, rho4h = 0.0, 0.0, 0.0
            if not land:
                u4h, us4h, rho4h = _point_dh(uk, due, rk, dr, j, (at_end - left) / length, length)
        r_ = tape[rec]
        k1 = _rhs_partials_stored(theta, h1, u1, us1, inv_nu, law, r_[6], r_[7], r_[8], rho1)
        y2t, y2h = theta + 0.5 * step * k1[0], h1 + 0.5 * step * k1[1]
        k2 = _rhs_partials_stored(y2t, y2h, u2, us2, inv_nu, law, r_[9], r_[10], r_[11], rho2)
        y3t, y3h = theta + 0.5 * step * k2[0], h1 + 0.5 * step * k2[1]
        k3 = _rhs_partials_stored(y3t, y3h, u2, us2, inv_nu, law, r_[12], r_[13], r_[14], rho2)
        y4t, y4h = theta + step * k3[0], h1 + step * k3[1]
        k4 = _rhs_partials_stored(y4t, y4h, u4, us4, inv_nu, law, r_[15], r_[16], r_[17], rho4)
        snt = k1[0] + 2.0 * (k2[0] + k3[0]) + k4[0]
        snh = k1[1] + 2.0 * (k2[1] + k3[1]) + k4[1]
        ynt, ynh = theta + step / 6.0 * snt, h1 + step / 6.0 * snh
        crossing = rec == count and end_kind == kernel.TAPE_CROSSING
        frac, v_t, kn, c = 0.0, 1.0, k1, b1
        if crossing:
            kn = _rhs_partials_stored(ynt, ynh, u4, us4, inv_nu, law, r_[18], r_[19], r_[20], rho4)
            frac = kernel._crossing(step, h1, ynh, k1[1], kn[1], h_sep)
            c = _basis(frac, step)
            v_t = step * (c[4] * h1 + c[5] * ynh + c[6] * k1[1] + c[7] * kn[1])
        m = j + 1
        seeded = land and not crossing and m < keep and turb[m]
        last = seeded and m == n - 1
        for k in range(rows):
            bnt, bnh, pnb = yt[k], yh[k], pb[k]
            if last and end_seed[k] != 0.0:
                # The profile drag's share f theta Ue^((H + 5)/2) there (``ibl.drag``).
                h_e, hp_e = _h_and_slope(ynh)
                share = end_seed[k] * ynt * uk[m] ** (0.5 * (h_e + 5.0))
                bnt += share / ynt
                bnh += 0.5 * share * np.log(uk[m]) * hp_e
                bu[k, m] += share * 0.5 * (h_e + 5.0) / uk[m]
            if bnt == 0.0 and bnh == 0.0 and pnb == 0.0 and sep_seed[k] == 0.0:
                if not (seeded and bcf[k, m] != 0.0):
                    continue  # nothing flows back through this step for row k
            k1t_b = k1h_b = 0.0
            bh1 = 0.0
            stepb = 0.0
            posb = 0.0
            u4b = us4b = rho4b = 0.0
            if crossing:
                sb = sep_seed[k]
                posb += sb
                stepb += frac * sb
                fb = step * sb / v_t  # d frac / d parameter = -(dV/dparameter) / (dV/dt)
                bh1 -= fb * c[0]
                bnh -= fb * c[1]
                k1h_b -= fb * c[2]
                knh_b = -fb * c[3]
                stepb -= fb * (c[2] * k1[1] + c[3] * kn[1]) / step
                kb = _k_bar(kn, 0.0, knh_b)
                bnt += kb[0]
                bnh += kb[1]
                u4b += kb[2]
                us4b += kb[3]
                rho4b += kb[4]
            elif rec == count and end_kind == kernel.TAPE_AT_STEP_START:
                pnb += sep_seed[k]
            if seeded and bcf[k, m] != 0.0:
                bt_, bh_, bu_ = _station_cf_bar(law, ynt, ynh, uk[m], inv_nu, bcf[k, m])
                bnt += bt_
                bnh += bh_
                bu[k, m] += bu_
            # Runge-Kutta, backward.
            k1t_b += step / 6.0 * bnt
            k1h_b += step / 6.0 * bnh
            k2t_b, k2h_b = step / 3.0 * bnt, step / 3.0 * bnh
            k3t_b, k3h_b = step / 3.0 * bnt, step / 3.0 * bnh
            k4t_b, k4h_b = step / 6.0 * bnt, step / 6.0 * bnh
            stepb += (bnt * snt + bnh * snh) / 6.0
            bt = bnt
            bh = bnh + bh1
            g = _k_bar(k4, k4t_b, k4h_b)
            bt += g[0]
            bh += g[1]
            u4b += g[2]
            us4b += g[3]
            rho4b += g[4]
            k3t_b += step * g[0]
            k3h_b += step * g[1]
            stepb += g[0] * k3[0] + g[1] * k3[1]
            g = _k_bar(k3, k3t_b, k3h_b)
            bt += g[0]
            bh += g[1]
            u2b, us2b, rho2b = g[2], g[3], g[4]
            k2t_b += 0.5 * step * g[0]
            k2h_b += 0.5 * step * g[1]
            stepb += 0.5 * (g[0] * k2[0] + g[1] * k2[1])
            g = _k_bar(k2, k2t_b, k2h_b)
            bt += g[0]
            bh += g[1]
            u2b += g[2]
            us2b += g[3]
            rho2b += g[4]
            k1t_b += 0.5 * step * g[0]
            k1h_b += 0.5 * step * g[1]
            stepb += 0.5 * (g[0] * k1[0] + g[1] * k1[1])
            g = _k_bar(k1, k1t_b, k1h_b)
            bt += g[0]
            bh += g[1]
            _edge_bar(bu[k], bdu[k], j, b1, g[2], g[3])
            _edge_bar(bu[k], bdu[k], j, b2, u2b, us2b)
            _edge_bar(bu[k], bdu[k], j, b4, u4b, us4b)
            posb += g[2] * us1 + g[3] * uu1 + g[4] * drho1
            p2b = u2b * us2 + us2b * uu2 + rho2b * drho2
            posb += p2b
            stepb += 0.5 * p2b
            if geometry:
                p1b = g[2] * us1 + g[3] * uu1 + g[4] * drho1
                _interval_bar(bs[k], j, p1b, g[2] * u1h + g[3] * us1h + g[4] * rho1h)
                _interval_bar(bs[k], j, p2b, u2b * u2h + us2b * us2h + rho2b * rho2h)
                _rho_bar(br[k], bdr[k], j, b1, g[4], ra1, rs1)
                _rho_bar(br[k], bdr[k], j, b2, rho2b, ra2, rs2)
                _rho_bar(br[k], bdr[k], j, b4, rho4b, ra4, rs4)
                if land:
                    bs[k, j + 1] += stepb + pnb  # the step ends on station j + 1
                else:
                    p4b = u4b * us4 + us4b * uu4 + rho4b * drho4
                    _interval_bar(bs[k], j, p4b, u4b * u4h + us4b * us4h + rho4b * rho4h)
            if land:
                posb -= stepb  # the step is the room left to the station
            else:
                p4b = u4b * us4 + us4b * uu4 + rho4b * drho4 + pnb
                posb += p4b
                # the step itself is held fixed (see the module docstring)
            yt[k], yh[k], pb[k] = bt, bh, posb
    return pb, yt


# ----------------------------------------------------------------------------- the side


@numba.njit(cache=True, error_model="numpy")
def side_sensitivities(
    sk: F64,
    uk: F64,
    rk: F64,
    ints: NDArray[np.int64],
    reals: F64,
    events: F64,
    turb: NDArray[np.bool_],
    cf: F64,
    keep: int,
    wanted: NDArray[np.bool_],
    out: F64,
    profile_factor: float,
    slope_bar: F64,
    xk: F64,
    geo_out: F64,
) -> NDArray[np.int64]:
    """Derivatives of a side's transition, laminar separation, separation and
    friction drag (rows of ``out``, ``QUANTITIES``) with respect to Ue/U_inf at each of its
    stations (columns), from the side's arrays as ``kernel.march_sides`` takes them and
    what it returned (``events`` row, turbulent flags, Cf and kept count of the stations);
    ``wanted`` flags the quantities to compute (the others are left at zero).  The profile
    drag's share is ``profile_factor`` theta Ue^((H + 5)/2) at the last station (2 for
    Squire & Young, 4 pi r for Young); ``xk`` the stations' x, along which the friction
    drag is integrated.  When ``slope_bar`` has a row per quantity the
    stagnation slope is a parameter of its own (a contour's fitted model): its bars go
    there instead of to Ue[1]/s[1].  When ``geo_out`` (3, rows, n) has columns it
    receives the derivatives with respect to the stations' s, r and x (the friction drag's
    abscissa), Ue held.  Returns the status of each quantity (``OK``, ``ABSENT`` or a
    reason in ``REASONS``).
    """
    n = sk.shape[0]
    rows = out.shape[0]
    status = np.zeros(rows, dtype=np.int64)
    start_kind, criterion, closure, law = ints[0], ints[1], ints[2], ints[3]
    nu, slope, theta_in, h_in = reals[0], reals[1], reals[2], reals[3]
    tu, lam_sep, h_init, h_sep = reals[5], reals[6], reals[7], reals[8]
    axisym = ints[4] != 0
    length = sk[n - 1] - sk[0]
    due = np.empty(n)
    kernel._derivative(sk, uk, n, due)
    if start_kind == kernel.START_STAGNATION:
        due[0] = slope
    dr = np.zeros(n)  # r = 1, r' = 0 when planar: the same arithmetic as the march's
    if axisym:
        kernel._derivative(sk, rk, n, dr)
    integral = np.empty(n)
    integral[0] = 0.0
    for i in range(n - 1):
        h = sk[i + 1] - sk[i]
        acc = 0.0
        for q in range(4):
            u, _ = kernel._hermite(_GN[q], h, uk[i], uk[i + 1], due[i], due[i + 1])
            u = max(u, 0.0)
            w = u**4 * u
            if axisym:
                rr, _ = kernel._hermite(_GN[q], h, rk[i], rk[i + 1], dr[i], dr[i + 1])
                w *= rr * rr
            acc += _GW[q] * w
        integral[i + 1] = integral[i] + h * acc
    if start_kind == kernel.START_STAGNATION:
        on_axis = axisym and rk[0] <= 1e-9 * length
        power = THWAITES_B + 2.0 if on_axis else THWAITES_B
        start_theta2 = THWAITES_A * nu / (power * slope)
    else:
        start_theta2 = theta_in * theta_in
    c0 = start_theta2 * rk[0] ** 2 * uk[0] ** THWAITES_B
    c0_slope = start_theta2 * rk[0] ** 2 * THWAITES_B * uk[0] ** (THWAITES_B - 1.0)
    if start_kind == kernel.START_STAGNATION:
        c0_slope = 0.0  # Ue[0] = 0 and stays there
    tr = events[1]
    cause = int(events[2])
    lsep = events[4]
    separation = events[7]
    sep_turbulent = events[8] > 0.5
    bu = np.zeros((rows, n))
    bdu = np.zeros((rows, n))
    bint = np.zeros((rows, n))
    geometry = geo_out.shape[2] > 0
    columns = n if geometry else 0
    bs = np.zeros((rows, columns))
    br = np.zeros((rows, columns))
    bdr = np.zeros((rows, columns))
    bx = np.zeros((rows, columns))

    tr_kind = 0 if cause == kernel.CAUSE_LAMINAR_SEPARATION else criterion

    # Transition.
    if not wanted[0]:
        pass
    elif not np.isfinite(tr):
        status[0] = ABSENT
    elif cause == kernel.CAUSE_CRITERION and criterion == 2:
        if not _granville_bar(
            1.0,
            sk,
            uk,
            due,
            rk,
            dr,
            integral,
            n,
            c0,
            c0_slope,
            start_theta2,
            nu,
            axisym,
            lam_sep,
            tu,
            bu[0],
            bdu[0],
            bint[0],
            (bs[0], br[0], bdr[0]),
        ):
            status[0] = TANGENTIAL
    elif cause != kernel.CAUSE_TRIP:
        if not _event_bar(
            tr_kind,
            tr,
            1.0,
            sk,
            uk,
            due,
            rk,
            dr,
            integral,
            n,
            c0,
            c0_slope,
            nu,
            axisym,
            lam_sep,
            tu,
            bu[0],
            bdu[0],
            bint[0],
            (bs[0], br[0], bdr[0]),
        ):
            status[0] = TANGENTIAL
    # Laminar separation.
    if not wanted[1]:
        pass
    elif not np.isfinite(lsep):
        status[1] = ABSENT
    elif not _event_bar(
        int(np.int64(0)),
        lsep,
        1.0,
        sk,
        uk,
        due,
        rk,
        dr,
        integral,
        n,
        c0,
        c0_slope,
        nu,
        axisym,
        lam_sep,
        tu,
        bu[1],
        bdu[1],
        bint[1],
        (bs[1], br[1], bdr[1]),
    ):
        status[1] = TANGENTIAL
    # Separation: laminar, or turbulent through the turbulent march below.
    sep_seed = np.zeros(rows)
    if not wanted[2]:
        pass
    elif not np.isfinite(separation):
        status[2] = ABSENT
    elif not sep_turbulent:
        if not _event_bar(
            int(np.int64(0)),
            separation,
            1.0,
            sk,
            uk,
            due,
            rk,
            dr,
            integral,
            n,
            c0,
            c0_slope,
            nu,
            axisym,
            lam_sep,
            tu,
            bu[2],
            bdu[2],
            bint[2],
            (bs[2], br[2], bdr[2]),
        ):
            status[2] = TANGENTIAL
    else:
        sep_seed[2] = 1.0
    # Friction drag: trapezoids in x of g = Cf Ue^2 (times 2 pi r on a body of
    # revolution), the first panel as g ~ s^p.
    bcf = np.zeros((rows, n))
    if wanted[3]:
        g = np.empty(keep)
        wall = np.ones(keep)
        for i in range(keep):
            if axisym:
                wall[i] = 2.0 * np.pi * rk[i]
            g[i] = cf[i] * uk[i] * uk[i] * wall[i]
        bg = np.zeros(keep)
        first = 0
        total_ok = keep >= 2
        if keep >= 2 and not np.isfinite(g[0]):
            first = 1
            if keep > 2 and g[1] > 0.0 and g[2] > 0.0:
                d1, d2 = sk[1] - sk[0], sk[2] - sk[0]
                dx = xk[1] - xk[0]
                b_dx = 0.0
                if not (d1 > 0.0 and d2 > d1):
                    bg[1] += 0.5 * dx
                    b_dx = 0.5 * g[1]
                else:
                    lg = np.log(d2 / d1)
                    p = np.log(g[2] / g[1]) / lg
                    if _P_LOW < p < _P_HIGH:
                        bg[1] += dx / (1.0 + p) + dx / ((1.0 + p) ** 2 * lg)
                        bg[2] += -g[1] * dx / ((1.0 + p) ** 2 * lg * g[2])
                        b_dx = g[1] / (1.0 + p)
                        if geometry:
                            # d/d lg of g1 dx / (1 + p), p = ln(g2/g1) / lg.
                            b_lg = g[1] * dx * p / ((1.0 + p) ** 2 * lg)
                            bs[3, 1] -= b_lg / d1
                            bs[3, 2] += b_lg / d2
                            bs[3, 0] += b_lg / d1 - b_lg / d2
                    else:
                        clipped = min(max(p, _P_LOW), _P_HIGH)
                        bg[1] += dx / (1.0 + clipped)
                        b_dx = g[1] / (1.0 + clipped)
                if geometry:
                    bx[3, 1] += b_dx
                    bx[3, 0] -= b_dx
        if keep - first < 2:
            total_ok = False
        for i in range(first, keep - 1):
            half = 0.5 * (xk[i + 1] - xk[i])
            bg[i] += half
            bg[i + 1] += half
            if geometry:
                bx[3, i + 1] += 0.5 * (g[i] + g[i + 1])
                bx[3, i] -= 0.5 * (g[i] + g[i + 1])
        for i in range(keep):
            if bg[i] == 0.0 or not np.isfinite(g[i]):
                continue
            bu[3, i] += bg[i] * cf[i] * 2.0 * uk[i] * wall[i]
            bcf[3, i] = bg[i] * uk[i] * uk[i] * wall[i]
            if geometry and axisym:
                br[3, i] += bg[i] * cf[i] * uk[i] * uk[i] * 2.0 * np.pi
            if turb[i]:
                continue
            # A laminar station: Cf = 2 l(lambda) / Re_theta.
            b = bcf[3, i]
            if i == 0:
                th2 = start_theta2
                lam0 = th2 * due[0] / nu
                re0 = uk[0] * np.sqrt(th2) / nu
                b_re = -cf[0] / re0 * b
                b_lam = 0.0
                if lam_sep < lam0 < LAMBDA_MAX and kernel.shear(closure, lam0) > 0.0:
                    b_lam = 2.0 * _shear_slope(closure, lam0) / re0 * b
                bu[3, 0] += b_re * np.sqrt(th2) / nu
                bdu[3, 0] += b_lam * th2 / nu
                continue
            # theta^2 = (c0 + a nu integral) / (r^2 Ue^b) at the station itself.
            weight = rk[i] ** 2 * uk[i] ** THWAITES_B
            th2 = (c0 + THWAITES_A * nu * integral[i]) / weight
            root = np.sqrt(th2)
            lam_i = th2 * due[i] / nu
            re_i = uk[i] * root / nu
            b_re = -cf[i] / re_i * b
            b_lam = 0.0
            if lam_sep < lam_i < LAMBDA_MAX and kernel.shear(closure, lam_i) > 0.0:
                b_lam = 2.0 * _shear_slope(closure, lam_i) / re_i * b
            bt = b_lam * due[i] / nu + b_re * uk[i] / (2.0 * nu * root)
            bdu[3, i] += b_lam * th2 / nu
            bu[3, i] += b_re * root / nu - bt * th2 * THWAITES_B / uk[i]
            bint[3, i] += bt * THWAITES_A * nu / weight
            bu[3, 0] += bt / weight * c0_slope
            if geometry:
                br[3, i] -= bt * th2 * 2.0 / rk[i]
        if not total_ok:
            status[3] = ABSENT
    # The turbulent march, backward, for the quantities that go through it.
    turbulent_march = start_kind == kernel.START_TURBULENT or np.isfinite(tr)
    end_seed = np.zeros(rows)
    if rows > 4 and wanted[4]:
        if keep < n:
            status[4] = ABSENT  # separated: no profile drag
        elif not (turbulent_march and turb[n - 1]):
            status[4] = LAMINAR_EDGE
    profile = wanted[4] and status[4] == OK
    if turbulent_march and (sep_seed[2] != 0.0 or wanted[3] or profile):
        if start_kind == kernel.START_TURBULENT:
            start, th0, hh0 = sk[0], theta_in, h_in
        else:
            start = tr
            if start_kind != kernel.START_INFLOW:
                start = max(tr, sk[0] + kernel.START_OFFSET * length)
            params = (n, c0, start_theta2, nu, axisym)
            layer = (sk, uk, due, rk, dr, integral)
            th2_start, _, _, _ = kernel._laminar_at(layer, params, start)
            th0 = np.sqrt(th2_start)
            hh0 = h_init
        theta_t = np.empty(n)
        h_t = np.empty(n)
        _, s_peak = kernel._radius_peak(sk, rk, n, axisym)
        # A tape for the usual step count first (a large one costs more to allocate than
        # the march), the largest if that was not enough.
        tape = np.empty((TAPE_FIRST_ROWS + 2 * n, kernel.TAPE_COLUMNS))  # header by _head
        for attempt in range(2):
            if attempt == 1:
                if tape[0, 2] < 0.5:
                    break
                tape = np.empty((TAPE_STEPS + 2 * n, kernel.TAPE_COLUMNS))
            kernel._head(
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
                1.0,
                s_peak,
                tape,
            )
        end_kind = int(tape[0, 1])
        if rows > 4 and wanted[4] and status[4] == OK:
            end_seed[4] = profile_factor
        if tape[0, 2] > 0.5:
            for k in range(2, rows):
                if status[k] == OK:
                    status[k] = TAPE_FULL
        elif sep_seed[2] != 0.0 and end_kind == kernel.TAPE_ATTACHED:
            status[2] = NOT_COVERED
        if end_kind == kernel.TAPE_AT_START:
            pb = sep_seed.copy()
            tb = np.zeros(rows)
        else:
            pb, tb = _head_bar(
                sk,
                uk,
                due,
                rk,
                dr,
                n,
                tape,
                1.0 / nu,
                law,
                h_sep,
                sep_seed,
                bcf,
                turb,
                keep,
                bu,
                bdu,
                end_seed,
                bs,
                br,
                bdr,
            )
        # A turbulent station at the start holds the start state.
        for m in range(keep):
            if sk[m] == start and turb[m]:
                if m == n - 1:
                    for k in range(rows):
                        if end_seed[k] != 0.0:  # the start state at the last station
                            share = end_seed[k] * th0 * uk[m] ** (0.5 * (hh0 + 5.0))
                            tb[k] += share / th0
                            bu[k, m] += share * 0.5 * (hh0 + 5.0) / uk[m]
                for k in range(rows):
                    if bcf[k, m] != 0.0:
                        bt_, _, bu_ = _station_cf_bar(
                            law, th0, kernel.h1_from_h(hh0), uk[m], 1.0 / nu, bcf[k, m]
                        )
                        tb[k] += bt_
                        bu[k, m] += bu_
        if start_kind != kernel.START_TURBULENT:
            for k in range(rows):
                if pb[k] == 0.0 and tb[k] == 0.0:
                    continue
                # theta at the start from Thwaites' integral there.
                b_start = pb[k] + _laminar_bar(
                    sk,
                    uk,
                    due,
                    rk,
                    dr,
                    integral,
                    n,
                    c0,
                    c0_slope,
                    nu,
                    start,
                    tb[k] / (2.0 * th0),
                    0.0,
                    0.0,
                    0.0,
                    True,
                    bu[k],
                    bdu[k],
                    bint[k],
                    (bs[k], br[k], bdr[k]),
                )
                if start == tr and cause != kernel.CAUSE_TRIP:
                    if cause == kernel.CAUSE_CRITERION and criterion == 2:
                        if not _granville_bar(
                            b_start,
                            sk,
                            uk,
                            due,
                            rk,
                            dr,
                            integral,
                            n,
                            c0,
                            c0_slope,
                            start_theta2,
                            nu,
                            axisym,
                            lam_sep,
                            tu,
                            bu[k],
                            bdu[k],
                            bint[k],
                            (bs[k], br[k], bdr[k]),
                        ):
                            status[k] = TANGENTIAL
                    elif not _event_bar(
                        tr_kind,
                        tr,
                        b_start,
                        sk,
                        uk,
                        due,
                        rk,
                        dr,
                        integral,
                        n,
                        c0,
                        c0_slope,
                        nu,
                        axisym,
                        lam_sep,
                        tu,
                        bu[k],
                        bdu[k],
                        bint[k],
                        (bs[k], br[k], bdr[k]),
                    ):
                        status[k] = TANGENTIAL
                elif start != tr and geometry:
                    # The start offset s[0] + START_OFFSET (s[n-1] - s[0]).
                    bs[k, 0] += b_start * (1.0 - kernel.START_OFFSET)
                    bs[k, n - 1] += b_start * kernel.START_OFFSET
        elif geometry:
            for k in range(rows):
                bs[k, 0] += pb[k]  # the start at the first station
    # Through the integral and the node gradients to the node values.
    _integral_bar(sk, uk, due, rk, dr, n, bint, bu, bdu, wanted, bs, br, bdr)
    if start_kind == kernel.START_STAGNATION:
        for k in range(rows):
            if slope_bar.shape[0] == rows:
                slope_bar[k] = bdu[k, 0]  # the slope of a fitted model
            else:
                h0 = sk[1] - sk[0]
                bu[k, 1] += bdu[k, 0] / h0  # slope = Ue[1] / s[1]
                if geometry:
                    bs[k, 1] -= bdu[k, 0] * uk[1] / (h0 * h0)
                    bs[k, 0] += bdu[k, 0] * uk[1] / (h0 * h0)
            bdu[k, 0] = 0.0
    _derivative_bar(sk, uk, n, bdu, bu, wanted, bs)
    if geometry and axisym:
        _derivative_bar(sk, rk, n, bdr, br, wanted, bs)
    for k in range(rows):
        for i in range(n):
            out[k, i] = bu[k, i]
            if geometry:
                geo_out[0, k, i] = bs[k, i]
                geo_out[1, k, i] = br[k, i] if axisym else 0.0
                geo_out[2, k, i] = bx[k, i]
    return status


# ----------------------------------------------------------------------------- the case

_CAUSE_CODES = {
    "criterion": kernel.CAUSE_CRITERION,
    "trip": kernel.CAUSE_TRIP,
    "laminar_separation": kernel.CAUSE_LAMINAR_SEPARATION,
}


def _not_covered(case: Case, side: SideInput, state: SideState) -> str | None:
    """Why a side's derivatives are not computed, or None when they are."""
    if case.surface.s is None:
        nose = side.nose
        if nose is None or nose.gap:
            gap = nose.gap if nose is not None else "no stagnation point model"
            return f"the contour's stagnation point is not differentiated: {gap}"
    if case.laminar.method != "thwaites":
        return f"the {case.laminar.method} laminar method is not differentiated yet"
    if case.turbulent.method != "head":
        return f"the {case.turbulent.method} turbulent method is not differentiated yet"
    return None


def _to_inputs(case: Case, side: SideInput, bars: F64) -> F64:
    """Derivatives with respect to Ue/U_inf at the stations of a single surface (rows of
    ``bars``) turned into derivatives with respect to the input values: through
    (Ue/U_inf)^2 = q, the smoothing spline at its penalty when the case smooths, and q from
    the input value (``_q_to_inputs``).  A station with Ue = 0 passes nothing on (there the
    start of the layer changes kind: no derivative)."""
    pressure = case.pressure
    ue = side.ue
    if pressure.edge_velocity is not None and pressure.smoothing is None:
        # Ue = |value|, one sign on a single surface: dUe/dvalue = its sign (0 at Ue = 0).
        sign = next((1.0 if v > 0.0 else -1.0 for v in pressure.edge_velocity if v != 0.0), 1.0)
        return np.where(ue > 0.0, sign * bars[:, : ue.size], 0.0)
    d_q = np.zeros_like(ue)  # dUe/dq
    inside = ue > 0.0
    d_q[inside] = 0.5 / ue[inside]
    bar_q = bars[:, : ue.size] * d_q
    if pressure.smoothing is not None:
        bar_q = _smoothing_transpose(case, bar_q)
    return _q_to_inputs(case, bar_q)


def _smoothing_transpose(case: Case, bar_q: F64) -> F64:
    """Derivatives with respect to the smoothed q = (Ue/U_inf)^2 at the input points (rows
    of ``bar_q``) turned into derivatives with respect to q before the smoothing, as
    ``prepare.prepare`` smooths: along the arc length of the input (a contour's chords),
    periodic on a closed contour (an implicitly closed one with its first point appended,
    an explicitly closed one with its last value unused and set to the first smoothed).

    The spline is linear in q at a given penalty, and symmetric (a penalised least squares
    fit evaluated at the data points: S = B (B'B + penalty P)^-1 B'), so its transpose is
    the same smoothing.  The penalty the case chose (or GCV chose on its grid, a choice that
    does not change with small moves of the data) is held fixed.  Values clipped to zero
    after the smoothing pass nothing on."""
    fit = _smoothing_fit(case)
    if fit is None:
        return bar_q  # too few points for GCV: left unsmoothed
    closed, implicit, fitted, operator = fit
    n = bar_q.shape[1]
    kept = fitted.values[:n] >= 0.0  # q = max(smoothed, 0)
    out = np.zeros_like(bar_q)
    asked = [k for k, row in enumerate(bar_q) if row.any()]
    if not asked:
        return out
    rows = np.where(kept, bar_q[asked], 0.0)
    if implicit:  # q -> (q, q_0) -> smoothed, last dropped: S on the n distinct points
        padded = np.concatenate([rows, np.zeros((len(asked), 1))], axis=1)
        out[asked] = operator.rows(padded, fitted.penalty)[:, :-1]
    elif closed:  # the last smoothed value repeats the first; the last input is unused
        folded = rows.copy()
        folded[:, 0] += folded[:, -1]
        folded[:, -1] = folded[:, 0]
        out[asked, :-1] = operator.rows(folded, fitted.penalty)[:, :-1]
    else:
        out[asked] = operator.rows(rows, fitted.penalty)
    return out


_SmoothingFit = tuple[bool, bool, "smoothing_module.Smoothed", "smoothing_module.Operator"]
#: The last case's smoothing fit: every side of a case uses the same one.
_last_fit: list[tuple[Case, _SmoothingFit | None]] = []


def _smoothing_fit(case: Case) -> _SmoothingFit | None:
    """The smoothing of the case's q as ``prepare.prepare`` does it, refitted here for its
    penalty and the points clipped to zero: whether the input is closed (and implicitly
    so), the fit, and the smoothing operator at those points; None when GCV left the values
    unsmoothed.  Kept for the last case asked (its sides ask
    in turn)."""
    last = _last_fit[:1]
    if last and last[0][0] is case:
        return last[0][1]
    surface, smoothing = case.surface, case.pressure.smoothing
    assert smoothing is not None
    raw = _raw_q(case)
    closed = implicit = False
    if surface.s is not None:
        arc = np.asarray(surface.s, dtype=np.float64)
    else:
        x = np.asarray(surface.x, dtype=np.float64)
        y = np.asarray(surface.y, dtype=np.float64)
        arc, _ = prepare_module._arc_length(x, y, prepare_module.REPEAT_TOLERANCE)
        closed, implicit = prepare_module._closure(x, y, arc)
        if implicit:  # the loop's first point appended at the end of the period
            arc = np.append(arc, arc[-1] + float(np.hypot(x[-1] - x[0], y[-1] - y[0])))
            raw = np.append(raw, raw[0])
    t = (arc - arc[0]) / float(arc[-1] - arc[0])
    penalty = None if smoothing == "auto" else float(smoothing)
    fitted = smoothing_module.smooth(t, raw, penalty, closed)
    fit = (
        None
        if fitted.undetermined
        else (closed, implicit, fitted, smoothing_module.Operator(t, closed))
    )
    _last_fit[:] = [(case, fit)]
    return fit


def _raw_q(case: Case) -> F64:
    """(Ue/U_inf)^2 from the input values before any smoothing, as ``prepare.prepare``
    computes it (the isentropic relation at M > 0, Cp clipped to its stagnation value)."""
    pressure = case.pressure
    if pressure.edge_velocity is not None:
        return np.asarray(pressure.edge_velocity, dtype=np.float64) ** 2
    cp = _input_cp(case)
    mach = case.flow.mach
    if mach > 0.0:
        cp_max = prepare_module.stagnation_cp(mach)
        return prepare_module.edge_velocity_from_cp(np.minimum(cp, cp_max), mach) ** 2
    return np.maximum(1.0 - cp, 0.0)


def _input_cp(case: Case) -> F64:
    """Cp at the input points (from ``pressure.p`` with the case's references)."""
    pressure = case.pressure
    if pressure.cp is not None:
        return np.asarray(pressure.cp, dtype=np.float64)
    assert pressure.p is not None and pressure.reference_pressure is not None
    q_inf = _dynamic_pressure(case)
    assert q_inf is not None
    return (np.asarray(pressure.p, dtype=np.float64) - pressure.reference_pressure) / q_inf


def _isentropic_q_slope(cp: F64, mach: float, gamma: float = prepare_module.GAMMA) -> F64:
    r"""dq/dCp of q = (Ue/U_inf)^2 from ``prepare.edge_velocity_from_cp`` at M > 0, zero
    where Cp is at or above its stagnation value (clipped there) or p/p_inf is clipped.

    With P = p/p_inf = 1 + (gamma/2) M^2 Cp, A = 1 + (gamma-1)/2 M^2, P0 = A^(gamma/(gamma-1))
    and W = (P0/P)^((gamma-1)/gamma) = 1 + (gamma-1)/2 Me^2, q = Me^2 A / (M^2 W), so

    .. math::
        \frac{dq}{dC_p} = \frac{A}{M^2 W^2}\,\frac{dM_e^2}{dP}\,\frac{dP}{dC_p}
        = -\frac{A}{P\,W}

    (-1 as M -> 0, Bernoulli).  Isentropic flow relations [derived; standard gas
    dynamics]."""
    g = gamma
    k = 0.5 * (g - 1.0) * mach**2
    p_ratio = 1.0 + 0.5 * g * mach**2 * cp
    p0_ratio = (1.0 + k) ** (g / (g - 1.0))
    inside = (cp < prepare_module.stagnation_cp(mach, g)) & (p_ratio > 1e-12)
    safe = np.where(inside, p_ratio, 1.0)
    w = (p0_ratio / safe) ** ((g - 1.0) / g)
    return np.asarray(np.where(inside, -(1.0 + k) / (safe * w), 0.0), dtype=np.float64)


def _cut_side(side: SideInput) -> SideInput:
    """A contour side as ``_contour_to_q`` needs it where its stations end before its
    branch of the input does, where the edge velocity vanishes again (a second stagnation
    point in the input): the cut, an input point, is held, so its position has no
    derivative, and the input points beyond it have none on this side (zero; the side's
    ``nose.points`` end at the cut).  ``prepare._split_contour`` tells the branch before
    the stagnation point from the one after it by the branch array itself, which the cut
    replaces, so a cut branch before the stagnation point gets the ``direction`` and, for a
    secant slope, the ``slope_grad`` of the other.  Both are restated here from the side:
    the direction from its first two input points (one step back along the listing, or a
    wrap round a closed contour's listing, is the branch before), and a secant slope (the
    nose's model holds s0: no s0 derivative, one point's value in the slope) is the secant
    Ue_1 / s_1 to the side's first point, so d slope / d q there is 1 / (2 Ue_1 s_1).  A
    side stated right is returned as it is."""
    nose = side.nose
    if nose is None or nose.gap or side.s.size < 3:
        return side
    step = int(nose.points[2] - nose.points[1])
    direction = 1.0 if step == -1 or step > 1 else -1.0
    if direction == nose.direction:
        return side
    slope_grad = nose.slope_grad
    if not nose.s0_grad.any() and np.count_nonzero(slope_grad) == 1:
        slope_grad = np.zeros_like(slope_grad)
        slope_grad[nose.points[1]] = 0.5 / float(side.ue[1]) / float(side.s[1])
    return replace(side, nose=replace(nose, direction=direction, slope_grad=slope_grad))


def _stagnation_shift(side: SideInput, geo: F64) -> F64:
    """d(figure)/d s0 of a contour side, the stagnation point's arc position moved with
    the input values held, from the derivatives with respect to the stations' s, r and x
    (``geo``, from ``side_sensitivities``): every station beyond the stagnation point
    moves by ``nose.direction`` d s0 (its s is the distance from the stagnation point;
    the stagnation station's stays 0), and the stagnation station's x (and r) along its
    segment (``nose.position_grad``).  Positions are reported in the side's s, so there
    is no term of their own."""
    nose = side.nose
    assert nose is not None
    dx, _, dr = nose.position_grad
    shift = nose.direction * geo[0, :, 1:].sum(axis=1) + dx * geo[2, :, 0]
    if side.axisymmetric:
        shift += dr * geo[1, :, 0]
    return np.asarray(shift)


def _contour_to_q(side: SideInput, bars: F64, slope_bar: F64, shift: F64, n_in: int) -> F64:
    """Derivatives with respect to q = (Ue/U_inf)^2 at each input point of a contour from
    those with respect to Ue at the side's stations (``bars``), to its stagnation slope
    (``slope_bar``) and to the stagnation point's position (``shift``)."""
    nose = side.nose
    assert nose is not None
    ue = side.ue
    stations = np.flatnonzero(ue[1:] > 0.0) + 1
    weights = bars[:, stations] * (0.5 / ue[stations])
    points = nose.points[stations]
    rows = weights.shape[0]
    flat = (np.arange(rows)[:, None] * n_in + points[None, :]).ravel()
    summed = np.bincount(flat, weights.ravel(), minlength=rows * n_in)
    out: F64 = np.asarray(summed, dtype=np.float64).reshape(rows, n_in)
    out += slope_bar[:, None] * nose.slope_grad[None, :]
    out += shift[:, None] * nose.s0_grad[None, :]
    return out


def _q_to_inputs(case: Case, bar_q: F64) -> F64:
    """Derivatives with respect to q = (Ue/U_inf)^2 at each input point turned into
    derivatives with respect to the input values: q = value^2 (edge velocity),
    q = max(1 - Cp, 0) at M = 0, the isentropic relation at M > 0
    (``_isentropic_q_slope``), Cp = (p - p_inf)/q_inf."""
    pressure = case.pressure
    if pressure.edge_velocity is not None:
        return np.asarray(bar_q * 2.0 * np.asarray(pressure.edge_velocity, dtype=np.float64))
    if case.flow.mach > 0.0:
        result = bar_q * _isentropic_q_slope(_input_cp(case), case.flow.mach)
    else:
        result = np.where(_raw_q(case) > 0.0, -bar_q, 0.0)
    if pressure.p is not None:
        q_inf = _dynamic_pressure(case)
        assert q_inf is not None
        result /= q_inf
    return np.asarray(result)


def side_arrays(
    side: SideInput, state: SideState, flags: NDArray[np.bool_], factor: float, geometry: bool
) -> tuple[NDArray[np.int64], F64, F64, F64]:
    """``side_sensitivities`` on a marched side: the status per quantity, the derivatives
    with respect to Ue/U_inf at the stations (rows ``QUANTITIES``), the bars of a contour's
    stagnation slope (empty on a single surface), and when ``geometry`` those with
    respect to the stations' s, r and x (3, rows, stations; else no columns).
    ``flags`` the quantities wanted, ``factor`` the profile drag's (``side_sensitivities``)."""
    s, ue, r, _, ints, reals = march_module._stack([side])
    events = np.full(kernel.N_EVENT_FIELDS, np.nan)
    events[1] = state.transition_s
    events[2] = _CAUSE_CODES[state.transition_cause]
    events[4] = state.laminar_separation_s
    events[7] = state.separation_s
    events[8] = 1.0 if state.separation_turbulent else 0.0
    rows = len(QUANTITIES)
    out = np.zeros((rows, s.shape[1]))
    slope_bar = np.zeros(rows if side.nose is not None else 0)
    geo = np.zeros((3, rows, s.shape[1] if geometry else 0))
    xs = s[0].copy()  # the friction drag is integrated in x: s on a single surface
    if side.x is not None:
        xs[: side.x.size] = side.x
    status = side_sensitivities(
        s[0],
        ue[0],
        r[0],
        ints[0],
        reals[0],
        events,
        state.turbulent.copy(),
        np.ascontiguousarray(state.cf),
        state.count,
        flags,
        out,
        factor,
        slope_bar,
        xs,
        geo,
    )
    return status, out, slope_bar, geo


def derivatives(
    case: Case,
    side: SideInput,
    state: SideState,
    pointer: str,
    profile_scale: float | None = None,
) -> tuple[Sensitivities, list[Notice]]:
    """The ``sensitivities`` member of a marched side and the warnings that go with it:
    the quantities the case's ``output.sensitivities`` asks for, per input point.
    ``profile_scale`` is the side's part of the profile drag (1, or 1/2 for each side of
    one body of revolution), None when the case has no profile drag."""
    pressure = case.pressure
    wrt: Literal["edge_velocity", "cp", "p"] = (
        "edge_velocity" if pressure.edge_velocity is not None else "p" if pressure.p else "cp"
    )
    wanted = list(dict.fromkeys(case.output.sensitivities))
    values: dict[str, list[float] | None] = dict.fromkeys(wanted)
    notices: list[Notice] = []

    def unavailable(name: str, reason: str) -> None:
        notices.append(
            Notice(
                code="sensitivities_unavailable",
                message=f"{side.name}: no derivatives of {name}: {reason}",
                pointer=f"{pointer}/sensitivities/{name}",
            )
        )

    side = _cut_side(side)
    reason = _not_covered(case, side, state)
    if reason is not None:
        for name in wanted:
            unavailable(name, reason)
        return Sensitivities(with_respect_to=wrt, **values), notices
    flags = np.array([name in wanted for name in QUANTITIES])
    contour = side.nose is not None
    factor = 0.0
    if profile_scale is not None:
        factor = profile_scale * (4.0 * math.pi * float(side.r[-1]) if side.axisymmetric else 2.0)
    status, out, slope_bar, geo = side_arrays(side, state, flags, factor, contour)
    if contour:
        shift = _stagnation_shift(side, geo)
        n_in = len(case.surface.x or ())
        bar_q = _contour_to_q(side, out, slope_bar, shift, n_in)
        if case.pressure.smoothing is not None:
            bar_q = _smoothing_transpose(case, bar_q)
        inputs = _q_to_inputs(case, bar_q)
    else:
        inputs = _to_inputs(case, side, out)
    for name in wanted:
        if name == "profile_drag" and profile_scale is None:
            continue  # no profile drag (the drag's note says why)
        k = QUANTITIES.index(name)
        code = int(status[k])
        if code == OK:
            values[name] = inputs[k].tolist()
        elif code != ABSENT:
            unavailable(name, REASONS[code])
    return Sensitivities(with_respect_to=wrt, **values), notices
