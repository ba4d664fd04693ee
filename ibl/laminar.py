"""Laminar boundary layer: Thwaites' method, planar and axisymmetric.

Contents
--------
- ``shear_thwaites_cebeci_bradshaw_1977`` / ``shape_factor_thwaites_cebeci_bradshaw_1977``:
  the closure l(lambda), H(lambda) as fitted by Cebeci & Bradshaw (1977).
- ``shear_white_1974`` / ``shape_factor_white_1974``: White's alternative fits.
- ``CLOSURES``: the registry of closures, each with its validity range and source.
- ``stagnation_theta_squared``: analytic start at a stagnation point.
- ``GAUSS_NODES``, ``GAUSS_WEIGHTS``: the quadrature used for the Thwaites integral.

The march itself (the cumulative Thwaites integral over many sides at once) lives in
``ibl.march``; this module holds the pure correlations.
"""

from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "CLOSURES",
    "GAUSS_NODES",
    "GAUSS_WEIGHTS",
    "LAMBDA_MAX",
    "SEPARATION_LAMBDA_CURLE_SKAN",
    "SEPARATION_LAMBDA_THWAITES",
    "THWAITES_A",
    "THWAITES_B",
    "Closure",
    "shape_factor_thwaites_cebeci_bradshaw_1977",
    "shape_factor_white_1974",
    "shear_thwaites_cebeci_bradshaw_1977",
    "shear_white_1974",
    "stagnation_theta_squared",
]

F64 = NDArray[np.float64]

#: Thwaites (1949): theta^2 Ue^B = theta0^2 Ue0^B + A nu Integral(Ue^(B-1) ds), A = 0.45, B = 6.
THWAITES_A = 0.45
THWAITES_B = 6.0
#: Laminar separation, Thwaites (1949).
SEPARATION_LAMBDA_THWAITES = -0.09
#: Laminar separation as re-derived by Curle & Skan (1957) [memory].
SEPARATION_LAMBDA_CURLE_SKAN = -0.082
#: Upper end of the closure fits; larger lambda is clipped and reported.
LAMBDA_MAX = 0.1

#: Four-point Gauss-Legendre rule on [0, 1]: exact for polynomials of degree 7, so the
#: integrand r^2 Ue^5 ~ s^7 on a first panel from an axisymmetric nose is integrated exactly.
_x, _w = np.polynomial.legendre.leggauss(4)
GAUSS_NODES: F64 = 0.5 * (_x + 1.0)
GAUSS_WEIGHTS: F64 = 0.5 * _w


def shear_thwaites_cebeci_bradshaw_1977(lam: ArrayLike) -> F64:
    r"""Thwaites' shear function l(lambda) = Cf Re_theta / 2, Cebeci & Bradshaw (1977) fit.

    .. math::
        l = 0.22 + 1.57\lambda - 1.8\lambda^2 \quad (0 \le \lambda \le 0.1)

        l = 0.22 + 1.402\lambda + \frac{0.018\lambda}{\lambda + 0.107}
            \quad (-0.1 \le \lambda < 0)

    Parameters
    ----------
    lam : float or array
        Thwaites' pressure-gradient parameter lambda = (theta^2/nu) dUe/ds [-].

    Returns
    -------
    array
        l = Cf Re_theta / 2 [-].

    Notes
    -----
    Valid for -0.09 <= lambda <= 0.1; l is about zero at lambda = -0.09 (separation).
    The adverse branch is recalled [memory] and agrees with Thwaites' table at
    lambda = 0 and -0.09 to 0.002.

    >>> float(shear_thwaites_cebeci_bradshaw_1977(0.0))
    0.22

    References
    ----------
    Cebeci, T. & Bradshaw, P. (1977) Momentum Transfer in Boundary Layers. Hemisphere.
    Thwaites, B. (1949) Aeronaut. Q. 1, 245-280.
    """
    lam = np.asarray(lam, dtype=np.float64)
    favourable = 0.22 + 1.57 * lam - 1.8 * lam**2
    with np.errstate(divide="ignore", invalid="ignore"):
        adverse = 0.22 + 1.402 * lam + 0.018 * lam / (lam + 0.107)
    return np.asarray(np.where(lam >= 0.0, favourable, adverse), dtype=np.float64)


def shape_factor_thwaites_cebeci_bradshaw_1977(lam: ArrayLike) -> F64:
    r"""Thwaites' shape factor H(lambda), Cebeci & Bradshaw (1977) fit.

    .. math::
        H = 2.61 - 3.75\lambda + 5.24\lambda^2 \quad (0 \le \lambda \le 0.1)

        H = 2.088 + \frac{0.0731}{\lambda + 0.14} \quad (-0.1 \le \lambda < 0)

    Parameters
    ----------
    lam : float or array
        Thwaites' parameter lambda [-].

    Returns
    -------
    array
        Shape factor H = delta*/theta [-].

    Notes
    -----
    Valid for -0.09 <= lambda <= 0.1.  The favourable branch is confirmed; the adverse
    branch is recalled [memory] (another source gives 2.472 + 0.0147/(0.107 + lambda),
    not used).  Both branches give 2.61 at lambda = 0.

    >>> round(float(shape_factor_thwaites_cebeci_bradshaw_1977(0.0)), 3)
    2.61
    >>> round(float(shape_factor_thwaites_cebeci_bradshaw_1977(-0.09)), 3)
    3.55

    References
    ----------
    Cebeci, T. & Bradshaw, P. (1977) Momentum Transfer in Boundary Layers. Hemisphere.
    """
    lam = np.asarray(lam, dtype=np.float64)
    favourable = 2.61 - 3.75 * lam + 5.24 * lam**2
    with np.errstate(divide="ignore", invalid="ignore"):
        adverse = 2.088 + 0.0731 / (lam + 0.14)
    return np.asarray(np.where(lam >= 0.0, favourable, adverse), dtype=np.float64)


