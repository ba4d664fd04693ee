"""Separated regions already present in the input: the base-pressure plateau.

Contents
--------
- ``find_plateau(s, cp, x, y)``: the constant-pressure region downstream of the suction
  peak of one side, or None.
- ``cut_side(side, onset_s)``: a ``SideInput`` ended at the plateau onset, its last point
  interpolated there.
- ``cp_from_edge_velocity(ue, mach)``: Cp back from Ue/U_inf (Bernoulli or isentropic).
- ``Plateau``: where the plateau begins, its mean Cp and where it ends.

The rule
--------
A measured pressure distribution, or a coarse CFD wall export, of a bluff body already
contains its separated wake: downstream of separation the wall pressure stops recovering and
stays nearly constant (the base pressure). This is the constant-pressure region of the
free-streamline model of bluff-body wakes, in which separation is where the constant base
pressure begins (Roshko 1954, NACA TN 3169 [recalled, not re-checked]). The boundary-layer
methods cannot march through it (they would see an attached layer at zero pressure
gradient), so the tool reports it and ends the attached march at its onset.

The rule below is a rule of practice, not a published criterion: its thresholds are named
constants chosen so that it fires on bluff-body data and not on attached flows (tested on
potential flows about cylinders, ellipses, a sphere, thin sections, on flat plates and on
bodies with a nose and a long parallel part). A stretch of input points downstream of the
suction peak (the largest Ue on the side; the first point within ``PLATEAU_ONSET_BAND`` times
the band of its Cp, so that scatter along a plateau does not move it) is a plateau when

(a) the spread of Cp over it (largest minus smallest) is at most ``PLATEAU_BAND`` times the
    side's Cp range, so that every value lies within that band of the stretch's mean;
(b) it is at least ``PLATEAU_MIN_LENGTH`` times the side's length long and holds at least
    ``PLATEAU_MIN_POINTS`` input points;
(c) the wall tangent turns by at least ``PLATEAU_MIN_TURNING`` degrees over it, from the
    incoming segment at the onset to the last segment of the stretch.

Condition (c) is what tells separated from attached flow: attached flow keeps a constant
pressure only along a nearly straight wall (a flat plate, the parallel part of a body),
while a separated region keeps it while the wall turns away beneath it (the rear of a
circular cylinder) or round a corner to a base. Single-surface input has no geometry, so (c)
cannot be tested, and the pressure level alone cannot tell: the rear of Hiemenz's measured
cylinder distribution up to separation, decelerating wedge flows and the flat part of a
sphere's potential flow all keep Cp within the band over long stretches while attached. Such
input is not checked (the result's options say ``not_checked_without_contour``).

The onset is located as in the free-streamline picture, where the constant level begins:
the plateau level is the median Cp over the stretch; between the suction peak and the first
point settled on the level (within ``PLATEAU_ONSET_BAND`` times the band), the onset is where
the steepest recovery segment, extended, reaches the level (between input points); where Cp
does not recover before the level (separation at a corner, at the suction peak itself), the
onset is that point. The end is the last input point within the band.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from ibl.prepare import GAMMA, SideInput

__all__ = [
    "PLATEAU_BAND",
    "PLATEAU_MIN_LENGTH",
    "PLATEAU_MIN_POINTS",
    "PLATEAU_MIN_TURNING",
    "PLATEAU_ONSET_BAND",
    "Plateau",
    "cp_from_edge_velocity",
    "cut_side",
    "find_plateau",
]

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]

#: Largest spread of Cp over a plateau, as a fraction of the side's Cp range (stagnation to
#: suction peak) [-]. Rule of practice: measured subcritical base pressures stay within
#: about 0.1 to 0.15 in Cp over the rear of a cylinder, against a range of about 2.2.
PLATEAU_BAND = 0.10
#: Cp is settled on the plateau level within this fraction of the band [-] (rule of
#: practice); the onset is found before that point (see the module).
PLATEAU_ONSET_BAND = 0.25
#: Shortest plateau, as a fraction of the side's arc length [-] (rule of practice).
PLATEAU_MIN_LENGTH = 0.15
#: Fewest input points on a plateau (a level needs three points to be seen) [-].
PLATEAU_MIN_POINTS = 3
#: Least turning of the wall tangent over a plateau [deg] (rule of practice). Potential flow
#: about a circular cylinder keeps Cp within the band from its minimum over 18 degrees of
#: turning (27 counted from where Cp first comes near its minimum), a sphere the same; the
#: rear of a bluff body turns by 90 degrees or more behind separation.
PLATEAU_MIN_TURNING = 45.0


@dataclass(frozen=True, slots=True)
class Plateau:
    """A constant-pressure (separated) region on one side, positions in the side's s."""

    onset_s: float  # where the recovery stops, between input points
    onset_index: int  # the first input point at or after the onset
    cp: float  # mean Cp over the plateau [-]
    end_s: float  # the last input point within the band
    turning: float  # turning of the wall tangent over it [deg]; NaN without geometry


