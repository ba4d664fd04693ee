"""The compiled march: every side from its start to separation or its end.

Contents
--------
- ``march_sides``: one compiled loop over sides (sides along axis 0 of padded arrays,
  stations along axis 1), a short driver that runs per side
  1. ``_laminar_part``: node gradients, the laminar layer of the side's laminar method
     (Thwaites' integral, ``ibl.thwaites``, or supplied stations, ``ibl.supplied``),
     laminar separation, the transition criterion (``ibl.criteria``) and the bubble class;
  2. ``_turbulent_part``: the turbulent layer from transition, by the side's turbulent
     method through the one shared march of ``ibl.step_control`` (Head's equations,
     ``ibl.head``, or the lag-entrainment equations, ``ibl.lag_entrainment``);
  3. ``_station_values`` and ``_events``: the station arrays and the events.
- The side's parameters are read by their named columns (``ibl.columns``); the methods
  by their codes in the registry (``ibl.methods``).
- The names the backward sweep (``ibl.sensitivity``) and the tests use, re-exported from
  the modules above (the scalar twins of the published correlations, the helpers, Head's
  march with its tape as ``_head``).

Why compiled: the turbulent layer is an initial-value problem, sequential along each side;
a per-station loop in Python costs milliseconds per side.  Compiling the whole side march
keeps one analysis well under a millisecond while a batch of sides still goes through
one call.
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

from ibl import criteria, step_control, thwaites
from ibl.columns import (
    I_AXISYMMETRIC,
    I_CLOSURE,
    I_CRITERION,
    I_LAMINAR_METHOD,
    I_SKIN_FRICTION,
    I_START,
    I_TURBULENT_METHOD,
    R_INFLOW_SHAPE_FACTOR,
    R_INFLOW_THETA,
    R_INITIAL_SHAPE_FACTOR,
    R_NU,
    R_SEPARATION_LAMBDA,
    R_SEPARATION_SHAPE_FACTOR,
    R_STAGNATION_SLOPE,
    R_SUPPLIED_LAMINAR_SEPARATION,
    R_TRIP,
    R_TU_PERCENT,
)

# Re-exported for ``ibl.sensitivity``, the tests and the method modules' readers.
from ibl.criteria import _G_LAM as _G_LAM
from ibl.criteria import _G_LOG_RE as _G_LOG_RE
from ibl.criteria import _laminar_state as _laminar_state
from ibl.criteria import _margin as _margin
from ibl.criteria import _refine as _refine
from ibl.criteria import abu_ghannam_shaw as abu_ghannam_shaw
from ibl.criteria import granville_growth as granville_growth
from ibl.criteria import granville_instability as granville_instability
from ibl.criteria import michel as michel
from ibl.edge import _derivative as _derivative
from ibl.edge import _edge as _edge
from ibl.edge import _hermite as _hermite
from ibl.edge import _interp as _interp
from ibl.edge import _limit as _limit
from ibl.edge import _limit_interval as _limit_interval
from ibl.edge import _radius_peak as _radius_peak
from ibl.edge import _stencil as _stencil
from ibl.head import STEP_H1 as STEP_H1
from ibl.head import _rhs as _rhs
from ibl.head import cf_turbulent as cf_turbulent
from ibl.head import entrainment as entrainment
from ibl.head import h1_from_h as h1_from_h
from ibl.head import h_from_h1 as h_from_h1
from ibl.lag_entrainment import cf_nb as _lag_cf
from ibl.laminar import LAMBDA_MAX
from ibl.methods import code
from ibl.step_control import MAX_STEP as MAX_STEP
from ibl.step_control import MAX_STEPS as MAX_STEPS
from ibl.step_control import METHOD_HEAD as METHOD_HEAD
from ibl.step_control import METHOD_LAG_ENTRAINMENT as METHOD_LAG_ENTRAINMENT
from ibl.step_control import RETAKE_FACTOR as RETAKE_FACTOR
from ibl.step_control import RETAKES as RETAKES
from ibl.step_control import STEP_ORIGIN as STEP_ORIGIN
from ibl.step_control import STEP_THETA as STEP_THETA
from ibl.step_control import STEP_UE as STEP_UE
from ibl.step_control import STOP_BUDGET as STOP_BUDGET
from ibl.step_control import STOP_INVALID as STOP_INVALID
from ibl.step_control import STOP_NONE as STOP_NONE
from ibl.step_control import STOP_THIN as STOP_THIN
from ibl.step_control import TAPE_AT_START as TAPE_AT_START
from ibl.step_control import TAPE_AT_STEP_START as TAPE_AT_STEP_START
from ibl.step_control import TAPE_ATTACHED as TAPE_ATTACHED
from ibl.step_control import TAPE_COLUMNS as TAPE_COLUMNS
from ibl.step_control import TAPE_CROSSING as TAPE_CROSSING
from ibl.step_control import THIN_LAYER_RATIO as THIN_LAYER_RATIO
from ibl.step_control import _delta99_turbulent as _delta99_turbulent
from ibl.supplied import _supplied_at as _supplied_at
from ibl.supplied import stations as supplied_stations
from ibl.thwaites import _laminar_at as _laminar_at
from ibl.thwaites import shape_factor as shape_factor
from ibl.thwaites import shear as shear
from ibl.transition import OWEN_KLANFER_RE_DELTA_STAR

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
START_STAGNATION, START_SHARP, START_INFLOW, START_TURBULENT = 0, 1, 2, 3
CAUSE_CRITERION, CAUSE_TRIP, CAUSE_LAMINAR_SEPARATION = 0, 1, 2
#: The laminar layer of a side (column ``laminar_method`` of ``ints``, Thwaites' when
#: absent; codes of ``ibl.methods``): Thwaites' integral, or station values supplied by
#: the caller (``laminar`` of ``march_sides``, for example the finite-difference solution
#: of ``ibl.finite_difference``).
LAMINAR_THWAITES = code("laminar", "thwaites")
LAMINAR_SUPPLIED = code("laminar", "finite_difference")

#: A turbulent layer tripped at a stagnation point or sharp edge starts this fraction of
#: the side length downstream, where Ue and theta are positive.
START_OFFSET = 1e-4
#: Clauser's outer eddy-viscosity constant (twin of ``ibl.mesh.CLAUSER_CONSTANT``).
CLAUSER = 0.0168
#: Laminar delta99/theta of the Blasius layer, 4.91/0.664 (common practice).
LAMINAR_DELTA99_RATIO = 4.91 / 0.664


# ----------------------------------------------------------------- Head's march, taped


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
    """Head's equations from ``start``: ``step_control.march`` for ``METHOD_HEAD``
    (theta and H at the stations, the separation position, step count and stop code),
    with its ``tape`` for the backward sweep of ``ibl.sensitivity``."""
    return step_control.march(
        int(np.int64(METHOD_HEAD)),  # a plain integer: a literal one is a compilation of its own
        s,
        ue,
        due,
        r,
        dr,
        n,
        start,
        theta0,
        h0,
        inv_nu,
        h_separation,
        law,
        axisymmetric,
        theta_out,
        h_out,
        np.empty(0),
        scale,
        s_peak,
        tape,
    )


@numba.njit(cache=True, error_model="numpy")
def _crossing(
    step: float, h1_a: float, h1_b: float, d_a: float, d_b: float, h_separation: float
) -> float:
    """Fraction of a step of Head's march at which H, from the cubic Hermite interpolant
    of H1 over the step, reaches ``h_separation`` (``step_control.crossing``)."""
    return step_control.crossing(
        METHOD_HEAD, step, (h1_a, d_a, 0.0, 0.0, 0.0), (h1_b, d_b, 0.0, 0.0, 0.0), 0.0, h_separation
    )


# ----------------------------------------------------------------------------- the march


@numba.njit(cache=True, error_model="numpy")
def _laminar_part(
    sk: F64,
    uk: F64,
    rk: F64,
    n: int,
    start_kind: int,
    criterion: int,
    closure: int,
    axisym: bool,
    slope: float,
    theta_in: float,
    nu: float,
    trip: float,
    tu: float,
    lam_sep: float,
    sup: F64,
    is_supplied: bool,
    supplied_separation: float,
    due: F64,
    dr: F64,
    integral: F64,
    theta2: F64,
    lam: F64,
    h_lam: F64,
    re_lam: F64,
    running: F64,
) -> tuple[float, float, float, float, float, float, int, bool, bool, bool]:
    """The laminar part of one side: node gradients (into ``due``, ``dr``), the laminar
    layer at the stations (into ``theta2``, ``lam``, ``h_lam``, ``re_lam``; Thwaites'
    integral into ``integral``), laminar separation, natural transition, the bubble class
    and the transition position and cause.

    Returns the start term and theta^2 at the start of Thwaites' layer, laminar
    separation (inf when none) and its Re_delta*, the mean lambda at Granville's
    transition, the transition position (inf when none) and cause, and the flags: short
    bubble, laminar separation ahead of natural transition, the layer separates laminar.
    """
    # Gradients at the stations.
    _derivative(sk, uk, n, due)
    if start_kind == START_STAGNATION:
        due[0] = slope
    if axisym:
        _derivative(sk, rk, n, dr)
    else:
        for i in range(n):
            dr[i] = 0.0

    # Thwaites (1949), planar or axisymmetric (Rott & Crabtree 1952), or the supplied
    # stations.
    start_theta2, c0 = thwaites.layer(
        sk,
        uk,
        due,
        rk,
        dr,
        n,
        axisym,
        start_kind == START_STAGNATION,
        slope,
        theta_in,
        nu,
        closure,
        lam_sep,
        is_supplied,
        integral,
        theta2,
        lam,
        h_lam,
        re_lam,
    )
    if is_supplied:
        supplied_stations(uk, due, n, nu, sup, theta2, lam, h_lam, re_lam)
    layer = (sk, uk, due, rk, dr, integral)
    params = (n, c0, start_theta2, nu, axisym)

    # Laminar separation: lambda falls to the separation value (or the supplied one).
    lsep, lsep_re_dstar = criteria.laminar_separation(
        layer, params, lam, closure, lam_sep, tu, sup, is_supplied, supplied_separation
    )
    # Natural transition.
    crit, lam_mean_tr = criteria.natural_transition(
        layer, params, criterion, lam, re_lam, running, lam_sep, tu, sup, is_supplied
    )

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
    return (
        c0,
        start_theta2,
        lsep,
        lsep_re_dstar,
        lam_mean_tr,
        tr,
        cause,
        short,
        lsep_first,
        lam_separates,
    )


@numba.njit(cache=True, error_model="numpy")
def _turbulent_part(
    method: int,
    law: int,
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    n: int,
    start_kind: int,
    axisym: bool,
    nu: float,
    theta_in: float,
    h_in: float,
    h_init: float,
    h_sep: float,
    tr: float,
    laminar_separation: float,
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    sup: F64,
    is_supplied: bool,
    s_peak: float,
    step_scale: float,
    theta_t: F64,
    h_t: F64,
    ce_t: F64,
    no_tape: F64,
) -> tuple[float, int, int]:
    """The turbulent part of one side: from transition ``tr`` (theta continuous, H the
    initial shape factor; a turbulent inflow's theta and H), the turbulent method of code
    ``method`` through the shared march (``step_control.march``), into ``theta_t``,
    ``h_t`` (NaN where laminar) and ``ce_t``.  Returns the separation position
    (``laminar_separation`` when the layer separates laminar: NaN when it does not), the
    step count and the stop code."""
    length = sk[n - 1] - sk[0]
    for i in range(n):
        theta_t[i] = np.nan
        h_t[i] = np.nan
    separation = laminar_separation
    stop = STOP_NONE
    taken = 0
    if np.isfinite(tr):
        if start_kind == START_TURBULENT:
            start, th0, hh0 = sk[0], theta_in, h_in
        else:
            start = tr
            if start_kind != START_INFLOW:
                start = max(tr, sk[0] + START_OFFSET * length)
            th2_start, _, _, _ = _laminar_state(layer, params, sup, is_supplied, start)
            th0 = np.sqrt(th2_start)
            hh0 = h_init
        separation, taken, stop = step_control.march(
            method,
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
            ce_t,
            step_scale,
            s_peak,
            no_tape,
        )
    return separation, taken, stop


@numba.njit(cache=True, error_model="numpy")
def _turbulent_cf(method: int, law: int, h: float, re: float) -> float:
    """Skin friction of a turbulent station by the method (its own law, or the case's
    ``skin_friction`` law for Head's)."""
    if method == METHOD_LAG_ENTRAINMENT:
        return _lag_cf(h, re)
    return cf_turbulent(law, h, re)


@numba.njit(cache=True, error_model="numpy")
def _station_values(
    method: int,
    law: int,
    closure: int,
    sk: F64,
    uk: F64,
    rk: F64,
    n: int,
    nu: float,
    lam_sep: float,
    theta2: F64,
    lam: F64,
    h_lam: F64,
    re_lam: F64,
    sup: F64,
    is_supplied: bool,
    theta_t: F64,
    h_t: F64,
    i_peak: int,
    cut: float,
    out: F64,
) -> tuple[int, float, float, float, float, float]:
    """The station rows ``out`` (theta, H, Cf, Re_theta, delta99, turbulent flag, lambda)
    up to ``cut`` (separation, where the march stopped, or the thin-layer limit), ending
    before a non-finite value or at the thin-layer limit.  Returns the kept station count,
    where the thin-layer limit lies when it ends them here (NaN otherwise), the smallest
    and largest turbulent Re_theta, the largest laminar lambda and the flag of stations
    cut before a non-finite value."""
    thin_s = np.nan
    keep = n
    if np.isfinite(cut):
        keep = 1
        while keep < n and sk[keep] <= cut:
            keep += 1
    re_min = np.inf
    re_max = -np.inf
    lam_max_seen = 0.0
    cut_non_finite = 0.0
    for i in range(keep):
        turb = np.isfinite(theta_t[i])
        if turb:
            th = theta_t[i]
            hh = h_t[i]
            re = uk[i] * th / nu
            cf = _turbulent_cf(method, law, hh, re)
            d99 = _delta99_turbulent(th, hh)
        else:
            th = np.sqrt(theta2[i])
            hh = h_lam[i]
            re = re_lam[i]
            lc = min(max(lam[i], lam_sep), LAMBDA_MAX)
            # The fits give l slightly below zero at lambda = -0.09 (-0.0015): clip.
            cf = 2.0 * max(shear(closure, lc), 0.0) / re if re > 0.0 else np.nan
            d99 = LAMINAR_DELTA99_RATIO * th
            if is_supplied:
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
    return keep, thin_s, re_min, re_max, lam_max_seen, cut_non_finite


@numba.njit(cache=True, error_model="numpy")
def _mesh_figures(uk: F64, keep: int, out: F64, ev: F64) -> None:
    """Mesh figures into ``ev``: the largest friction velocity (smallest first cell), the
    largest delta99, the largest outer eddy viscosity (Clauser: 0.0168 Re_delta*,
    turbulent), each with its station."""
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
    ints : (sides, 5 to 7) the named columns ``ibl.columns.INT_COLUMNS``: start kind,
        criterion code, closure code, skin-friction law, axisymmetric flag, turbulent
        method (``METHOD_HEAD`` when absent), laminar method (``LAMINAR_THWAITES`` when
        absent, or ``LAMINAR_SUPPLIED``).
    reals : (sides, 9 or 10) the named columns ``ibl.columns.REAL_COLUMNS``: nu/U_inf,
        stagnation slope dUe/ds, inflow theta, inflow H, trip position (inf for none),
        Tu [%], separation lambda, initial H, separation H, supplied laminar separation s
        (read on supplied sides only; NaN or inf for none).
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
        where none), read on the sides whose ``laminar_method`` is ``LAMINAR_SUPPLIED``,
        with the supplied laminar separation position in ``reals`` column
        ``supplied_laminar_separation`` (NaN or inf for none).  There theta^2, H and
        Re_theta come from these values, lambda = theta^2 Ue'/nu, events between stations
        are located on theta^2 and H interpolated linearly in s (``_supplied_at``),
        laminar separation is the supplied one (its Re_delta* from the supplied H), and
        the laminar Cf and delta99 are the supplied ones; the criteria, the trip, the
        bubble class, the turbulent march and the thin-layer limit are unchanged.
    Positions are NaN when an event does not happen.  Returns the turbulent step count.
    """
    n_sides, n_max = s.shape
    assert stations.shape[0] == n_sides and stations.shape[1] == N_STATION_FIELDS
    assert stations.shape[2] >= n_max and events.shape[1] == N_EVENT_FIELDS
    assert ints.shape[1] > I_AXISYMMETRIC and reals.shape[1] > R_SEPARATION_SHAPE_FACTOR
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
        laminar_method = (
            ints[k, I_LAMINAR_METHOD] if ints.shape[1] > I_LAMINAR_METHOD else LAMINAR_THWAITES
        )
        is_supplied = laminar is not None and laminar_method == LAMINAR_SUPPLIED
        method = ints[k, I_TURBULENT_METHOD] if ints.shape[1] > I_TURBULENT_METHOD else METHOD_HEAD
        n = count[k]
        sk, uk, rk = s[k], ue[k], r[k]
        start_kind = ints[k, I_START]
        criterion = ints[k, I_CRITERION]
        closure = ints[k, I_CLOSURE]
        law = ints[k, I_SKIN_FRICTION]
        axisym = ints[k, I_AXISYMMETRIC] != 0
        nu = reals[k, R_NU]
        theta_in = reals[k, R_INFLOW_THETA]
        h_in = reals[k, R_INFLOW_SHAPE_FACTOR]
        trip = reals[k, R_TRIP]
        tu = reals[k, R_TU_PERCENT]
        lam_sep = reals[k, R_SEPARATION_LAMBDA]
        h_sep = reals[k, R_SEPARATION_SHAPE_FACTOR]
        supplied_separation = reals[k, R_SUPPLIED_LAMINAR_SEPARATION] if is_supplied else np.inf

        # 1. The laminar part.
        (
            c0,
            start_theta2,
            lsep,
            lsep_re_dstar,
            lam_mean_tr,
            tr,
            cause,
            short,
            lsep_first,
            lam_separates,
        ) = _laminar_part(
            sk,
            uk,
            rk,
            n,
            start_kind,
            criterion,
            closure,
            axisym,
            reals[k, R_STAGNATION_SLOPE],
            theta_in,
            nu,
            trip,
            tu,
            lam_sep,
            sup,
            is_supplied,
            supplied_separation,
            due,
            dr,
            integral,
            theta2,
            lam,
            h_lam,
            re_lam,
            running,
        )
        layer = (sk, uk, due, rk, dr, integral)
        params = (n, c0, start_theta2, nu, axisym)

        # The thin-layer limit applies downstream of the last station of largest radius.
        i_peak, s_peak = _radius_peak(sk, rk, n, axisym)

        # 2. The turbulent part from transition, theta continuous.
        separation, taken, stop = _turbulent_part(
            method,
            law,
            sk,
            uk,
            due,
            rk,
            dr,
            n,
            start_kind,
            axisym,
            nu,
            theta_in,
            h_in,
            reals[k, R_INITIAL_SHAPE_FACTOR],
            h_sep,
            tr,
            lsep if lam_separates else np.nan,
            layer,
            params,
            sup,
            is_supplied,
            s_peak,
            step_scale,
            theta_t,
            h_t,
            ce_t,
            no_tape,
        )
        steps += taken
        thin_s = np.nan  # where the thin-layer limit is reached (NaN if nowhere)
        if stop == STOP_THIN:
            thin_s, separation, stop = separation, np.nan, STOP_NONE
        stopped = np.nan
        if stop != STOP_NONE:
            stopped, separation = separation, np.nan

        # 3. Station values up to separation (or where the march stopped, or the
        # thin-layer limit).
        cut = stopped if stop != STOP_NONE else separation
        if np.isfinite(thin_s):
            cut = thin_s
        out = stations[k]
        keep, thin_here, re_min, re_max, lam_max_seen, cut_non_finite = _station_values(
            method,
            law,
            closure,
            sk,
            uk,
            rk,
            n,
            nu,
            lam_sep,
            theta2,
            lam,
            h_lam,
            re_lam,
            sup,
            is_supplied,
            theta_t,
            h_t,
            i_peak,
            cut,
            out,
        )
        if np.isfinite(thin_here):
            thin_s = thin_here
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

        # 4. The events.
        ev = events[k]
        ev[0] = keep
        if start_kind == START_TURBULENT:
            tr = np.inf  # turbulent from the first station: no transition on this surface
        ev[1] = tr if np.isfinite(tr) else np.nan
        ev[2] = cause
        ev[3] = np.nan
        ev[12] = np.nan
        if np.isfinite(tr):
            _, _, ev[3], u_tr = _laminar_state(layer, params, sup, is_supplied, tr)
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
        _mesh_figures(uk, keep, out, ev)
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
