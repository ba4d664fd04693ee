"""Thwaites' laminar method in the compiled march: scalar twins and the layer of a side.

Contents
--------
- Scalar twins of ``ibl.laminar``'s closures: ``shear`` (l(lambda)) and ``shape_factor``
  (H(lambda)), Cebeci & Bradshaw's (code 0) or White's (code 1); ``tests/test_kernel.py``
  checks each against its definition.
- ``layer``: Thwaites' integral (1949), planar or axisymmetric (Rott & Crabtree 1952),
  and theta^2, lambda, H and Re_theta at every station of a side (the method's entry in
  ``ibl.methods``).
- ``_laminar_at``: the same state at any arc length, between stations included.
"""

from __future__ import annotations

import numba
import numpy as np
from numpy.typing import NDArray

from ibl.edge import _hermite
from ibl.laminar import GAUSS_NODES, GAUSS_WEIGHTS, LAMBDA_MAX, THWAITES_A, THWAITES_B

F64 = NDArray[np.float64]

_GN = GAUSS_NODES.copy()
_GW = GAUSS_WEIGHTS.copy()


@numba.njit(cache=True, error_model="numpy")
def shear(closure: int, lam: float) -> float:
    """Twin of ``ibl.laminar`` l(lambda) closures."""
    if closure == 1:
        return max(lam + 0.09, 0.0) ** 0.62
    if lam >= 0.0:
        return 0.22 + 1.57 * lam - 1.8 * lam * lam
    return 0.22 + 1.402 * lam + 0.018 * lam / (lam + 0.107)


@numba.njit(cache=True, error_model="numpy")
def shape_factor(closure: int, lam: float) -> float:
    """Twin of ``ibl.laminar`` H(lambda) closures."""
    if closure == 1:
        z = 0.25 - lam
        return 2.0 + z * (4.14 + z * (-83.5 + z * (854.0 + z * (-3337.0 + z * 4576.0))))
    if lam >= 0.0:
        return 2.61 - 3.75 * lam + 5.24 * lam * lam
    return 2.088 + 0.0731 / (lam + 0.14)


@numba.njit(cache=True, error_model="numpy")
def _laminar_at(
    layer: tuple[F64, F64, F64, F64, F64, F64],
    params: tuple[int, float, float, float, bool],
    at: float,
) -> tuple[float, float, float, float]:
    """theta^2, lambda, Re_theta and Ue at any arc length, between stations included.

    Thwaites' integral up to the station before ``at`` is completed by four-point Gauss
    quadrature of the Hermite interpolants over the rest of the interval.  ``layer`` holds
    the side's s, Ue, Ue', r, r' and the cumulative integral at the stations; ``params``
    its station count, start term theta0^2 r0^2 Ue0^6, start theta^2, nu and whether it
    is axisymmetric.
    """
    sk, uk, due, rk, dr, integral = layer
    n, c0, start_theta2, nu, axisym = params
    j = 0
    while j < n - 2 and sk[j + 1] < at:
        j += 1
    h = sk[j + 1] - sk[j]
    t_end = min(max((at - sk[j]) / h, 0.0), 1.0)
    acc = 0.0
    for q in range(4):
        u, _ = _hermite(_GN[q] * t_end, h, uk[j], uk[j + 1], due[j], due[j + 1])
        u = max(u, 0.0)
        w = u**4 * u
        if axisym:
            rr, _ = _hermite(_GN[q] * t_end, h, rk[j], rk[j + 1], dr[j], dr[j + 1])
            w *= rr * rr
        acc += _GW[q] * w
    total = integral[j] + acc * h * t_end
    u, du = _hermite(t_end, h, uk[j], uk[j + 1], due[j], due[j + 1])
    u = max(u, 0.0)
    rr = 1.0
    if axisym:
        rr, _ = _hermite(t_end, h, rk[j], rk[j + 1], dr[j], dr[j + 1])
    weight = rr * rr * u**THWAITES_B
    theta2 = (c0 + THWAITES_A * nu * total) / weight if weight > 0.0 else start_theta2
    return theta2, theta2 * du / nu, u * np.sqrt(theta2) / nu, u


@numba.njit(cache=True, error_model="numpy")
def layer(
    sk: F64,
    uk: F64,
    due: F64,
    rk: F64,
    dr: F64,
    n: int,
    axisym: bool,
    stagnation: bool,
    slope: float,
    theta_in: float,
    nu: float,
    closure: int,
    lam_sep: float,
    supplied: bool,
    integral: F64,
    theta2: F64,
    lam: F64,
    h_lam: F64,
    re_lam: F64,
) -> tuple[float, float]:
    """Thwaites' integral of r^2 Ue^5 (cumulative, into ``integral``) by four-point Gauss
    quadrature on the Hermite interpolants, and, unless ``supplied``, theta^2, lambda, H
    (closure ``closure``, lambda clipped to [``lam_sep``, ``LAMBDA_MAX``]) and Re_theta at
    the stations.  The start: the analytic stagnation-point value (``stagnation``, with
    the slope dUe/ds; on the axis of a body of revolution Rott & Crabtree's), else the
    inflow theta.  Returns theta^2 at the start and the start term theta0^2 r0^2 Ue0^6.
    """
    length = sk[n - 1] - sk[0]
    integral[0] = 0.0
    for i in range(n - 1):
        h = sk[i + 1] - sk[i]
        acc = 0.0
        for q in range(4):
            u, _ = _hermite(_GN[q], h, uk[i], uk[i + 1], due[i], due[i + 1])
            u = max(u, 0.0)
            w = u**4 * u
            if axisym:
                rr, _ = _hermite(_GN[q], h, rk[i], rk[i + 1], dr[i], dr[i + 1])
                w *= rr * rr
            acc += _GW[q] * w
        integral[i + 1] = integral[i] + h * acc
    if stagnation:
        on_axis = axisym and rk[0] <= 1e-9 * length
        power = THWAITES_B + 2.0 if on_axis else THWAITES_B
        start_theta2 = THWAITES_A * nu / (power * slope)
    else:
        start_theta2 = theta_in * theta_in
    start_weight = rk[0] ** 2 * uk[0] ** THWAITES_B
    if not supplied:
        for i in range(n):
            weight = rk[i] ** 2 * uk[i] ** THWAITES_B
            if i == 0 or weight <= 0.0:
                theta2[i] = start_theta2
            else:
                theta2[i] = (start_theta2 * start_weight + THWAITES_A * nu * integral[i]) / weight
            lam[i] = theta2[i] * due[i] / nu
            lc = min(max(lam[i], lam_sep), LAMBDA_MAX)
            h_lam[i] = shape_factor(closure, lc)
            re_lam[i] = uk[i] * np.sqrt(theta2[i]) / nu
    return start_theta2, start_theta2 * start_weight
