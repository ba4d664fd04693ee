"""Smoothing of the edge-velocity data, and an estimate of its noise.

Contents
--------
- ``smooth(t, q, penalty, periodic)``: a penalised cubic B-spline (P-spline with the
  exact curvature penalty) on normalised arc length, with the penalty fixed or chosen by
  generalised cross-validation (GCV) over a grid, in bounded time for any point count.
- ``noise_estimate(s, q)``: a robust estimate of the point-to-point noise of q.
- ``noise_at_most(s, q, sigma)``: whether that estimate is certainly at most sigma, told
  cheaply.
- ``PENALTY_MAX``, ``PENALTY_GRID``, ``MAX_BASIS``: the admissible penalties and the
  resolution of the spline.

The penalty is defined on normalised variables so that its meaning does not depend on
units or on the number of points: with t = (s - s_first) / L in [0, 1] (L the arc length of
the data) and q scaled by its largest value, the smoothed curve f minimises

    (1/n) sum_i (q_i - f(t_i))^2 + penalty * integral_0^1 f''(t)^2 dt.

A sinusoid of wavelength w (as a fraction of L) is kept with the factor
1 / (1 + penalty (2 pi / w)^4), so the penalty at which half of it is removed is
(w / 2 pi)^4 (the transfer function of a smoothing spline, e.g. Silverman 1984,
Ann. Statist. 12, 898-916 [recalled, not re-checked]).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Any

import numba
import numpy as np
from numpy.typing import NDArray

from ibl.schema import SMOOTHING_MAX

__all__ = [
    "MAX_BASIS",
    "PENALTY_GRID",
    "PENALTY_MAX",
    "Smoothed",
    "noise_at_most",
    "noise_estimate",
    "smooth",
]

F64 = NDArray[np.float64]

#: Largest admissible penalty (``ibl.schema.SMOOTHING_MAX``): half of a sinusoid of
#: wavelength 0.11 L is removed (2 pi penalty^(1/4) = 0.11); the stagnation region and
#: suction peaks of a section are flattened beyond use well before. Chosen here.
PENALTY_MAX = SMOOTHING_MAX
#: Penalties tried by GCV (log-spaced): from none to speak of (a wavelength of 6e-4 L
#: halved: below the spacing of the finest admissible data) up to PENALTY_MAX.
PENALTY_GRID = np.logspace(-20.0, np.log10(PENALTY_MAX), 131)
#: Most B-spline basis functions: bounds the cost (dense Cholesky and eigenproblems of this
#: size, about 20 ms on one core) for any number of points; detail finer than about
#: L / MAX_BASIS is smoothed away whatever the penalty. Chosen here.
MAX_BASIS = 250
#: Knots are placed half at index quantiles of the points, half uniformly in t, so that
#: they follow clustered points but are never closer than L / (2 * basis count).
KNOT_UNIFORM_SHARE = 0.5
#: Relative ridge added to the Gram matrix B'B before its Cholesky factor (knot intervals
#: without points make it singular); far below the data's precision.
RIDGE = 1e-10
#: Median absolute deviation to standard deviation for Gaussian noise (1 / Phi^-1(3/4)).
MAD_TO_SIGMA = 1.4826


@dataclass(frozen=True, slots=True)
class Smoothed:
    """A smoothed curve: values at the points, the penalty used, and how it was chosen."""

    values: F64
    penalty: float
    chosen: bool  # by GCV
    at_limit: bool  # GCV wanted more smoothing than PENALTY_MAX allows
    undetermined: bool = False  # too few points for GCV: not smoothed


def _knots(t: F64, intervals: int) -> F64:
    """Knots 0 = tau_0 < ... < tau_intervals = 1, half quantiles of t, half uniform."""
    index = np.linspace(0.0, t.size - 1.0, intervals + 1)
    quantile = np.interp(index, np.arange(t.size), t)
    uniform = np.linspace(0.0, 1.0, intervals + 1)
    tau = KNOT_UNIFORM_SHARE * uniform + (1.0 - KNOT_UNIFORM_SHARE) * quantile
    tau[0], tau[-1] = 0.0, 1.0
    return np.asarray(tau, dtype=np.float64)


def _basis(t: F64, tau: F64, periodic: bool) -> tuple[Any, F64, int]:
    """The design matrix at t (sparse), the exact penalty matrix int B_i'' B_j'' dt, and the
    basis count, for cubic B-splines on the knots tau (periodic: wrapped, period 1)."""
    from scipy import sparse
    from scipy.interpolate import BSpline

    m = tau.size - 1
    if periodic:
        h = np.diff(tau)
        knots = np.concatenate((tau[-4:-1] - 1.0, tau, 1.0 + tau[1:4]))
        count = m
        if h.size < 3:  # pragma: no cover - at least 4 intervals are asked for
            raise ValueError("too few knots")
    else:
        knots = np.concatenate(([0.0] * 3, tau, [1.0] * 3))
        count = m + 3
    full = knots.size - 4
    design = BSpline.design_matrix(np.clip(t, 0.0, 1.0), knots, 3)
    # Curvature: f'' is linear on each interval, so two Gauss points per interval are exact.
    mid, half = 0.5 * (tau[1:] + tau[:-1]), 0.5 * np.diff(tau)
    g = 1.0 / np.sqrt(3.0)
    xq = np.concatenate((mid - g * half, mid + g * half))
    wq = np.concatenate((half, half))
    second = BSpline(knots, np.eye(full), 3).derivative(2)(xq)  # (quadrature points, full)
    if periodic:
        fold = sparse.csr_array(
            (np.ones(full), (np.arange(full), np.arange(full) % count)), shape=(full, count)
        )
        design = sparse.csr_array(design @ fold)
        second = second[:, :count] + np.pad(second[:, count:], ((0, 0), (0, 2 * count - full)))
    penalty = (second * wq[:, None]).T @ second
    return sparse.csr_array(design), np.asarray(penalty, dtype=np.float64), count


def smooth(t: F64, q: F64, penalty: float | None, periodic: bool) -> Smoothed:
    """Smooth q(t), t in [0, 1] non-decreasing, with a cubic P-spline.

    ``penalty`` None chooses it by GCV (Craven & Wahba 1979, Numer. Math. 31, 377-403) over
    ``PENALTY_GRID``; the trace of the hat matrix and the residual for every penalty come
    from one generalised eigenproblem (the Demmler-Reinsch basis). ``periodic`` treats
    t = 0 and t = 1 as the same point (a closed contour; q[-1] then repeats q[0]).

    Raises ``numpy.linalg.LinAlgError`` or ``ValueError`` where the algebra fails; the caller
    turns them into a case error.
    """
    from scipy import linalg  # loaded on first use: scipy is slow to import

    scale = float(np.max(np.abs(q)))
    if not scale > 0.0:
        return Smoothed(q.copy(), 0.0 if penalty is None else penalty, penalty is None, False)
    y = q / scale
    basis = Operator(t, periodic)  # the spline's basis and factors on these points
    points, design, chol = basis.points, basis.design, basis.chol
    vectors, eigen = basis.vectors, basis.eigen
    yy = y[:-1] if periodic else y
    z = vectors.T @ linalg.solve_triangular(chol, design.T @ yy, lower=True)

    def coefficients(lam: float) -> F64:
        shrunk = vectors @ (z / (1.0 + points * lam * eigen))
        return np.asarray(linalg.solve_triangular(chol.T, shrunk, lower=False))

    chosen = penalty is None
    at_limit = False
    if penalty is None:
        base = float(np.sum((yy - design @ coefficients(0.0)) ** 2))
        a = points * PENALTY_GRID[:, None] * eigen[None, :]
        shrink = a / (1.0 + a)
        rss = base + np.sum((z[None, :] * shrink) ** 2, axis=1)
        dof = points - np.sum(1.0 / (1.0 + a), axis=1)  # n - trace of the hat matrix
        with np.errstate(divide="ignore", invalid="ignore"):
            gcv = np.where(dof > 0.5, points * rss / dof**2, np.inf)
        best = int(np.argmin(gcv))
        if not np.isfinite(gcv[best]):
            # Too few points to tell noise from signal (even the largest penalty leaves
            # less than half a degree of freedom to the residual): left as given.
            return Smoothed(q.copy(), 0.0, True, False, undetermined=True)
        penalty = float(PENALTY_GRID[best])
        at_limit = best == PENALTY_GRID.size - 1
    values = design @ coefficients(penalty)
    if periodic:
        values = np.append(values, values[0])
    out = np.asarray(values * scale, dtype=np.float64)
    if not np.all(np.isfinite(out)):
        raise ValueError("the smoothed values are not finite")
    return Smoothed(out, penalty, chosen, at_limit)


class Operator:
    """The smoothing of ``smooth`` on the points t at a fixed penalty, as a linear operator
    on rows of values: the spline's basis and factors are built once, then ``rows`` applies
    it to any number of rows.

    The smoothing is linear in the values at a fixed penalty (its scale factor cancels), so
    each row comes out as ``smooth(t, row, penalty, periodic).values`` gives it, to
    rounding; a zero row gives zeros.  Used for the transpose of the smoothing in the
    derivatives (``ibl.sensitivity``), where the operator is the same for every quantity
    differentiated and every side of a case.
    """

    def __init__(self, t: F64, periodic: bool) -> None:
        from scipy import linalg

        self.periodic = periodic
        self.points = t.size - 1 if periodic else t.size
        count = min(self.points, MAX_BASIS)
        intervals = count if periodic else max(count - 3, 1)
        tt = t[:-1] if periodic else t
        design, curvature, count = _basis(tt, _knots(tt, intervals), periodic)
        gram = (design.T @ design).toarray()
        gram = 0.5 * (gram + gram.T)
        ridge = RIDGE * max(float(np.trace(gram)) / count, 1e-300)
        chol = linalg.cholesky(gram + ridge * np.eye(count), lower=True)
        inner = linalg.solve_triangular(chol, curvature, lower=True)
        inner = linalg.solve_triangular(chol, inner.T, lower=True)
        eigen, vectors = linalg.eigh(0.5 * (inner + inner.T))
        self.design, self.chol, self.vectors = design, chol, vectors
        self.eigen = np.maximum(eigen, 0.0)

    def rows(self, rows: F64, penalty: float) -> F64:
        """The smoothed values of each row of ``rows`` (shape (k, t.size))."""
        from scipy import linalg

        rows = np.atleast_2d(np.asarray(rows, dtype=np.float64))
        yy = rows[:, :-1] if self.periodic else rows  # (k, points)
        chol, vectors = self.chol, self.vectors
        z = vectors.T @ linalg.solve_triangular(chol, self.design.T @ yy.T, lower=True)
        shrunk = vectors @ (z / (1.0 + self.points * penalty * self.eigen)[:, None])
        values = (self.design @ linalg.solve_triangular(chol.T, shrunk, lower=False)).T
        if self.periodic:
            values = np.concatenate([values, values[:, :1]], axis=1)
        return np.asarray(values, dtype=np.float64)


@numba.njit(cache=True, error_model="numpy")
def _cubic_residuals(s: F64, q: F64, stride: int, out: F64) -> None:
    """Into ``out[i - 4]``, for points i = 4 .. n-5: |q_i - cubic through the points
    ``stride`` and ``2 stride`` places away on either side (nodes a, b, c, d)| divided by
    sqrt(1 + sum w^2), w the cubic's Lagrange weights at s_i (each the product of its three
    factors in node order)."""
    for i in range(4, s.size - 4):
        a, b, c, d = i - 2 * stride, i - stride, i + stride, i + 2 * stride
        si, sa, sb, sc, sd = s[i], s[a], s[b], s[c], s[d]
        w0 = (si - sb) / (sa - sb) * ((si - sc) / (sa - sc)) * ((si - sd) / (sa - sd))
        w1 = (si - sa) / (sb - sa) * ((si - sc) / (sb - sc)) * ((si - sd) / (sb - sd))
        w2 = (si - sa) / (sc - sa) * ((si - sb) / (sc - sb)) * ((si - sd) / (sc - sd))
        w3 = (si - sa) / (sd - sa) * ((si - sb) / (sd - sb)) * ((si - sc) / (sd - sc))
        gain = 1.0 + w0 * w0 + w1 * w1 + w2 * w2 + w3 * w3
        fit = 0.0 + w0 * q[a] + w1 * q[b] + w2 * q[c] + w3 * q[d]
        out[i - 4] = abs(q[i] - fit) / np.sqrt(gain)


@numba.njit(cache=True, error_model="numpy")
def _cubic_residual_medians(s: F64, q: F64) -> tuple[float, float, float]:
    """Median absolute residual of q at points 4 .. n-5 from the cubic through the points
    one and two places away on either side (stride 1), and from the one through the points
    two and four places away (stride 2), each residual divided by its noise gain
    sqrt(1 + sum w^2), w the cubic's interpolation weights; and the median absolute change
    of q between neighbouring points."""
    n = q.size
    out = np.empty((2, n - 8))
    _cubic_residuals(s, q, 1, out[0])
    _cubic_residuals(s, q, 2, out[1])
    step = np.abs(q[1:] - q[:-1])
    return float(np.median(out[0])), float(np.median(out[1])), float(np.median(step))


@numba.njit(cache=True, error_model="numpy")
def _fine_residual_median(s: F64, q: F64) -> float:
    """The first of ``_cubic_residual_medians``: the median absolute residual of the fine
    stencil (stride 1), each divided by its noise gain."""
    out = np.empty(q.size - 8)
    _cubic_residuals(s, q, 1, out)
    return float(np.median(out))


@numba.njit(cache=True, error_model="numpy")
def _fine_residual_median_above(s: F64, q: F64, limit: float) -> float:
    """``_fine_residual_median``, or ``limit`` where that median is certainly at most
    ``limit``: when more than half of the residuals are (none NaN), both middle values of
    the sorted residuals are, and so is their mean as rounded.  The median itself (a
    selection) is found only otherwise."""
    out = np.empty(q.size - 8)
    _cubic_residuals(s, q, 1, out)
    count = 0
    for i in range(out.size):
        if out[i] <= limit:
            count += 1
        elif not out[i] > limit:
            return float(np.median(out))  # NaN
    if count >= out.size // 2 + 1:
        return limit
    return float(np.median(out))


def _bound(fine: float) -> float:
    """The bound on the noise estimate from the fine stencil's median residual alone,
    sqrt(256 r1^2 / 255) with r1 = 1.4826 x median (see ``noise_at_most``)."""
    r1 = MAD_TO_SIGMA * fine
    return math.sqrt(max(256.0 * r1**2 / 255.0, 0.0))


def noise_at_most(s: F64, q: F64, sigma: float) -> bool:
    """Whether ``noise_estimate(s, q)[0] <= sigma`` is certain from the fine stencil's
    residuals alone (at about half the cost of the estimate).

    The estimate sqrt(max((256 r1^2 - r2^2) / 255, 0)) is at most sqrt(256 r1^2 / 255)
    whatever r2, also as computed: each rounded operation is monotonic, and subtracting
    r2^2 >= 0 cannot raise the rounded difference above the rounded 256 r1^2. False
    means only that the full estimate is needed.

    That bound rises with the median residual, also as rounded; below a median ``limit``
    at which it is at most sigma, counting the residuals at most ``limit`` tells the
    answer without the median (``_fine_residual_median_above``).
    """
    if q.size < 11:
        return sigma >= 0.0
    limit = _median_limit(sigma)
    if not limit > 0.0:
        return _bound(_fine_residual_median(s, q)) <= sigma
    return _bound(_fine_residual_median_above(s, q, limit)) <= sigma


@functools.lru_cache(maxsize=8)
def _median_limit(sigma: float) -> float:
    """The largest median residual (near it, from below) at which the bound of
    ``noise_at_most`` is at most sigma; 0 when there is none.  A function of the
    threshold alone (a constant of the callers), kept once computed."""
    limit = sigma / MAD_TO_SIGMA * math.sqrt(255.0 / 256.0)
    while limit > 0.0 and not _bound(limit) <= sigma:
        limit = math.nextafter(limit, 0.0)
    return max(limit, 0.0)


def noise_estimate(s: F64, q: F64) -> tuple[float, float]:
    """Robust noise estimate of q(s), and its ratio to the typical change between points.

    Each point is compared with the cubic through its four nearest neighbours (two on each
    side, on the actual spacing) and, a second time, with the cubic through the points two
    and four places away. Independent noise of standard deviation sigma leaves a residual
    of sigma sqrt(1 + sum w^2) in both (w the cubic's interpolation weights, by which each
    residual is divided); a smooth signal that the points resolve coarsely leaves one of
    order h^4 times its fourth derivative, 16 times larger on the wider stencil. The median
    of the absolute residuals times 1.4826 (sigma for Gaussian noise; the median ignores
    the few points at a kink such as a trailing edge or a clipped plateau) gives r1 and
    r2, and the noise is sigma^2 = (256 r1^2 - r2^2) / 255: the part of r1 that does not
    grow with the spacing (a Richardson extrapolation to zero spacing). The MAD of
    differenced data is common practice for noise estimates (e.g. Donoho & Johnstone 1994
    use the MAD of the finest wavelet coefficients [recalled, not re-checked]).

    The ratio is sigma / median |q_{i+1} - q_i|: noise matters for the march through the
    gradient dq/ds, whose point-to-point noise it measures.

    Returns (sigma, ratio); (0, 0) with fewer than 11 points.
    """
    n = q.size
    if n < 11:
        return 0.0, 0.0
    fine, wide, step = _cubic_residual_medians(s, q)
    fine, wide = MAD_TO_SIGMA * fine, MAD_TO_SIGMA * wide
    sigma = math.sqrt(max((256.0 * fine**2 - wide**2) / 255.0, 0.0))
    ratio = sigma / step if step > 0.0 else (math.inf if sigma > 0.0 else 0.0)
    return sigma, float(ratio)
