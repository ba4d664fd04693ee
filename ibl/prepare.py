"""Input preparation: from a validated case to the sides to march.

Contents
--------
- ``prepare(case)``: checks across fields, Cp to edge velocity, optional smoothing,
  the stagnation point between input points, the split into sides and arc lengths.
- ``edge_velocity_from_cp``: Bernoulli, or the isentropic edge when the Mach number is set.
- ``cp_from_pressure``: pressure in pascals to Cp, with the free-stream references.
- ``stagnation_cp``: Cp at a stagnation point for a free-stream Mach number.
- ``SideInput``, ``SideOptions``, ``Prepared``: what the march receives.

Every problem with the input raises ``CaseError`` naming the field by JSON pointer;
everything this module changes on the way (clipping, smoothing) becomes a warning.
"""

from __future__ import annotations

import math
import struct
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

import numba
import numpy as np
from numpy.typing import ArrayLike, NDArray

from ibl import smoothing as smoothing_module
from ibl.errors import CaseError, FieldProblem
from ibl.schema import MAX_LENGTH, SMOOTHING_MAX, Case, Notice, Pressure, Stagnation

__all__ = [
    "CP_NOISE",
    "GAMMA",
    "MIN_POINTS",
    "MIN_TURBULENT_RE_THETA",
    "Prepared",
    "SideInput",
    "SideOptions",
    "cp_from_pressure",
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
#: Values of q = (Ue/U_inf)^2 within this of each other at a minimum are one plateau of the
#: stagnation value (Cp within 1e-6 of it: taps clipped to Cp = 1, or within rounding of it).
PLATEAU_Q = 1e-6
#: A stagnation plateau longer than this fraction of the contour is reported.
PLATEAU_WARNING = 1e-3
#: A closed contour whose area is at most this fraction of its bounding box's has no
#: orientation: its sides are named from their mean y.
AREA_TOLERANCE = 1e-12
#: Points whose x differs by less than this fraction of the contour length tie for the most
#: upstream point (a flat front face) of data without a stagnation point.
TIE_TOLERANCE = 1e-7
#: Points within this fraction of the contour length of the largest x are looked at for the
#: rear point where the sides of a closed contour meet (see ``_rear_point``).
REAR_TOLERANCE = 1e-3
#: A contour whose ends are apart by at most its longest segment (times 1.5) and by less than
#: this fraction of its length is a closed loop listed without repeating its first point.
IMPLICIT_CLOSURE = 0.1
#: Smallest momentum-thickness Reynolds number Ue theta / nu of a turbulent inflow: below
#: about 320 a turbulent boundary layer does not sustain itself (Preston, J. H. 1958,
#: J. Fluid Mech. 3, 373-384 [memory]); far below it the skin-friction laws, fitted from
#: Re_theta = 1e3 up, grow without bound and Head's equations separate a flat-plate layer.
MIN_TURBULENT_RE_THETA = 320.0
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
    turbulent_method: str = "head"
    laminar_method: str = "thwaites"  # or "finite_difference" (ibl.laminar_fd)


@dataclass(slots=True)
class SideInput:
    """One side to march: arc length from its origin, edge velocity, radius, start state.

    Treated as immutable: a changed side is a copy (``dataclasses.replace``).  Not a frozen
    dataclass only because building one costs twice as much (each field set through
    ``object.__setattr__``: about 2.5 us more per side, a tenth of preparing a case)."""

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
    nose: Nose | None = None  # how a contour side's stations follow from the input values


@dataclass(slots=True)
class Nose:
    """How a contour side's stations depend on the input pressure values, for
    ``ibl.sensitivity``: the input point of each station, and the derivatives of the
    stagnation point's arc position s0 and of the side's stagnation slope dUe/ds with
    respect to q = (Ue/U_inf)^2 at each input point (from the model fitted to the nose
    taps, ``stagnation_models``, or the secant of a plateau).  Treated as immutable, as
    ``SideInput`` is (and not frozen for the same reason)."""

    points: NDArray[np.int64]  # input index of each station; -1 at the stagnation point
    s0_grad: F64  # d s0 / d q_j over the input points
    slope_grad: F64  # d slope / d q_j over the input points
    direction: float  # d s_i / d s0 of the stations beyond the stagnation point (-1 or +1)
    position_grad: tuple[float, float, float]  # d(x0, y0, r0) / d s0 of station 0
    gap: str  # why the side's derivatives are not available ("" when they are)


@dataclass(slots=True)
class Prepared:
    """A case ready to march."""

    sides: list[SideInput]
    stagnation: Stagnation | None
    warnings: list[Notice] = field(default_factory=list)
    closed: bool = False  # a closed contour: its sides meet at its rear point


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


def cp_from_pressure(p: ArrayLike, reference_pressure: float, dynamic_pressure: float) -> F64:
    r"""Pressure coefficient from the surface pressure in pascals.

    .. math::
        C_p = \frac{p - p_\infty}{q_\infty}, \qquad q_\infty = \tfrac12 \rho_\infty U_\infty^2

    This is the definition of Cp at any Mach number: at M > 0, q_inf is still built on the
    free-stream static density (it equals gamma p_inf M^2 / 2), not the pitot rise p0 - p_inf.

    Parameters
    ----------
    p : float or array
        Surface static pressure [Pa], absolute or gauge.
    reference_pressure : float
        Free-stream static pressure p_inf [Pa], on the same basis (absolute or gauge) as p.
    dynamic_pressure : float
        Free-stream dynamic pressure q_inf [Pa], > 0.

    Returns
    -------
    array
        Cp [-].

    >>> cp_from_pressure([101325.0 + 61.25, 101325.0 - 122.5], 101325.0, 61.25).tolist()
    [1.0, -2.0]

    References
    ----------
    Definition of the pressure coefficient (e.g. Anderson, Fundamentals of Aerodynamics)
    [common practice].
    """
    p = np.asarray(p, dtype=np.float64)
    return np.asarray((p - reference_pressure) / dynamic_pressure, dtype=np.float64)


def _pressure_pointer(pressure: Pressure) -> str:
    """The JSON pointer of the pressure values the case gives (cp, p or edge_velocity)."""
    if pressure.cp is not None:
        return "/pressure/cp"
    if pressure.p is not None:
        return "/pressure/p"
    return "/pressure/edge_velocity"


def _dynamic_pressure(case: Case) -> float | None:
    """q_inf [Pa]: ``pressure.dynamic_pressure``, else 0.5 rho_inf U_inf^2 from the flow."""
    if case.pressure.dynamic_pressure is not None:
        return case.pressure.dynamic_pressure
    flow = case.flow
    if flow.density is not None and flow.speed is not None:
        return 0.5 * flow.density * flow.speed**2
    return None


def _cp_from_case(case: Case, p: F64, problems: list[FieldProblem]) -> F64:
    """Cp from ``pressure.p`` [Pa] with the case's references (checked before), within the
    bounds the schema sets on Cp given directly."""
    p_inf, q_inf = case.pressure.reference_pressure, _dynamic_pressure(case)
    assert p_inf is not None and q_inf is not None
    cp = cp_from_pressure(p, p_inf, q_inf)
    bad = np.flatnonzero(~(np.abs(cp) <= MAX_LENGTH) & np.isfinite(p))
    if bad.size:
        i = int(bad[0])
        problems.append(
            FieldProblem(
                f"/pressure/p/{i}",
                f"gives Cp = {cp[i]:.4g}, beyond +-{MAX_LENGTH:g}; check reference_pressure "
                "and dynamic_pressure",
            )
        )
    return cp


def _check_pressure_references(case: Case, problems: list[FieldProblem]) -> None:
    """With ``pressure.p``: the reference pressure and one source of q_inf, finite and > 0.
    Without it: no references."""
    pressure, flow = case.pressure, case.flow
    if pressure.p is None:
        for name in ("reference_pressure", "dynamic_pressure"):
            if getattr(pressure, name) is not None:
                problems.append(FieldProblem(f"/pressure/{name}", "applies to pressure.p only"))
        return
    p_inf = pressure.reference_pressure
    if p_inf is None:
        problems.append(
            FieldProblem(
                "/pressure/reference_pressure",
                "is required with p: the free-stream static pressure [Pa]",
            )
        )
    elif not math.isfinite(p_inf):
        problems.append(FieldProblem("/pressure/reference_pressure", "is not a finite number"))
    if pressure.dynamic_pressure is not None and flow.density is not None:
        problems.append(
            FieldProblem(
                "/pressure/dynamic_pressure",
                "give either pressure.dynamic_pressure or flow.density (with flow.speed), not both",
            )
        )
        return
    if flow.density is not None and not math.isfinite(flow.density):
        problems.append(FieldProblem("/flow/density", "is not a finite number"))
        return
    q_inf = _dynamic_pressure(case)
    if q_inf is None:
        problems.append(
            FieldProblem(
                "/pressure/dynamic_pressure",
                "is required with p: give it [Pa], or flow.density with flow.speed",
            )
        )
    elif not math.isfinite(q_inf):
        problems.append(FieldProblem("/pressure/dynamic_pressure", "is not a finite number"))
    elif q_inf <= 0.0:
        where = "/pressure/dynamic_pressure" if flow.density is None else "/flow/density"
        problems.append(
            FieldProblem(where, f"gives a dynamic pressure {q_inf:g} Pa; it must be > 0")
        )


def _array(values: list[float], pointer: str, problems: list[FieldProblem]) -> F64:
    """The values as an array; a value that is not a finite number is a problem."""
    array = np.empty(len(values))
    try:  # packing the list into the array's buffer: twice as fast as numpy.fromiter
        struct.pack_into(f"{len(values)}d", array.data, 0, *values)
    except struct.error:  # not numbers: numpy says why, as it always has
        array = np.fromiter(values, dtype=np.float64, count=len(values))
    bad = _first_nonfinite(array)
    if bad >= 0:
        problems.append(FieldProblem(f"{pointer}/{bad}", "is not a finite number"))
    return array


def _packed(case: Case) -> F64 | None:
    """The rows x, y and the Cp or edge velocity values of a contour (without a radius) in
    one array, when the three have the same length (at least ``MIN_POINTS``) and hold
    numbers; else None, and ``prepare`` converts and checks each field on its own
    (``_array``), naming every problem.  (For a single surface, converting its two rows on
    their own costs no more than a compiled scan returning its arrays.)"""
    surface, pressure = case.surface, case.pressure
    x, y = surface.x, surface.y
    values = pressure.cp if pressure.cp is not None else pressure.edge_velocity
    if x is None or y is None or values is None or case.body.radius is not None:
        return None
    n = len(values)
    if n < MIN_POINTS or len(x) != n or len(y) != n:
        return None
    block = np.empty((3, n))
    try:  # the lists unpacked one after the other: faster than any iterator over them
        struct.pack_into(f"{3 * n}d", block.data, 0, *x, *y, *values)
    except struct.error:
        return None
    return block


@numba.njit(cache=True, error_model="numpy")
def _input_scan(
    block: F64, given_cp: bool, tolerance: float, cp_max: float, noise: float
) -> tuple[int, int, F64, F64, int, int, F64]:
    """The scans of a contour's rows x, y and values (``_packed``) in one compiled call: the
    first row holding a value that is not a finite number (-1 when none: only then do the
    others mean anything); the first point repeating the one before it (or -1), the arc
    length and the segment lengths (``_arc_and_chords``); from Cp, the first Cp above the
    stagnation value ``cp_max`` by more than ``noise`` and the count above it
    (``_cp_excess``) and q = (Ue/U_inf)^2 by Bernoulli (``_bernoulli_q``); from the edge
    velocity -1, 0 and q = Ue^2."""
    bad = -1
    for row in range(3):
        if _first_nonfinite(block[row]) >= 0:
            bad = row
            break
    arc, chord, repeated = _arc_and_chords(block[0], block[1], tolerance)
    values = block[2]
    if given_cp:
        over, clipped = _cp_excess(values, cp_max, noise)
        q = _bernoulli_q(values)
    else:
        over, clipped = -1, 0
        q = np.empty(values.size)
        for i in range(values.size):
            q[i] = values[i] * values[i]
    return bad, repeated, arc, chord, over, clipped, q


@numba.njit(cache=True, error_model="numpy")
def _first_nonfinite(values: F64) -> int:
    """The index of the first value that is not a finite number, or -1."""
    for i in range(values.size):
        if not np.isfinite(values[i]):
            return i
    return -1


@numba.njit(cache=True, error_model="numpy")
def _first_at_most(values: F64, start: int, stop: int, limit: float) -> int:
    """The index of the first of ``values[start:stop]`` at or below ``limit``, or -1."""
    for i in range(start, stop):
        if values[i] <= limit:
            return i
    return -1


@numba.njit(cache=True, error_model="numpy")
def _first_above(values: F64, limit: float) -> int:
    """The index of the first value above ``limit``, or -1."""
    for i in range(values.size):
        if values[i] > limit:
            return i
    return -1


@numba.njit(cache=True, error_model="numpy")
def _sign_change(values: F64) -> int:
    """The index of the first finite value whose sign (-1 or +1; zeros left out) differs
    from that of the first non-zero finite value, or -1."""
    first = 0.0
    for i in range(values.size):
        sign = np.sign(values[i])
        if not np.isfinite(values[i]) or sign == 0.0:
            continue
        if first == 0.0:
            first = sign
        elif sign != first:
            return i
    return -1


@numba.njit(cache=True, error_model="numpy")
def _chords(x: F64, y: F64) -> F64:
    """The length of each segment of a contour, point i to i + 1."""
    chord = np.empty(x.size - 1)
    for i in range(chord.size):
        chord[i] = np.hypot(x[i + 1] - x[i], y[i + 1] - y[i])
    return chord


@numba.njit(cache=True, error_model="numpy")
def _arc_from_chords(chord: F64, tolerance: float) -> tuple[F64, int]:
    """Arc length from the segment lengths, and the first point that repeats the one
    before it (closer than ``tolerance`` times the contour length), or -1."""
    n = chord.size + 1
    arc = np.empty(n)
    arc[0] = 0.0
    for i in range(1, n):
        arc[i] = arc[i - 1] + chord[i - 1]
    limit = tolerance * arc[n - 1]
    for i in range(1, n):
        if arc[i] - arc[i - 1] <= limit:
            return arc, i
    return arc, -1


@numba.njit(cache=True, error_model="numpy")
def _arc_length(x: F64, y: F64, tolerance: float) -> tuple[F64, int]:
    """Arc length along a contour (chords), and the first point that repeats the one
    before it (closer than ``tolerance`` times the contour length), or -1."""
    return _arc_from_chords(_chords(x, y), tolerance)


@numba.njit(cache=True, error_model="numpy")
def _arc_and_chords(x: F64, y: F64, tolerance: float) -> tuple[F64, F64, int]:
    """``_arc_length`` and the segment lengths it adds up (``_listing`` uses them again)."""
    chord = _chords(x, y)
    arc, repeated = _arc_from_chords(chord, tolerance)
    return arc, chord, repeated


@numba.njit(cache=True, error_model="numpy")
def _first_not_increasing(s: F64) -> int:
    """The index of the first value not above the one before it (s[i] - s[i-1] <= 0), or
    -1."""
    for i in range(1, s.size):
        if s[i] - s[i - 1] <= 0.0:
            return i
    return -1


@numba.njit(cache=True, error_model="numpy")
def _bernoulli_q(cp: F64) -> F64:
    """(Ue/U_inf)^2 = 1 - Cp, at least 0 (Bernoulli): ``numpy.maximum(1.0 - cp, 0.0)``."""
    q = np.empty(cp.size)
    for i in range(cp.size):
        q[i] = max(1.0 - cp[i], 0.0)
    return q


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


def _check_one_sign(ue: F64, problems: list[FieldProblem]) -> None:
    """A single surface's signed edge velocity must not change sign: where it does, the
    surface passes a stagnation point and the layer cannot march through it."""
    i = _sign_change(ue)
    if i >= 0:
        problems.append(
            FieldProblem(
                f"/pressure/edge_velocity/{i}",
                "the edge velocity changes sign here: the surface passes a stagnation point; "
                "give a contour (x, y), which is split at its stagnation point, or start the "
                "surface there",
            )
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
    if smoothing_module.noise_at_most(arc, q, NOISE_SIGMA):
        return None  # the common case, told from half the work of the estimate
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
        turbulent_method=case.turbulent.method,
        laminar_method=case.laminar.method,
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
    given = [v is not None for v in (pressure.cp, pressure.edge_velocity, pressure.p)]
    if sum(given) != 1:
        problems.append(FieldProblem("/pressure", "give exactly one of cp, edge_velocity or p"))
    _check_pressure_references(case, problems)
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
    p_pointer = _pressure_pointer(pressure)
    given_cp = pressure.edge_velocity is None  # Cp, or pascals converted to Cp
    mach = flow.mach
    cp_max = stagnation_cp(mach)
    radius = None
    block = _packed(case) if contour else None
    scan = None
    if block is not None:
        scan = _input_scan(block, given_cp, REPEAT_TOLERANCE, cp_max, CP_NOISE)
    if scan is not None and scan[0] < 0:
        # The common input (a contour given by finite Cp or edge velocity values, without a
        # radius): converted and scanned at once.
        assert block is not None
        _, repeated, arc, chord, over, clipped, q = scan
        x, y, p_values = block
        n = p_values.size
    else:
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
            p_values = _array(pressure.cp, p_pointer, problems)
        elif pressure.p is not None:
            p_values = _cp_from_case(case, _array(pressure.p, p_pointer, problems), problems)
        else:
            assert pressure.edge_velocity is not None
            p_values = _array(pressure.edge_velocity, p_pointer, problems)
            if not contour:
                _check_one_sign(p_values, problems)
        _check_length(p_values, n, p_pointer, "surface", problems)
        if case.body.radius is not None:
            radius = _array(case.body.radius, "/body/radius", problems)
            _check_length(radius, n, "/body/radius", "surface", problems)
            negative = np.flatnonzero(radius < 0.0)
            if negative.size:
                problems.append(FieldProblem(f"/body/radius/{negative[0]}", "is negative"))
        if problems:
            raise CaseError(problems)
        if contour:
            arc, chord, repeated = _arc_and_chords(x, y, REPEAT_TOLERANCE)
        else:
            repeated = _first_not_increasing(s_in)
            arc = s_in - s_in[0]
        if given_cp:
            over, clipped = _cp_excess(p_values, cp_max, CP_NOISE)
            if mach <= 0.0:
                q = _bernoulli_q(p_values)
        else:
            q = p_values**2

    warnings: list[Notice] = []
    # Arc length along the input.
    if repeated > 0:
        i = repeated
        if contour:
            raise CaseError.at(f"/surface/x/{i}", f"point {i} repeats point {i - 1}")
        raise CaseError.at(
            f"/surface/s/{i}", f"must be strictly increasing; it does not at index {i}"
        )

    # Edge velocity squared, q = (Ue/U_inf)^2, smooth through a stagnation point.
    if given_cp:
        if over >= 0:
            i = over
            raise CaseError.at(
                f"{p_pointer}/{i}",
                f"Cp = {p_values[i]:.4g} exceeds the stagnation value {cp_max:.4g} at "
                f"M = {mach:g} by more than measurement noise ({CP_NOISE:g})",
            )
        if clipped:
            warnings.append(
                Notice(
                    code="cp_clipped",
                    message=f"{clipped} Cp value(s) above the stagnation value {cp_max:.4g} "
                    f"clipped to it (largest {p_values.max():.4g})",
                    pointer=p_pointer,
                )
            )
        if mach > 0.0:
            q = edge_velocity_from_cp(np.minimum(p_values, cp_max), mach) ** 2
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
        closed, implicit = _closure(x, y, arc) if contour else (False, False)
        if implicit:  # a closed loop listed without its first point repeated
            period = arc[-1] + float(np.hypot(x[-1] - x[0], y[-1] - y[0]))
            looped, notice = _smooth(
                np.append(q, q[0]), np.append(arc, period), pressure.smoothing, True
            )
            q = looped[:-1]
        else:
            q, notice = _smooth(q, arc, pressure.smoothing, closed)
        q = np.maximum(q, 0.0)
        warnings.append(notice)
    else:
        noisy = _noise_notice(arc, q, p_pointer)
        if noisy is not None:
            warnings.append(noisy)
    if _first_above(q, 0.0) < 0:
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
        side = _single_side(case, arc, float(s_in[0]), ue, radius, nu, options, trips)
        warnings.extend(_inflow_notices(case, side))
        warnings.extend(_trip_notices(case, [side]))
        return Prepared([side], None, warnings)
    sides, stagnation, closed = _split_contour(
        arc,
        chord,
        x,
        y,
        q,
        radius,
        nu,
        axisymmetric,
        options,
        trips,
        p_pointer,
        warnings,
        radius_from_y,
    )
    warnings.extend(_trip_notices(case, sides))
    return Prepared(sides, stagnation, warnings, closed)


def _trip_notices(case: Case, sides: list[SideInput]) -> list[Notice]:
    """Check the trips against the sides built: every trip names a side the input has
    (else ``CaseError``), and one outside its side's stations is reported.

    Trips are positions in the s of the result: arc length from the stagnation point (or
    the start of a contour side), or s as given in ``surface.s`` for a single surface.
    """
    notices: list[Notice] = []
    by_name = {side.name: side for side in sides}
    for name, at in (case.transition.trip or {}).items():
        pointer = f"/transition/trip/{name}"
        side = by_name.get(name)
        if side is None:
            have = ", ".join(sorted(by_name))
            raise CaseError.at(
                pointer,
                f"the input has no {name} side (the contour gives only: {have}); a trip "
                "must name a side of the result",
            )
        start, end = side.offset, side.offset + float(side.s[-1])
        if side.turbulent_start:
            notices.append(
                Notice(
                    code="trip_ignored",
                    message=f"{name}: the inflow is turbulent, so the trip at s = {at:.4g} "
                    "has no effect",
                    pointer=pointer,
                )
            )
        elif at < start:
            if side.x is not None:
                raise CaseError.at(
                    pointer, "must be >= 0: arc length from the stagnation point or side start"
                )
            notices.append(
                Notice(
                    code="trip_outside_surface",
                    message=f"{name}: the trip at s = {at:.4g} lies before the first station "
                    f"(s = {start:.4g}); the layer is taken as turbulent from the first station",
                    pointer=pointer,
                )
            )
        elif at > end:
            notices.append(
                Notice(
                    code="trip_outside_surface",
                    message=f"{name}: the trip at s = {at:.4g} lies beyond the end of the side "
                    f"(s = {end:.4g}); it has no effect",
                    pointer=pointer,
                )
            )
    return notices


def _inflow_notices(case: Case, side: SideInput) -> list[Notice]:
    """Check a turbulent inflow against what a turbulent layer and Head's method admit:
    ``CaseError`` below ``MIN_TURBULENT_RE_THETA``; a notice at or beyond separation."""
    inflow = case.inflow
    if inflow is None or inflow.regime != "turbulent":
        return []
    re_theta = float(side.ue[0]) * inflow.theta / side.nu
    if not re_theta >= MIN_TURBULENT_RE_THETA:
        raise CaseError.at(
            "/inflow/theta",
            f"gives Re_theta = Ue theta / nu = {re_theta:.3g} at the first station; a turbulent "
            f"layer needs at least {MIN_TURBULENT_RE_THETA:g} (Preston 1958): check theta's "
            "unit (that of the coordinates), or give a laminar inflow",
        )
    h_sep = case.turbulent.separation_shape_factor
    if inflow.shape_factor >= h_sep:
        return [
            Notice(
                code="inflow_separated",
                message=f"surface: the turbulent inflow's shape factor {inflow.shape_factor:g} "
                f"is at or above the separation value {h_sep:g} "
                "(turbulent.separation_shape_factor): the layer is separated at the first "
                "station",
                pointer="/inflow/shape_factor",
            )
        ]
    return []


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
    p_pointer = _pressure_pointer(case.pressure)
    i = _first_at_most(ue, 1, ue.size, 0.0)
    if i >= 0:
        raise CaseError.at(
            f"{p_pointer}/{i}",
            "the edge velocity vanishes inside the surface; give a contour (x, y) so that "
            "the surface is split at its stagnation point, or start the surface there",
        )
    axisymmetric = case.body.kind == "axisymmetric"
    if axisymmetric and radius is not None:
        zero = _first_at_most(radius, 1, radius.size, 0.0)
        if zero >= 0:
            raise CaseError.at(f"/body/radius/{zero}", "must be positive after the first point")
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
        trip=_relative_trip(trips.get("surface"), offset),
        options=options,
    )


# ----------------------------------------------------------------------------- contours


@numba.njit(cache=True, error_model="numpy")
def _closure(x: F64, y: F64, arc: F64) -> tuple[bool, bool]:
    """Whether a contour is closed, and whether only implicitly: its last point does not
    repeat its first, but the gap between them is no longer than its longest segment and
    under ``IMPLICIT_CLOSURE`` of its length (a closed loop listed without the repeat)."""
    n = x.size
    total = arc[n - 1]
    gap = np.hypot(x[n - 1] - x[0], y[n - 1] - y[0])
    if gap <= REPEAT_TOLERANCE * total:
        return True, False
    longest = 0.0
    for i in range(1, n):
        longest = max(longest, arc[i] - arc[i - 1])
    implicit = n > MIN_POINTS and gap <= 1.5 * longest and gap <= IMPLICIT_CLOSURE * (total + gap)
    return implicit, implicit


@numba.njit(cache=True, error_model="numpy")
def _rear_point(x: F64, y: F64, arc: F64) -> float:
    """Fractional index (unwrapped) of the point where the sides of a closed contour meet:
    the most downstream one.  Among the points within ``REAR_TOLERANCE`` of the contour
    length of the largest x, those where the contour turns most (at least half the
    sharpest turn) mark it: a trailing edge, or the two points either side of a cusp
    that falls between points, or the two corners of a flat base; the meeting point is
    the arc-length middle of the first and last of them.  The last point repeats the
    first, and ``arc`` ends with the period."""
    m = x.size - 1
    period = arc[m]
    best = 0
    for i in range(m):
        if x[i] > x[best]:
            best = i
    lo = hi = best
    limit = x[best] - REAR_TOLERANCE * period
    while hi - lo < m - 1 and x[(lo - 1) % m] >= limit:
        lo -= 1
    while hi - lo < m - 1 and x[(hi + 1) % m] >= limit:
        hi += 1
    # The turn at each point lo ... hi, between its incoming and outgoing segments.
    turn = np.empty(hi - lo + 1)
    for k in range(lo, hi + 1):
        a, b, c = (k - 1) % m, k % m, (k + 1) % m
        into = np.arctan2(y[b] - y[a], x[b] - x[a])
        out = np.arctan2(y[c] - y[b], x[c] - x[b])
        turn[k - lo] = abs((out - into + np.pi) % (2.0 * np.pi) - np.pi)
    sharpest = turn.max()
    found = False
    first = last = lo
    for k in range(turn.size):
        if turn[k] >= 0.5 * sharpest:
            if not found:
                first, found = lo + k, True
            last = lo + k
    if first == last:
        return float(first)
    start = arc[first % m] + period * (first // m)
    end = arc[last % m] + period * (last // m)
    middle = 0.5 * (start + end)
    for k in range(first, last):
        here = arc[k % m] + period * (k // m)
        there = arc[(k + 1) % m] + period * ((k + 1) // m)
        if there >= middle:
            return float(k + (middle - here) / (there - here))
    return float(last)


@numba.njit(cache=True, error_model="numpy")
def _rotate(columns: F64, start: float) -> tuple[F64, F64]:
    """A closed contour (rows of ``columns``, its last point repeating its first) listed
    from fractional index ``start`` round to it again.  From a start between two points (a
    cusp between points, the middle of a base with an even number of points) the list runs
    from the point after it round to the point before it, so each side ends at its own last
    point.  Returns the rows and each point's unwrapped index in the listing given."""
    m = columns.shape[1] - 1
    k = int(np.floor(start))
    frac = start - k
    if frac >= 1.0 - 1e-9:
        k, frac = k + 1, 0.0
    k %= m
    first = k + 1 if frac > 1e-9 else k  # each side ends at the last point before the start
    # The points first .. k + m, each index modulo m: two runs of the list.
    rows = np.empty((columns.shape[0], k + m + 1 - first))
    tail = m - first
    rows[:, :tail] = columns[:, first:m]
    rows[:, tail:] = columns[:, : k + 1]
    return rows, np.arange(first, k + m + 1).astype(np.float64)


@numba.njit(cache=True, error_model="numpy")
def _listing(
    x: F64, y: F64, q: F64, radius: F64, closed: bool, implicit: bool, arc: F64, chord: F64
) -> tuple[F64, F64, F64]:
    """The contour as rows x, y, q (and the radius, unless ``radius`` is empty), listed
    from its rear point when closed (``_rear_point``, ``_rotate``; the first point
    repeated at the end when the closure is implicit); each point's unwrapped index in the
    input list, and the arc length along the listing.  ``arc`` and ``chord`` are the arc
    length along the input list and its segment lengths (``_arc_and_chords``): the arc
    length along the listing adds up the same segments in the order listed, as
    ``_arc_length`` of the listed points would."""
    n_in = x.size
    width = n_in + 1 if implicit else n_in
    columns = np.empty((3 if radius.size == 0 else 4, width))
    columns[0, :n_in] = x
    columns[1, :n_in] = y
    columns[2, :n_in] = q
    if radius.size:
        columns[3, :n_in] = radius
    if implicit:
        columns[:, n_in] = columns[:, 0]
    index = np.arange(width).astype(np.float64)
    if not closed:
        return columns, index, arc
    m = width - 1  # distinct points; segment m - 1 closes the loop to point 0
    closing = np.hypot(x[0] - x[m - 1], y[0] - y[m - 1])
    cycle_arc = arc
    if implicit:
        cycle_arc = np.empty(width)
        cycle_arc[:n_in] = arc
        cycle_arc[n_in] = arc[n_in - 1] + closing
    columns, index = _rotate(columns, _rear_point(columns[0], columns[1], cycle_arc))
    listed = np.empty(index.size)
    listed[0] = 0.0
    for j in range(1, index.size):
        p = int(index[j - 1])  # the segment from point p to p + 1 (modulo m)
        while p >= m:
            p -= m
        listed[j] = listed[j - 1] + (chord[p] if p < m - 1 else closing)
    return columns, index, listed


def _relative_trip(at: float | None, offset: float) -> float | None:
    """A single surface's trip, given in the s of ``surface.s`` (as the results report it),
    measured from the first station; one before it trips at the first station."""
    return None if at is None else max(at - offset, 0.0)


@numba.njit(cache=True, error_model="numpy")
def _point(arc: F64, q: F64, i: int, offset: int) -> tuple[float, float]:
    """Arc length (relative to point i) and q of the point ``offset`` places from point i;
    NaN beyond the ends."""
    j = i + offset
    if j < 0 or j >= q.size:
        return np.nan, np.nan
    return arc[j] - arc[i], q[j]


@numba.njit(cache=True, error_model="numpy")
def stagnation_models(
    arc: F64, q: F64, a: int, b: int
) -> tuple[float, float, float, float, float, float]:
    """Two local models of a stagnation point at the run of points a to b (a local minimum
    of q; one point when a == b, or points of equal q).

    Returns (s0, slope, Ue at the vertex) of each model, s0 relative to arc[a]:

    - parabola (one point i = a = b only): q = a^2 (s - s0)^2 + q0 through points i-1, i,
      i+1: exact for Ue = a |s - s0| where the points resolve the stagnation region;
    - V: the secant line of |Ue| through points a-2, a-1 and the one through b+1, b+2,
      extended to where they meet: for coarse taps round a small nose radius.  The run
      itself is left out, so that a tap that misses the stagnation value (a nose tap at
      Cp 0.99) does not pull the vertex sideways, and symmetric data give a symmetric V.

    NaN where a model has no points or no minimum.
    """
    sm, qm = _point(arc, q, a, -1)
    sp, qp = _point(arc, q, b, 1)
    sp += arc[b] - arc[a]
    p_s0 = p_slope = p_ue = np.nan
    if a == b and np.isfinite(sm) and np.isfinite(sp):
        i = a
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
    s_a, q_a = _point(arc, q, a, -2)
    s_d, q_d = _point(arc, q, b, 2)
    s_d += arc[b] - arc[a]
    if np.isfinite(s_a + sm + sp + s_d):
        u_a, u_b, u_c, u_d = np.sqrt(q_a), np.sqrt(qm), np.sqrt(qp), np.sqrt(q_d)
        left = (u_b - u_a) / (sm - s_a)
        right = (u_d - u_c) / (s_d - sp)
        if left < 0.0 and right > 0.0:
            meet = (u_c - u_b + left * sm - right * sp) / (left - right)
            v_s0 = min(max(meet, sm), sp)
            v_ue = max(u_b + left * (v_s0 - sm), u_c + right * (v_s0 - sp), 0.0)
            v_slope = 0.5 * (right - left)
    return p_s0, p_slope, p_ue, v_s0, v_slope, v_ue


@numba.njit(cache=True, error_model="numpy")
def _stagnation_candidates(
    arc: F64, x: F64, q: F64, ends: bool, tol: float, ue_limit: float
) -> tuple[int, int, float, float, float, float, bool]:
    """The front stagnation point: (first and last point of its run, s0, slope before,
    slope after, Ue at the vertex, whether the run's points are left out of the sides);
    first = -1 when the data hold none.

    Every local minimum of q = (Ue/U_inf)^2 is a run of points within ``tol`` of each
    other (one point, or several of equal Cp).  A run is modelled by
    ``stagnation_models``; a run at the stagnation value itself (q <= ``tol``: a tap on
    the stagnation point, or a plateau of taps clipped to Cp = 1), or one that neither
    model fits, puts the stagnation point at its
    arc-length middle, with the slope of each side the secant to the first point beyond it,
    and its points are left out.
    Runs at the first or last point count only where ``ends`` is set, and put the
    stagnation point at that end.
    Every run whose vertex reaches Ue <= ``ue_limit`` is a stagnation point; where there
    are several (the front and rear stagnation points of a potential flow), the most
    upstream one is the front one: the free stream is along +x.
    """
    n = q.size
    best_a, best_b = -1, -1
    best = (np.nan, np.nan, np.nan, np.nan)
    best_x = np.inf
    best_dropped = False
    i = 0
    while i < n:
        if (i > 0 and q[i] > q[i - 1]) or (i < n - 1 and q[i] > q[i + 1]):
            i += 1
            continue
        a, b = i, i
        while a > 0 and q[a - 1] <= q[i] + tol:
            a -= 1
        while b < n - 1 and q[b + 1] <= q[i] + tol:
            b += 1
        i = b + 1
        at_start, at_end = a == 0, b == n - 1
        if at_start and at_end:
            continue  # no minimum: the edge velocity is the same everywhere
        if (at_start or at_end) and not ends:
            continue
        dropped = False
        q_min = q[a]
        for j in range(a, b + 1):
            q_min = min(q_min, q[j])
        if at_start or at_end:
            e = a if at_start else b
            o = b + 1 if at_start else a - 1
            s0 = arc[e]
            slope = np.sqrt(q[o]) / abs(arc[o] - s0)
            model = (s0, slope, slope, np.sqrt(q_min))
            dropped = a < b or q_min <= tol
        else:
            # Near stagnation Ue = a |S - S0|: the parabola in q where it reaches zero, else
            # the V of |Ue| (coarse taps round a small nose radius); a run at the stagnation
            # value itself, or one neither model fits, is a plateau.
            p_s0, p_slope, p_ue, v_s0, v_slope, v_ue = stagnation_models(arc, q, a, b)
            use_v = not p_ue <= STAGNATION_UE and (
                v_ue <= STAGNATION_UE or v_ue <= p_ue or (v_ue >= 0.0 and np.isnan(p_ue))
            )
            if q_min <= tol or not (use_v or np.isfinite(p_s0)):
                s0 = 0.5 * (arc[a] + arc[b])
                model = (
                    s0,
                    np.sqrt(q[a - 1]) / (s0 - arc[a - 1]),
                    np.sqrt(q[b + 1]) / (arc[b + 1] - s0),
                    np.sqrt(q_min),
                )
                dropped = True
            elif use_v:
                model = (arc[a] + v_s0, v_slope, v_slope, v_ue)
            else:
                model = (arc[a] + p_s0, p_slope, p_slope, p_ue)
        if not model[3] <= ue_limit:
            continue
        j = min(max(np.searchsorted(arc, model[0]) - 1, 0), n - 2)
        frac = (model[0] - arc[j]) / (arc[j + 1] - arc[j])
        x0 = x[j] + min(max(frac, 0.0), 1.0) * (x[j + 1] - x[j])
        if x0 < best_x:
            best_x, best_a, best_b, best, best_dropped = x0, a, b, model, dropped
    return best_a, best_b, best[0], best[1], best[2], best[3], best_dropped


#: Why a side's derivatives of the stagnation point are not available, by the code
#: ``_nose_gradients`` returns (0: they are).
NOSE_GAPS = (
    "",
    "a slope's secant ends at Ue = 0",
    "the nose holds several points of equal value: the model switches under any change",
    "the fitted stagnation point falls on a point",
    "the stagnation point's model is not differentiated",
)


@numba.njit(cache=True, error_model="numpy")
def _secant_gradient(target: F64, arc: F64, q: F64, j: int, s0: float) -> None:
    """d(slope)/d q_j of a slope taken as the secant Ue_j / |s_j - s0| (NaN at Ue_j = 0)."""
    target[j] = 0.5 / np.sqrt(q[j]) / abs(arc[j] - s0) if q[j] > 0.0 else np.nan


@numba.njit(cache=True, error_model="numpy")
def _nose_gradients(
    arc: F64, q: F64, a: int, b: int, s0: float, slope: float, plateau: bool
) -> tuple[F64, F64, F64, int]:
    """Derivatives of the stagnation point's arc position s0 and of the slopes before and
    after it with respect to q at each listed point, as ``_stagnation_candidates`` and the
    plateau rule of ``_locate`` chose them for the run a..b, and 0 or the code in
    ``NOSE_GAPS`` of why they do not exist.  A plateau, or a run at an end of an open
    contour, holds s0 at a fixed arc position and takes each slope as the secant
    Ue/distance to the first point beyond it; a fitted model moves s0 with the values of
    its points (the parabola through three points, or the V of two secants of
    Ue = sqrt(q))."""
    n = q.size
    d_s0, d_before, d_after = np.zeros(n), np.zeros(n), np.zeros(n)
    if a == 0 or b == n - 1 or plateau:
        if a == 0:
            _secant_gradient(d_before, arc, q, b + 1, s0)
            _secant_gradient(d_after, arc, q, b + 1, s0)
        elif b == n - 1:
            _secant_gradient(d_before, arc, q, a - 1, s0)
            _secant_gradient(d_after, arc, q, a - 1, s0)
        else:
            _secant_gradient(d_before, arc, q, a - 1, s0)
            _secant_gradient(d_after, arc, q, b + 1, s0)
        ok = np.all(np.isfinite(d_before)) and np.all(np.isfinite(d_after))
        return d_s0, d_before, d_after, 0 if ok else 1
    if a < b:
        return d_s0, d_before, d_after, 2
    p_s0, p_slope, _, v_s0, v_slope, _ = stagnation_models(arc, q, a, b)
    if s0 == arc[a] + v_s0 and slope == v_slope:
        sm, s_a = arc[a - 1] - arc[a], arc[a - 2] - arc[a]
        sp, s_d = arc[b + 1] - arc[a], arc[b + 2] - arc[a]
        if not sm < v_s0 < sp:
            return d_s0, d_before, d_after, 3
        points = np.array([a - 2, a - 1, b + 1, b + 2])
        u = np.sqrt(q[points])
        left = (u[1] - u[0]) / (sm - s_a)
        right = (u[3] - u[2]) / (s_d - sp)
        g_left = np.array([-1.0, 1.0, 0.0, 0.0]) / (sm - s_a)
        g_right = np.array([0.0, 0.0, -1.0, 1.0]) / (s_d - sp)
        top = u[2] - u[1] + left * sm - right * sp
        g_top = np.array([0.0, -1.0, 1.0, 0.0]) + sm * g_left - sp * g_right
        down = left - right
        g_meet = (g_top * down - top * (g_left - g_right)) / (down * down)
        g_slope = 0.5 * (g_right - g_left)
        dq = 0.5 / u  # dUe/dq
        for k in range(4):
            j = points[k]
            d_s0[j] += g_meet[k] * dq[k]
            d_before[j] += g_slope[k] * dq[k]
        return d_s0, d_before, d_before.copy(), 0
    if a == b and s0 == arc[a] + p_s0 and slope == p_slope:
        h0, h1 = arc[a] - arc[a - 1], arc[a + 1] - arc[a]
        if not -h0 < p_s0 < h1:
            return d_s0, d_before, d_after, 3
        values = q[a - 1 : a + 2]
        g_d0 = np.array([-1.0, 1.0, 0.0]) / h0
        g_d1 = np.array([0.0, -1.0, 1.0]) / h1
        g_c2 = (g_d1 - g_d0) / (h0 + h1)
        g_c1 = g_d0 + g_c2 * h0
        c2 = _dot3(g_c2, values)
        c1 = _dot3(g_c1, values)
        d_s0[a - 1 : a + 2] = -0.5 * (g_c1 * c2 - c1 * g_c2) / (c2 * c2)
        d_before[a - 1 : a + 2] = g_c2 / (2.0 * np.sqrt(c2))
        return d_s0, d_before, d_before.copy(), 0
    return d_s0, d_before, d_after, 4


@numba.njit(cache=True, error_model="numpy")
def _dot3(u: F64, v: F64) -> float:
    """u @ v of three-vectors, summed in order as numpy's dot of short vectors sums them."""
    return float(u[0] * v[0] + u[1] * v[1] + u[2] * v[2])


@numba.njit(cache=True, error_model="numpy")
def _stagnation_region(q: F64, a: int, b: int, tol: float, noise: float) -> tuple[int, int]:
    """The run a..b widened to the farthest points with q <= ``tol`` that are reached from it
    through points with q <= ``noise``."""
    lo, hi = a, b
    j = a - 1
    while j >= 0 and q[j] <= noise:
        if q[j] <= tol:
            lo = j
        j -= 1
    j = b + 1
    while j < q.size and q[j] <= noise:
        if q[j] <= tol:
            hi = j
        j += 1
    return lo, hi


@numba.njit(cache=True, error_model="numpy")
def _locate(
    arc: F64, x: F64, q: F64, ends: bool
) -> tuple[int, int, float, float, float, float, bool, float]:
    """The front stagnation point of the listed contour (``_stagnation_candidates``), its
    run widened over noisy taps at the stagnation value: (first and last point of the
    run, s0, slope before, slope after, Ue at the vertex, whether the run is a plateau
    left out of the sides, smallest q of the run); first = -1 when the data hold none.

    Noisy taps round the stagnation point, some clipped to its value: every point at
    the stagnation value reached through points within tap noise of it belongs to the
    stagnation region, which becomes a plateau."""
    n = q.size
    a, b, s0, before, after, ue_vertex, plateau = _stagnation_candidates(
        arc, x, q, ends, PLATEAU_Q, STAGNATION_COARSE
    )
    if a < 0:
        return a, b, s0, before, after, ue_vertex, plateau, np.nan
    lo, hi = _stagnation_region(q, a, b, PLATEAU_Q, CP_NOISE)
    if (lo < a or hi > b) and lo > 0 and hi < n - 1:
        a, b, plateau = lo, hi, True
        s0 = 0.5 * (arc[a] + arc[b])
        before = np.sqrt(q[a - 1]) / (s0 - arc[a - 1])
        after = np.sqrt(q[b + 1]) / (arc[b + 1] - s0)
        ue_vertex = np.sqrt(q[a : b + 1].min())
    return a, b, s0, before, after, ue_vertex, plateau, q[a : b + 1].min()


@numba.njit(cache=True, error_model="numpy")
def _axis_point(x: F64, y: F64, r: F64, arc: F64, closed: bool, radius_from_y: bool) -> float:
    """Arc length of the most upstream point where the body of revolution meets its axis
    (radius 0, or y changing sign when the radius is |y|) inside the contour, or NaN;
    of several at the same x, the first along the contour."""
    n = x.size
    limit = REPEAT_TOLERANCE * arc[n - 1]
    best_x = best_s = np.nan
    found = False
    for i in range(1 if closed else 0, n - 1 if closed else n):
        if r[i] <= limit and (not found or (x[i], arc[i]) < (best_x, best_s)):
            found, best_x, best_s = True, x[i], arc[i]
    if radius_from_y:
        for i in range(n - 1):
            if y[i] * y[i + 1] < 0.0:
                t = y[i] / (y[i] - y[i + 1])
                at_x = x[i] + t * (x[i + 1] - x[i])
                at_s = arc[i] + t * (arc[i + 1] - arc[i])
                if not found or (at_x, at_s) < (best_x, best_s):
                    found, best_x, best_s = True, at_x, at_s
    return best_s


@numba.njit(cache=True, error_model="numpy")
def _station(
    columns: F64, arc: F64, index: F64, s0: float, tol: float, plateau: bool, a: int, b: int
) -> tuple[float, float, float, float, float, float, float, int, int]:
    """The stagnation point at arc length s0 on the segment from the listed point before
    it to the next: (x0, y0, r0 (1 without a radius row), the segment's direction dx/ds,
    dy/ds, dr/ds, the unwrapped fractional input index), and
    the last point before it and the first after it on the sides: a point within ``tol``
    of it is the stagnation station itself, and the points a..b of a plateau are left
    out."""
    n = arc.size
    i0 = min(max(int(np.searchsorted(arc, s0, side="right")) - 1, 0), n - 2)
    seg = arc[i0 + 1] - arc[i0]
    frac = (s0 - arc[i0]) / seg
    x, y = columns[0], columns[1]
    x0 = x[i0] + frac * (x[i0 + 1] - x[i0])
    y0 = y[i0] + frac * (y[i0 + 1] - y[i0])
    r0, dr0 = 1.0, 0.0
    if columns.shape[0] > 3:
        r = columns[3]
        r0 = r[i0] + frac * (r[i0 + 1] - r[i0])
        dr0 = (r[i0 + 1] - r[i0]) / seg
    dx0, dy0 = (x[i0 + 1] - x[i0]) / seg, (y[i0 + 1] - y[i0]) / seg
    position = index[i0] + frac * (index[i0 + 1] - index[i0])
    if plateau:
        last_before, first_after = a - 1, b + 1
    else:
        last_before = int(np.searchsorted(arc, s0 - tol, side="left")) - 1
        first_after = int(np.searchsorted(arc, s0 + tol, side="right"))
    return x0, y0, r0, dx0, dy0, dr0, position, last_before, first_after


@numba.njit(cache=True, error_model="numpy")
def _vanishing(q: F64, first: int, step: int, size: int) -> int:
    """The first of the ``size`` listed points from ``first`` on by ``step``, its last
    left out, at the stagnation value (q <= ``PLATEAU_Q``): its place along them, or -1."""
    for k in range(size - 1):
        if q[first + step * k] <= PLATEAU_Q:
            return k
    return -1


@numba.njit(cache=True, error_model="numpy")
def _input_points(index: F64, period: int) -> NDArray[np.int64]:
    """The input point of each listed point: its unwrapped index, taken modulo ``period``
    on a closed contour (0 when open)."""
    inputs = np.empty(index.size, dtype=np.int64)
    for j in range(index.size):
        inputs[j] = int(index[j])
        if period > 0:
            while inputs[j] >= period:  # unwrapped indices lie below two periods
                inputs[j] -= period
    return inputs


@numba.njit(cache=True, error_model="numpy")
def _summed_onto(inputs: NDArray[np.int64], values: F64, n_in: int) -> F64:
    """``values`` over the listed points summed onto the ``n_in`` input points in listing
    order (a point listed twice gets both).  Zeros are not added: the sums start at +0 and
    never become -0 (x + (-x) is +0), and adding +-0 to any other value leaves it as it is,
    so the sums are those of adding every value; derivatives have few values that are not
    zero."""
    out = np.zeros(n_in)
    for j in range(inputs.size):
        if values[j] != 0.0:
            out[inputs[j]] += values[j]
    return out


@numba.njit(cache=True, error_model="numpy")
def _nose_arrays(
    index: F64, period: int, first: int, step: int, size: int, d_s0: F64, d_slope: F64, n_in: int
) -> tuple[NDArray[np.int64], F64, F64]:
    """A side's ``Nose`` arrays: the input point of each station (-1 at the stagnation
    point, then the ``size`` listed points from ``first`` on by ``step``; listed indices
    are unwrapped, taken modulo ``period`` on a closed contour, 0 when open), and the
    derivatives ``d_s0`` and ``d_slope`` over the listed points summed onto the
    ``n_in`` input points in listing order (a point listed twice gets both)."""
    inputs = _input_points(index, period)
    return (
        _station_points(inputs, first, step, size),
        _summed_onto(inputs, d_s0, n_in),
        _summed_onto(inputs, d_slope, n_in),
    )


@numba.njit(cache=True, error_model="numpy")
def _station_points(
    inputs: NDArray[np.int64], first: int, step: int, size: int
) -> NDArray[np.int64]:
    """``Nose.points``: -1 at the stagnation point, then the input point of each of the
    ``size`` listed points from ``first`` on by ``step``."""
    points = np.empty(size + 1, dtype=np.int64)
    points[0] = -1
    for k in range(size):
        points[k + 1] = inputs[first + step * k]
    return points


#: Why a side's derivatives of the stagnation point are not available when the sides do not
#: start from a located stagnation point, by the code ``_split_numbers`` returns beyond
#: those of ``NOSE_GAPS``.
START_GAPS = (
    "the sides start without a stagnation slope",
    "no stagnation point in the data: the sides start as from a sharp edge",
)
NO_SLOPE, NO_STAGNATION = len(NOSE_GAPS), len(NOSE_GAPS) + 1


@numba.njit(cache=True, error_model="numpy")
def _split_numbers(
    x: F64,
    y: F64,
    q: F64,
    radius: F64,
    arc: F64,
    chord: F64,
    axisymmetric: bool,
    radius_from_y: bool,
) -> tuple[
    F64, NDArray[np.int64], F64, F64, F64, F64, NDArray[np.int64], F64, F64, NDArray[np.int64], F64
]:
    """The numbers of ``_split_contour`` in one compiled call: the listing (``_closure``,
    ``_listing``), the stagnation point (``_locate``; the most upstream point when the data
    hold none; on the axis of a body of revolution), its derivatives (``_nose_gradients``),
    its station (``_station``, ``_along_input``), the orientation (``_orientation``) and
    each side's rows (``_vanishing``, ``_side_rows``) and ``Nose`` arrays (``_nose_arrays``).
    ``radius`` is empty without a radius.

    Returns the scalars as a float array (s0, slope before, slope after, Ue at the vertex,
    smallest q of the run, x0, y0, r0, dx0, dy0, dr0, fractional input index, arc length
    along the input, distance the axis moved s0 or NaN) and an integer array (closed,
    implicit, a, b, gap code (``NOSE_GAPS``, ``NO_SLOPE``, ``NO_STAGNATION``), plateau,
    plateau long enough to report, last point before, first point after, orientation (3 on
    an open contour), then per side: its count of points (-1 when too few), where its edge
    velocity vanishes (-1), its first station of zero radius (-1)); then the listed rows,
    input indices and arc length; then per side its rows, ``Nose.points`` and the rows
    ``Nose.s0_grad``, ``Nose.slope_grad`` (empty when there are no derivatives)."""
    n_in = arc.size
    closed, implicit = _closure(x, y, arc)
    columns, index, listed = _listing(x, y, q, radius, closed, implicit, arc, chord)
    lx, ly, lq = columns[0], columns[1], columns[2]
    n = lx.size
    total = listed[n - 1]
    tol = REPEAT_TOLERANCE * total
    a, b, s0, before, after, ue_vertex, plateau, q_run = _locate(listed, lx, lq, not closed)
    gap = 0
    if not (np.isfinite(before) and np.isfinite(after)):
        before = after = np.nan
        gap = NO_SLOPE
    if a < 0:
        a = b = int(np.argmin(lx[: n - 1] if closed else lx))
        while a > 0 and lx[a - 1] <= lx[b] + TIE_TOLERANCE * total:
            a -= 1
        while b < n - 1 and lx[b + 1] <= lx[a] + TIE_TOLERANCE * total:
            b += 1
        s0 = 0.5 * (listed[a] + listed[b])
        q_run = lq[a : b + 1].min()
        ue_vertex = np.sqrt(q_run)
        before = after = np.nan
        plateau = False
        gap = NO_STAGNATION
    d_s0 = d_before = d_after = np.empty(0)
    if gap == 0:
        d_s0, d_before, d_after, gap = _nose_gradients(listed, lq, a, b, s0, before, plateau)
    moved = np.nan
    if axisymmetric:
        r_axis = columns[3] if radius.size else np.abs(ly)
        axis = _axis_point(lx, ly, r_axis, listed, closed, radius_from_y)
        if np.isfinite(axis) and abs(axis - s0) > tol:
            spacing = np.max(np.diff(listed[max(a - 1, 0) : b + 2]))
            if abs(axis - s0) > spacing:
                moved = abs(axis - s0)
            s0 = axis
            plateau = False
            if gap == 0:
                d_s0[:] = 0.0  # placed on the axis: geometry only
    long_plateau = plateau and b > a and listed[b] - listed[a] > PLATEAU_WARNING * total
    x0, y0, r0, dx0, dy0, dr0, position, last_before, first_after = _station(
        columns, listed, index, s0, tol, plateau, a, b
    )
    if axisymmetric and radius_from_y:
        r0 = abs(y0)  # a nose between two points lies on the axis, not at their mean |y|
        dr0 = math.copysign(dy0, y0)
    period = (n_in if implicit else n_in - 1) if closed else 0
    if closed:
        position = position % period
    along = _along_input(position, arc, x, y)
    turn = _orientation(lx, ly) if closed else 3
    ue_start = np.sqrt(q_run) if np.isnan(before) else 0.0
    ints = np.empty(16, dtype=np.int64)
    ints[0], ints[1], ints[2], ints[3], ints[4] = closed, implicit, a, b, gap
    ints[5], ints[6], ints[7] = plateau, long_plateau, last_before
    ints[8], ints[9] = first_after, turn
    blocks, points, grads = [], [], []
    inputs = np.empty(0, dtype=np.int64)
    s0_grad = np.empty(0)
    for k in range(2):
        first = last_before if k == 0 else first_after
        step = -1 if k == 0 else 1
        size = max(last_before + 1, 0) if k == 0 else max(n - first_after, 0)
        ends = zero_r = -1
        if size + 1 < MIN_POINTS:
            size = -1
            blocks.append(np.empty((5, 0)))
        else:
            # A side ends where its edge velocity falls to zero again (another stagnation point).
            ends = _vanishing(lq, first, step, size)
            if ends >= 0:
                size = ends + 1
            block = _side_rows(columns, listed, first, step, size, s0, ue_start, x0, y0, r0)
            blocks.append(block)
            if axisymmetric:
                zero_r = _first_at_most(block[2], 1, size, 0.0)  # station k is point k - 1
        if gap == 0 and size >= 0:
            # The side walked backwards from the stagnation point takes the derivatives of
            # the side before it, whether or not it ends early at another stagnation point
            # (``_nose_arrays`` of each side, the parts they share done once).
            if inputs.size == 0:
                inputs = _input_points(index, period)
                s0_grad = _summed_onto(inputs, d_s0, n_in)
            rows = np.empty((2, n_in))
            rows[0] = s0_grad
            rows[1] = _summed_onto(inputs, d_before if step < 0 else d_after, n_in)
            points.append(_station_points(inputs, first, step, size))
            grads.append(rows)
        else:
            points.append(np.empty(0, dtype=np.int64))
            grads.append(np.empty((2, 0)))
        ints[10 + 3 * k] = size
        ints[11 + 3 * k] = ends
        ints[12 + 3 * k] = zero_r
    floats = np.array(
        [s0, before, after, ue_vertex, q_run, x0, y0, r0, dx0, dy0, dr0, position, along, moved]
    )
    return (
        floats,
        ints,
        columns,
        index,
        listed,
        blocks[0],
        points[0],
        grads[0],
        blocks[1],
        points[1],
        grads[1],
    )


def _split_contour(
    arc: F64,
    chord: F64,
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
) -> tuple[list[SideInput], Stagnation, bool]:
    """Locate the stagnation point between points and split the contour into its sides;
    also whether the contour is closed.  ``arc`` and ``chord``: see ``_arc_and_chords``.

    A closed contour (see ``_closure``) is first listed from the point where its sides
    meet, the most downstream point (the trailing edge or rear point; the middle of a
    flat base), so that the sides and events do not depend on where the list starts.
    The sides then run from the stagnation point both ways round to that point; on an
    open contour they run to its first and last points.  The numbers come from one
    compiled call (``_split_numbers``); this builds the warnings and the sides.
    """
    n_in = arc.size
    numbers = _split_numbers(
        x,
        y,
        q,
        radius if radius is not None else np.empty(0),
        arc,
        chord,
        axisymmetric,
        radius_from_y,
    )
    floats, ints, columns, index, arc = numbers[:5]
    per_side = (numbers[5:8], numbers[8:11])
    s0, slope_before, slope_after, ue_vertex, q_run, x0, y0, _, dx0, dy0, dr0, *more = (
        floats.tolist()
    )
    position, along, moved = more
    closed_, implicit, a, b, gap, _, long_plateau, last_before, first_after, turn, *counts = (
        ints.tolist()
    )
    closed = bool(closed_)
    n = columns.shape[1]
    if gap == NO_STAGNATION:
        warnings.append(
            Notice(
                code="no_stagnation_point",
                message="the edge velocity does not fall to zero in the data (smallest "
                f"Ue/U_inf about {np.sqrt(columns[2].min()):.3g}); the sides start at the most "
                "upstream point as if from a sharp leading edge",
                pointer=p_pointer,
            )
        )
    elif ue_vertex <= STAGNATION_UE < math.sqrt(q_run):
        warnings.append(
            Notice(
                code="stagnation_point_between_taps",
                message="no point reads the stagnation value (the largest Ue/U_inf falls to "
                f"{math.sqrt(q_run):.3g}); the stagnation point is located between "
                "points by extrapolating their edge velocity to zero, and the sides start "
                "there with Ue rising linearly from 0",
                pointer=p_pointer,
            )
        )
    elif ue_vertex > STAGNATION_UE:
        warnings.append(
            Notice(
                code="stagnation_point_unresolved",
                message="the points do not resolve the stagnation region (Ue/U_inf "
                f"extrapolated to {ue_vertex:.3g} there, not 0): the sides start from the "
                "located stagnation point with Ue rising linearly from 0 to the first points; "
                "its position and theta near it are uncertain; more points near the nose help",
                pointer=p_pointer,
            )
        )
    nose_gap = START_GAPS[gap - NO_SLOPE] if gap >= NO_SLOPE else NOSE_GAPS[gap]
    if not math.isnan(moved):
        warnings.append(
            Notice(
                code="stagnation_point_on_axis",
                message="the pressure data put the stagnation point "
                f"{moved:.3g} along the contour from the nose on the axis; "
                "on a body of revolution it lies on the axis, and is placed there",
                pointer=p_pointer,
            )
        )
    if long_plateau:
        warnings.append(
            Notice(
                code="stagnation_plateau",
                message=f"{b - a + 1} points hold the stagnation value of the pressure (within "
                f"{PLATEAU_Q:g} in (Ue/U_inf)^2); the stagnation point is put at the "
                "middle of the plateau and the sides start from it with Ue rising linearly to "
                "the first points beyond it",
                pointer=p_pointer,
            )
        )
    period = (n_in if implicit else n_in - 1) if closed else np.inf
    stagnation = Stagnation(x=x0, y=y0, s=along, position=position)

    # The points before the stagnation point (walked backwards) and after it, each as
    # (first listed point, step, count).
    runs = ((last_before, -1, max(last_before + 1, 0)), (first_after, 1, max(n - first_after, 0)))
    no_slope = math.isnan(slope_before)
    start: Literal["stagnation", "sharp"] = "sharp" if no_slope else "stagnation"
    names: tuple[Literal["upper", "lower"], Literal["upper", "lower"]]
    if turn == 1 or turn == -1:
        names = ("upper", "lower") if turn > 0 else ("lower", "upper")
    else:
        names = _side_names(columns[0], columns[1], runs, closed, y0)
    sides: list[SideInput] = []
    for k, name in enumerate(names):
        size, ends, zero_r = counts[3 * k : 3 * k + 3]
        if size < 0:
            continue
        first, step, _ = runs[k]
        block, points, grads = per_side[k]
        if ends >= 0:
            last = first + step * ends
            warnings.append(
                Notice(
                    code="edge_velocity_vanishes",
                    message=f"{name}: the edge velocity falls to zero at s = "
                    f"{abs(arc[last] - s0):.4g} from the stagnation point (another "
                    "stagnation point); the side ends there",
                    pointer=f"{p_pointer}/{int(index[last] % period)}",
                )
            )
        side_s, u, r, side_x, side_y = block
        if nose_gap:
            nose = Nose(np.empty(0, np.int64), np.empty(0), np.empty(0), 0.0, (0, 0, 0), nose_gap)
        else:
            nose = Nose(
                points=points,
                s0_grad=grads[0],
                slope_grad=grads[1],
                direction=1.0 if step < 0 else -1.0,
                position_grad=(dx0, dy0, dr0),
                gap="",
            )
        if zero_r >= 0:
            i = int(index[first + step * (zero_r - 1)] % period)
            pointer = f"/surface/y/{i}" if radius_from_y else f"/body/radius/{i}"
            raise CaseError.at(
                pointer,
                "the body radius must be positive between the nose and the tail",
            )
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
                slope=slope_before if no_slope else (slope_before, slope_after)[k],
                theta0=0.0,
                h0=float("nan"),
                turbulent_start=False,
                trip=trips.get(name),
                options=options,
                nose=nose,
            )
        )
    if len(sides) == 2 and sides[0].name != "upper" and sides[1].name == "upper":
        sides.reverse()  # the upper side first
    if not sides:
        raise CaseError.at("/surface", "too few points on either side of the stagnation point")
    if len(sides) == 2 and sides[0].name == sides[1].name:
        raise CaseError.at("/surface", "could not tell the upper side from the lower side")
    return sides, stagnation, closed


@numba.njit(cache=True, error_model="numpy")
def _side_rows(
    columns: F64,
    arc: F64,
    first: int,
    step: int,
    size: int,
    s0: float,
    ue_start: float,
    x0: float,
    y0: float,
    r0: float,
) -> F64:
    """The rows s, Ue, r, x, y of one side in one block: the stagnation point (arc length
    ``s0``, Ue ``ue_start``, position x0, y0, radius r0), then the ``size`` points of the
    listing (rows x, y, q and, if present, the radius of ``columns``) from ``first`` on by
    ``step`` (1 or -1), s the distance along ``arc`` from s0 and Ue = sqrt(q).  The radius
    is 1 without a radius row."""
    block = np.empty((5, size + 1))
    block[0, 0] = 0.0
    block[1, 0] = ue_start
    block[2, 0] = r0 if columns.shape[0] > 3 else 1.0
    block[3, 0] = x0
    block[4, 0] = y0
    for k in range(size):
        j = first + step * k
        block[0, k + 1] = abs(arc[j] - s0)
        block[1, k + 1] = np.sqrt(columns[2, j])
        block[2, k + 1] = columns[3, j] if columns.shape[0] > 3 else 1.0
        block[3, k + 1] = columns[0, j]
        block[4, k + 1] = columns[1, j]
    return block


@numba.njit(cache=True, error_model="numpy")
def _listed_arc(arc: F64, x: F64, y: F64, j: int) -> float:
    """Arc length along the input list at point j; j = arc.size is the first point again,
    past the closing segment of a loop."""
    if j < arc.size:
        return float(arc[j])
    return float(arc[-1] + np.hypot(x[-1] - x[0], y[-1] - y[0]))


@numba.njit(cache=True, error_model="numpy")
def _along_input(position: float, arc: F64, x: F64, y: F64) -> float:
    """Arc length along the input list at a fractional point index, linear between points;
    one past the last point is the first again (the closing segment of a loop)."""
    last = arc.size  # the index of the first point repeated
    if np.isnan(position):
        return position
    if not position > 0.0:
        return _listed_arc(arc, x, y, 0)
    j = int(position)
    if j >= last:
        return _listed_arc(arc, x, y, last)
    low = _listed_arc(arc, x, y, j)
    # As numpy.interp on the integer grid of the points: slope * (x - x_j) + f_j.
    return (_listed_arc(arc, x, y, j + 1) - low) * (position - j) + low


@numba.njit(cache=True, error_model="numpy")
def _orientation(x: F64, y: F64) -> int:
    """The orientation of a closed contour (its last point repeating its first) from the
    sign of its area (the shoelace sum): 1 counter-clockwise, -1 clockwise, 0 when the
    area is at most ``AREA_TOLERANCE`` times that of the bounding box; 2 when the rounding
    of the two sums of products could change that answer.

    Each sum, in any order of summation (numpy's dot products sum in blocks), lies within
    n u sum |terms| of the exact one (u the unit roundoff); the margin taken is four
    times that, so any other order of summation gives the same answer unless 2 is
    returned."""
    n = x.size - 1
    forward = backward = size = 0.0
    for i in range(n):
        a, b = x[i] * y[i + 1], x[i + 1] * y[i]
        forward += a
        backward += b
        size += abs(a) + abs(b)
    area = 0.5 * (forward - backward)
    limit = AREA_TOLERANCE * (_extent_product(x, y) + 1e-300)
    margin = 4.0 * (n + 2) * 2.0**-53 * size
    if abs(area) - margin > limit:
        return 1 if area > 0.0 else -1
    if abs(area) + margin <= limit:
        return 0
    return 2


@numba.njit(cache=True, error_model="numpy")
def _extent_product(x: F64, y: F64) -> float:
    """(max x - min x) (max y - min y): the area of the contour's bounding box."""
    return float((x.max() - x.min()) * (y.max() - y.min()))


def _side_names(
    x: F64,
    y: F64,
    runs: tuple[tuple[int, int, int], tuple[int, int, int]],
    closed: bool,
    y0: float,
) -> tuple[Literal["upper", "lower"], Literal["upper", "lower"]]:
    """Names of the side walked backwards from the stagnation point and of the one walked
    forwards, each given as (first listed point, step, count).  On a closed contour, by
    its orientation: walking round it counter-clockwise from the front stagnation point
    goes over the lower side first.  Otherwise (or for a contour without area) the side
    with the higher mean y is the upper one; a side alone is the upper one unless it lies
    below the stagnation point."""
    if closed:
        turn = _orientation(x, y)
        if turn == 2:  # too close to call whatever the order of summation: numpy's sums call it
            area = 0.5 * float(np.dot(x[:-1], y[1:]) - np.dot(x[1:], y[:-1]))
            turn = 0
            if abs(area) > AREA_TOLERANCE * (_extent_product(x, y) + 1e-300):
                turn = 1 if area > 0.0 else -1
        if turn:
            return ("upper", "lower") if turn > 0 else ("lower", "upper")
    mean = [_mean_along(y, first, step, size) for first, step, size in runs]
    if math.isnan(mean[1]) or math.isnan(mean[0]):
        alone = mean[0] if math.isnan(mean[1]) else mean[1]
        name: Literal["upper", "lower"] = "lower" if alone < y0 else "upper"
        other: Literal["upper", "lower"] = "upper" if name == "lower" else "lower"
        return (name, other) if math.isnan(mean[1]) else (other, name)
    return ("upper", "lower") if mean[0] >= mean[1] else ("lower", "upper")


def _mean_along(y: F64, first: int, step: int, size: int) -> float:
    """The mean of the ``size`` values of y from ``first`` on by ``step`` (1 or -1), summed
    in that order as ``numpy.mean`` sums them; NaN when there are none."""
    if not size:
        return math.nan
    values = y[first : first + size] if step > 0 else y[np.arange(first, first - size, -1)]
    return float(values.sum() / size)
