r"""Turbulent boundary layer: Head's entrainment method with a skin-friction law.

Contents
--------
- ``entrainment_shape_factor_head_1958`` (H1 from H) and ``shape_factor_from_h1_head_1958``
  (its inverse), Cebeci & Bradshaw's fits.
- ``entrainment_coefficient_head_1958``: F(H1).
- ``cf_ludwieg_tillmann_1949`` and ``cf_white_1974``: skin-friction laws (``SKIN_FRICTION``).

The march itself is compiled: ``ibl.head`` repeats these formulas as scalar twins and
``ibl.step_control`` marches them.

Equations (Head 1958; axisymmetric form for thin layers, r the body radius):

.. math::
    \frac{1}{r}\frac{d(r\theta)}{ds} = \frac{C_f}{2} - (H + 2)\frac{\theta}{U_e}\frac{dU_e}{ds},
    \qquad \frac{1}{r U_e}\frac{d(r U_e \theta H_1)}{ds} = F(H_1)

The march (``ibl.step_control``) integrates theta and H1; eliminating r from the second gives

.. math::
    \frac{dH_1}{ds} = \frac{F - H_1\,[C_f/2 - (H + 1)(\theta/U_e)\,dU_e/ds]}{\theta}
"""

from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ibl.methods import methods

__all__ = [
    "H1_HIGH_BRANCH_MAX",
    "H1_LOW_BRANCH_MIN",
    "H_BRANCH",
    "METHODS",
    "SKIN_FRICTION",
    "SkinFrictionLaw",
    "TurbulentMethod",
    "cf_ludwieg_tillmann_1949",
    "cf_white_1974",
    "entrainment_coefficient_head_1958",
    "entrainment_shape_factor_head_1958",
    "shape_factor_from_h1_head_1958",
]

F64 = NDArray[np.float64]

#: Shape factor H at which Cebeci & Bradshaw's two fits of H1(H) join.
H_BRANCH = 1.6
#: H1 of the two fits at H = 1.6 [derived]: the fit for H <= 1.6 ends at 5.3094 (its
#: smallest H1), the fit for H > 1.6 starts at 5.2868 (its largest H1).  H1(H) has a
#: step there; the inverse H(H1) fills the gap between them with H = 1.6, so that it is
#: continuous (a step in H(H1) would make the turbulent march jump under tiny changes
#: of its input).
H1_LOW_BRANCH_MIN = 3.3 + 0.8234 * (H_BRANCH - 1.1) ** -1.287
H1_HIGH_BRANCH_MAX = 3.3 + 1.5501 * (H_BRANCH - 0.6778) ** -3.064
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
    7.178

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
        H = 1.1 + \left(\frac{H_1 - 3.3}{0.8234}\right)^{-1/1.287} \quad (H_1 \ge 5.3094),
        \qquad
        H = 1.6 \quad (5.2868 < H_1 < 5.3094),
        \qquad
        H = 0.6778 + \left(\frac{H_1 - 3.3}{1.5501}\right)^{-1/3.064} \quad (H_1 \le 5.2868)

    The middle piece spans the gap that the step of H1(H) at H = 1.6 leaves, so that
    H(H1) is continuous and non-increasing (``H1_LOW_BRANCH_MIN``, ``H1_HIGH_BRANCH_MAX``).

    Parameters
    ----------
    h1 : float or array
        Head's shape factor H1 [-], H1 > 3.3.

    Returns
    -------
    array
        H [-].

    >>> round(float(shape_factor_from_h1_head_1958(7.1775)), 3)
    1.4

    References
    ----------
    Head (1958); Cebeci & Bradshaw (1977). The piece H = 1.6 across the gap is ours
    [derived].

    >>> float(shape_factor_from_h1_head_1958(5.3))
    1.6
    """
    excess = np.maximum(np.asarray(h1, dtype=np.float64) - 3.3, 1e-12)
    low = 1.1 + (excess / 0.8234) ** (-1.0 / 1.287)
    high = 0.6778 + (excess / 1.5501) ** (-1.0 / 3.064)
    h = np.where(excess <= H1_HIGH_BRANCH_MAX - 3.3, high, H_BRANCH)
    return np.asarray(np.where(excess >= H1_LOW_BRANCH_MIN - 3.3, low, h), dtype=np.float64)


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

    >>> round(float(entrainment_coefficient_head_1958(7.1775)), 5)
    0.01267

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
    0.002343

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
    0.002289

    References
    ----------
    White, F. M. (1974) Viscous Fluid Flow. McGraw-Hill.
    """
    h = np.asarray(h, dtype=np.float64)
    log_re = np.log10(np.maximum(np.asarray(re_theta, dtype=np.float64), _WHITE_MIN_RE_THETA))
    return np.asarray(0.3 * np.exp(-1.33 * h) / log_re ** (1.74 + 0.31 * h), dtype=np.float64)


class TurbulentMethod(NamedTuple):
    """A turbulent integral method: its code in the compiled march (column
    ``turbulent_method`` of the kernel's ``ints``; ``ibl.step_control`` dispatches on it),
    name in results, skin friction (None: the case's ``skin_friction`` option), summary
    and source."""

    code: int
    name: str
    skin_friction: str | None
    summary: str
    reference: str


#: Turbulent methods (the case's ``turbulent.method``) by name, from the registry of
#: methods (``ibl.methods.REGISTRY``: a method is a module and a row there); the first is
#: the default.
METHODS: dict[str, TurbulentMethod] = {
    m.name: TurbulentMethod(m.code, m.label, m.skin_friction, m.summary, m.reference)
    for m in methods("turbulent").values()
}


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
