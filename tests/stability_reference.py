"""Critical Reynolds numbers of the Falkner-Skan profiles from the Orr-Sommerfeld equation.

A self-contained reference computed with numpy and scipy only, for tests of the transition
correlations that use the critical (first-instability) Reynolds number of a laminar profile.

Mean flow
    Falkner & Skan (1931) wedge flow ``Ue = C x**m`` with Hartree's parameter
    ``beta = 2 m / (m + 1)``::

        f''' + f f'' + beta (1 - f'^2) = 0,  f(0) = f'(0) = 0,  f'(inf) = 1,
        eta = y sqrt((m + 1) Ue / (2 nu x)),  u / Ue = f'(eta).

    Solved by shooting on the wall shear f''(0) (``scipy.integrate.solve_ivp``, DOP853, with
    ``scipy.optimize.brentq``) on ``0 <= eta <= 14``; the root is searched for f''(0) >= 0,
    which selects the attached branch of Hartree (1937) for beta < 0.

Stability
    Temporal, two-dimensional, parallel-flow Orr-Sommerfeld equation in displacement-thickness
    units (lengths in delta*, velocities in Ue, ``Re = Ue delta* / nu``)::

        (U - c)(phi'' - alpha^2 phi) - U'' phi = (phi'''' - 2 alpha^2 phi'' + alpha^4 phi)
                                                 / (i alpha Re),
        phi = phi' = 0 at y = 0 and y -> inf.

    Chebyshev collocation on ``xi in [-1, 1]`` mapped to ``0 <= y < inf`` by the algebraic map
    ``y = l (1 + xi) / (1 - xi)`` (half of the points lie below ``y = l``, default l = 2);
    the four boundary conditions replace the first and last two collocation rows of the
    generalised eigenvalue problem ``A phi = c B phi``. The growth rate is the largest ``Im(c)``
    of the discrete modes with ``0 < Re(c) < 0.9`` and ``Im(c) < 0.5`` (the Tollmien-Schlichting
    family). The bounds exclude the continuous spectrum near ``c = 1`` (whose
    ``Im(c) -> 0-`` as alpha -> 0) and a few spurious eigenvalues of the collocation with
    ``Re(c)`` between 0.92 and 1 and ``Im(c)`` from 0.2 to 9 that change erratically with n
    and l (they appear with a finite domain too).

    Each evaluation takes that mode from the full QZ spectrum (``scipy.linalg.eig``) at
    n = 60 and refines it at the working resolution by inverse iteration (``lu_factor``); the
    result at the critical point is compared with the full QZ spectrum at the working
    resolution (``Critical.check``). Inverse iteration is also the more accurate of the two:
    the QZ eigenvalue of the fourth-order operator loses about 1e-6 to rounding at n = 120.

Critical point
    The critical Reynolds number is the minimum over alpha of the neutral Reynolds number,
    ``Re_crit = min_alpha Re_n(alpha)``, which is the same as the root in Re of
    ``G(Re) = max_alpha Im(c)(alpha, Re)``. The latter is what ``critical_reynolds`` solves
    (``brentq`` on log Re around a bounded Brent maximisation over alpha, after a coarse scan
    that brackets it), because G is monotonic below the critical point and needs no bracket on
    the neutral curve. ``critical_from_neutral_curve`` applies the definition directly (root
    in Re of Im(c) at fixed alpha, bounded Brent minimisation over alpha) and agrees to 1e-7.

    The attached Falkner-Skan branch ends at beta = -0.1988377 (f''(0) = 0); the table's first
    entry, beta = -0.1988, has f''(0) = 0.0052 and H = 3.985, not yet the separation profile
    (H ~ 4.03 there).

Integral quantities
    ``H = delta*/theta``; the exact Thwaites parameter of the similarity flow is
    ``lambda = theta^2 / nu dUe/dx = m (theta / x)^2 Re_x = beta * theta_eta^2`` (with
    ``theta sqrt(Ue / (nu x)) = theta_eta sqrt(2 / (m + 1))``), and the value that Thwaites'
    method gives for the same flow is ``lambda = 0.45 m / (5 m + 1)`` (its closed form for
    ``Ue = C x**m`` from a leading edge).

Published value for comparison (recalled, not re-checked against the original): Blasius
``Re_delta*,crit = 519.4`` at ``alpha delta* = 0.303`` (Jordinson 1970, J. Fluid Mech. 43)
[memory]. This module gives 519.06 at 0.3038 (-0.07 %), the same to 1e-8 for
n = 80..160, l = 1..4 and a finite domain.

Run ``python tests/stability_reference.py`` to print the table with its resolution and
neutral-curve checks (about 3 to 4 minutes on two cores; a single ``critical_reynolds`` call
takes 3 to 15 s).
"""

