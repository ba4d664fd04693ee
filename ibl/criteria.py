"""Transition criteria and laminar events in the compiled march.

Contents
--------
- Scalar twins of ``ibl.transition``'s criteria: ``michel``, ``granville_instability``,
  ``granville_growth``, ``abu_ghannam_shaw``; ``tests/test_kernel.py`` checks each
  against its definition.
- ``_laminar_state``: theta^2, lambda, Re_theta and Ue at any arc length of the side's
  laminar layer (Thwaites' ``ibl.thwaites._laminar_at`` or the supplied stations'
  ``ibl.supplied._supplied_at``).
- ``_margin`` (how far past its threshold an event is) and ``_refine`` (where the
  margin crosses zero, by regula falsi converged to rounding).
- ``laminar_separation`` and ``natural_transition``: the events of a side's laminar
  layer, by the case's criterion code (``kernel.CRITERION_CODES``).
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

from ibl.edge import _interp
from ibl.laminar import LAMBDA_MAX
from ibl.supplied import _supplied_at
from ibl.thwaites import _laminar_at, shape_factor
from ibl.transition import GRANVILLE_INSTABILITY_TABLE

F64 = NDArray[np.float64]

_G_LAM = GRANVILLE_INSTABILITY_TABLE[:, 0].copy()
_G_LOG_RE = np.log(GRANVILLE_INSTABILITY_TABLE[:, 1])


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
    Callers pass the kind as a plain integer (``int(np.int64(0))``, not ``0``): numba compiles
    a function once more for each literal value of an argument.
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


@numba.njit(cache=True, error_model="numpy")
def laminar_separation(
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    lam: F64,
    closure: int,
    lam_sep: float,
    tu: float,
    sup: F64,
    supplied: bool,
    supplied_separation: float,
) -> tuple[float, float]:
    """Laminar separation (inf when none) and Re_delta* there: where lambda falls to
    ``lam_sep`` on Thwaites' layer, or the supplied separation (``supplied_separation``,
    NaN or inf for none) on supplied stations."""
    sk = layer[0]
    n, nu = params[0], params[3]
    lsep = np.inf
    lsep_re_dstar = np.nan
    if not supplied:
        for i in range(1, n):
            if lam[i] <= lam_sep:
                lsep = _refine(
                    int(np.int64(0)), sk[i - 1], sk[i], layer, params, lam_sep, tu, sup, supplied
                )
                _, _, re_sep, _ = _laminar_at(layer, params, lsep)
                lsep_re_dstar = re_sep * shape_factor(closure, lam_sep)
                break
    if supplied and supplied_separation <= sk[n - 1]:
        lsep = supplied_separation
        _, _, re_sep, _, h_at = _supplied_at(layer, n, nu, sup, lsep)
        lsep_re_dstar = re_sep * h_at
    return lsep, lsep_re_dstar


@numba.njit(cache=True, error_model="numpy")
def natural_transition(
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    criterion: int,
    lam: F64,
    re_lam: F64,
    running: F64,
    lam_sep: float,
    tu: float,
    sup: F64,
    supplied: bool,
) -> tuple[float, float]:
    """Natural transition by criterion code ``criterion`` (0 none, 1 Michel, 2 Granville,
    3 Abu-Ghannam & Shaw) on the laminar stations' lambda and Re_theta; inf when none.
    Returns its position and, for Granville's criterion, the mean lambda since
    instability (NaN otherwise); ``running`` is work space."""
    sk, uk = layer[0], layer[1]
    n, nu = params[0], params[3]
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
                s_i = _refine(
                    int(np.int64(2)), sk[i - 1], sk[i], layer, params, lam_sep, tu, sup, supplied
                )
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
    return crit, lam_mean_tr
