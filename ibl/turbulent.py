r"""Turbulent boundary layer: Head's entrainment method with a skin-friction law.

Contents
--------
- ``entrainment_shape_factor_head_1958`` (H1 from H) and ``shape_factor_from_h1_head_1958``
  (its inverse), Cebeci & Bradshaw's fits.
- ``entrainment_coefficient_head_1958``: F(H1).
- ``cf_ludwieg_tillmann_1949`` and ``cf_white_1974``: skin-friction laws (``SKIN_FRICTION``).
- ``march_head``: the compiled lockstep march of many sides (numba), written once for
  planar and axisymmetric layers.

Equations (Head 1958; axisymmetric form for thin layers, r the body radius):

.. math::
    \frac{1}{r}\frac{d(r\theta)}{ds} = \frac{C_f}{2} - (H + 2)\frac{\theta}{U_e}\frac{dU_e}{ds},
    \qquad \frac{1}{r U_e}\frac{d(r U_e \theta H_1)}{ds} = F(H_1)

The march integrates theta and H1; eliminating r from the second equation gives

.. math::
    \frac{dH_1}{ds} = \frac{F - H_1\,[C_f/2 - (H + 1)(\theta/U_e)\,dU_e/ds]}{\theta}
"""

from __future__ import annotations

from typing import Any, NamedTuple

import numba
import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "H1_SWITCH",
    "SKIN_FRICTION",
    "SkinFrictionLaw",
    "cf_ludwieg_tillmann_1949",
    "cf_white_1974",
    "entrainment_coefficient_head_1958",
    "entrainment_shape_factor_head_1958",
    "march_head",
    "shape_factor_from_h1_head_1958",
]

F64 = NDArray[np.float64]

#: H1 at which the inverse H(H1) switches branch. The two fits of H1(H) meet H = 1.6 at
#: H1 = 5.3094 and 5.2868 [derived]; switching at 5.3 leaves a step of 0.004 in H.
H1_SWITCH = 5.3
#: Smallest Re_theta given to White's law, whose log10(Re_theta) vanishes at 1.
_WHITE_MIN_RE_THETA = 20.0


def entrainment_shape_factor_head_1958(h: ArrayLike) -> F64:
    r"""Head's shape factor H1 = (delta - delta*)/theta from H, Cebeci & Bradshaw (1977) fit.

    .. math::
        H_1 = 3.3 + 0.8234 (H - 1.1)^{-1.287} \quad (H \le 1.6), \qquad
        H_1 = 3.3 + 1.5501 (H - 0.6778)^{-3.064} \quad (H > 1.6)

    Parameters
    ----------
    h : float or array
        Shape factor H = delta*/theta [-], H > 1.1.

    Returns
    -------
    array
        H1 [-].

    >>> round(float(entrainment_shape_factor_head_1958(1.4)), 3)
    7.176

    References
    ----------
    Head, M. R. (1958) ARC R&M 3152; fits from Cebeci & Bradshaw (1977).
    """
    h = np.asarray(h, dtype=np.float64)
    low = 3.3 + 0.8234 * np.maximum(h - 1.1, 1e-12) ** -1.287
    high = 3.3 + 1.5501 * np.maximum(h - 0.6778, 1e-12) ** -3.064
    return np.asarray(np.where(h <= 1.6, low, high), dtype=np.float64)


def shape_factor_from_h1_head_1958(h1: ArrayLike) -> F64:
    r"""Inverse of ``entrainment_shape_factor_head_1958``: H from H1.

    .. math::
        H = 1.1 + \left(\frac{H_1 - 3.3}{0.8234}\right)^{-1/1.287} \quad (H_1 \ge 5.3),
        \qquad
        H = 0.6778 + \left(\frac{H_1 - 3.3}{1.5501}\right)^{-1/3.064} \quad (H_1 < 5.3)

    Parameters
    ----------
    h1 : float or array
        Head's shape factor H1 [-], H1 > 3.3.

    Returns
    -------
    array
        H [-].

    >>> round(float(shape_factor_from_h1_head_1958(7.1757)), 3)
    1.4

    References
    ----------
    Head (1958); Cebeci & Bradshaw (1977). The switch at H1 = 5.3 is ours [derived].
    """
    excess = np.maximum(np.asarray(h1, dtype=np.float64) - 3.3, 1e-12)
    low = 1.1 + (excess / 0.8234) ** (-1.0 / 1.287)
    high = 0.6778 + (excess / 1.5501) ** (-1.0 / 3.064)
    return np.asarray(np.where(excess >= H1_SWITCH - 3.3, low, high), dtype=np.float64)