def cp_from_edge_velocity(ue: F64, mach: float = 0.0, gamma: float = GAMMA) -> F64:
    r"""Pressure coefficient from the edge velocity Ue/U_inf: the inverse of
    ``ibl.prepare.edge_velocity_from_cp``.

    .. math::
        C_p = 1 - (U_e/U_\infty)^2 \quad (M_\infty = 0);\qquad
        C_p = \frac{2}{\gamma M_\infty^2}\left[\left(1 + \frac{\gamma - 1}{2} M_\infty^2
        \left(1 - \frac{U_e^2}{U_\infty^2}\right)\right)^{\gamma/(\gamma-1)} - 1\right]

    (constant total enthalpy, isentropic edge).

    Parameters
    ----------
    ue : array
        Edge velocity Ue/U_inf [-].
    mach : float
        Free-stream Mach number [-], 0 <= M < 1.
    gamma : float
        Ratio of specific heats [-].

    Returns
    -------
    array
        Cp [-].

    >>> float(cp_from_edge_velocity(np.array(2.0)))
    -3.0

    References
    ----------
    Bernoulli; isentropic flow relations [derived; standard gas dynamics].
    """
    ue = np.asarray(ue, dtype=np.float64)
    if mach <= 0.0:
        return np.asarray(1.0 - ue**2, dtype=np.float64)
    t_ratio = 1.0 + 0.5 * (gamma - 1.0) * mach**2 * (1.0 - ue**2)
    p_ratio = np.maximum(t_ratio, 0.0) ** (gamma / (gamma - 1.0))
    return np.asarray((p_ratio - 1.0) / (0.5 * gamma * mach**2), dtype=np.float64)


