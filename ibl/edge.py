"""The edge velocity and body radius of a side between its stations (compiled).

Contents
--------
- ``_derivative``: node gradients of Ue or r, three-point and second order on any
  spacing (``_stencil``), limited by Fritsch & Carlson's rule (``_limit``,
  ``_limit_interval``) so that the cubic Hermite interpolant does not overshoot.
- ``_hermite``: the cubic Hermite value and slope inside one interval; ``_edge``: Ue, Ue',
  r and r' at a fraction of an interval (what every march step sees).
- ``_interp``: linear interpolation at one position; ``_radius_peak``: the last station of
  largest radius of a body of revolution.

Shared by the laminar and turbulent parts of the march (``ibl.kernel``,
``ibl.step_control``) and by the backward sweep (``ibl.sensitivity``, through the names
``ibl.kernel`` re-exports).
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

F64 = NDArray[np.float64]


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
def _derivative(s: F64, f: F64, n: int, out: F64) -> None:
    """Three-point, second-order derivative on a non-uniform grid (one-sided at the ends),
    then limited so that the Hermite interpolant does not overshoot."""
    _stencil(s, f, n, out)
    _limit(s, f, n, out)


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