def entrainment_coefficient_head_1958(h1: ArrayLike) -> F64:
    r"""Head's entrainment function F(H1), Cebeci & Bradshaw (1977) fit.

    .. math:: F = 0.0306 (H_1 - 3)^{-0.6169}

    Parameters
    ----------
    h1 : float or array
        Head's shape factor H1 [-], H1 > 3.

    Returns
    -------
    array
        F = (1/Ue) d(Ue theta H1)/ds [-].

    >>> round(float(entrainment_coefficient_head_1958(7.1757)), 5)
    0.01268

    References
    ----------
    Head (1958) ARC R&M 3152; Cebeci & Bradshaw (1977).
    """
    h1 = np.asarray(h1, dtype=np.float64)
    return np.asarray(0.0306 * np.maximum(h1 - 3.0, 1e-12) ** -0.6169, dtype=np.float64)


def cf_ludwieg_tillmann_1949(h: ArrayLike, re_theta: ArrayLike) -> F64:
    r"""Turbulent skin friction, Ludwieg & Tillmann (1949).

    .. math:: C_f = 0.246 \times 10^{-0.678 H}\, Re_\theta^{-0.268}

    Parameters
    ----------
    h : float or array
        Shape factor H [-].
    re_theta : float or array
        Re_theta = Ue theta / nu [-], > 0.

    Returns
    -------
    array
        Cf = tau_w / (0.5 rho Ue^2) [-].

    Notes
    -----
    Fitted for about 1e3 < Re_theta < 4e4 [memory]; never zero, so separation is
    detected from H.

    >>> round(float(cf_ludwieg_tillmann_1949(1.4, 1e4)), 6)
    0.002686

    References
    ----------
    Ludwieg, H. & Tillmann, W. (1949) Ing.-Arch. 17, 288-299.
    """
    h = np.asarray(h, dtype=np.float64)
    return np.asarray(
        0.246 * 10.0 ** (-0.678 * h) * np.asarray(re_theta, dtype=np.float64) ** -0.268,
        dtype=np.float64,
    )


def cf_white_1974(h: ArrayLike, re_theta: ArrayLike) -> F64:
    r"""Turbulent skin friction, White's correlation.

    .. math:: C_f = \frac{0.3\, e^{-1.33 H}}{(\log_{10} Re_\theta)^{1.74 + 0.31 H}}

    Parameters
    ----------
    h : float or array
        Shape factor H [-].
    re_theta : float or array
        Re_theta [-]; values below 20 are raised to 20 (the law is singular at 1).

    Returns
    -------
    array
        Cf [-].

    >>> round(float(cf_white_1974(1.4, 1e4)), 6)
    0.002719

    References
    ----------
    White, F. M. (1974) Viscous Fluid Flow. McGraw-Hill.
    """
    h = np.asarray(h, dtype=np.float64)
    log_re = np.log10(
        np.maximum(np.asarray(re_theta, dtype=np.float64), _WHITE_MIN_RE_THETA)
    )
    return np.asarray(
        0.3 * np.exp(-1.33 * h) / log_re ** (1.74 + 0.31 * h), dtype=np.float64
    )


class SkinFrictionLaw(NamedTuple):
    """A turbulent skin-friction law: function, code in the compiled march, validity, source."""

    function: Any
    code: int
    validity: dict[str, tuple[float, float]]
    reference: str


#: Registry of turbulent skin-friction laws; the first is the default.
SKIN_FRICTION: dict[str, SkinFrictionLaw] = {
    "ludwieg_tillmann": SkinFrictionLaw(
        cf_ludwieg_tillmann_1949,
        0,
        {"re_theta": (1e3, 4e4)},
        "Ludwieg & Tillmann (1949) Ing.-Arch. 17, 288-299",
    ),
    "white": SkinFrictionLaw(
        cf_white_1974, 1, {"re_theta": (1e3, 1e6)}, "White (1974) Viscous Fluid Flow"
    ),
}


# ----------------------------------------------------------------------------- compiled march
# Scalar twins of the closures above, for the compiled march; a test checks that they agree.


@numba.njit(cache=True, fastmath=False)
def _h_from_h1(h1: float) -> float:
    excess = max(h1 - 3.3, 1e-12)
    if excess >= H1_SWITCH - 3.3:
        return 1.1 + (excess / 0.8234) ** (-1.0 / 1.287)
    return 0.6778 + (excess / 1.5501) ** (-1.0 / 3.064)


