"""Input preparation: from a validated case to the sides to march.

Contents
--------
- ``prepare(case)``: checks across fields, Cp to edge velocity, optional smoothing,
  the stagnation point between input points, the split into sides and arc lengths.
- ``edge_velocity_from_cp``: Bernoulli, or the isentropic edge when the Mach number is set.
- ``stagnation_cp``: Cp at a stagnation point for a free-stream Mach number.
- ``SideInput``, ``SideOptions``, ``Prepared``: what the march receives.

Every problem with the input raises ``CaseError`` naming the field by JSON pointer;
everything this module changes on the way (clipping, smoothing) becomes a warning.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

import numba
import numpy as np
from numpy.typing import ArrayLike, NDArray

from ibl import smoothing as smoothing_module
from ibl.errors import CaseError, FieldProblem
from ibl.schema import SMOOTHING_MAX, Case, Notice, Stagnation

__all__ = [
    "CP_NOISE",
    "GAMMA",
    "MIN_POINTS",
    "Prepared",
    "SideInput",
    "SideOptions",
    "edge_velocity_from_cp",
    "prepare",
    "stagnation_cp",
]

F64 = NDArray[np.float64]

#: Ratio of specific heats of air (common practice).
GAMMA = 1.4
#: Cp may exceed its stagnation value by this much (tap noise) before the case is refused;
#: the excess is clipped and reported (common practice for pressure-tap data).
CP_NOISE = 0.05
#: Fewest points on a surface, and on each side of a contour after the split.
MIN_POINTS = 3
#: Two consecutive contour points closer than this fraction of the contour length repeat.
REPEAT_TOLERANCE = 1e-10
#: Ue/U_inf at the stagnation point as the local models extrapolate it from the points:
#: up to STAGNATION_UE the stagnation region is resolved; up to STAGNATION_COARSE it is a
#: stagnation point the points do not resolve (coarse taps around a small nose: reported);
#: above, the data hold no stagnation point and the sides start as from a sharp edge.
STAGNATION_UE = 0.05
STAGNATION_COARSE = 0.5
#: The ``pressure_noisy`` warning: estimated noise of (Ue/U_inf)^2 (``smoothing.noise_estimate``)
#: above NOISE_SIGMA (0.1 % of the dynamic pressure: below the accuracy of good tap data,
#: common practice) and above NOISE_RATIO times the median change between neighbouring
#: points (then the point-to-point gradient, which drives Thwaites' lambda and Head's
#: equations, carries 5 % noise or more). Chosen here (project constants).
NOISE_SIGMA = 1e-3
NOISE_RATIO = 0.05


@dataclass(frozen=True, slots=True)
class SideOptions:
    """Per-case options, shared by the sides of a case."""

    criterion: str
    turbulence_intensity: float | None
    separation_lambda: float
    closure: str
    initial_shape_factor: float
    separation_shape_factor: float
    skin_friction: str
    y_plus: tuple[float, ...]


@dataclass(frozen=True, slots=True)
class SideInput:
    """One side to march: arc length from its origin, edge velocity, radius, start state."""

    name: Literal["upper", "lower", "surface"]
    s: F64  # arc length from the origin (stagnation point, leading edge or first station)
    offset: float  # reported s = s + offset
    ue: F64  # Ue / U_inf, >= 0
    r: F64  # body radius (ones when planar)
    x: F64 | None
    y: F64 | None
    nu: float  # nu / U_inf in coordinate units
    axisymmetric: bool
    start: Literal["stagnation", "sharp", "inflow"]
    slope: float  # dUe/ds at a stagnation start, else NaN
    theta0: float  # inflow theta (0 otherwise)
    h0: float  # inflow shape factor (NaN otherwise)
    turbulent_start: bool
    trip: float | None  # trip position in s, or None
    options: SideOptions


@dataclass(slots=True)
class Prepared:
    """A case ready to march."""

    sides: list[SideInput]
    stagnation: Stagnation | None
    warnings: list[Notice] = field(default_factory=list)


def stagnation_cp(mach: float, gamma: float = GAMMA) -> float:
    r"""Pressure coefficient at a stagnation point, isentropic compression.

    .. math::
        C_{p,0} = \frac{2}{\gamma M^2}
        \left[\left(1 + \frac{\gamma - 1}{2} M^2\right)^{\gamma/(\gamma - 1)} - 1\right],
        \qquad C_{p,0} = 1 \text{ at } M = 0

    Parameters
    ----------
    mach : float
        Free-stream Mach number [-].
    gamma : float
        Ratio of specific heats [-].

    Returns
    -------
    float
        Cp at stagnation [-].

    >>> round(stagnation_cp(0.5), 4)
    1.0641

    References
    ----------
    Standard gas dynamics, e.g. Anderson, Modern Compressible Flow [derived].
    """
    if mach <= 0.0:
        return 1.0
    ratio = (1.0 + 0.5 * (gamma - 1.0) * mach**2) ** (gamma / (gamma - 1.0))
    return float(2.0 / (gamma * mach**2) * (ratio - 1.0))


def edge_velocity_from_cp(cp: ArrayLike, mach: float = 0.0, gamma: float = GAMMA) -> F64:
    r"""Edge velocity Ue/U_inf from the pressure coefficient.

    .. math::
        \frac{U_e}{U_\infty} = \sqrt{1 - C_p} \quad (M_\infty = 0);\qquad
        \frac{U_e}{U_\infty} = \frac{M_e}{M_\infty}
        \sqrt{\frac{1 + \frac{\gamma-1}{2}M_\infty^2}{1 + \frac{\gamma-1}{2}M_e^2}}
        \quad (M_\infty > 0)

    with the local Mach number M_e from the isentropic relation for p/p0 and
    p/p_inf = 1 + (gamma/2) M_inf^2 Cp.

    Parameters
    ----------
    cp : float or array
        Pressure coefficient [-]; values above the stagnation value give 0.
    mach : float
        Free-stream Mach number [-], 0 <= M < 1.
    gamma : float
        Ratio of specific heats [-].

    Returns
    -------
    array
        Ue / U_inf [-].

    Notes
    -----
    The boundary-layer methods downstream remain incompressible.

    >>> float(edge_velocity_from_cp(-3.0))
    2.0

    References
    ----------
    Bernoulli; isentropic flow relations [derived; standard gas dynamics].
    """
    cp = np.asarray(cp, dtype=np.float64)
    if mach <= 0.0:
        return np.asarray(np.sqrt(np.maximum(1.0 - cp, 0.0)), dtype=np.float64)
    g = gamma
    p_ratio = np.maximum(1.0 + 0.5 * g * mach**2 * cp, 1e-12)  # p / p_inf
    p0_ratio = (1.0 + 0.5 * (g - 1.0) * mach**2) ** (g / (g - 1.0))  # p0 / p_inf
    me2 = np.maximum(2.0 / (g - 1.0) * ((p0_ratio / p_ratio) ** ((g - 1.0) / g) - 1.0), 0.0)
    t_ratio = (1.0 + 0.5 * (g - 1.0) * mach**2) / (1.0 + 0.5 * (g - 1.0) * me2)
    return np.asarray(np.sqrt(me2) / mach * np.sqrt(t_ratio), dtype=np.float64)


def _array(values: list[float], pointer: str, problems: list[FieldProblem]) -> F64:
    array = np.array(values, dtype=np.float64)
    if not np.isfinite(array.sum()):
        bad = np.flatnonzero(~np.isfinite(array))
        problems.append(FieldProblem(f"{pointer}/{bad[0]}", "is not a finite number"))
    return array


@numba.njit(cache=True, error_model="numpy")
def _arc_length(x: F64, y: F64, tolerance: float) -> tuple[F64, int]:
    """Arc length along a contour (chords), and the first point that repeats the one
    before it (closer than ``tolerance`` times the contour length), or -1."""
    n = x.size
    arc = np.empty(n)
    arc[0] = 0.0
    for i in range(1, n):
        arc[i] = arc[i - 1] + np.hypot(x[i] - x[i - 1], y[i] - y[i - 1])
    limit = tolerance * arc[n - 1]
    for i in range(1, n):
        if arc[i] - arc[i - 1] <= limit:
            return arc, i
    return arc, -1


@numba.njit(cache=True, error_model="numpy")
def _cp_excess(cp: F64, cp_max: float, noise: float) -> tuple[int, int]:
    """The first Cp above its stagnation value by more than ``noise`` (or -1), and how many
    exceed it at all."""
    count = 0
    for i in range(cp.size):
        if cp[i] > cp_max + noise:
            return i, count
        if cp[i] > cp_max:
            count += 1
    return -1, count


def _check_length(
    array: F64 | None, n: int, pointer: str, what: str, problems: list[FieldProblem]
) -> None:
    if array is not None and array.size != n:
        problems.append(
            FieldProblem(pointer, f"has {array.size} values; the {what} has {n} points")
        )


def _smooth(q: F64, arc: F64, smoothing: float | str, periodic: bool) -> tuple[F64, Notice]:
    """Smooth q = (Ue/U_inf)^2 (= 1 - Cp at M = 0) along the arc length (see
    ``ibl.smoothing``); a failure of the algebra is a case error, never a crash."""
    penalty = None if smoothing == "auto" else float(smoothing)
    if penalty is not None and not 0.0 <= penalty <= SMOOTHING_MAX:
        raise CaseError.at(
            "/pressure/smoothing",
            f"a penalty must lie between 0 and {SMOOTHING_MAX:g} (normalised arc length and "
            "edge velocity; see the schema)",
        )
    length = float(arc[-1] - arc[0])
    t = (arc - arc[0]) / length
    try:
        with np.errstate(divide="raise", over="raise", invalid="raise"):
            smoothed = smoothing_module.smooth(t, q, penalty, periodic)
    except (ValueError, ArithmeticError, np.linalg.LinAlgError) as error:
        raise CaseError.at(
            "/pressure/smoothing", f"the smoothing spline could not be computed ({error})"
        ) from None
    change = smoothed.values - q
    if smoothed.undetermined:
        how = "too few points for generalised cross-validation: left unsmoothed"
    elif smoothed.chosen:
        how = f"penalty {smoothed.penalty:.3g} chosen by generalised cross-validation"
        if smoothed.at_limit:
            how += f", the largest admissible ({SMOOTHING_MAX:g})"
    else:
        how = f"penalty {smoothed.penalty:.3g}"
    return smoothed.values, Notice(
        code="input_smoothed",
        message=(
            f"pressure smoothed by a cubic smoothing spline ({how}); change in "
            f"(Ue/U_inf)^2 (= -change in Cp at M = 0): RMS {np.sqrt(np.mean(change**2)):.3g}, "
            f"largest {np.max(np.abs(change)):.3g}"
        ),
        pointer="/pressure/smoothing",
    )


def _noise_notice(arc: F64, q: F64, pointer: str) -> Notice | None:
    """A warning when the pressure data look noisy enough to upset the march."""
    sigma, ratio = smoothing_module.noise_estimate(arc, q)
    if sigma <= NOISE_SIGMA or ratio <= NOISE_RATIO:
        return None
    return Notice(
        code="pressure_noisy",
        message=f"the pressure data look noisy: point-to-point noise of (Ue/U_inf)^2 "
        f"(= 1 - Cp at M = 0) about {sigma:.2g}, {ratio:.2g} times the typical change "
        "between neighbouring points; transition and separation may jump with it. "
        'Consider pressure.smoothing: "auto"',
        pointer=pointer,
    )


def _options(case: Case) -> SideOptions:
    return SideOptions(
        criterion=case.transition.criterion,
        turbulence_intensity=case.flow.turbulence_intensity,
        separation_lambda=case.laminar.separation_lambda,
        closure=case.laminar.closure,
        initial_shape_factor=case.turbulent.initial_shape_factor,
        separation_shape_factor=case.turbulent.separation_shape_factor,
        skin_friction=case.turbulent.skin_friction,
        y_plus=tuple(case.mesh.y_plus),
    )


def _check_structure(case: Case) -> list[FieldProblem]:
    problems: list[FieldProblem] = []
    surface, pressure, flow = case.surface, case.pressure, case.flow
    contour = surface.x is not None or surface.y is not None
    if contour and surface.s is not None:
        problems.append(FieldProblem("/surface", "give either x and y, or s, not both"))
    elif contour and (surface.x is None or surface.y is None):
        missing = "/surface/y" if surface.y is None else "/surface/x"
        problems.append(FieldProblem(missing, "is required with a contour (x and y)"))
    elif not contour and surface.s is None:
        problems.append(FieldProblem("/surface", "give either x and y, or s"))
    if (pressure.cp is None) == (pressure.edge_velocity is None):
        problems.append(FieldProblem("/pressure", "give exactly one of cp or edge_velocity"))
    if flow.reynolds is not None:
        if flow.speed is not None or flow.kinematic_viscosity is not None:
            problems.append(
                FieldProblem("/flow", "give either reynolds, or speed and kinematic_viscosity")
            )
    elif flow.speed is None or flow.kinematic_viscosity is None:
        missing = "/flow/speed" if flow.speed is None else "/flow/kinematic_viscosity"
        problems.append(FieldProblem(missing, "is required when reynolds is not given"))
    if contour and case.inflow is not None:
        problems.append(FieldProblem("/inflow", "applies to single-surface input (surface.s) only"))
    if case.transition.criterion == "abu_ghannam_shaw" and flow.turbulence_intensity is None:
        problems.append(
            FieldProblem(
                "/flow/turbulence_intensity", "is required by the abu_ghannam_shaw criterion"
            )
        )
    if case.body.kind == "axisymmetric" and not contour and case.body.radius is None:
        problems.append(
            FieldProblem("/body/radius", "is required for an axisymmetric single surface")
        )
    if case.body.kind == "planar" and case.body.radius is not None:
        problems.append(FieldProblem("/body/radius", "applies to axisymmetric bodies only"))
    allowed = {"upper", "lower"} if contour else {"surface"}
    for key in case.transition.trip or {}:
        if key not in allowed:
            problems.append(
                FieldProblem(
                    f"/transition/trip/{key}",
                    f"unknown side for this input; use {', '.join(sorted(allowed))}",
                )
            )
    return problems


def prepare(case: Case) -> Prepared:
    """Check a case across its fields and turn it into sides to march.

    Raises
    ------
    CaseError
        With one problem per offending field.
    """
    problems = _check_structure(case)
    if problems:
        raise CaseError(problems)
    surface, pressure, flow = case.surface, case.pressure, case.flow
    contour = surface.s is None
    if contour:
        assert surface.x is not None and surface.y is not None
        x = _array(surface.x, "/surface/x", problems)
        y = _array(surface.y, "/surface/y", problems)
        n = x.size
        _check_length(y, n, "/surface/y", "contour (x)", problems)
    else:
        assert surface.s is not None
        s_in = _array(surface.s, "/surface/s", problems)
        n = s_in.size
    if pressure.cp is not None:
        p_values = _array(pressure.cp, "/pressure/cp", problems)
        p_pointer = "/pressure/cp"
    else:
        assert pressure.edge_velocity is not None
        p_values = _array(pressure.edge_velocity, "/pressure/edge_velocity", problems)
        p_pointer = "/pressure/edge_velocity"
    _check_length(p_values, n, p_pointer, "surface", problems)
    radius = None
    if case.body.radius is not None:
        radius = _array(case.body.radius, "/body/radius", problems)
        _check_length(radius, n, "/body/radius", "surface", problems)
        negative = np.flatnonzero(radius < 0.0)
        if negative.size:
            problems.append(FieldProblem(f"/body/radius/{negative[0]}", "is negative"))
    if problems:
        raise CaseError(problems)

    warnings: list[Notice] = []
    # Arc length along the input.
    if contour:
        arc, repeated = _arc_length(x, y, REPEAT_TOLERANCE)
        if repeated > 0:
            i = repeated
            raise CaseError.at(f"/surface/x/{i}", f"point {i} repeats point {i - 1}")
    else:
        step = np.diff(s_in)
        bad = np.flatnonzero(step <= 0.0)
        if bad.size:
            i = int(bad[0]) + 1
            raise CaseError.at(
                f"/surface/s/{i}", f"must be strictly increasing; it does not at index {i}"
            )
        arc = s_in - s_in[0]

    # Edge velocity squared, q = (Ue/U_inf)^2, smooth through a stagnation point.
    mach = flow.mach
    if pressure.cp is not None:
        cp_max = stagnation_cp(mach)
        over, clipped = _cp_excess(p_values, cp_max, CP_NOISE)
        if over >= 0:
            i = over
            raise CaseError.at(
                f"/pressure/cp/{i}",
                f"Cp = {p_values[i]:.4g} exceeds the stagnation value {cp_max:.4g} at "
                f"M = {mach:g} by more than measurement noise ({CP_NOISE:g})",
            )
        if clipped:
            warnings.append(
                Notice(
                    code="cp_clipped",
                    message=f"{clipped} Cp value(s) above the stagnation value {cp_max:.4g} "
                    f"clipped to it (largest {p_values.max():.4g})",
                    pointer="/pressure/cp",
                )
            )
        if mach > 0.0:
            q = edge_velocity_from_cp(np.minimum(p_values, cp_max), mach) ** 2
        else:
            q = np.maximum(1.0 - p_values, 0.0)  # Bernoulli: (Ue/U_inf)^2 = 1 - Cp
    else:
        q = p_values**2
    if mach > 0.0:
        warnings.append(
            Notice(
                code="compressible_edge",
                message="edge velocity from the isentropic relations at M = "
                f"{mach:g}; the boundary-layer methods themselves are incompressible",
                pointer="/flow/mach",
            )
        )
    if pressure.smoothing is not None:
        if n < 5:
            raise CaseError.at("/pressure/smoothing", "needs at least 5 points")
        closed = contour and bool(np.hypot(x[-1] - x[0], y[-1] - y[0]) <= 1e-9 * arc[-1])
        q, notice = _smooth(q, arc, pressure.smoothing, closed)
        q = np.maximum(q, 0.0)
        warnings.append(notice)
    else:
        noisy = _noise_notice(arc, q, p_pointer)
        if noisy is not None:
            warnings.append(noisy)
    if not q.max() > 0.0:
        raise CaseError.at(p_pointer, "the edge velocity is zero everywhere")

    nu = 1.0 / flow.reynolds if flow.reynolds is not None else 0.0
    if flow.reynolds is None:
        assert flow.speed is not None and flow.kinematic_viscosity is not None
        nu = flow.kinematic_viscosity / flow.speed
    axisymmetric = case.body.kind == "axisymmetric"
    radius_from_y = axisymmetric and radius is None and contour
    if radius_from_y:
        radius = np.abs(y)
    options = _options(case)
    trips = case.transition.trip or {}
    if not contour:
        ue = np.sqrt(q)
        return Prepared(
            [_single_side(case, arc, float(s_in[0]), ue, radius, nu, options, trips)],
            None,
            warnings,
        )
    sides, stagnation = _split_contour(
        arc, x, y, q, radius, nu, axisymmetric, options, trips, p_pointer, warnings, radius_from_y
    )
    return Prepared(sides, stagnation, warnings)


def _single_side(
    case: Case,
    s: F64,
    offset: float,
    ue: F64,
    radius: F64 | None,
    nu: float,
    options: SideOptions,
    trips: Mapping[Literal["upper", "lower", "surface"], float],
) -> SideInput:
    inflow = case.inflow
    p_pointer = "/pressure/cp" if case.pressure.cp is not None else "/pressure/edge_velocity"
    inner_zero = np.flatnonzero(ue[1:] <= 0.0)
    if inner_zero.size:
        i = int(inner_zero[0]) + 1
        raise CaseError.at(
            f"{p_pointer}/{i}",
            "the edge velocity vanishes inside the surface; give a contour (x, y) so that "
            "the surface is split at its stagnation point, or start the surface there",
        )
    axisymmetric = case.body.kind == "axisymmetric"
    if axisymmetric and radius is not None:
        zero = np.flatnonzero(radius[1:] <= 0.0)
        if zero.size:
            raise CaseError.at(
                f"/body/radius/{int(zero[0]) + 1}", "must be positive after the first point"
            )
    r = radius if radius is not None else np.ones_like(s)
    if inflow is not None:
        if ue[0] <= 0.0:
            raise CaseError.at(f"{p_pointer}/0", "must be positive where an inflow is given")
        start: Literal["stagnation", "sharp", "inflow"] = "inflow"
        slope = float("nan")
    elif ue[0] <= 0.0:
        start, slope = "stagnation", float(ue[1] / s[1])
    else:
        start, slope = "sharp", float("nan")
    return SideInput(
        name="surface",
        s=s,
        offset=offset,
        ue=ue,
        r=r,
        x=None,
        y=None,
        nu=nu,
        axisymmetric=axisymmetric,
        start=start,
        slope=slope,
        theta0=inflow.theta if inflow is not None else 0.0,
        h0=inflow.shape_factor if inflow is not None else float("nan"),
        turbulent_start=inflow is not None and inflow.regime == "turbulent",
        trip=trips.get("surface"),
        options=options,
    )


@numba.njit(cache=True, error_model="numpy")
def _local(arc: F64, q: F64, m: int, closed: bool, i: int, offset: int) -> tuple[float, float]:
    """Arc length (relative to point i, unwrapped across the seam of a closed contour) and
    q of the point ``offset`` places from point i; NaN outside an open contour."""
    j = i + offset
    if not closed:
        if j < 0 or j >= m:
            return np.nan, np.nan
        return arc[j] - arc[i], q[j]
    period = arc[m]
    wraps = (j - (j % m)) // m
    j = j % m
    return arc[j] - arc[i] + wraps * period, q[j]


@numba.njit(cache=True, error_model="numpy")
def stagnation_models(
    arc: F64, q: F64, closed: bool, i: int
) -> tuple[float, float, float, float, float, float]:
    """Two local models of a stagnation point next to point i (a local minimum of q).

    Returns (s0, slope, Ue at the vertex) of each model, relative to arc[i]:

    - parabola: q = a^2 (s - s0)^2 + q0 through points i-1, i, i+1: exact for Ue = a |s - s0|
      where the points resolve the stagnation region;
    - V: the two secant lines of |Ue| on either side of the interval holding the minimum,
      extended to where they meet: for coarse taps around a small nose radius.

    NaN where a model has no points or no minimum.
    """
    m = q.size - 1 if closed else q.size
    sm, qm = _local(arc, q, m, closed, i, -1)
    sp, qp = _local(arc, q, m, closed, i, 1)
    p_s0 = p_slope = p_ue = np.nan
    if np.isfinite(sm) and np.isfinite(sp):
        h0, h1 = -sm, sp
        d0 = (q[i] - qm) / h0
        d1 = (qp - q[i]) / h1
        c2 = (d1 - d0) / (h0 + h1)
        c1 = d0 + c2 * h0
        if c2 > 0.0:
            p_s0 = min(max(-0.5 * c1 / c2, sm), sp)
            p_slope = np.sqrt(c2)
            p_ue = np.sqrt(max(q[i] - 0.25 * c1 * c1 / c2, 0.0))
    v_s0 = v_slope = v_ue = np.nan
    # The interval [j, j + 1] holding the minimum: towards the smaller neighbour.
    first = 0 if (np.isfinite(qp) and (not np.isfinite(qm) or qp <= qm)) else -1
    s_a, q_a = _local(arc, q, m, closed, i, first - 1)
    s_b, q_b = _local(arc, q, m, closed, i, first)
    s_c, q_c = _local(arc, q, m, closed, i, first + 1)
    s_d, q_d = _local(arc, q, m, closed, i, first + 2)
    if np.isfinite(s_a + s_b + s_c + s_d):
        u_a, u_b, u_c, u_d = np.sqrt(q_a), np.sqrt(q_b), np.sqrt(q_c), np.sqrt(q_d)
        left = (u_b - u_a) / (s_b - s_a)
        right = (u_d - u_c) / (s_d - s_c)
        if left < 0.0 and right > 0.0:
            zero_left = s_b - u_b / left
            zero_right = s_c - u_c / right
            meet = (u_c - u_b + left * s_b - right * s_c) / (left - right)
            v_ue = max(u_b + left * (meet - s_b), 0.0)
            v_s0 = min(max(0.5 * (zero_left + zero_right), s_b), s_c)
            v_slope = 0.5 * (right - left)
    return p_s0, p_slope, p_ue, v_s0, v_slope, v_ue


@numba.njit(cache=True, error_model="numpy")
def _front_stagnation_index(arc: F64, x: F64, q: F64, closed: bool, ue_limit: float) -> int:
    """Index of the point next to the front stagnation point.

    Every local minimum of q = (Ue/U_inf)^2 where either local model
    (``stagnation_models``) reaches Ue <= ``ue_limit`` is a stagnation point; where there
    are several (the front and rear stagnation points of a potential flow), the most
    upstream one is the front one: the free stream is along +x.  Without any, the
    smallest q.
    """
    m = q.size - 1 if closed else q.size
    best = -1
    smallest = 0
    for i in range(m):
        if q[i] < q[smallest]:
            smallest = i
        if not closed and (i == 0 or i == m - 1):
            if q[i] <= ue_limit * ue_limit and (best < 0 or x[i] < x[best]):
                best = i
            continue
        qm = q[i - 1] if i > 0 else q[m - 1]
        qp = q[i + 1] if i < m - 1 or not closed else q[0]
        if q[i] > qm or q[i] > qp:
            continue
        _, _, p_ue, _, _, v_ue = stagnation_models(arc, q, closed, i)
        stagnant = (p_ue <= ue_limit) or (v_ue <= ue_limit)
        if stagnant and (best < 0 or x[i] < x[best]):
            best = i
    return best if best >= 0 else smallest


def _split_contour(
    arc: F64,
    x: F64,
    y: F64,
    q: F64,
    radius: F64 | None,
    nu: float,
    axisymmetric: bool,
    options: SideOptions,
    trips: Mapping[Literal["upper", "lower", "surface"], float],
    p_pointer: str,
    warnings: list[Notice],
    radius_from_y: bool = False,
) -> tuple[list[SideInput], Stagnation]:
    """Locate the stagnation point between points and split the contour into two sides."""
    n = arc.size
    total = float(arc[-1])
    closed = bool(np.hypot(x[-1] - x[0], y[-1] - y[0]) <= 1e-9 * total)
    k = int(_front_stagnation_index(arc, x, q, closed, STAGNATION_COARSE))
    shift = 0
    if closed and k in (0, n - 1):
        # A closed contour listed from its stagnation point: start it half-way round instead.
        shift = (n - 1) // 2
        order = np.concatenate((np.arange(shift, n - 1), np.arange(0, shift + 1)))
        x, y, q = x[order], y[order], q[order]
        radius = radius[order] if radius is not None else None
        arc = np.concatenate(([0.0], np.cumsum(np.hypot(np.diff(x), np.diff(y)))))
        k = int(np.flatnonzero(order == (k % (n - 1)))[0])
    if 0 < k < n - 1:
        # Near stagnation Ue = a |S - S0|: the parabola in q where it reaches zero, else the
        # V of |Ue| (coarse taps around a small nose radius), else the closer of the two.
        p_s0, p_slope, p_ue, v_s0, v_slope, v_ue = stagnation_models(arc, q, False, k)
        use_v = not p_ue <= STAGNATION_UE and v_ue <= max(p_ue, STAGNATION_UE)
        if use_v:
            s0, slope, ue_vertex = float(arc[k] + v_s0), float(v_slope), float(v_ue)
        elif np.isfinite(p_s0):
            s0, slope, ue_vertex = float(arc[k] + p_s0), float(p_slope), float(p_ue)
        else:
            s0, slope, ue_vertex = float(arc[k]), float("nan"), float(np.sqrt(q[k]))
        q_vertex = ue_vertex**2
    else:
        s0 = float(arc[k])
        j = 1 if k == 0 else n - 2
        slope = float(np.sqrt(q[j]) / abs(arc[j] - s0))
        q_vertex = float(q[k])
    if not slope > 0.0:
        # No curvature to fit (a plateau of clipped Cp = 1): the slope from the nearest
        # point that moves.
        # Points at the stagnation point itself (within 1e-9 of the contour length) give no
        # slope.
        moving = np.flatnonzero((q > 1e-12) & (np.abs(arc - s0) > 1e-9 * total))
        if moving.size:
            j = int(moving[np.argmin(np.abs(arc[moving] - s0))])
            slope = float(np.sqrt(q[j]) / max(abs(arc[j] - s0), 1e-300))
    if not np.isfinite(slope):
        slope = float("nan")  # no usable slope: the sides start as from a sharp edge
    ue_vertex = float(np.sqrt(max(q_vertex, 0.0)))
    if ue_vertex > STAGNATION_COARSE:
        warnings.append(
            Notice(
                code="no_stagnation_point",
                message="the edge velocity does not fall to zero in the data (smallest "
                f"Ue/U_inf about {ue_vertex:.3g}); the sides start there as if from a sharp "
                "leading edge",
                pointer=p_pointer,
            )
        )
        slope = float("nan")
    elif ue_vertex > STAGNATION_UE:
        warnings.append(
            Notice(
                code="stagnation_point_unresolved",
                message="the points do not resolve the stagnation region (Ue/U_inf "
                f"extrapolated to {ue_vertex:.3g} there, not 0): its position and theta near "
                "it are uncertain; more points near the nose help",
                pointer=p_pointer,
            )
        )
    # The stagnation point lies on the segment from point i0 to i0 + 1.
    i0 = min(max(int(np.searchsorted(arc, s0, side="right")) - 1, 0), n - 2)
    frac = (s0 - arc[i0]) / (arc[i0 + 1] - arc[i0])
    position = float(i0 + frac)
    if shift:
        position = (position + shift) % (n - 1)
    x0 = float(x[i0] + frac * (x[i0 + 1] - x[i0]))
    y0 = float(y[i0] + frac * (y[i0 + 1] - y[i0]))
    r0 = float(radius[i0] + frac * (radius[i0 + 1] - radius[i0])) if radius is not None else 1.0
    if axisymmetric and radius_from_y:
        r0 = abs(y0)  # a nose between two points lies on the axis, not at their mean |y|
    stagnation = Stagnation(x=x0, y=y0, position=position)
    tol = 1e-9 * total
    # Points before the stagnation point (walked backwards) and after it; a point within
    # tol of it is the stagnation station itself.
    last_before = int(np.searchsorted(arc, s0 - tol, side="left")) - 1
    first_after = int(np.searchsorted(arc, s0 + tol, side="right"))
    branches = (
        slice(last_before, None, -1) if last_before >= 0 else slice(0, 0),
        slice(first_after, n),
    )
    sizes = (max(last_before + 1, 0), n - first_after)
    before, after = max(last_before + 1, 0), first_after
    mean_y = (
        float(y[:before].sum()) / before if before else -np.inf,
        float(y[after:].sum()) / (n - after) if after < n else -np.inf,
    )
    upper_first = mean_y[0] >= mean_y[1]
    start: Literal["stagnation", "sharp"] = "sharp" if np.isnan(slope) else "stagnation"
    ue = np.sqrt(q)
    ue_start = 0.0 if start == "stagnation" else float(ue[k])
    sides: list[SideInput] = []
    for index, (branch, size) in enumerate(zip(branches, sizes, strict=True)):
        if size + 1 < MIN_POINTS:
            continue
        name: Literal["upper", "lower"] = "upper" if (index == 0) == upper_first else "lower"
        side_s = np.empty(size + 1)
        side_s[0] = 0.0
        side_s[1:] = np.abs(arc[branch] - s0)
        u = np.empty(size + 1)
        u[0] = ue_start
        u[1:] = ue[branch]
        r = np.ones(size + 1)
        if radius is not None:
            r[0] = r0
            r[1:] = radius[branch]
        if axisymmetric:
            zero = np.flatnonzero(r[1:-1] <= 0.0)
            if zero.size:
                i = int(np.arange(n)[branch][zero[0]])
                raise CaseError.at(
                    f"/body/radius/{(i + shift) % (n - 1) if shift else i}",
                    "the body radius must be positive between the nose and the tail",
                )
        side_x = np.empty(size + 1)
        side_x[0] = x0
        side_x[1:] = x[branch]
        side_y = np.empty(size + 1)
        side_y[0] = y0
        side_y[1:] = y[branch]
        sides.append(
            SideInput(
                name=name,
                s=side_s,
                offset=0.0,
                ue=u,
                r=r,
                x=side_x,
                y=side_y,
                nu=nu,
                axisymmetric=axisymmetric,
                start=start,
                slope=slope,
                theta0=0.0,
                h0=float("nan"),
                turbulent_start=False,
                trip=trips.get(name),
                options=options,
            )
        )
    sides.sort(key=lambda side: side.name != "upper")
    if not sides:
        raise CaseError.at("/surface", "too few points on either side of the stagnation point")
    if len(sides) == 2 and sides[0].name == sides[1].name:
        raise CaseError.at("/surface", "could not tell the upper side from the lower side")
    return sides, stagnation