def _reach(values: F64, band: float, first: int) -> I64:
    """For every start i >= ``first``: the last index j such that the spread (max - min) of
    ``values[i..j]`` is at most ``band``.

    Range maxima and minima from sparse tables, and a binary search over j for every start
    at once (the spread never shrinks as j grows): O(n log n), vectorised.
    """
    n = values.size
    levels = max(1, math.floor(math.log2(n)) + 1)
    high = np.empty((levels, n))
    low = np.empty((levels, n))
    high[0] = low[0] = values
    for level in range(1, levels):
        half = 1 << (level - 1)
        high[level] = high[level - 1]
        low[level] = low[level - 1]
        high[level, : n - half] = np.maximum(high[level - 1, : n - half], high[level - 1, half:])
        low[level, : n - half] = np.minimum(low[level - 1, : n - half], low[level - 1, half:])
    start = np.arange(first, n)
    lo = start.copy()  # the stretch [i, lo] is within the band
    hi = np.full(start.size, n)  # [i, hi] is not (hi = n: past the end)
    while True:
        open_ = hi - lo > 1
        if not open_.any():
            break
        mid = np.where(open_, (lo + hi) // 2, lo)
        length = mid - start + 1
        rank = np.floor(np.log2(length)).astype(np.int64)
        other = mid - np.left_shift(1, rank) + 1
        spread = np.maximum(high[rank, start], high[rank, other]) - np.minimum(
            low[rank, start], low[rank, other]
        )
        ok = spread <= band
        lo = np.where(open_ & ok, mid, lo)
        hi = np.where(open_ & ~ok, mid, hi)
    return lo


def _tangent_angle(x: F64, y: F64) -> F64:
    """Direction of each segment (point m to m + 1), unwrapped [rad]."""
    return np.unwrap(np.arctan2(np.diff(y), np.diff(x)))


def _peak(cp: F64, band: float) -> int:
    """The suction peak: the first point within ``PLATEAU_ONSET_BAND`` times the band of the
    smallest Cp (so that scatter on a plateau as low as the peak does not move it there)."""
    return int(np.argmax(cp <= cp.min() + PLATEAU_ONSET_BAND * band))


def _stretches(s: F64, cp: F64) -> tuple[int, I64, I64, float] | None:
    """Candidate starts (from the suction peak on), the end of each one's stretch within the
    band, and the band; None when the side has no pressure range."""
    n = s.size
    if n < PLATEAU_MIN_POINTS:
        return None
    span = float(cp.max() - cp.min())
    if not span > 0.0:
        return None
    band = PLATEAU_BAND * span
    first = max(_peak(cp, band), 1)
    if first > n - PLATEAU_MIN_POINTS:
        return None
    starts = np.arange(first, n)
    return first, starts, _reach(cp, band, first), band


def _onset(s: F64, cp: F64, peak: int, i0: int, j0: int, band: float) -> tuple[float, int]:
    """Onset (s, first point at or after it) of the stretch [i0, j0]: where the steepest
    recovery line between the suction peak and the first point settled on the level
    reaches the level."""
    level = float(np.median(cp[i0 : j0 + 1]))
    gap = np.abs(cp[i0 : j0 + 1] - level)
    inside = np.flatnonzero(gap <= PLATEAU_ONSET_BAND * band)
    settled = i0 + (int(inside[0]) if inside.size else int(np.argmin(gap)))
    onset = float(s[settled])
    if settled > peak:
        slope = np.diff(cp[peak : settled + 1]) / np.diff(s[peak : settled + 1])
        k = int(np.argmax(slope))
        if slope[k] > 0.0:
            a = peak + k
            onset = min(max(float(s[a] + (level - cp[a]) / slope[k]), float(s[a])), onset)
    tol = 1e-9 * float(s[-1] - s[0])
    return onset, int(np.searchsorted(s, onset - tol, side="left"))


def find_plateau(s: F64, cp: F64, x: F64, y: F64) -> Plateau | None:
    """The base-pressure plateau of one side (rules (a) to (c) of the module), or None.

    Parameters
    ----------
    s : array
        Arc length from the side's origin, increasing [length unit].
    cp : array
        Pressure coefficient at each point [-].
    x, y : array
        The wall contour at each point [length unit].

    Returns
    -------
    Plateau or None
    """
    found = _stretches(s, cp)
    if found is None:
        return None
    _, starts, ends, band = found
    length = float(s[-1] - s[0])
    angle = _tangent_angle(x, y)
    incoming = angle[starts - 1]
    turning = np.degrees(np.abs(angle[np.maximum(ends - 1, starts - 1)] - incoming))
    ok = (
        (ends - starts >= PLATEAU_MIN_POINTS - 1)
        & (s[ends] - s[starts] >= PLATEAU_MIN_LENGTH * length)
        & (turning >= PLATEAU_MIN_TURNING)
    )
    if not ok.any():
        return None
    k = int(np.argmax(ok))
    i0, j0 = int(starts[k]), int(ends[k])
    onset, m = _onset(s, cp, _peak(cp, band), i0, j0, band)
    turned = math.degrees(abs(float(angle[max(j0 - 1, m - 1)] - angle[m - 1])))
    if (
        j0 - m < PLATEAU_MIN_POINTS - 1
        or s[j0] - onset < PLATEAU_MIN_LENGTH * length
        or turned < PLATEAU_MIN_TURNING
    ):
        return None
    return Plateau(
        onset_s=onset,
        onset_index=m,
        cp=float(np.mean(cp[m : j0 + 1])),
        end_s=float(s[j0]),
        turning=turned,
    )


def cut_side(side: SideInput, onset_s: float) -> SideInput | None:
    """``side`` ended at ``onset_s``: the points before it, then one interpolated there
    (linearly in s: Ue, radius, x, y). None when fewer than three points would remain."""
    s = side.s
    tol = 1e-9 * float(s[-1] - s[0])
    keep = int(np.searchsorted(s, onset_s - tol, side="left"))
    if keep >= s.size:
        return None
    if keep + 1 < PLATEAU_MIN_POINTS:
        return None

    def cut(values: F64) -> F64:
        return np.append(values[:keep], np.interp(onset_s, s, values))

    return replace(
        side,
        s=np.append(s[:keep], onset_s),
        ue=cut(side.ue),
        r=cut(side.r),
        x=cut(side.x) if side.x is not None else None,
        y=cut(side.y) if side.y is not None else None,
    )
