"""The scalar outputs of one marched side in one compiled pass.

Contents
--------
- ``side_scalars(...)``: positions of events on the contour, the margins to separation,
  the mesh advice's positions, the friction drag and the count of undefined Cf values of
  one side, from its ``SideState`` arrays and its ``SideInput`` geometry.
- ``Scalars``: the names of what ``side_scalars`` returns, in order.
- ``station_columns(...)``: the float station arrays of one side (``s`` to ``delta99``,
  with x and y on a contour) as the rows of one array, for one conversion to lists or
  encoded fragments.

The result building (``ibl.analysis``) needs a few dozen numbers per side, each a small
reduction of the station arrays; as numpy calls they cost more than the march itself.
This pass takes them in one call. Each step is the twin of a numpy definition and does
the same floating-point operations in the same order, so the results are the same to the
bit: ``ibl.analysis._xy_at`` (position on the contour), ``ibl.analysis._margins`` (the
margins), ``ibl.drag.friction_drag`` (through ``ibl.drag.friction_drag_compiled``);
``tests/test_compiled_results.py`` checks each against its definition.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numba
import numpy as np
from numpy.typing import NDArray

from ibl.drag import friction_drag_compiled

__all__ = ["Scalars", "side_scalars", "station_columns", "xy_at_compiled"]

F64 = NDArray[np.float64]


class Scalars(NamedTuple):
    """What ``side_scalars`` returns (x and y are NaN where the side has no contour or
    the position is not finite; an index is -1 where there is none)."""

    transition_x: float
    transition_y: float
    laminar_separation_x: float
    laminar_separation_y: float
    separation_x: float
    separation_y: float
    plateau_x: float
    plateau_y: float
    thin_layer_x: float
    thin_layer_y: float
    laminar_count: int  # stations before the first turbulent one
    lambda_index: int  # the laminar margin: smallest finite lambda (first of equals)
    lambda_value: float
    lambda_s: float  # its s + offset
    h_index: int  # the turbulent margin: largest finite H (first of equals)
    h_value: float
    h_s: float
    friction: float  # NaN where ``friction_drag`` gives None
    cf_missing: int  # NaN values of Cf
    cf_first_missing: int  # index of the first (-1 if none)
    u_tau_s: float  # s + offset, x and y at the largest u_tau (NaN without one)
    u_tau_x: float
    u_tau_y: float
    thickness: float  # largest delta99 and its s + offset
    thickness_s: float
    eddy_ratio_s: float  # s + offset at the largest eddy-viscosity ratio


@numba.njit(cache=True, error_model="numpy")
def xy_at_compiled(
    side_s: F64, x: F64, y: F64, at: float
) -> tuple[float, float]:  # pragma: no cover - compiled
    """Twin of ``ibl.analysis._xy_at`` on a contour side: x and y at arc length ``at``
    (finite) by linear interpolation between the stations about it."""
    last = side_s.size - 1
    i = int(np.searchsorted(side_s, at))
    if i < 1:
        i = 1
    if i > last:
        i = last
    s0, s1 = side_s[i - 1], side_s[i]
    t = (at - s0) / (s1 - s0)
    # min(max(t, 0.0), 1.0) as Python takes it (the first argument on a tie)
    if 0.0 > t:
        t = 0.0
    if 1.0 < t:
        t = 1.0
    x0, x1 = x[i - 1], x[i]
    y0, y1 = y[i - 1], y[i]
    return x0 + (x1 - x0) * t, y0 + (y1 - y0) * t


@numba.njit(cache=True, error_model="numpy")
def _xy(
    contour: bool, side_s: F64, x: F64, y: F64, at: float
) -> tuple[float, float]:  # pragma: no cover - compiled
    if not contour or not math.isfinite(at):
        return math.nan, math.nan
    return xy_at_compiled(side_s, x, y, at)


@numba.njit(cache=True, error_model="numpy")
def side_scalars(
    side_s: F64,
    side_x: F64,
    side_y: F64,
    side_r: F64,
    contour: bool,
    axisymmetric: bool,
    offset: float,
    count: int,
    s: F64,
    ue: F64,
    shape_factor: F64,
    cf: F64,
    turbulent: NDArray[np.bool_],
    thwaites_lambda: F64,
    delta99: F64,
    positions: tuple[float, float, float, float, float],
    max_u_tau: float,
    u_tau_index: int,
    thickness_index: int,
    eddy_ratio_index: int,
) -> tuple:  # type: ignore[type-arg]  # pragma: no cover - compiled
    """The scalars of one side (``Scalars``, in order).

    ``side_*`` are the side's input arrays (x and y empty without a ``contour``), the
    next ones its marched arrays of ``count`` stations, ``positions`` the arc lengths of
    transition, laminar separation, separation, the plateau's onset and the thin-layer
    limit (NaN where there is none), then the indices of the largest u_tau, delta99 and
    eddy-viscosity ratio (``SideState``).
    """
    tx, ty = _xy(contour, side_s, side_x, side_y, positions[0])
    lx, ly = _xy(contour, side_s, side_x, side_y, positions[1])
    sx, sy = _xy(contour, side_s, side_x, side_y, positions[2])
    px, py = _xy(contour, side_s, side_x, side_y, positions[3])
    hx, hy = _xy(contour, side_s, side_x, side_y, positions[4])

    turbulent_count = 0
    for k in range(count):
        if turbulent[k]:
            turbulent_count += 1
    laminar_count = count - turbulent_count
    # The margins: the first of the smallest finite lambda over the laminar stations, the
    # first of the largest finite H over the turbulent ones (what ``_margins`` takes with
    # argmin/argmax and their NaN-ignoring forms).
    lambda_index = -1
    lambda_value = math.nan
    for k in range(laminar_count):
        v = thwaites_lambda[k]
        if math.isfinite(v) and (lambda_index < 0 or v < lambda_value):
            lambda_index, lambda_value = k, v
    lambda_s = s[lambda_index] + offset if lambda_index >= 0 else math.nan
    h_index = -1
    h_value = math.nan
    for k in range(laminar_count, count):
        v = shape_factor[k]
        if math.isfinite(v) and (h_index < 0 or v > h_value):
            h_index, h_value = k, v
    h_s = s[h_index] + offset if h_index >= 0 else math.nan

    friction = math.nan
    if count >= 2:
        x = side_x[:count] if contour else s
        friction = friction_drag_compiled(s, x, ue, cf, side_r[:count], axisymmetric)
    cf_missing = 0
    cf_first_missing = -1
    for k in range(cf.size):
        if math.isnan(cf[k]):
            if cf_missing == 0:
                cf_first_missing = k
            cf_missing += 1

    u_tau_s = u_tau_x = u_tau_y = math.nan
    if math.isfinite(max_u_tau):
        u_tau_s = s[u_tau_index] + offset
        if contour:
            u_tau_x, u_tau_y = side_x[u_tau_index], side_y[u_tau_index]
    thickness = thickness_s = eddy_ratio_s = math.nan
    if count > 0:
        thickness = delta99[thickness_index]
        thickness_s = s[thickness_index] + offset
        eddy_ratio_s = s[eddy_ratio_index] + offset
    return (
        tx,
        ty,
        lx,
        ly,
        sx,
        sy,
        px,
        py,
        hx,
        hy,
        laminar_count,
        lambda_index,
        lambda_value,
        lambda_s,
        h_index,
        h_value,
        h_s,
        friction,
        cf_missing,
        cf_first_missing,
        u_tau_s,
        u_tau_x,
        u_tau_y,
        thickness,
        thickness_s,
        eddy_ratio_s,
    )


@numba.njit(cache=True, error_model="numpy")
def station_columns(
    contour: bool,
    offset: float,
    count: int,
    s: F64,
    side_x: F64,
    side_y: F64,
    ue: F64,
    theta: F64,
    shape_factor: F64,
    re_theta: F64,
    delta99: F64,
) -> F64:  # pragma: no cover - compiled
    """The float station arrays of a side as the rows of one C-ordered array of ``count``
    columns, in the order of ``ibl.schema.STATION_QUANTITIES`` without cf and regime: s +
    ``offset``, x and y (the side's first ``count`` points; rows left out without a
    ``contour``), Ue, theta, delta* = theta H, H, Re_theta, delta99.

    Twin of ``ibl.analysis._column`` (the same operations element by element: one
    addition for s, one product for delta*, copies for the rest)."""
    rows = 9 if contour else 7
    out = np.empty((rows, count))
    row = 0
    for k in range(count):
        out[0, k] = s[k] + offset
    row = 1
    if contour:
        for k in range(count):
            out[1, k] = side_x[k]
            out[2, k] = side_y[k]
        row = 3
    for k in range(count):
        out[row, k] = ue[k]
        out[row + 1, k] = theta[k]
        out[row + 2, k] = theta[k] * shape_factor[k]
        out[row + 3, k] = shape_factor[k]
        out[row + 4, k] = re_theta[k]
        out[row + 5, k] = delta99[k]
    return out
