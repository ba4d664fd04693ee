"""Separated regions already present in the input: the base-pressure plateau.

Contents
--------
- ``find_plateau(s, cp, x, y)``: the constant-pressure region downstream of the suction
  peak of one side, or None.
- ``side_plateau(s, ue, x, y, mach)``: the same from the edge velocity.
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
the steepest recovery segment, extended, reaches the level (between input points, and no
later than the settled point); where Cp
does not recover before the level (separation at a corner, at the suction peak itself), the
onset is that point. The end is the last input point within the band.

The search is pure; the scans over the points (the wall's direction, the longest stretch
within the band from every start, the first stretch that meets the rules) are compiled
loops, as the input scans of ``ibl.prepare`` are, because their vectorised forms cost more
than the march of the side.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numba
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
    "side_plateau",
]

F64 = NDArray[np.float64]
I64 = NDArray[np.int64]

#: Largest spread of Cp over a plateau, as a fraction of the side's Cp range (stagnation to
#: suction peak) [-]. Rule of practice: measured subcritical base pressures stay within
#: about 0.1 to 0.15 in Cp over the rear of a cylinder, against a range of about 2.2
#: [recalled, not re-checked].
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
        if ue.ndim == 1:
            return _bernoulli_cp(ue)
        return np.asarray(1.0 - ue**2, dtype=np.float64)
    t_ratio = 1.0 + 0.5 * (gamma - 1.0) * mach**2 * (1.0 - ue**2)
    p_ratio = np.maximum(t_ratio, 0.0) ** (gamma / (gamma - 1.0))
    return np.asarray((p_ratio - 1.0) / (0.5 * gamma * mach**2), dtype=np.float64)


@numba.njit(cache=True, error_model="numpy")
def _bernoulli_cp(ue: F64) -> F64:
    """Cp = 1 - (Ue/U_inf)^2 at each point (Bernoulli): ``1.0 - ue**2``, compiled."""
    cp = np.empty(ue.size)
    for i in range(ue.size):
        cp[i] = 1.0 - ue[i] * ue[i]
    return cp


@numba.njit(cache=True, error_model="numpy")
def _reach(values: F64, band: float, first: int) -> I64:
    """For every start i >= ``first``: the last index j such that the spread (max - min) of
    ``values[i..j]`` is at most ``band``.

    The last index never decreases with the start, so two pointers with monotonic queues of
    the running maximum and minimum find every one in a single pass: O(n). Compiled, as the
    scans of ``ibl.prepare`` are: the vectorised form (binary lifting on sparse tables) cost
    0.2 to 0.3 ms per side of a hundred points, more than the march itself.
    """
    n = values.size
    out = np.empty(n - first, dtype=np.int64)
    q_max = np.empty(n, dtype=np.int64)  # indices of decreasing values (front: the maximum)
    q_min = np.empty(n, dtype=np.int64)  # indices of increasing values (front: the minimum)
    h_max = t_max = h_min = t_min = 0
    j = first - 1  # the last index in the window
    for i in range(first, n):
        while h_max < t_max and q_max[h_max] < i:
            h_max += 1
        while h_min < t_min and q_min[h_min] < i:
            h_min += 1
        while j + 1 < n:
            v = values[j + 1]
            top = max(values[q_max[h_max]], v) if h_max < t_max else v
            bottom = min(values[q_min[h_min]], v) if h_min < t_min else v
            if top - bottom > band and j >= i:
                break
            j += 1
            while t_max > h_max and values[q_max[t_max - 1]] <= v:
                t_max -= 1
            q_max[t_max] = j
            t_max += 1
            while t_min > h_min and values[q_min[t_min - 1]] >= v:
                t_min -= 1
            q_min[t_min] = j
            t_min += 1
        out[i - first] = j
    return out


@numba.njit(cache=True, error_model="numpy")
def _tangent_angle(x: F64, y: F64) -> F64:
    """Direction of each segment (point m to m + 1), unwrapped: the first direction plus the
    running sum of the turns between segments, each in (-pi, pi] [rad]."""
    n = x.size - 1
    out = np.empty(n)
    out[0] = np.arctan2(y[1] - y[0], x[1] - x[0])
    for m in range(1, n):
        ax, ay = x[m] - x[m - 1], y[m] - y[m - 1]
        bx, by = x[m + 1] - x[m], y[m + 1] - y[m]
        out[m] = out[m - 1] + np.arctan2(ax * by - ay * bx, ax * bx + ay * by)
    return out


@numba.njit(cache=True, error_model="numpy")
def _first_stretch(
    s: F64, cp: F64, angle: F64, band: float, first: int, min_length: float, min_turning: float
) -> tuple[int, int]:
    """The first stretch from a start at or after ``first`` that meets rules (a) to (c):
    (start, end), or (-1, -1).  ``min_turning`` in radians."""
    n = s.size
    lo = hi = angle[first - 1]
    for m in range(first - 1, angle.size):
        lo, hi = min(lo, angle[m]), max(hi, angle[m])
    if hi - lo < min_turning:
        return -1, -1  # no stretch after the suction peak can turn the wall enough
    ends = _reach(cp, band, first)
    for i in range(first, n):
        j = ends[i - first]
        if j - i < PLATEAU_MIN_POINTS - 1 or s[j] - s[i] < min_length:
            continue
        if abs(angle[max(j - 1, i - 1)] - angle[i - 1]) >= min_turning:
            return i, j
    return -1, -1


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


@numba.njit(cache=True, error_model="numpy")
def _search(s: F64, cp: F64, x: F64, y: F64, turning: float) -> tuple[float, int, int, int, F64]:
    """The band, the suction peak, the first stretch after it that meets rules (a) to (c)
    (``_first_stretch``; -1, -1 when none) and the tangent angles, in one compiled call;
    ``turning`` in radians.  At least ``PLATEAU_MIN_POINTS`` points.

    The suction peak is the first point within ``PLATEAU_ONSET_BAND`` times the band of
    the smallest Cp (so that scatter on a plateau as low as the peak does not move it
    there)."""
    n = s.size
    low, high = cp.min(), cp.max()
    span = high - low
    band = PLATEAU_BAND * span
    if not span > 0.0:
        return band, 0, -1, -1, np.empty(0)
    threshold = low + PLATEAU_ONSET_BAND * band
    peak = 0
    for i in range(n):
        if cp[i] <= threshold:
            peak = i
            break
    first = max(peak, 1)
    if first > n - PLATEAU_MIN_POINTS:
        return band, peak, -1, -1, np.empty(0)
    angle = _tangent_angle(x, y)
    length = s[n - 1] - s[0]
    i0, j0 = _first_stretch(s, cp, angle, band, first, PLATEAU_MIN_LENGTH * length, turning)
    return band, peak, i0, j0, angle


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
    if s.size < PLATEAU_MIN_POINTS:
        return None
    band, peak, i0, j0, angle = _search(s, cp, x, y, math.radians(PLATEAU_MIN_TURNING))
    return _plateau(s, cp, band, peak, i0, j0, angle)


def side_plateau(s: F64, ue: F64, x: F64, y: F64, mach: float = 0.0) -> Plateau | None:
    """``find_plateau(s, cp_from_edge_velocity(ue, mach), x, y)``: the plateau of a side
    given by its edge velocity; at M = 0 the Cp and the search come from one compiled call
    (``_search_ue``)."""
    if s.size < PLATEAU_MIN_POINTS:
        return None
    if mach > 0.0:
        return find_plateau(s, cp_from_edge_velocity(ue, mach), x, y)
    band, peak, i0, j0, angle, cp = _search_ue(s, ue, x, y, math.radians(PLATEAU_MIN_TURNING))
    return _plateau(s, cp, band, peak, i0, j0, angle)


@numba.njit(cache=True, error_model="numpy")
def _search_ue(
    s: F64, ue: F64, x: F64, y: F64, turning: float
) -> tuple[float, int, int, int, F64, F64]:
    """``_search`` on Cp = 1 - Ue^2 (``_bernoulli_cp``), and that Cp."""
    cp = _bernoulli_cp(ue)
    band, peak, i0, j0, angle = _search(s, cp, x, y, turning)
    return band, peak, i0, j0, angle, cp


def _plateau(
    s: F64, cp: F64, band: float, peak: int, i0: int, j0: int, angle: F64
) -> Plateau | None:
    """The plateau of the stretch [i0, j0] ``_search`` found (none when i0 < 0), if it
    still meets rules (b) and (c) from its onset."""
    if i0 < 0:
        return None
    length = float(s[-1] - s[0])
    onset, m = _onset(s, cp, peak, i0, j0, band)
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
