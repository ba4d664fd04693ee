r"""Turbulent boundary layer: the lag-entrainment method of Green, Weeks & Brooman (1977).

Contents
--------
- Vectorised, documented correlations (incompressible, no curvature or dilatation
  terms): ``entrainment_shape_factor_green_1977`` (H1 from H), ``cf0_winter_gaudet_1973``
  and ``h0_winter_gaudet_1973`` (flat-plate Cf0 and H0 at a given Re_theta),
  ``cf_green_1977`` (Cf from H and Re_theta), ``shear_stress_coefficient_green_1977``
  (C_tau from C_E), ``lag_factor_green_1977`` (F),
  ``equilibrium_gradient_green_1977`` ((theta/Ue dUe/ds)_EQ),
  ``equilibrium_entrainment_green_1977`` (C_E,EQ), ``separation_shape_factor_green_1977``
  (the H at which Cf vanishes).
- Their scalar numba twins (``*_nb``), checked against the definitions by
  ``tests/test_lag_entrainment.py``.
- The method's part of the compiled march of (theta, H, C_E): ``_rhs`` (the equations
  below), and what the shared step control (``ibl.step_control``, which also marches
  Head's equations) asks of a method: the start state (``start_state``), where the state
  is valid (``_valid``), the step limits on H and C_E (``limit_state``) and the
  separation function (``_criterion``).

Equations (Green, Weeks & Brooman 1977, incompressible; r the body radius of a thin
axisymmetric layer, as in Head's axisymmetric equations of ``ibl.turbulent``):

.. math::
    \frac{1}{r}\frac{d(r\theta)}{ds} = \frac{C_f}{2} - (H + 2)\frac{\theta}{U_e}\frac{dU_e}{ds},
    \qquad \frac{1}{r U_e}\frac{d(r U_e \theta H_1)}{ds} = C_E,

.. math::
    \theta \frac{dC_E}{ds} = F \left[\frac{2.8}{H + H_1}
    \left(C_{\tau,EQ0}^{1/2} - \lambda C_\tau^{1/2}\right)
    + \left(\frac{\theta}{U_e}\frac{dU_e}{ds}\right)_{EQ}
    - \frac{\theta}{U_e}\frac{dU_e}{ds}\right]

with lambda = 1 on a wall (``WALL_LAMBDA``).  The march integrates theta, H and C_E;
eliminating r (it cancels, as in Head's form):

.. math::
    \frac{dH}{ds} = \frac{C_E - H_1\,[C_f/2 - (H + 1)(\theta/U_e)\,dU_e/ds]}
    {\theta\, dH_1/dH}

Source of the constants: every constant below is as recalled from the report
(Green, J. E., Weeks, D. J. & Brooman, J. W. F. (1977) "Prediction of turbulent boundary
layers and wakes in compressible flow by a lag-entrainment method", ARC R&M 3791, report
dated 1973) and from its reproduction in textbook reviews of integral methods; they were
not re-checked against a printed copy here [memory].  They agree with each other: at
zero pressure gradient the equilibrium relation gives 1 - 1/H = 6.432 (Cf/2)^1/2, within
2 % in H of Winter & Gaudet's 1 - 1/H0 = 6.55 (Cf0/2)^1/2 [derived].  Our reading of the
suffix "EQ0" (equilibrium without secondary influences: curvature, dilatation, the wake
factor lambda) takes the equilibrium relations at the local Cf, not at Cf0 [memory].

Start (after transition or at a turbulent inflow): theta continuous, H from the
``initial_shape_factor`` option (1.4 by default, as for Head's method), and C_E at its
equilibrium value for that state, ``equilibrium_entrainment_green_1977`` (common practice
for starting a lag equation: no history known, the shear stress in equilibrium with the
local profile), no smaller than ``START_CE_MIN``.

Separation: where H reaches the smaller of the ``separation_shape_factor`` option (the same
criterion as Head's method, so both methods report the same event) and
``separation_shape_factor_green_1977`` (Cf = 0 by the Winter & Gaudet law, H = 2.2 H0).
Cf vanishes only at H of about 2.64 to 3.17 (Re_theta 1e6 to 1e3) [derived], so at the
default 2.4 the criterion on H acts first; the Cf = 0 bound keeps Cf non-negative whatever
option is given (up to 2.8), since the equations beyond Cf = 0 describe no attached layer.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "MIN_RE_THETA",
    "WALL_LAMBDA",
    "WINTER_GAUDET_RE_THETA",
    "cf0_winter_gaudet_1973",
    "cf_green_1977",
    "entrainment_shape_factor_green_1977",
    "equilibrium_entrainment_green_1977",
    "equilibrium_gradient_green_1977",
    "h0_winter_gaudet_1973",
    "lag_factor_green_1977",
    "separation_shape_factor_green_1977",
    "shear_stress_coefficient_green_1977",
]

F64 = NDArray[np.float64]

#: Green, Weeks & Brooman (1977), recalled [memory]: H1 = A + B/(H - 1) - C (H - 1)^2.
H1_A, H1_B, H1_C = 3.15, 1.72, 0.01
#: The lag equation's rate constant 2.8 and the wall value of lambda (0.5 in wakes) [memory].
LAG_RATE, WALL_LAMBDA = 2.8, 1.0
#: F = (F_A C_E + C_E^2 + F_B Cf0) / (F_D + C_E), F_B = 0.8/3 [memory].
F_A, F_B, F_D = 0.02, 0.8 / 3.0, 0.01
#: C_tau = T_A C_E + T_B C_E^2 + T_C Cf0 [memory].
T_A, T_B, T_C = 0.024, 1.2, 0.32
#: (theta/Ue dUe/ds)_EQ = (EQ_A/H) (Cf/2 - ((H - 1)/(EQ_B H))^2) [memory].
EQ_A, EQ_B = 1.25, 6.432
#: Winter & Gaudet (1973) flat-plate friction as printed in Green et al. (1977):
#: Cf0 = W_A/(log10 Re_theta - W_B) - W_C; 1 - 1/H0 = W_H (Cf0/2)^1/2;
#: Cf/Cf0 = W_P/(H/H0 - W_Q) - W_R [memory].
W_A, W_B, W_C, W_H = 0.01013, 1.02, 0.00075, 6.55
W_P, W_Q, W_R = 0.9, 0.4, 0.5
#: Range of Re_theta of the Winter & Gaudet law (incompressible form) [memory].
WINTER_GAUDET_RE_THETA = (1e3, 1e6)
#: Cf/Cf0 vanishes at H/H0 = W_Q + W_P/W_R = 2.2 [derived].
CF_ZERO_RATIO = W_Q + W_P / W_R
#: Smallest Re_theta given to the Winter & Gaudet law (singular at log10 Re_theta = 1.02,
#: Re_theta = 10.5).  Ours: a layer tripped very near a leading edge starts far below
#: any measured turbulent layer; the law is held at Re_theta = 320 below it (Cf0 = 0.0061,
#: H0 = 1.56), the smallest Re_theta of a turbulent inflow that ``ibl.prepare`` accepts
#: (``MIN_TURBULENT_RE_THETA``).  Lower, the equilibrium C_E at H = 1.4 turns strongly
#: negative (a layer out of the law's range, not a physical state).
MIN_RE_THETA = 320.0
#: Smallest C_E at the start of the march: the equilibrium value is clipped to it.  An
#: attached wall layer entrains (C_E >= 0, common practice); the clip acts only at the
#: smallest Re_theta with a start H below the flat-plate H0.
START_CE_MIN = 0.0
#: Step limits of the march, beside the shared ones of ``ibl.step_control`` (``STEP_UE``,
#: ``STEP_THETA``): largest relative change of H - 1 and of C_E + 0.01 (the pole of F)
#: per step.  Ours, chosen so that twenty times smaller steps change theta and H by less
#: than 0.5 %
#: (tests/test_lag_entrainment.py).
STEP_H, STEP_CE = 0.04, 0.1


# ----------------------------------------------------------------- vectorised definitions


def _arr(x: ArrayLike) -> F64:
    return np.asarray(x, dtype=np.float64)


def entrainment_shape_factor_green_1977(h: ArrayLike) -> F64:
    r"""Entrainment shape factor H1 = (delta - delta*)/theta from H, Green et al. (1977).

    .. math:: H_1 = 3.15 + \frac{1.72}{H - 1} - 0.01 (H - 1)^2

    Parameters
    ----------
    h : float or array
        Shape factor H [-], 1 < H <= about 4 (H1 decreases with H throughout).

    Returns
    -------
    array
        H1 [-].

    >>> round(float(entrainment_shape_factor_green_1977(1.4)), 4)
    7.4484

    References
    ----------
    Green, Weeks & Brooman (1977) ARC R&M 3791 [memory].
    """
    excess = _arr(h) - 1.0
    return np.asarray(H1_A + H1_B / excess - H1_C * excess**2, dtype=np.float64)


def cf0_winter_gaudet_1973(re_theta: ArrayLike) -> F64:
    r"""Flat-plate skin friction Cf0 at a given Re_theta, Winter & Gaudet (1973).

    .. math:: C_{f0} = \frac{0.01013}{\log_{10} Re_\theta - 1.02} - 0.00075

    Parameters
    ----------
    re_theta : float or array
        Re_theta = Ue theta / nu [-]; raised to ``MIN_RE_THETA`` below it.

    Returns
    -------
    array
        Cf0 [-]; fitted for about 1e3 < Re_theta < 1e6 (incompressible form) [memory].

    >>> round(float(cf0_winter_gaudet_1973(1e4)), 6)
    0.002649

    References
    ----------
    Winter, K. G. & Gaudet, L. (1973) ARC R&M 3712, as used by Green et al. (1977) [memory].
    """
    log_re = np.log10(np.maximum(_arr(re_theta), MIN_RE_THETA))
    return np.asarray(W_A / (log_re - W_B) - W_C, dtype=np.float64)


def h0_winter_gaudet_1973(cf0: ArrayLike) -> F64:
    r"""Flat-plate shape factor H0 at a given flat-plate Cf0.

    .. math:: 1 - \frac{1}{H_0} = 6.55 \sqrt{C_{f0}/2}

    Parameters
    ----------
    cf0 : float or array
        Flat-plate skin friction [-], 0 < Cf0 < 0.046.

    Returns
    -------
    array
        H0 [-].

    >>> round(float(h0_winter_gaudet_1973(0.002631)), 4)
    1.3116

    References
    ----------
    Green et al. (1977) after Winter & Gaudet (1973) [memory].
    """
    return np.asarray(1.0 / (1.0 - W_H * np.sqrt(0.5 * _arr(cf0))), dtype=np.float64)


def cf_green_1977(h: ArrayLike, re_theta: ArrayLike) -> F64:
    r"""Skin friction from H and Re_theta, Green et al. (1977) with Winter & Gaudet's Cf0.

    .. math::
        \frac{C_f}{C_{f0}} = \frac{0.9}{H/H_0 - 0.4} - 0.5,
        \quad C_{f0}, H_0 \text{ from } Re_\theta

    Parameters
    ----------
    h : float or array
        Shape factor H [-], H > 0.4 H0.
    re_theta : float or array
        Re_theta [-].

    Returns
    -------
    array
        Cf [-]; zero at H = 2.2 H0, negative beyond.

    >>> round(float(cf_green_1977(1.4, 1e4)), 6)
    0.002254

    References
    ----------
    Green, Weeks & Brooman (1977) ARC R&M 3791 [memory].
    """
    cf0 = cf0_winter_gaudet_1973(re_theta)
    ratio = _arr(h) / h0_winter_gaudet_1973(cf0)
    return np.asarray(cf0 * (W_P / (ratio - W_Q) - W_R), dtype=np.float64)


def separation_shape_factor_green_1977(re_theta: ArrayLike) -> F64:
    r"""Shape factor at which ``cf_green_1977`` vanishes: H = 2.2 H0(Re_theta).

    Parameters
    ----------
    re_theta : float or array
        Re_theta [-].

    Returns
    -------
    array
        H at Cf = 0 [-] [derived].

    >>> round(float(separation_shape_factor_green_1977(1e4)), 3)
    2.889
    """
    return np.asarray(
        CF_ZERO_RATIO * h0_winter_gaudet_1973(cf0_winter_gaudet_1973(re_theta)), dtype=np.float64
    )


def shear_stress_coefficient_green_1977(ce: ArrayLike, cf0: ArrayLike) -> F64:
    r"""Shear-stress coefficient C_tau (largest shear stress over rho Ue^2) from C_E.

    .. math:: C_\tau = 0.024 C_E + 1.2 C_E^2 + 0.32 C_{f0}

    Parameters
    ----------
    ce : float or array
        Entrainment coefficient C_E = (1/Ue) d(Ue (delta - delta*))/ds [-].
    cf0 : float or array
        Flat-plate skin friction at the local Re_theta [-].

    Returns
    -------
    array
        C_tau [-].

    >>> round(float(shear_stress_coefficient_green_1977(0.01, 0.003)), 6)
    0.00132

    References
    ----------
    Green et al. (1977), after Bradshaw's shear-stress/energy relation [memory].
    """
    ce = _arr(ce)
    return np.asarray(T_A * ce + T_B * ce * ce + T_C * _arr(cf0), dtype=np.float64)


def lag_factor_green_1977(ce: ArrayLike, cf0: ArrayLike) -> F64:
    r"""Factor F of the lag equation.

    .. math:: F = \frac{0.02 C_E + C_E^2 + 0.8 C_{f0}/3}{0.01 + C_E}

    Parameters
    ----------
    ce : float or array
        Entrainment coefficient [-], C_E > -0.01.
    cf0 : float or array
        Flat-plate skin friction [-].

    Returns
    -------
    array
        F [-].

    >>> round(float(lag_factor_green_1977(0.01, 0.003)), 4)
    0.055

    References
    ----------
    Green et al. (1977) ARC R&M 3791 [memory].
    """
    ce = _arr(ce)
    return np.asarray((F_A * ce + ce * ce + F_B * _arr(cf0)) / (F_D + ce), dtype=np.float64)


def equilibrium_gradient_green_1977(h: ArrayLike, cf: ArrayLike) -> F64:
    r"""Pressure-gradient parameter of the equilibrium layer with this H and Cf.

    .. math::
        \left(\frac{\theta}{U_e}\frac{dU_e}{ds}\right)_{EQ}
        = \frac{1.25}{H}\left[\frac{C_f}{2} - \left(\frac{H - 1}{6.432 H}\right)^2\right]

    Parameters
    ----------
    h : float or array
        Shape factor H [-].
    cf : float or array
        Local skin friction [-].

    Returns
    -------
    array
        (theta/Ue dUe/ds)_EQ [-]; zero on the flat-plate locus, negative for H above it.

    >>> round(float(equilibrium_gradient_green_1977(1.4, 0.0023)), 6)
    -0.000735

    References
    ----------
    Green et al. (1977), from the equilibrium locus G = 6.432 (1 + 0.8 beta)^1/2 [memory].
    """
    h = _arr(h)
    return np.asarray(EQ_A / h * (0.5 * _arr(cf) - ((h - 1.0) / (EQ_B * h)) ** 2), dtype=np.float64)


def equilibrium_entrainment_green_1977(h: ArrayLike, cf: ArrayLike) -> F64:
    r"""Entrainment coefficient of the equilibrium layer with this H and Cf.

    .. math::
        C_{E,EQ} = H_1 \left[\frac{C_f}{2}
        - (H + 1)\left(\frac{\theta}{U_e}\frac{dU_e}{ds}\right)_{EQ}\right]

    (the entrainment equation with dH/ds = 0 at the equilibrium pressure gradient).

    Parameters
    ----------
    h : float or array
        Shape factor H [-].
    cf : float or array
        Local skin friction [-].

    Returns
    -------
    array
        C_E,EQ [-].

    >>> round(float(equilibrium_entrainment_green_1977(1.4, 0.0023)), 5)
    0.0217

    References
    ----------
    Green et al. (1977) ARC R&M 3791 [memory].
    """
    h = _arr(h)
    grad = equilibrium_gradient_green_1977(h, cf)
    return np.asarray(
        entrainment_shape_factor_green_1977(h) * (0.5 * _arr(cf) - (h + 1.0) * grad),
        dtype=np.float64,
    )


# ----------------------------------------------------------------------- scalar twins


@numba.njit(cache=True, error_model="numpy")
def h1_nb(h: float) -> float:
    """Twin of ``entrainment_shape_factor_green_1977``."""
    e = h - 1.0
    return H1_A + H1_B / e - H1_C * e * e


@numba.njit(cache=True, error_model="numpy")
def dh1_dh_nb(h: float) -> float:
    """dH1/dH of ``entrainment_shape_factor_green_1977`` (negative for every H > 1)."""
    e = h - 1.0
    return -H1_B / (e * e) - 2.0 * H1_C * e


@numba.njit(cache=True, error_model="numpy")
def cf0_nb(re_theta: float) -> float:
    """Twin of ``cf0_winter_gaudet_1973``."""
    return W_A / (math.log10(max(re_theta, MIN_RE_THETA)) - W_B) - W_C


@numba.njit(cache=True, error_model="numpy")
def h0_nb(cf0: float) -> float:
    """Twin of ``h0_winter_gaudet_1973``."""
    return 1.0 / (1.0 - W_H * math.sqrt(0.5 * cf0))


@numba.njit(cache=True, error_model="numpy")
def cf_nb(h: float, re_theta: float) -> float:
    """Twin of ``cf_green_1977``."""
    cf0 = cf0_nb(re_theta)
    return cf0 * (W_P / (h / h0_nb(cf0) - W_Q) - W_R)


@numba.njit(cache=True, error_model="numpy")
def h_cf_zero_nb(re_theta: float) -> float:
    """Twin of ``separation_shape_factor_green_1977``."""
    return CF_ZERO_RATIO * h0_nb(cf0_nb(re_theta))


@numba.njit(cache=True, error_model="numpy")
def c_tau_nb(ce: float, cf0: float) -> float:
    """Twin of ``shear_stress_coefficient_green_1977``."""
    return T_A * ce + T_B * ce * ce + T_C * cf0


@numba.njit(cache=True, error_model="numpy")
def lag_factor_nb(ce: float, cf0: float) -> float:
    """Twin of ``lag_factor_green_1977``."""
    return (F_A * ce + ce * ce + F_B * cf0) / (F_D + ce)


@numba.njit(cache=True, error_model="numpy")
def eq_gradient_nb(h: float, cf: float) -> float:
    """Twin of ``equilibrium_gradient_green_1977``."""
    q = (h - 1.0) / (EQ_B * h)
    return EQ_A / h * (0.5 * cf - q * q)


@numba.njit(cache=True, error_model="numpy")
def eq_entrainment_nb(h: float, cf: float) -> float:
    """Twin of ``equilibrium_entrainment_green_1977``."""
    return h1_nb(h) * (0.5 * cf - (h + 1.0) * eq_gradient_nb(h, cf))


# ------------------------------------------------------------- the method in the march


@numba.njit(cache=True, error_model="numpy")
def _rhs(
    theta: float,
    h: float,
    ce: float,
    ue: float,
    due: float,
    r: float,
    dr: float,
    inv_nu: float,
    axisymmetric: bool,
) -> tuple[float, float, float]:
    """d theta/ds, dH/ds and dC_E/ds of the lag-entrainment equations."""
    re = ue * theta * inv_nu
    cf0 = cf0_nb(re)
    cf = cf0 * (W_P / (h / h0_nb(cf0) - W_Q) - W_R)
    grad = theta * due / ue
    dtheta = 0.5 * cf - (h + 2.0) * grad
    if axisymmetric:
        dtheta -= theta * dr / r
    h1 = h1_nb(h)
    dh = (ce - h1 * (0.5 * cf - (h + 1.0) * grad)) / (theta * dh1_dh_nb(h))
    grad_eq = eq_gradient_nb(h, cf)
    ce_eq = h1 * (0.5 * cf - (h + 1.0) * grad_eq)
    tau_eq = max(c_tau_nb(ce_eq, cf0), 0.0)
    tau = max(c_tau_nb(ce, cf0), 0.0)
    dce = (
        lag_factor_nb(ce, cf0)
        * (LAG_RATE / (h + h1) * (np.sqrt(tau_eq) - WALL_LAMBDA * np.sqrt(tau)) + grad_eq - grad)
        / theta
    )
    return dtheta, dh, dce


@numba.njit(cache=True, error_model="numpy")
def _valid(theta: float, h: float, ce: float) -> bool:
    """The state lies where the equations are defined: theta > 0, H > 1, C_E > -0.01."""
    return theta > 0.0 and h > 1.0 and ce > -F_D and np.isfinite(theta + h + ce)


@numba.njit(cache=True, error_model="numpy")
def _criterion(h: float, theta: float, u: float, inv_nu: float, h_separation: float) -> float:
    """Separation function: H minus the smaller of the H criterion and H at Cf = 0."""
    return h - min(h_separation, h_cf_zero_nb(u * theta * inv_nu))


@numba.njit(cache=True, error_model="numpy")
def start_state(theta: float, h: float, u: float, inv_nu: float) -> float:
    """C_E at the start of the march: its equilibrium value
    (``equilibrium_entrainment_green_1977``) for theta, H and the local Re_theta, no
    smaller than ``START_CE_MIN``."""
    return max(eq_entrainment_nb(h, cf_nb(h, u * theta * inv_nu)), START_CE_MIN)


@numba.njit(cache=True, error_model="numpy")
def limit_state(limit: float, scale: float, h: float, ce: float, f_h: float, f_ce: float) -> float:
    """The step limits on the relative changes of H - 1 and C_E + 0.01 (``STEP_H``,
    ``STEP_CE``), applied to the shared limits ``limit`` of ``ibl.step_control``."""
    limit = min(limit, scale * STEP_H * (h - 1.0) / max(abs(f_h), 1e-300))
    return min(limit, scale * STEP_CE * (ce + F_D) / max(abs(f_ce), 1e-300))
