"""Transition and laminar-bubble correlations.

Contents
--------
- ``re_theta_transition_michel_1951``: Michel's criterion in the Cebeci-Smith form.
- ``re_theta_instability_granville_1953`` and ``re_theta_growth_granville_1953``: the two steps
  of Granville's criterion (instability point, then growth to transition).
- ``re_theta_transition_abu_ghannam_shaw_1980``: start of transition with free-stream turbulence.
- ``n_critical_mack_1977``: the e^N threshold equivalent of a turbulence level (catalogue only).
- ``bubble_is_short_owen_klanfer_1953``: short or long laminar separation bubble.
- ``CRITERIA``: the registry of transition criteria with their validity ranges and sources.

All functions are pure and vectorised; the march (``ibl.march``) finds where each
criterion is first met along a side and interpolates between stations.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "CRITERIA",
    "GRANVILLE_INSTABILITY_TABLE",
    "OWEN_KLANFER_RE_DELTA_STAR",
    "Criterion",
    "bubble_is_short_owen_klanfer_1953",
    "n_critical_mack_1977",
    "re_theta_growth_granville_1953",
    "re_theta_instability_granville_1953",
    "re_theta_transition_abu_ghannam_shaw_1980",
    "re_theta_transition_michel_1951",
]

F64 = NDArray[np.float64]

#: Owen & Klanfer (1953): Re_delta* at laminar separation above this gives a short bubble
#: [memory; 400 is the usual value, some authors quote 450-500].
OWEN_KLANFER_RE_DELTA_STAR = 400.0

#: Critical (neutral-stability) Re_theta of the Falkner-Skan profiles against Thwaites'
#: lambda.  Computed for this project by solving the Orr-Sommerfeld equation (temporal,
#: parallel flow; Chebyshev collocation with scipy, ``tests/stability_reference.py``) on
#: Falkner-Skan profiles from beta = -0.1988 (near separation) to 1 (plane stagnation);
#: grid-converged to better than 1e-6.  Blasius: Re_delta*,crit = 519.06 (Jordinson 1970
#: gives 519.4 [memory]).  Each row sits at the lambda that Thwaites' method gives for that
#: flow, 0.45 m / (5 m + 1), m = beta / (2 - beta), because that is the lambda the march
#: evaluates.  Columns: lambda, Re_theta,crit.
GRANVILLE_INSTABILITY_TABLE: F64 = np.array(
    [
        [-0.07425, 16.75],
        [-0.06328, 28.49],
        [-0.04821, 41.84],
        [-0.03553, 57.64],
        [-0.02813, 70.71],
        [-0.01250, 118.06],
        [0.0, 200.32],
        [0.01875, 552.08],
        [0.03214, 1175.07],
        [0.05000, 2651.58],
        [0.06136, 3901.47],
        [0.07500, 5586.34],
    ]
)


def re_theta_transition_michel_1951(re_s: ArrayLike) -> F64:
    r"""Momentum-thickness Reynolds number at transition, Michel (1951), Cebeci-Smith form.

    .. math:: Re_{\theta,tr} = 1.174 \left(1 + \frac{22400}{Re_s}\right) Re_s^{0.46}

    Parameters
    ----------
    re_s : float or array
        Re_s = Ue s / nu, s measured from the stagnation point or leading edge [-].

    Returns
    -------
    array
        Re_theta at transition [-]; transition is where Re_theta first reaches it.

    Notes
    -----
    Fitted for 1e5 <= Re_s <= 4e7 and low free-stream turbulence (no Tu term).
    Coefficients recalled [memory] from Cebeci & Smith (1974).

    >>> round(float(re_theta_transition_michel_1951(1e6)), 1)
    690.7

    References
    ----------
    Michel, R. (1951) ONERA Report 1/1578A.
    Cebeci, T. & Smith, A. M. O. (1974) Analysis of Turbulent Boundary Layers. Academic Press.
    """
    re_s = np.asarray(re_s, dtype=np.float64)
    with np.errstate(divide="ignore"):
        return np.asarray(1.174 * (1.0 + 22400.0 / re_s) * re_s**0.46, dtype=np.float64)


def re_theta_instability_granville_1953(lam: ArrayLike) -> F64:
    r"""Critical Re_theta (first instability) as a function of the local pressure gradient.

    .. math:: \log Re_{\theta,crit} = \text{piecewise-linear in } \lambda
              \text{ through } \texttt{GRANVILLE\_INSTABILITY\_TABLE}

    Parameters
    ----------
    lam : float or array
        Thwaites' parameter lambda [-].

    Returns
    -------
    array
        Re_theta at which Tollmien-Schlichting waves first grow [-].

    Notes
    -----
    Granville (1953) places the instability point with the neutral-stability Reynolds
    numbers of similar profiles; here they are those of the Falkner-Skan family, computed
    from the Orr-Sommerfeld equation (``GRANVILLE_INSTABILITY_TABLE``), 200.3 for the
    Blasius profile.  Outside -0.074 <= lambda <= 0.075 the end values are held.

    >>> round(float(re_theta_instability_granville_1953(0.0)), 1)
    200.3

    References
    ----------
    Granville, P. S. (1953) David Taylor Model Basin Report 849.
    Orr-Sommerfeld computation of this project (``tests/stability_reference.py``).
    """
    table = GRANVILLE_INSTABILITY_TABLE
    log_re = np.interp(np.asarray(lam, dtype=np.float64), table[:, 0], np.log(table[:, 1]))
    return np.asarray(np.exp(log_re), dtype=np.float64)


def re_theta_growth_granville_1953(lam_mean: ArrayLike) -> F64:
    r"""Growth of Re_theta from instability to transition, Granville (1953), low turbulence.

    .. math:: Re_{\theta,tr} - Re_{\theta,i} = 375 + \exp(6.1 + 55\,\bar\lambda)

    Parameters
    ----------
    lam_mean : float or array
        lambda averaged over arc length from the instability point [-].

    Returns
    -------
    array
        Re_theta,tr - Re_theta,i [-].

    Notes
    -----
    An exponential fit to Granville's low-turbulence curve as reproduced by Cebeci &
    Cousteix; recalled with low confidence [memory].  On a flat plate it gives
    Re_theta,tr = 200.3 + 821 = 1021, Re_x = 2.3e6 with Thwaites' theta, in line with
    flat-plate transition in quiet tunnels (common practice: 2e6-3e6).  Fitted for
    -0.04 <= lambda_mean <= 0.04; the argument is clipped there.

    >>> round(float(re_theta_growth_granville_1953(0.0)), 1)
    820.9

    References
    ----------
    Granville, P. S. (1953) David Taylor Model Basin Report 849.
    Cebeci, T. & Cousteix, J. (2005) Modeling and Computation of Boundary-Layer Flows.
    """
    lam_mean = np.clip(np.asarray(lam_mean, dtype=np.float64), -0.04, 0.04)
    return np.asarray(375.0 + np.exp(6.1 + 55.0 * lam_mean), dtype=np.float64)


def re_theta_transition_abu_ghannam_shaw_1980(lam: ArrayLike, tu: ArrayLike) -> F64:
    r"""Re_theta at the start of transition, Abu-Ghannam & Shaw (1980).

    .. math::
        Re_{\theta,S} = 163 + \exp\!\left(F(\lambda) - F(\lambda)\,\frac{Tu}{6.91}\right)

        F = 6.91 + 12.75\lambda + 63.64\lambda^2 \;(\lambda \le 0),\qquad
        F = 6.91 + 2.48\lambda - 12.27\lambda^2 \;(\lambda > 0)

    Parameters
    ----------
    lam : float or array
        Thwaites' parameter lambda [-], clipped to -0.1 <= lambda <= 0.1.
    tu : float or array
        Free-stream turbulence intensity, in percent [%].

    Returns
    -------
    array
        Re_theta at the start of transition [-].

    Notes
    -----
    Data range about 0.3 % <= Tu <= 5 % [memory].

    >>> round(float(re_theta_transition_abu_ghannam_shaw_1980(0.0, 1.0)), 1)
    531.7

    References
    ----------
    Abu-Ghannam, B. J. & Shaw, R. (1980) J. Mech. Eng. Sci. 22(5), 213-228.
    """
    lam = np.clip(np.asarray(lam, dtype=np.float64), -0.1, 0.1)
    f = np.where(
        lam <= 0.0,
        6.91 + 12.75 * lam + 63.64 * lam**2,
        6.91 + 2.48 * lam - 12.27 * lam**2,
    )
    return np.asarray(163.0 + np.exp(f - f * np.asarray(tu) / 6.91), dtype=np.float64)


def n_critical_mack_1977(tu: ArrayLike) -> F64:
    r"""Critical amplification factor for a free-stream turbulence level, Mack (1977).

    .. math:: N_{crit} = -8.43 - 2.4 \ln(Tu)

    Parameters
    ----------
    tu : float or array
        Free-stream turbulence intensity as a fraction [-].

    Returns
    -------
    array
        N_crit [-].

    >>> round(float(n_critical_mack_1977(0.001)), 2)
    8.15

    References
    ----------
    Mack, L. M. (1977) AGARD CP-224.
    """
    return np.asarray(-8.43 - 2.4 * np.log(np.asarray(tu, dtype=np.float64)), dtype=np.float64)


def bubble_is_short_owen_klanfer_1953(
    re_delta_star: ArrayLike, threshold: float = OWEN_KLANFER_RE_DELTA_STAR
) -> NDArray[np.bool_]:
    r"""Owen & Klanfer (1953): a laminar separation bubble is short when Re_delta* > 400.

    .. math:: \text{short} \iff Re_{\delta^*,s} = U_e \delta^*_s / \nu > 400

    Parameters
    ----------
    re_delta_star : float or array
        Displacement-thickness Reynolds number at laminar separation [-].
    threshold : float
        The dividing value [-] (400; some authors use 450-500).

    Returns
    -------
    array of bool
        True for a short bubble (transition and reattachment), False for a long one
        (likely bursting: reported as separation).

    >>> bool(bubble_is_short_owen_klanfer_1953(600.0))
    True

    References
    ----------
    Owen, P. R. & Klanfer, L. (1953) RAE Report Aero 2508 [memory].
    """
    return np.asarray(np.asarray(re_delta_star) > threshold)


class Criterion(NamedTuple):
    """A transition criterion as listed in the catalogue."""

    summary: str
    validity: dict[str, tuple[float, float]]
    reference: str


#: Registry of transition criteria; "michel" is the default.
CRITERIA: dict[str, Criterion] = {
    "michel": Criterion(
        "Re_theta reaches 1.174 (1 + 22400/Re_s) Re_s^0.46; low free-stream turbulence",
        {"re_s": (1e5, 4e7)},
        "Michel (1951) ONERA 1/1578A; Cebeci & Smith (1974) fit",
    ),
    "granville": Criterion(
        "Instability where Re_theta reaches the Falkner-Skan critical value for the local "
        "lambda, then transition when Re_theta - Re_theta,i reaches 375 + exp(6.1 + 55 "
        "lambda_mean); low free-stream turbulence",
        {"lambda_mean": (-0.04, 0.04)},
        "Granville (1953) DTMB Report 849; instability from Orr-Sommerfeld solutions of the "
        "Falkner-Skan profiles",
    ),
    "abu_ghannam_shaw": Criterion(
        "Re_theta reaches 163 + exp(F(lambda)(1 - Tu/6.91)); needs flow.turbulence_intensity",
        {"turbulence_intensity": (0.003, 0.05), "lambda": (-0.1, 0.1)},
        "Abu-Ghannam & Shaw (1980) J. Mech. Eng. Sci. 22(5), 213-228",
    ),
    "none": Criterion(
        "No natural transition: laminar until laminar separation (trips still apply)",
        {},
        "",
    ),
}
