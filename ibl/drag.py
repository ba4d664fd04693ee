"""Drag estimates from the marched sides: friction drag, and profile drag from the wake.

Contents
--------
- ``friction_drag(s, x, ue, cf, weight)``: the wall shear projected on the free-stream
  direction, integrated over the stations of one side.
- ``profile_drag_squire_young_1938(theta, ue, h)``: one side's share of a planar
  section's profile drag from its trailing-edge state.
- ``profile_drag_young_1939(r, theta, ue, h)``: the same for a body of revolution.
- ``friction_drag_compiled(s, x, ue, cf, r, axisymmetric)``: the compiled twin of
  ``friction_drag`` that the result building calls (``tests/test_compiled_results.py``
  checks it against ``friction_drag`` to the bit).

All coefficients are referred to the free-stream dynamic pressure q_inf and the unit of
length L of the coordinates: D/(q_inf L) per unit span (planar), D/(q_inf L^2) (body of
revolution).  Velocities are ratios to the free-stream speed.  These are early-design
estimates: integral methods give drag to some per cent on attached flows at best.
"""

from __future__ import annotations

import math

import numba
import numpy as np
from numpy.typing import NDArray

__all__ = [
    "FIRST_PANEL_EXPONENTS",
    "friction_drag",
    "friction_drag_compiled",
    "profile_drag_squire_young_1938",
    "profile_drag_young_1939",
]

F64 = NDArray[np.float64]

#: Range of the power p in tau_w r ~ s^p fitted over the first two stations to integrate
#: the first panel of a side whose first station has no wall shear value (a stagnation
#: point: p = 1 planar, 2 on a body of revolution; a sharp leading edge: p = -1/2 laminar,
#: about -1/5 turbulent). The bounds keep the fit integrable and sane on rough data
#: (common practice: the local similarity forms of the wall shear).
FIRST_PANEL_EXPONENTS = (-0.9, 3.0)


def friction_drag(s: F64, x: F64, ue: F64, cf: F64, weight: F64 | None = None) -> float | None:
    r"""Friction drag of one side: wall shear projected on +x, integrated along it.

    .. math::
        \frac{D_f}{q_\infty L^k} = \int \frac{\tau_w}{q_\infty}\, w \,\frac{dx}{ds}\, ds
        = \int C_f \left(\frac{U_e}{U_\infty}\right)^2 w \, dx

    with :math:`C_f = \tau_w / (\tfrac12 \rho U_e^2)`, the weight w = 1 (planar, k = 1,
    per unit span) or :math:`w = 2\pi r` (body of revolution, k = 2). The integrand is
    taken linear in x between stations (trapezoids; the stations' own dx, so parts of a
    side running upstream count negatively). Where the first station has no value (Cf
    undefined at a stagnation point or sharp edge), the first panel is integrated as
    :math:`g \propto s^p` with p fitted on the next two stations (exact for the
    stagnation-point and flat-plate similarity forms), within ``FIRST_PANEL_EXPONENTS``.

    Parameters
    ----------
    s : array
        Arc length of the stations from the side's origin [length unit].
    x : array
        Station positions along the free stream [length unit] (arc length for a single
        surface).
    ue : array
        Edge velocity Ue/U_inf [-].
    cf : array
        Skin-friction coefficient on the local edge velocity [-]; NaN where undefined.
    weight : array, optional
        2 pi r per station [length unit] for a body of revolution.

    Returns
    -------
    float or None
        The coefficient [-]; None with fewer than two stations or no finite wall shear.

    Examples
    --------
    Uniform Cf = 0.004 on a unit plate at Ue = U_inf:

    >>> x = np.linspace(0.0, 1.0, 5)
    >>> round(friction_drag(x, x, np.ones(5), np.full(5, 0.004)), 6)
    0.004
    """
    if x.size < 2:
        return None
    g = cf * ue * ue
    if weight is not None:
        g *= weight
    start = 0
    total = 0.0
    head = g[:3].tolist()
    if not math.isfinite(head[0]):
        start = 1
        if x.size > 2 and head[1] > 0.0 and head[2] > 0.0:  # False for NaN too
            total = _first_panel(s, x, g)
    if x.size - start < 2:
        return None
    total += _trapezoid(x[start:], g[start:])
    return total if math.isfinite(total) else None


def _first_panel(s: F64, x: F64, g: F64) -> float:
    """Integral of g dx over the first panel, g ~ (s - s0)^p with p fitted on stations 1
    and 2, x linear in s on the panel."""
    s0: float
    s1: float
    s2: float
    x0: float
    x1: float
    g1: float
    g2: float
    s0, s1, s2 = s[:3].tolist()
    x0, x1 = x[:2].tolist()
    g1, g2 = g[1:3].tolist()
    d1, d2 = s1 - s0, s2 - s0
    dx = x1 - x0
    if not d1 > 0.0 or not d2 > d1:
        return 0.5 * g1 * dx
    low, high = FIRST_PANEL_EXPONENTS
    p = math.log(g2 / g1) / math.log(d2 / d1)
    p = min(max(p, low), high)
    return g1 * dx / (1.0 + p)


