"""Supplied laminar station values in the compiled march (the finite-difference method).

Contents
--------
- ``stations``: theta^2, lambda, H and Re_theta at the stations of a side from supplied
  station values theta and H (``ibl.laminar_fd.solve_side``: Keller's box scheme of
  ``ibl.finite_difference``, solved before the kernel runs).
- ``_supplied_at``: the same state at any arc length, between stations included.
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

from ibl.edge import _hermite

F64 = NDArray[np.float64]


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
def stations(
    uk: F64,
    due: F64,
    n: int,
    nu: float,
    sup: F64,
    theta2: F64,
    lam: F64,
    h_lam: F64,
    re_lam: F64,
) -> None:
    """theta^2, lambda = theta^2 Ue'/nu, H and Re_theta at the stations from the
    supplied theta (row 0 of ``sup``) and H (row 1)."""
    for i in range(n):
        theta2[i] = sup[0, i] * sup[0, i]
        lam[i] = theta2[i] * due[i] / nu
        h_lam[i] = sup[1, i]
        re_lam[i] = uk[i] * sup[0, i] / nu