def shear_white_1974(lam: ArrayLike) -> F64:
    r"""Thwaites' shear function as fitted by White (1974).

    .. math:: l = (\lambda + 0.09)^{0.62}

    Parameters
    ----------
    lam : float or array
        Thwaites' parameter lambda [-].

    Returns
    -------
    array
        l = Cf Re_theta / 2 [-]; zero at and below lambda = -0.09.

    Notes
    -----
    Valid for -0.09 <= lambda <= 0.25.

    >>> round(float(shear_white_1974(0.0)), 4)
    0.2247

    References
    ----------
    White, F. M. (1974) Viscous Fluid Flow. McGraw-Hill, section 4-6.
    """
    lam = np.asarray(lam, dtype=np.float64)
    return np.asarray(np.maximum(lam + 0.09, 0.0) ** 0.62, dtype=np.float64)


def shape_factor_white_1974(lam: ArrayLike) -> F64:
    r"""Thwaites' shape factor as fitted by White (1974) [memory].

    .. math::
        H = 2.0 + 4.14 z - 83.5 z^2 + 854 z^3 - 3337 z^4 + 4576 z^5, \quad z = 0.25 - \lambda

    Parameters
    ----------
    lam : float or array
        Thwaites' parameter lambda [-].

    Returns
    -------
    array
        Shape factor H [-].

    Notes
    -----
    Valid for -0.09 <= lambda <= 0.25; gives 2.59 at lambda = 0 (Blasius 2.591) and 3.52
    at lambda = -0.09.  Coefficients recalled [memory].

    >>> round(float(shape_factor_white_1974(0.0)), 2)
    2.59

    References
    ----------
    White, F. M. (1974) Viscous Fluid Flow. McGraw-Hill, section 4-6.
    """
    z = 0.25 - np.asarray(lam, dtype=np.float64)
    return np.asarray(
        2.0 + z * (4.14 + z * (-83.5 + z * (854.0 + z * (-3337.0 + z * 4576.0)))),
        dtype=np.float64,
    )


class Closure(NamedTuple):
    """A laminar closure: l(lambda), H(lambda), validity range and source."""

    shear: Any
    shape_factor: Any
    validity: tuple[float, float]
    reference: str


#: Registry of laminar closures; the first is the default.
CLOSURES: dict[str, Closure] = {
    "cebeci_bradshaw": Closure(
        shear_thwaites_cebeci_bradshaw_1977,
        shape_factor_thwaites_cebeci_bradshaw_1977,
        (-0.1, 0.1),
        "Cebeci & Bradshaw (1977), Momentum Transfer in Boundary Layers; Thwaites (1949)",
    ),
    "white": Closure(
        shear_white_1974,
        shape_factor_white_1974,
        (-0.09, 0.25),
        "White (1974), Viscous Fluid Flow, section 4-6",
    ),
}


def stagnation_theta_squared(slope: ArrayLike, nu: ArrayLike, axisymmetric: ArrayLike) -> F64:
    r"""Momentum thickness squared at a stagnation point, Ue = a s, from Thwaites' integral.

    .. math::
        \theta_0^2 = \frac{A\,\nu}{B\,a} = 0.075\,\frac{\nu}{a} \quad\text{(planar)},\qquad
        \theta_0^2 = \frac{A\,\nu}{(B+2)\,a} = 0.05625\,\frac{\nu}{a}
        \quad\text{(axisymmetric nose, } r \sim s\text{)}

    Parameters
    ----------
    slope : float or array
        a = dUe/ds at the stagnation point [1/length, with Ue as a ratio to U_inf].
    nu : float or array
        Kinematic viscosity divided by U_inf [length].
    axisymmetric : bool or array
        True where the stagnation point lies on the axis of a body of revolution.

    Returns
    -------
    array
        theta_0^2 [length^2].

    >>> float(stagnation_theta_squared(1.0, 1.0, False))
    0.075

    References
    ----------
    Thwaites (1949); Rott, N. & Crabtree, L. F. (1952) J. Aeronaut. Sci. 19, 553.
    The limits follow by algebra from the integral [derived].
    """
    power = np.where(np.asarray(axisymmetric, dtype=bool), THWAITES_B + 2.0, THWAITES_B)
    return np.asarray(
        THWAITES_A * np.asarray(nu, dtype=np.float64) / (power * np.asarray(slope)),
        dtype=np.float64,
    )