def _trapezoid(x: F64, g: F64) -> float:
    """Trapezoidal integral of g dx (NaN if any g is NaN)."""
    return 0.5 * float(np.dot(g[1:] + g[:-1], x[1:] - x[:-1]))


@numba.njit(cache=True, error_model="numpy")
def friction_drag_compiled(
    s: F64, x: F64, ue: F64, cf: F64, r: F64, axisymmetric: bool
) -> float:  # pragma: no cover - compiled
    """Twin of ``friction_drag`` with the weight 2 pi r (``axisymmetric``) or 1; NaN where
    ``friction_drag`` gives None.

    The same floating-point operations in the same order, element by element: g = Cf Ue Ue
    (times 2 pi r), the first panel's power fit, and the trapezoids' sum as the dot product
    of the panel sums and widths by BLAS ddot, as numpy's ``dot`` takes it.
    """
    n = x.size
    if n < 2:
        return math.nan
    g = cf * ue * ue
    if axisymmetric:
        g *= 2.0 * math.pi * r[:n]
    start = 0
    total = 0.0
    if not math.isfinite(g[0]):
        start = 1
        if n > 2 and g[1] > 0.0 and g[2] > 0.0:  # False for NaN too
            d1, d2 = s[1] - s[0], s[2] - s[0]
            dx = x[1] - x[0]
            if not d1 > 0.0 or not d2 > d1:
                total = 0.5 * g[1] * dx
            else:
                p = math.log(g[2] / g[1]) / math.log(d2 / d1)
                # min(max(p, low), high) as Python takes it (the first argument on a tie)
                low, high = FIRST_PANEL_EXPONENTS
                if low > p:
                    p = low
                if high < p:
                    p = high
                total = g[1] * dx / (1.0 + p)
    if n - start < 2:
        return math.nan
    total += 0.5 * np.dot(g[start + 1 :] + g[start:-1], x[start + 1 :] - x[start:-1])
    return total if math.isfinite(total) else math.nan


def profile_drag_squire_young_1938(theta: float, ue: float, h: float) -> float:
    r"""One side's share of the profile drag of a planar section (Squire & Young 1938).

    .. math::
        c_d\, c = 2\,\theta_{TE} \left(\frac{U_{e,TE}}{U_\infty}\right)^{(H_{TE} + 5)/2}

    The wake's momentum thickness far downstream, where the wake has returned to free-
    stream pressure, from the state at the trailing edge: the wake's momentum integral
    (no wall shear) with a linear relation between H and ln Ue along the wake, H falling
    to 1 far downstream. Summed over the two sides it is the section's drag coefficient
    times the chord, D/(q_inf L), L the coordinate unit. Exact for a flat plate at zero
    incidence (Ue = U_inf, c_d c = 2 theta_TE per side).

    Parameters
    ----------
    theta : float
        Momentum thickness at the trailing edge [length unit].
    ue : float
        Edge velocity Ue/U_inf at the trailing edge [-].
    h : float
        Shape factor at the trailing edge [-].

    Returns
    -------
    float
        The side's share of D/(q_inf L) [-].

    Notes
    -----
    Validity: attached flow at the trailing edge, thin wake, incompressible; turbulent
    trailing-edge layers (H about 1.3 to 2), where the relation was checked against
    measured wakes to within a few per cent; a laminar trailing edge (H about 2.6) is
    applied too, with its exponent. Source: Squire, H. B. & Young, A. D. 1938, The
    calculation of the profile drag of aerofoils, ARC R&M 1838; the exponent form
    (H + 5)/2 is recalled, not re-checked [memory].

    Examples
    --------
    >>> profile_drag_squire_young_1938(0.002, 1.0, 1.4)
    0.004
    >>> round(profile_drag_squire_young_1938(0.002, 0.9, 1.6), 6)
    0.002825
    """
    return float(2.0 * theta * ue ** (0.5 * (h + 5.0)))


def profile_drag_young_1939(r: float, theta: float, ue: float, h: float) -> float:
    r"""One side's profile drag of a body of revolution from its tail state (Young 1939).

    .. math::
        \frac{D}{q_\infty L^2} = 4\pi\, r_{TE}\,\theta_{TE}
        \left(\frac{U_{e,TE}}{U_\infty}\right)^{(H_{TE} + 5)/2}

    Squire & Young's wake argument applied to the momentum area 2 pi r theta of a thin
    axisymmetric layer and wake: the drag is rho U_inf^2 times the momentum area far
    downstream.

    Parameters
    ----------
    r : float
        Body radius at the trailing edge [length unit].
    theta, ue, h : float
        Momentum thickness [length unit], Ue/U_inf [-] and H [-] there.

    Returns
    -------
    float
        D/(q_inf L^2) of the surface of revolution the side sweeps [-].

    Notes
    -----
    Validity: a thin layer at the trailing edge (theta small against r), attached flow,
    incompressible. Source: Young, A. D. 1939, The calculation of the total and skin
    friction drags of bodies of revolution at zero incidence, ARC R&M 1874 [memory: the
    form above is recalled, not re-checked].

    Examples
    --------
    >>> round(profile_drag_young_1939(0.5, 0.001, 1.0, 1.4), 8)
    0.00628319
    """
    return float(4.0 * math.pi * r * theta * ue ** (0.5 * (h + 5.0)))
