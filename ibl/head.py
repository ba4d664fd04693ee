r"""Head's entrainment method (1958) in the compiled march: scalar twins and the equations.

Contents
--------
- Scalar twins of ``ibl.turbulent``'s documented, vectorised correlations:
  ``h1_from_h``, ``h_from_h1``, ``entrainment`` (F(H1)) and ``cf_turbulent`` (Ludwieg &
  Tillmann, White); ``tests/test_kernel.py`` checks each against its definition.
- ``_rhs``: d theta/ds and d H1/ds of Head's equations (the state is theta and H1).
- What the shared step control (``ibl.step_control``) asks of a method: the start state
  (``start_state``), where the state is valid (``stage_valid``, ``end_valid``), the step
  limit on H1 (``limit_state``, ``STEP_H1``) and the separation function
  (``criterion``).

Equations (``ibl.turbulent``):

.. math::
    \frac{d\theta}{ds} = \frac{C_f}{2} - (H + 2)\frac{\theta}{U_e}\frac{dU_e}{ds}
    - \frac{\theta}{r}\frac{dr}{ds},
    \qquad \frac{dH_1}{ds} = \frac{F(H_1) - H_1\,[C_f/2 - (H + 1)(\theta/U_e)\,dU_e/ds]}
    {\theta}
"""

from __future__ import annotations

import numba
import numpy as np

from ibl.turbulent import H1_HIGH_BRANCH_MAX, H1_LOW_BRANCH_MIN, H_BRANCH

#: Step limit of Head's march: largest relative change of H1 - 3.3 per step (with the
#: limits on Ue and theta of ``ibl.step_control``).  With steps ending on the stations, a
#: run with twenty times smaller steps moves separation by less than 1e-5 % of the side
#: length and theta and H by less than 0.02 % on the reference cases
#: (tests/test_kernel.py), and by less than 0.006 % and 0.3 % on noisy taps
#: (tests/test_continuity.py).
STEP_H1 = 0.045
#: H1 of Head's equations stays above this value (F(H1) and H(H1) are singular there).
H1_FLOOR = 3.3

_LN10 = float(np.log(10.0))

# ----------------------------------------------------------------------------- twins


@numba.njit(cache=True, error_model="numpy")
def h1_from_h(h: float) -> float:
    """Twin of ``ibl.turbulent.entrainment_shape_factor_head_1958``."""
    if h <= 1.6:
        return 3.3 + 0.8234 * max(h - 1.1, 1e-12) ** -1.287
    return 3.3 + 1.5501 * max(h - 0.6778, 1e-12) ** -3.064


@numba.njit(cache=True, error_model="numpy")
def h_from_h1(h1: float) -> float:
    """Twin of ``ibl.turbulent.shape_factor_from_h1_head_1958``."""
    excess = max(h1 - 3.3, 1e-12)
    if excess >= H1_LOW_BRANCH_MIN - 3.3:
        return 1.1 + (excess / 0.8234) ** (-1.0 / 1.287)
    if excess <= H1_HIGH_BRANCH_MAX - 3.3:
        return 0.6778 + (excess / 1.5501) ** (-1.0 / 3.064)
    return H_BRANCH


@numba.njit(cache=True, error_model="numpy")
def entrainment(h1: float) -> float:
    """Twin of ``ibl.turbulent.entrainment_coefficient_head_1958``."""
    return 0.0306 * max(h1 - 3.0, 1e-12) ** -0.6169


@numba.njit(cache=True, error_model="numpy")
def cf_turbulent(law: int, h: float, re_theta: float) -> float:
    """Twins of ``ibl.turbulent.cf_ludwieg_tillmann_1949`` (law 0), ``cf_white_1974`` (1)."""
    if law == 0:
        # 0.246 10^(-0.678 H) Re_theta^-0.268, with one exp and one log
        return 0.246 * np.exp(-0.678 * _LN10 * h - 0.268 * np.log(max(re_theta, 1e-300)))
    log_re = np.log10(max(re_theta, 20.0))
    return 0.3 * np.exp(-1.33 * h) / log_re ** (1.74 + 0.31 * h)


@numba.njit(cache=True, error_model="numpy")
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
) -> tuple[float, float, float]:
    r"""Head (1958): d theta/ds and d H1/ds (r eliminated from the entrainment equation),
    and H."""
    h = h_from_h1(h1)
    cf = cf_turbulent(law, h, ue * theta * inv_nu)
    grad = theta * due / ue
    dtheta = 0.5 * cf - (h + 2.0) * grad
    if axisymmetric:
        dtheta -= theta * dr / r
    dh1 = (entrainment(h1) - h1 * (0.5 * cf - (h + 1.0) * grad)) / theta
    return dtheta, dh1, h


# ------------------------------------------------------------ for the shared step control


@numba.njit(cache=True, error_model="numpy")
def start_state(h0: float) -> float:
    """H1 at the start of the march from the start's H."""
    return h1_from_h(h0)


@numba.njit(cache=True, error_model="numpy")
def stage_valid(theta: float, h1: float) -> bool:
    """A Runge-Kutta stage state the equations can take: theta > 0, H1 > 3.3."""
    return theta > 0.0 and h1 > H1_FLOOR


@numba.njit(cache=True, error_model="numpy")
def end_valid(theta: float, h1: float) -> bool:
    """A step's end state the march continues from: ``stage_valid`` and finite."""
    return theta > 0.0 and h1 > H1_FLOOR and np.isfinite(theta + h1)


@numba.njit(cache=True, error_model="numpy")
def limit_state(limit: float, scale: float, h1: float, f_h1: float) -> float:
    """The step limit on the relative change of H1 - 3.3 (``STEP_H1``), applied to the
    shared limits ``limit``."""
    return min(limit, scale * STEP_H1 * (h1 - H1_FLOOR) / max(abs(f_h1), 1e-300))


@numba.njit(cache=True, error_model="numpy")
def criterion(h1: float, h_separation: float) -> float:
    """Separation function: H(H1) minus the separation shape factor (>= 0 separated)."""
    return h_from_h1(h1) - h_separation
