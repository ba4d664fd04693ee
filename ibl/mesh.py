"""Numbers a RANS analyst wants next: first-cell height, layer thickness, eddy viscosity.

Contents
--------
- ``friction_velocity``: u_tau from Ue and Cf.
- ``first_cell_height``: wall distance of a target y+ (``first_cell_heights``: its twin
  on Python floats, the expression the result building writes for each target).
- ``delta99_power_law``: delta99 from theta and H for a power-law turbulent profile.
- ``eddy_viscosity_ratio_clauser``: outer eddy-to-molecular viscosity ratio.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "delta99_power_law",
    "eddy_viscosity_ratio_clauser",
    "first_cell_height",
    "first_cell_heights",
    "friction_velocity",
]

F64 = NDArray[np.float64]

#: Clauser's outer eddy-viscosity constant (Cebeci & Smith 1974) [memory].
CLAUSER_CONSTANT = 0.0168


def friction_velocity(ue: ArrayLike, cf: ArrayLike) -> F64:
    r"""Friction velocity from the edge velocity and the skin-friction coefficient.

    .. math:: u_\tau = U_e \sqrt{C_f / 2}

    Parameters
    ----------
    ue : float or array
        Edge velocity [any velocity unit].
    cf : float or array
        Skin-friction coefficient based on Ue [-].

    Returns
    -------
    array
        u_tau [same unit as ue].

    >>> float(friction_velocity(10.0, 0.005))
    0.5

    References
    ----------
    Definition (common practice).
    """
    return np.asarray(np.asarray(ue) * np.sqrt(0.5 * np.asarray(cf)), dtype=np.float64)


def first_cell_height(y_plus: ArrayLike, nu: ArrayLike, u_tau: ArrayLike) -> F64:
    r"""Wall distance at which a target y+ is reached.

    .. math:: \Delta y = y^+ \nu / u_\tau

    Parameters
    ----------
    y_plus : float or array
        Target y+ [-] (about 1 for wall-resolved grids, 30-100 for wall functions).
    nu : float or array
        Kinematic viscosity [length^2/time].
    u_tau : float or array
        Friction velocity [length/time].

    Returns
    -------
    array
        First-cell height (to the first cell centre or node, as the solver defines y+)
        [length].

    >>> float(first_cell_height(1.0, 1.5e-5, 0.5))
    3e-05

    References
    ----------
    Definition of y+ (common practice).
    """
    return np.asarray(np.asarray(y_plus) * np.asarray(nu) / np.asarray(u_tau), dtype=np.float64)


def first_cell_heights(y_plus: Sequence[float], nu: float, u_tau: float) -> list[float]:
    """Twin of ``first_cell_height`` on Python floats: the same operations, y+ times nu,
    then divided by u_tau, so the same values to the bit, without numpy's cost for a few
    targets.

    >>> first_cell_heights((1.0, 30.0), 1.5e-5, 0.5)
    [3e-05, 0.0009]
    """
    return [target * nu / u_tau for target in y_plus]


def delta99_power_law(theta: ArrayLike, h: ArrayLike) -> F64:
    r"""Boundary-layer thickness of a power-law velocity profile with the given theta and H.

    .. math:: \delta = \theta\,\frac{H (H + 1)}{H - 1}

    Parameters
    ----------
    theta : float or array
        Momentum thickness [length].
    h : float or array
        Shape factor H > 1 [-].

    Returns
    -------
    array
        delta [length].

    Notes
    -----
    For u/Ue = (y/delta)^(1/n): H = (n + 2)/n and theta/delta = n/((n + 1)(n + 2)),
    which give the formula [derived]; 1/7 law: delta = 10.29 theta.

    >>> round(float(delta99_power_law(1.0, 9.0 / 7.0)), 2)
    10.29

    References
    ----------
    Power-law profiles (common practice); algebra [derived].
    """
    h = np.asarray(h, dtype=np.float64)
    return np.asarray(np.asarray(theta) * h * (h + 1.0) / (h - 1.0), dtype=np.float64)


def eddy_viscosity_ratio_clauser(re_delta_star: ArrayLike) -> F64:
    r"""Outer-layer eddy viscosity over molecular viscosity, Clauser's formula.

    .. math:: \nu_t / \nu = 0.0168\, U_e \delta^* / \nu = 0.0168\, Re_{\delta^*}

    Parameters
    ----------
    re_delta_star : float or array
        Displacement-thickness Reynolds number [-].

    Returns
    -------
    array
        nu_t / nu [-].

    >>> round(float(eddy_viscosity_ratio_clauser(10000.0)), 1)
    168.0

    References
    ----------
    Clauser, F. H. (1956) Adv. Appl. Mech. 4; Cebeci & Smith (1974) [memory].
    """
    return np.asarray(CLAUSER_CONSTANT * np.asarray(re_delta_star), dtype=np.float64)