@numba.njit(cache=True)
def _entrainment(h1: float) -> float:
    return 0.0306 * max(h1 - 3.0, 1e-12) ** -0.6169


@numba.njit(cache=True)
def _cf(law: int, h: float, re_theta: float) -> float:
    if law == 0:
        return 0.246 * 10.0 ** (-0.678 * h) * max(re_theta, 1e-12) ** -0.268
    log_re = np.log10(max(re_theta, _WHITE_MIN_RE_THETA))
    return 0.3 * np.exp(-1.33 * h) / log_re ** (1.74 + 0.31 * h)


@numba.njit(cache=True)
def _hermite(
    t: float, h: float, f0: float, f1: float, d0: float, d1: float
) -> tuple[float, float]:
    """Cubic Hermite value and derivative at fraction t of an interval of length h."""
    t2 = t * t
    t3 = t2 * t
    value = (
        (2 * t3 - 3 * t2 + 1) * f0
        + (t3 - 2 * t2 + t) * h * d0
        + (-2 * t3 + 3 * t2) * f1
    ) + (t3 - t2) * h * d1
    slope = (
        (6 * t2 - 6 * t) * f0 / h
        + (3 * t2 - 4 * t + 1) * d0
        + (-6 * t2 + 6 * t) * f1 / h
        + (3 * t2 - 2 * t) * d1
    )
    return value, slope


@numba.njit(cache=True)
def _rhs(
    theta: float,
    h1: float,
    ue: float,
    due: float,
    r: float,
    dr: float,
    inv_nu: float,
    law: int,
    axisymmetric: bool,
) -> tuple[float, float]:
    h = _h_from_h1(h1)
    cf = _cf(law, h, ue * theta * inv_nu)
    grad = theta * due / ue
    dtheta = 0.5 * cf - (h + 2.0) * grad
    if axisymmetric:
        dtheta -= theta * dr / r
    dh1 = (_entrainment(h1) - h1 * (0.5 * cf - (h + 1.0) * grad)) / theta
    return dtheta, dh1


@numba.njit(cache=True)
def _edge(
    s: NDArray[np.float64],
    ue: NDArray[np.float64],
    due: NDArray[np.float64],
    r: NDArray[np.float64],
    dr: NDArray[np.float64],
    k: int,
    j: int,
    n: int,
    at: float,
) -> tuple[int, float, float, float, float]:
    """Interval index (moving forward from ``j``) and Hermite-interpolated Ue, Ue', r, r'."""
    while j < n - 2 and s[k, j + 1] < at:
        j += 1
    length = s[k, j + 1] - s[k, j]
    t = (at - s[k, j]) / length
    u, du = _hermite(t, length, ue[k, j], ue[k, j + 1], due[k, j], due[k, j + 1])
    rr, drr = _hermite(t, length, r[k, j], r[k, j + 1], dr[k, j], dr[k, j + 1])
    return j, u, du, rr, drr


