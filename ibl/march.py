"""The march: many sides at once, laminar to transition to turbulent to separation.

Contents
--------
- ``march(sides)``: the one marching routine.  Sides are stacked into padded arrays
  (sides along axis 0, stations along axis 1) and marched in lockstep: Thwaites'
  integral is a vectorised cumulative quadrature, transition and laminar separation are
  first crossings found for all sides at once, and Head's equations are integrated by
  the compiled ``ibl.turbulent.march_head`` over all turbulent sides in one call.
- ``SideState``: the station arrays and events of one marched side.
- ``node_derivative``: second-order derivative on a non-uniform grid.

Positions of events are located between stations by linear interpolation of the
quantity that crosses its threshold.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ibl import laminar, mesh, transition, turbulent
from ibl.prepare import SideInput

__all__ = ["START_OFFSET", "SideState", "march", "node_derivative"]

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]

#: A turbulent layer tripped at a stagnation point or sharp edge starts this fraction of
#: the side length downstream, where Ue and theta are positive.
START_OFFSET = 1e-4
#: Largest internal step of the turbulent march, as a fraction of the side length.
MAX_STEP = 0.02
#: Laminar delta99/theta of the Blasius layer, 4.91/0.664 (common practice).
LAMINAR_DELTA99_RATIO = 4.91 / 0.664

_CRITERION_CODE = {"none": 0, "michel": 1, "granville": 2, "abu_ghannam_shaw": 3}


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


def node_derivative(s: F64, f: F64) -> F64:
    """df/ds at the nodes of each row: three-point central differences inside, one-sided
    three-point differences at both ends; second order on any spacing.

    >>> s = np.array([[0.0, 0.5, 1.5, 3.0]])
    >>> node_derivative(s, s**2).round(12).tolist()
    [[0.0, 1.0, 3.0, 6.0]]
    """
    h = np.diff(s, axis=1)
    d = np.empty_like(f)
    h1, h2 = h[:, :-1], h[:, 1:]
    d[:, 1:-1] = (
        -h2 / (h1 * (h1 + h2)) * f[:, :-2]
        + (h2 - h1) / (h1 * h2) * f[:, 1:-1]
        + h1 / (h2 * (h1 + h2)) * f[:, 2:]
    )
    a, b = h[:, 0], h[:, 1]
    d[:, 0] = (
        -(2 * a + b) / (a * (a + b)) * f[:, 0] + (a + b) / (a * b) * f[:, 1] - a / (b * (a + b)) * f[:, 2]
    )
    a, b = h[:, -1], h[:, -2]
    d[:, -1] = (
        (2 * a + b) / (a * (a + b)) * f[:, -1] - (a + b) / (a * b) * f[:, -2] + a / (b * (a + b)) * f[:, -3]
    )
    return d


def _hermite_gauss(s: F64, f: F64, d: F64) -> F64:
    """Cubic Hermite interpolant of f at the Gauss nodes of every interval: (rows, n-1, 4)."""
    t = laminar.GAUSS_NODES
    h00 = 2 * t**3 - 3 * t**2 + 1
    h10 = t**3 - 2 * t**2 + t
    h01 = -2 * t**3 + 3 * t**2
    h11 = t**3 - t**2
    h = np.diff(s, axis=1)[..., None]
    return (
        f[:, :-1, None] * h00
        + h * d[:, :-1, None] * h10
        + f[:, 1:, None] * h01
        + h * d[:, 1:, None] * h11
    )


def _first_crossing(g: F64, valid: NDArray[np.bool_]) -> tuple[NDArray[np.bool_], I64, F64]:
    """First station where g >= 0 in each row, and the fraction of the interval before it
    at which linear interpolation of g crosses zero (1 when the previous g is -inf)."""
    hit = (g >= 0.0) & valid
    idx = np.argmax(hit, axis=1)
    rows = np.arange(g.shape[0])
    found = hit[rows, idx]
    g1 = g[rows, idx]
    g0 = g[rows, np.maximum(idx - 1, 0)]
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(idx > 0, g0 / (g0 - g1), 1.0)
    frac = np.where(np.isfinite(frac), np.clip(frac, 0.0, 1.0), 1.0)
    return found, idx, frac


def _at(v: F64, idx: I64, frac: F64) -> F64:
    """Linear interpolation of the rows of v at fractional station index idx - 1 + frac."""
    rows = np.arange(v.shape[0])
    v0 = v[rows, np.maximum(idx - 1, 0)]
    return np.asarray(v0 + frac * (v[rows, idx] - v0), dtype=np.float64)


def _interp_rows(s: F64, v: F64, at: F64) -> F64:
    """Linear interpolation of each row of v(s) at one position per row."""
    n = s.shape[1]
    idx = np.clip(np.sum(s <= at[:, None], axis=1), 1, n - 1)
    rows = np.arange(s.shape[0])
    s0, s1 = s[rows, idx - 1], s[rows, idx]
    frac = np.clip((at - s0) / (s1 - s0), 0.0, 1.0)
    return np.asarray(v[rows, idx - 1] + frac * (v[rows, idx] - v[rows, idx - 1]))


def _stack(sides: list[SideInput]) -> tuple[F64, F64, F64, I64]:
    """Pad the sides to one length: s continues with its last spacing, Ue and r are held."""
    count = np.array([side.s.size for side in sides], dtype=np.int64)
    n = int(count.max())
    shape = (len(sides), n)
    s, ue, r = np.empty(shape), np.empty(shape), np.empty(shape)
    for i, side in enumerate(sides):
        m = side.s.size
        s[i, :m], ue[i, :m], r[i, :m] = side.s, side.ue, side.r
        if m < n:
            s[i, m:] = side.s[-1] + (side.s[-1] - side.s[-2]) * np.arange(1, n - m + 1)
            ue[i, m:], r[i, m:] = side.ue[-1], side.r[-1]
    return s, ue, r, count


def march(sides: list[SideInput]) -> list[SideState]:
    """March every side from its start to separation or its end, all sides in lockstep."""
    n_sides = len(sides)
    s, ue, r, count = _stack(sides)
    n = s.shape[1]
    col = np.arange(n)[None, :]
    valid = col < count[:, None]
    length = s[np.arange(n_sides), count - 1]
    nu = np.array([side.nu for side in sides])[:, None]
    axisym = np.array([side.axisymmetric for side in sides])
    start_kind = [side.start for side in sides]
    stagnation = np.array([k == "stagnation" for k in start_kind])
    options = [side.options for side in sides]

    # Edge-velocity and radius gradients.
    due = node_derivative(s, ue)
    slope = np.array([side.slope for side in sides])
    due[stagnation, 0] = slope[stagnation]
    dr = node_derivative(s, r) if axisym.any() else np.zeros_like(r)

    # Thwaites' integral, planar or axisymmetric (Rott & Crabtree), Gauss quadrature on
    # the Hermite interpolant of Ue (and r).
    u_g = np.maximum(_hermite_gauss(s, ue, due), 0.0)
    integrand = u_g ** (laminar.THWAITES_B - 1.0)
    if axisym.any():
        integrand = integrand * _hermite_gauss(s, r, dr) ** 2
    panel = np.diff(s, axis=1) * (integrand @ laminar.GAUSS_WEIGHTS)
    integral = np.concatenate((np.zeros((n_sides, 1)), np.cumsum(panel, axis=1)), axis=1)
    theta0 = np.array([side.theta0 for side in sides])[:, None]
    weight = r**2 * ue**laminar.THWAITES_B
    numerator = theta0**2 * weight[:, :1] + laminar.THWAITES_A * nu * integral
    on_axis = r[:, 0] <= 1e-9 * length
    start_theta2 = np.where(
        stagnation,
        laminar.stagnation_theta_squared(np.where(stagnation, slope, 1.0), nu[:, 0], on_axis),
        theta0[:, 0] ** 2,
    )
    with np.errstate(divide="ignore", invalid="ignore"):
        theta2 = np.where(weight > 0.0, numerator / weight, start_theta2[:, None])
    theta2[:, 0] = start_theta2
    theta_lam = np.sqrt(theta2)
    lam = theta2 * due / nu
    lam_sep = np.array([o.separation_lambda for o in options])[:, None]
    lam_c = np.clip(lam, lam_sep, laminar.LAMBDA_MAX)
    closure = np.array([o.closure for o in options])
    shear = np.empty_like(lam_c)
    h_lam = np.empty_like(lam_c)
    for name in set(closure.tolist()):
        rows = closure == name
        entry = laminar.CLOSURES[name]
        shear[rows] = entry.shear(lam_c[rows])
        h_lam[rows] = entry.shape_factor(lam_c[rows])
    re_theta_lam = ue * theta_lam / nu

    # Laminar separation.
    sep_found, sep_idx, sep_frac = _first_crossing(lam_sep - lam, valid & (col >= 1))
    lsep_s = np.where(sep_found, _at(s, sep_idx, sep_frac), np.inf)
    lsep_re_dstar = _at(re_theta_lam * h_lam, sep_idx, sep_frac)

    # Natural transition, by criterion.
    code = np.array([_CRITERION_CODE[o.criterion] for o in options])
    g = np.full_like(s, -np.inf)
    lam_mean = np.full_like(s, np.nan)
    sigma = s - s[:, :1]
    positive = sigma > 0.0
    with np.errstate(divide="ignore", invalid="ignore"):
        re_s = ue * sigma / nu
        if (code == 1).any():
            rows = code == 1
            michel = re_theta_lam - transition.re_theta_transition_michel_1951(re_s)
            g[rows] = np.where(positive, michel, -np.inf)[rows]
        if (code == 2).any():
            rows = code == 2
            crit = re_theta_lam - transition.re_theta_instability_granville_1953(lam_c)
            i_found, i_idx, i_frac = _first_crossing(crit, valid & positive)
            s_i = np.where(i_found, _at(s, i_idx, i_frac), np.inf)
            re_i = _at(re_theta_lam, i_idx, i_frac)
            running = np.concatenate(
                (
                    np.zeros((n_sides, 1)),
                    np.cumsum(0.5 * (lam_c[:, 1:] + lam_c[:, :-1]) * np.diff(s, axis=1), axis=1),
                ),
                axis=1,
            )
            running_i = _at(running, i_idx, i_frac)
            after = s > s_i[:, None]
            mean = (running - running_i[:, None]) / (s - s_i[:, None])
            growth = transition.re_theta_growth_granville_1953(mean)
            granville = np.where(after, re_theta_lam - re_i[:, None] - growth, -np.inf)
            g[rows] = granville[rows]
            lam_mean[rows] = np.where(after, mean, np.nan)[rows]
        if (code == 3).any():
            rows = code == 3
            tu = np.array([(o.turbulence_intensity or 0.0) * 100.0 for o in options])
            ags = re_theta_lam - transition.re_theta_transition_abu_ghannam_shaw_1980(
                lam_c, tu[:, None]
            )
            g[rows] = np.where(positive, ags, -np.inf)[rows]
    crit_found, crit_idx, crit_frac = _first_crossing(g, valid & positive)
    crit_s = np.where(crit_found, _at(s, crit_idx, crit_frac), np.inf)
    trip_s = np.array([np.inf if side.trip is None else side.trip for side in sides])
    natural = np.minimum(crit_s, trip_s)
    natural = np.where(natural <= length, natural, np.inf)

    # Laminar separation first: a short bubble transitions, a long one separates.
    short = transition.bubble_is_short_owen_klanfer_1953(lsep_re_dstar)
    lsep_first = lsep_s < natural
    none = code == 0
    lam_separates = lsep_first & (none | ~short)
    bubble_transition = lsep_first & ~none & short
    turbulent_start = np.array([side.turbulent_start for side in sides])
    tr_s = np.where(bubble_transition, lsep_s, np.where(lsep_first, np.inf, natural))
    tr_s = np.where(turbulent_start, 0.0, tr_s)
    has_tr = np.isfinite(tr_s)

    # Head's method from transition, theta continuous.
    start = np.where(
        turbulent_start,
        0.0,
        np.maximum(tr_s, np.where(np.array([k == "inflow" for k in start_kind]), 0.0, START_OFFSET * length)),
    )
    theta_start = np.sqrt(_interp_rows(s, theta2, np.where(has_tr, start, 0.0)))
    theta_start = np.where(turbulent_start, theta0[:, 0], theta_start)
    h_start = np.array([o.initial_shape_factor for o in options])
    h_start = np.where(turbulent_start, np.array([side.h0 for side in sides]), h_start)
    theta_t = np.full_like(s, np.nan)
    h_t = np.full_like(s, np.nan)
    turb_sep = np.full(n_sides, np.nan)
    law = np.array([turbulent.SKIN_FRICTION[o.skin_friction].code for o in options])
    turbulent.march_head(
        s,
        ue,
        due,
        r,
        dr,
        count,
        np.where(has_tr, start, np.inf),
        theta_start,
        h_start,
        1.0 / nu[:, 0],
        np.array([o.separation_shape_factor for o in options]),
        law,
        axisym,
        MAX_STEP * length,
        theta_t,
        h_t,
        turb_sep,
    )

    # Assemble station values.
    is_turb = has_tr[:, None] & (s >= start[:, None]) & np.isfinite(theta_t)
    theta = np.where(is_turb, theta_t, theta_lam)
    shape = np.where(is_turb, h_t, h_lam)
    re_theta = ue * theta / nu
    with np.errstate(divide="ignore", invalid="ignore"):
        cf_lam = 2.0 * shear / re_theta_lam
    cf_turb = np.empty_like(s)
    for name in set(law.tolist()):
        rows = law == name
        function = next(v.function for v in turbulent.SKIN_FRICTION.values() if v.code == name)
        with np.errstate(invalid="ignore", divide="ignore"):
            cf_turb[rows] = function(shape[rows], np.maximum(re_theta[rows], 1e-300))
    cf = np.where(is_turb, cf_turb, cf_lam)
    cf = np.where(np.isfinite(cf) & (ue > 0.0) & (theta > 0.0), cf, np.nan)
    delta_star = shape * theta
    delta99 = np.where(
        is_turb, mesh.delta99_power_law(theta, shape), LAMINAR_DELTA99_RATIO * theta
    )

    separation = np.where(lam_separates, lsep_s, np.where(has_tr, turb_sep, np.nan))
    separation = np.where(np.isfinite(separation), separation, np.nan)
    tr_cause = np.where(
        bubble_transition,
        "laminar_separation",
        np.where(trip_s <= np.minimum(crit_s, length), "trip", "criterion"),
    )
    tr_re_theta = np.sqrt(_interp_rows(s, theta2, np.where(has_tr, tr_s, 0.0))) * np.where(
        has_tr, _interp_rows(s, ue, np.where(has_tr, tr_s, 0.0)), 0.0
    ) / nu[:, 0]
    transition_lam_mean = np.where(
        code == 2, _interp_rows(s, np.nan_to_num(lam_mean), np.where(has_tr, tr_s, 0.0)), np.nan
    )

    states = []
    for i in range(n_sides):
        keep = int(count[i])
        if np.isfinite(separation[i]):
            keep = int(np.searchsorted(s[i, :keep], separation[i], side="right"))
            keep = max(keep, 1)
        laminar_part = valid[i] & ~is_turb[i] & (col[0] < keep)
        turb_part = is_turb[i, :keep]
        lam_max = float(lam[i][laminar_part].max()) if laminar_part.any() else 0.0
        rt = re_theta[i, :keep][turb_part]
        show_lsep = np.isfinite(lsep_s[i]) and (lam_separates[i] or bubble_transition[i])
        states.append(
            SideState(
                count=keep,
                s=s[i, :keep],
                ue=ue[i, :keep],
                theta=theta[i, :keep],
                shape_factor=shape[i, :keep],
                cf=cf[i, :keep],
                re_theta=re_theta[i, :keep],
                delta99=delta99[i, :keep],
                turbulent=turb_part,
                transition_s=float(tr_s[i]) if has_tr[i] else float("nan"),
                transition_cause=str(tr_cause[i]),
                transition_re_theta=float(tr_re_theta[i]),
                laminar_separation_s=float(lsep_s[i]) if show_lsep else float("nan"),
                laminar_separation_re_delta_star=float(lsep_re_dstar[i]),
                bubble_short=bool(short[i]),
                separation_s=float(separation[i]),
                separation_turbulent=bool(has_tr[i] and not lam_separates[i]),
                max_laminar_lambda=lam_max,
                turbulent_re_theta_range=(
                    (float(rt.min()), float(rt.max())) if rt.size else (np.nan, np.nan)
                ),
                transition_re_s=float(
                    _interp_rows(s[i : i + 1], re_s[i : i + 1], tr_s[i : i + 1])[0]
                )
                if has_tr[i]
                else float("nan"),
                lambda_mean_at_transition=float(transition_lam_mean[i]),
            )
        )
    return states