from __future__ import annotations

import math
import sys
import time
from dataclasses import dataclass
from functools import cache

import numpy as np
from scipy.integrate import solve_ivp
from scipy.linalg import eig, lu_factor, lu_solve
from scipy.optimize import brentq, minimize_scalar

BETAS = (-0.1988, -0.18, -0.15, -0.12, -0.1, -0.05, 0.0, 0.1, 0.2, 0.4, 0.6, 1.0)

_ETA_MAX = 14.0  # f' - 1 ~ exp(-eta^2 / 2): negligible well before this
_ODE_TOL = dict(rtol=1e-12, atol=1e-14)
_PHASE_SPEED_MAX = 0.9  # modes with Re(c) above this belong to the continuous spectrum


# --------------------------------------------------------------------------- mean flow


@dataclass(frozen=True)
class FalknerSkan:
    """One Falkner-Skan profile (attached branch).

    ``wall_shear`` is f''(0); ``delta_star_eta`` and ``theta_eta`` are the integrals over eta of
    (1 - f') and f'(1 - f'). ``u(y)`` and ``u_yy(y)`` give U and d2U/dy2 with y in units of
    delta* (so that ``int (1 - U) dy = 1``).
    """

    beta: float
    wall_shear: float
    delta_star_eta: float
    theta_eta: float
    _dense: object  # solve_ivp dense output over 0 <= eta <= _ETA_MAX

    @property
    def m(self) -> float:
        return self.beta / (2.0 - self.beta)

    @property
    def shape_factor(self) -> float:
        return self.delta_star_eta / self.theta_eta

    @property
    def lambda_exact(self) -> float:
        """theta^2/nu dUe/dx of the similarity flow: m 2/(m+1) theta_eta^2 = beta theta_eta^2."""
        return self.m * 2.0 / (self.m + 1.0) * self.theta_eta**2

    @property
    def lambda_thwaites(self) -> float:
        """Thwaites' closed form for Ue = C x**m: 0.45 m / (5 m + 1)."""
        return 0.45 * self.m / (5.0 * self.m + 1.0)

    def _state(self, y: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        eta = np.asarray(y, dtype=float) * self.delta_star_eta
        inside = eta < _ETA_MAX
        f = np.where(inside, 0.0, eta - self.delta_star_eta)
        fp = np.ones_like(eta)
        fpp = np.zeros_like(eta)
        if np.any(inside):
            s = self._dense(eta[inside])  # type: ignore[operator]
            f[inside], fp[inside], fpp[inside] = s[0], s[1], s[2]
        return f, fp, fpp

    def u(self, y: np.ndarray) -> np.ndarray:
        """U(y), y in delta* units."""
        return self._state(y)[1]

    def u_yy(self, y: np.ndarray) -> np.ndarray:
        """d2U/dy2, y in delta* units: f'''(eta) * delta_star_eta^2 from the ODE."""
        f, fp, fpp = self._state(y)
        fppp = -f * fpp - self.beta * (1.0 - fp**2)
        return fppp * self.delta_star_eta**2


def _shoot(beta: float, fpp0: float, dense: bool = False):
    """Integrate from the wall; state (f, f', f'', int(1 - f'), int f'(1 - f')).

    The attached solutions have f' increasing monotonically to 1, so a trial wall shear is too
    large if f' crosses 1 and too small if f' reaches a maximum below 1: both stop the
    integration (events 0 and 1), which keeps every trial bounded.
    """

    def rhs(_eta, s):
        f, fp, fpp = s[0], s[1], s[2]
        return [fp, fpp, -f * fpp - beta * (1.0 - fp * fp), 1.0 - fp, fp * (1.0 - fp)]

    def overshoot(_eta, s):
        return s[1] - 1.0

    def turns_back(_eta, s):
        return s[2]

    overshoot.terminal = turns_back.terminal = True
    overshoot.direction, turns_back.direction = 1.0, -1.0
    return solve_ivp(
        rhs,
        (0.0, _ETA_MAX),
        [0.0, 0.0, fpp0, 0.0, 0.0],
        method="DOP853",
        events=None if dense else (overshoot, turns_back),
        dense_output=dense,
        **_ODE_TOL,
    )


def _miss(beta: float, fpp0: float) -> float:
    """Signed miss of the far-field condition: > 0 wall shear too large, < 0 too small."""
    sol = _shoot(beta, fpp0)
    if sol.t_events[0].size:
        return 1.0
    if sol.t_events[1].size:
        return -1.0
    return float(sol.y[1, -1] - 1.0)


@cache
def falkner_skan(beta: float) -> FalknerSkan:
    """Falkner-Skan profile for Hartree's beta (attached branch, f''(0) >= 0).

    >>> p = falkner_skan(0.0)
    >>> round(p.wall_shear, 5), round(p.shape_factor, 4)
    (0.4696, 2.5911)
    """

    lo, hi = 1e-9, 3.0
    if _miss(beta, lo) > 0.0 or _miss(beta, hi) < 0.0:
        raise ValueError(f"no attached Falkner-Skan solution for beta = {beta} (separated?)")
    s = brentq(lambda v: _miss(beta, v), lo, hi, xtol=1e-15, rtol=1e-15, maxiter=200)
    sol = _shoot(beta, s, dense=True)
    if sol.status != 0 or abs(sol.y[1, -1] - 1.0) > 1e-8:
        raise RuntimeError(f"Falkner-Skan shooting failed for beta = {beta}")
    return FalknerSkan(beta, float(s), float(sol.y[3, -1]), float(sol.y[4, -1]), sol.sol)


# --------------------------------------------------------------------------- Orr-Sommerfeld


def _chebyshev(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Lobatto points xi_j = cos(pi j / n), j = 0..n, and the differentiation matrix."""
    j = np.arange(n + 1)
    x = np.cos(np.pi * j / n)
    c = np.where((j == 0) | (j == n), 2.0, 1.0) * (-1.0) ** j
    dx = x[:, None] - x[None, :]
    d = np.outer(c, 1.0 / c) / (dx + np.eye(n + 1))
    d -= np.diag(d.sum(axis=1))  # negative-sum trick for the diagonal
    return x, d


@dataclass(frozen=True)
class OrrSommerfeld:
    """Discretised Orr-Sommerfeld operator of one profile on n + 1 mapped Chebyshev points."""

    y: np.ndarray
    u: np.ndarray
    u_yy: np.ndarray
    d2: np.ndarray
    d4: np.ndarray
    bc_rows: np.ndarray  # 4 x (n+1): phi and dphi/dxi at both ends
    bc_index: np.ndarray

    @classmethod
    def build(
        cls, profile: FalknerSkan, n: int, map_length: float, y_max: float | None = None
    ) -> OrrSommerfeld:
        """Points y = l (1 + xi) / (1 - xi) on [0, inf) or, with ``y_max``, the finite map
        y = a (1 + xi) / (b - xi) on [0, y_max] with the same half-point y(xi = 0) = l."""
        xi, d = _chebyshev(n)
        if y_max is None:
            y = np.full(n + 1, np.inf)  # xi = 1 is y = inf (its row is a boundary condition)
            y[1:] = map_length * (1.0 + xi[1:]) / (1.0 - xi[1:])
            dxi_dy = (1.0 - xi) ** 2 / (2.0 * map_length)
        else:
            a = map_length * y_max / (y_max - 2.0 * map_length)
            b = 1.0 + 2.0 * a / y_max
            y = a * (1.0 + xi) / (b - xi)
            dxi_dy = (b - xi) ** 2 / (a * (1.0 + b))
        d1 = dxi_dy[:, None] * d
        d2 = d1 @ d1
        d4 = d2 @ d2
        u = np.ones(n + 1)
        u_yy = np.zeros(n + 1)
        u[1:] = profile.u(y[1:])
        u_yy[1:] = profile.u_yy(y[1:])
        eye = np.eye(n + 1)
        bc_rows = np.vstack([eye[0], d[0], d[n], eye[n]])
        return cls(y, u, u_yy, d2, d4, bc_rows, np.array([0, 1, n - 1, n]))

    def pencil(self, alpha: float, re: float) -> tuple[np.ndarray, np.ndarray]:
        """(A, B) with A phi = c B phi; the equation is multiplied by i alpha Re."""
        eye = np.eye(self.u.size)
        lap = self.d2 - alpha**2 * eye
        iar = 1j * alpha * re
        a = iar * (self.u[:, None] * lap - np.diag(self.u_yy)) - (
            self.d4 - 2.0 * alpha**2 * self.d2 + alpha**4 * eye
        )
        b = iar * lap
        a[self.bc_index] = self.bc_rows
        b[self.bc_index] = 0.0
        return a, b

    def phase_speeds(self, alpha: float, re: float) -> np.ndarray:
        """All finite eigenvalues c of the discrete problem (QZ, scipy.linalg.eig)."""
        a, b = self.pencil(alpha, re)
        c = eig(a, b, right=False, overwrite_a=True, overwrite_b=True, check_finite=False)
        return c[np.isfinite(c) & (np.abs(c) < 10.0)]

    def least_stable(self, alpha: float, re: float) -> complex:
        """The discrete mode with 0 < Re(c) < 0.9, Im(c) < 0.5 of largest Im(c).

        The bounds exclude the continuous spectrum (Re(c) near 1) and the few spurious
        eigenvalues of the collocation at y = inf (Re(c) near 1, large positive Im(c) that
        changes erratically with n).
        """
        c = self.phase_speeds(alpha, re)
        c = c[(c.real > 0.0) & (c.real < _PHASE_SPEED_MAX) & (c.imag < 0.5)]
        return complex(c[int(np.argmax(c.imag))])

    def refine(self, alpha: float, re: float, guess: complex) -> complex:
        """The eigenvalue nearest ``guess``, by inverse iteration on the pencil."""
        a, b = self.pencil(alpha, re)
        lu = lu_factor(a - guess * b, check_finite=False)
        x = np.ones(self.u.size, dtype=complex)
        c = guess
        for _ in range(40):
            z = lu_solve(lu, b @ x, check_finite=False)
            c_new = guess + np.vdot(x, x) / np.vdot(x, z)
            x = z / np.linalg.norm(z)
            if abs(c_new - c) < 1e-14:
                return complex(c_new)
            c = c_new
        raise RuntimeError(f"inverse iteration did not converge at alpha={alpha}, Re={re}")


class Stability:
    """Least-stable Tollmien-Schlichting eigenvalue of one profile at resolution n.

    Each evaluation takes the mode from a full QZ solution at a coarse resolution
    (``n_seed``) and refines it at resolution n by inverse iteration; ``check`` compares the
    result with the full QZ spectrum at resolution n.
    """

    def __init__(
        self,
        profile: FalknerSkan,
        n: int,
        map_length: float = 2.0,
        y_max: float | None = None,
        n_seed: int = 60,
    ) -> None:
        self.profile = profile
        self.fine = OrrSommerfeld.build(profile, n, map_length, y_max)
        self.seed = (
            self.fine if n <= n_seed else OrrSommerfeld.build(profile, n_seed, map_length, y_max)
        )
        self.evaluations = 0

    def eigenvalue(self, alpha: float, re: float) -> complex:
        self.evaluations += 1
        c0 = self.seed.least_stable(alpha, re)
        if self.seed is self.fine:
            return c0
        c = self.fine.refine(alpha, re, c0)
        if abs(c - c0) > 1e-2:  # refined onto another mode: fall back to the full spectrum
            c = self.fine.least_stable(alpha, re)
        return c

    def growth(self, alpha: float, re: float) -> float:
        return self.eigenvalue(alpha, re).imag

    def check(self, alpha: float, re: float) -> float:
        """|c(tracked) - c(least stable of the full spectrum at resolution n)|."""
        return abs(self.eigenvalue(alpha, re) - self.fine.least_stable(alpha, re))

    def max_growth(self, re: float, lo: float, hi: float) -> tuple[float, float]:
        """max over lo <= alpha <= hi of Im(c) at Re (bounded Brent): (ci_max, alpha)."""
        r = minimize_scalar(
            lambda a: -self.growth(a, re),
            bounds=(lo, hi),
            method="bounded",
            options={"xatol": 1e-6},
        )
        return -float(r.fun), float(r.x)

    def neutral_reynolds(self, alpha: float, re_lo: float, re_hi: float) -> float:
        """Re_n(alpha): root of Im(c) = 0 in [re_lo, re_hi] at fixed alpha."""
        lr = brentq(
            lambda v: self.growth(alpha, math.exp(v)), math.log(re_lo), math.log(re_hi), xtol=1e-10
        )
        return math.exp(lr)


@dataclass(frozen=True)
class Critical:
    re_dstar: float
    alpha: float
    phase_speed: float
    evaluations: int
    check: float  # |tracked - full-spectrum| eigenvalue at the critical point


def _critical(
    profile: FalknerSkan, n: int, map_length: float = 2.0, y_max: float | None = None
) -> Critical:
    st = Stability(profile, n, map_length, y_max)

    # 1. coarse scan: first Re (x1.5 steps) with an unstable alpha on a geometric grid
    grid = np.geomspace(0.04, 1.2, 16)
    re, peak = 20.0, None
    for _ in range(40):
        ci = np.array([st.seed.least_stable(a, re).imag for a in grid])
        if ci.max() > 0.0:
            peak = float(grid[int(np.argmax(ci))])
            break
        re *= 1.5
    if peak is None:
        raise RuntimeError(f"no instability found up to Re = {re:g} for beta = {profile.beta}")
    lo_a, hi_a = peak / 1.6, peak * 1.6

    def g(log_re: float) -> float:
        return st.max_growth(math.exp(log_re), lo_a, hi_a)[0]

    # 2. bracket G(Re) = max_alpha Im(c) = 0 (G increases with Re below the nose), solve it
    re_hi, re_lo = re, re / 1.5
    for _ in range(30):
        if g(math.log(re_lo)) < 0.0:
            break
        re_hi, re_lo = re_lo, re_lo / 1.5
    log_re = brentq(g, math.log(re_lo), math.log(re_hi), xtol=1e-9, rtol=1e-10)
    re_c = math.exp(log_re)
    _, alpha_c = st.max_growth(re_c, lo_a, hi_a)
    if min(alpha_c - lo_a, hi_a - alpha_c) < 1e-3 * alpha_c:
        raise RuntimeError(f"critical alpha on the search bound for beta = {profile.beta}")
    c = st.eigenvalue(alpha_c, re_c)
    check = st.check(alpha_c, re_c)
    if check > 1e-4:
        raise RuntimeError(f"tracked mode is not the least stable one for beta = {profile.beta}")
    return Critical(re_c, alpha_c, c.real, st.evaluations, check)


def critical_from_neutral_curve(
    beta: float,
    alpha_lo: float,
    alpha_hi: float,
    re_lo: float,
    n: int = 120,
    map_length: float = 2.0,
) -> tuple[float, float]:
    """min over alpha_lo <= alpha <= alpha_hi of the neutral Re_n(alpha): (Re_crit, alpha_crit).

    The direct form of the definition (root in Re at fixed alpha, then bounded Brent over
    alpha), used to check ``critical_reynolds``. ``re_lo`` must be below the critical value.
    """
    st = Stability(falkner_skan(beta), n, map_length)

    def re_n(alpha: float) -> float:
        hi = re_lo
        for _ in range(40):
            hi *= 1.25
            if st.growth(alpha, hi) > 0.0:
                return st.neutral_reynolds(alpha, hi / 1.25, hi)
        raise RuntimeError(f"alpha = {alpha} is outside the neutral curve")

    r = minimize_scalar(
        re_n, bounds=(alpha_lo, alpha_hi), method="bounded", options={"xatol": 1e-6}
    )
    return float(r.fun), float(r.x)


@cache
def critical_reynolds(
    beta: float, n: int = 120, map_length: float = 2.0
) -> tuple[float, float, float, float, float, float]:
    """Critical Re_delta* of the Falkner-Skan profile for Hartree's beta.

    Returns ``(re_dstar_crit, alpha_crit, H, theta_dimless, lambda_exact, lambda_thwaites)``:
    alpha_crit in 1/delta*, ``theta_dimless`` = int f'(1 - f') d eta, the lambdas as in the
    module docstring. ``n`` is the Chebyshev degree (n + 1 points), ``map_length`` the map
    parameter l in delta*.
    """
    p = falkner_skan(beta)
    crit = _critical(p, n, map_length)
    return (
        crit.re_dstar,
        crit.alpha,
        p.shape_factor,
        p.theta_eta,
        p.lambda_exact,
        p.lambda_thwaites,
    )


# --------------------------------------------------------------------------- table


def main(argv: list[str]) -> None:
    n_fine, n_coarse = 120, 80
    betas = [float(b) for b in argv] or list(BETAS)
    print(f"Orr-Sommerfeld: Chebyshev n = {n_fine} (check n = {n_coarse}), map l = 2 delta*")
    print(
        f"{'beta':>8} {'m':>9} {'fpp(0)':>8} {'H':>7} {'Re_d*,crit':>11} {'Re_th,crit':>10} "
        f"{'a d*':>7} {'c_r':>7} {'lam_exact':>10} {'lam_Thw':>9} {'dRe(n) %':>9} "
        f"{'|dc| QZ':>8} {'dRe(Rn) %':>9} {'evals':>5} {'wall s':>6} {'cpu s':>6}"
    )
    for beta in betas:
        t0, c0 = time.perf_counter(), time.process_time()
        p = falkner_skan(beta)
        fine = _critical(p, n_fine)
        t1, c1 = time.perf_counter(), time.process_time()
        coarse = _critical(p, n_coarse)
        direct, _ = critical_from_neutral_curve(
            beta, 0.95 * fine.alpha, 1.05 * fine.alpha, 0.9 * fine.re_dstar, n_fine
        )
        diff = 100.0 * (coarse.re_dstar / fine.re_dstar - 1.0)
        diff_direct = 100.0 * (direct / fine.re_dstar - 1.0)
        print(
            f"{beta:8.4f} {p.m:9.5f} {p.wall_shear:8.5f} {p.shape_factor:7.4f} "
            f"{fine.re_dstar:11.2f} {fine.re_dstar / p.shape_factor:10.2f} {fine.alpha:7.4f} "
            f"{fine.phase_speed:7.4f} {p.lambda_exact:10.5f} {p.lambda_thwaites:9.5f} "
            f"{diff:9.1e} {fine.check:8.1e} {diff_direct:9.1e} {fine.evaluations:5d} "
            f"{t1 - t0:6.1f} {c1 - c0:6.1f}",
            flush=True,
        )
    print(
        "wall/cpu s: one critical_reynolds(beta, n=120) call (the n=80 and neutral-curve "
        "checks are extra)"
    )


if __name__ == "__main__":
    main(sys.argv[1:])