@numba.njit(cache=True)
def march_head(
    s: NDArray[np.float64],
    ue: NDArray[np.float64],
    due: NDArray[np.float64],
    r: NDArray[np.float64],
    dr: NDArray[np.float64],
    count: NDArray[np.int64],
    start_s: NDArray[np.float64],
    theta0: NDArray[np.float64],
    h0: NDArray[np.float64],
    inv_nu: NDArray[np.float64],
    h_separation: NDArray[np.float64],
    law: NDArray[np.int64],
    axisymmetric: NDArray[np.bool_],
    max_step: NDArray[np.float64],
    theta_out: NDArray[np.float64],
    h_out: NDArray[np.float64],
    separation_s: NDArray[np.float64],
) -> int:
    """March Head's equations on many sides at once (sides along axis 0, stations axis 1).

    Each side starts at ``start_s`` (anywhere between its stations) with ``theta0`` and
    ``h0``.  The classical fourth-order Runge-Kutta scheme advances theta and H1 with
    steps limited to ``max_step``, to a tenth of the distance from the side's origin
    (resolving the 1/s terms of a stagnation or nose start), and to small relative
    changes of Ue, theta and H1 per step, so that the result does not depend on how
    finely the input is sampled.  Ue and r are cubic Hermite interpolants between
    stations.  Station values come from the cubic Hermite dense output of each step and
    go to ``theta_out`` and ``h_out`` (untouched before the start).  A side stops where H
    reaches ``h_separation`` (located by linear interpolation within the step); that arc
    length goes to ``separation_s`` (NaN if the side stays attached).  Returns the total
    number of steps taken (for work budgets).
    """
    steps = 0
    for k in range(s.shape[0]):
        separation_s[k] = np.nan
        n = count[k]
        origin = s[k, 0]
        end = s[k, n - 1]
        pos = start_s[k]
        if pos > end:
            continue
        theta = theta0[k]
        if h0[k] <= 1.6:
            h1 = 3.3 + 0.8234 * max(h0[k] - 1.1, 1e-12) ** -1.287
        else:
            h1 = 3.3 + 1.5501 * max(h0[k] - 0.6778, 1e-12) ** -3.064
        j = 0
        while j < n - 2 and s[k, j + 1] <= pos:
            j += 1
        m = j if s[k, j] >= pos else j + 1  # next station to fill
        j, u, du, rr, drr = _edge(s, ue, due, r, dr, k, j, n, pos)
        if not (u > 0.0 and rr > 0.0):
            separation_s[k] = pos
            continue
        f_theta, f_h1 = _rhs(
            theta, h1, u, du, rr, drr, inv_nu[k], law[k], axisymmetric[k]
        )
        while True:
            while m < n and s[k, m] <= pos:
                theta_out[k, m] = theta
                h_out[k, m] = _h_from_h1(h1)
                m += 1
            if m >= n or pos >= end:
                break
            step = min(max_step[k], end - pos)
            step = min(step, max(0.1 * (pos - origin), 1e-9 * (end - origin)))
            step = min(step, 0.05 * u / max(abs(du), 1e-300))
            step = min(step, 0.05 * theta / max(abs(f_theta), 1e-300))
            step = min(step, 0.02 * (h1 - 3.3) / max(abs(f_h1), 1e-300))
            if end - pos - step < 1e-9 * (end - origin):
                step = end - pos
            # Classical Runge-Kutta stages.
            jj, u2, du2, r2, dr2 = _edge(s, ue, due, r, dr, k, j, n, pos + 0.5 * step)
            th2 = theta + 0.5 * step * f_theta
            hh2 = h1 + 0.5 * step * f_h1
            ok = u2 > 0.0 and th2 > 0.0 and hh2 > 3.3 and r2 > 0.0
            if ok:
                a_theta, a_h1 = _rhs(
                    th2, hh2, u2, du2, r2, dr2, inv_nu[k], law[k], axisymmetric[k]
                )
                th3 = theta + 0.5 * step * a_theta
                hh3 = h1 + 0.5 * step * a_h1
                ok = th3 > 0.0 and hh3 > 3.3
            if ok:
                b_theta, b_h1 = _rhs(
                    th3, hh3, u2, du2, r2, dr2, inv_nu[k], law[k], axisymmetric[k]
                )
                jj, u4, du4, r4, dr4 = _edge(s, ue, due, r, dr, k, jj, n, pos + step)
                th4 = theta + step * b_theta
                hh4 = h1 + step * b_h1
                ok = u4 > 0.0 and th4 > 0.0 and hh4 > 3.3 and r4 > 0.0
            if ok:
                c_theta, c_h1 = _rhs(
                    th4, hh4, u4, du4, r4, dr4, inv_nu[k], law[k], axisymmetric[k]
                )
                theta_new = theta + step / 6.0 * (
                    f_theta + 2.0 * (a_theta + b_theta) + c_theta
                )
                h1_new = h1 + step / 6.0 * (f_h1 + 2.0 * (a_h1 + b_h1) + c_h1)
                ok = (
                    theta_new > 0.0 and h1_new > 3.3 and np.isfinite(theta_new + h1_new)
                )
            steps += 1
            if not ok:
                separation_s[k] = pos
                break
            h_old = _h_from_h1(h1)
            h_new = _h_from_h1(h1_new)
            if h_new >= h_separation[k]:
                frac = (h_separation[k] - h_old) / (h_new - h_old)
                separation_s[k] = pos + min(max(frac, 0.0), 1.0) * step
                break
            g_theta, g_h1 = _rhs(
                theta_new, h1_new, u4, du4, r4, dr4, inv_nu[k], law[k], axisymmetric[k]
            )
            # Cubic Hermite dense output at the stations passed in this step.
            while m < n and s[k, m] <= pos + step:
                t = (s[k, m] - pos) / step
                theta_out[k, m], _ = _hermite(
                    t, step, theta, theta_new, f_theta, g_theta
                )
                h1_m, _ = _hermite(t, step, h1, h1_new, f_h1, g_h1)
                h_out[k, m] = _h_from_h1(h1_m)
                m += 1
            pos += step
            theta, h1 = theta_new, h1_new
            f_theta, f_h1 = g_theta, g_h1
            j, u, du = jj, u4, du4
    return steps
