"""Solutions of the tail alone (free or Coulomb), used to read off phase shifts.

Beyond the matching radius the potential is its tail, V = 0 or V = -Z_t/r.
The tail equation has a regular solution F and an irregular one G, known in
closed form. Each is described by its value and derivative at the matching
radius and by a complex number c with

    f(r) ~ Im(c e^(i Theta)),   Theta = k r - eta ln(2 k r) - l pi / 2,

i.e. f ~ |c| sin(Theta + arg c) far out (l: orbital of the large component).

Wave number and Sommerfeld parameter, E the kinetic energy (total minus rest
energy, never a difference of two large numbers):

* Schrodinger: k^2 = 2 m E, eta = -Z_t m / k;
* Klein-Gordon, Dirac: k^2 c^2 = E (E + 2 m c^2),
  eta = -Z_t (E + m c^2) / (c^2 k).

eta < 0 for an attractive tail (the sign convention of ``mpmath.coulombf``).

Tails:

* free: F = x j_l(x), G = -x y_l(x), x = k r (Riccati-Bessel, scipy.special);
  c_F = 1, c_G = i.
* Coulomb, Schrodinger and Klein-Gordon: F = F_L(eta, k r), G = G_L(eta, k r)
  (``mpmath.coulombf``, ``mpmath.coulombg``), L = l for Schrodinger and
  L (L + 1) = l (l + 1) - (Z_t alpha)^2 for Klein-Gordon (the 1/r^2 part of
  the Klein-Gordon Coulomb equation); c_F = e^(i theta), c_G = i e^(i theta),
  theta = sigma_L + (l - L) pi / 2 with sigma_L = arg Gamma(L + 1 + i eta).
* Coulomb, Dirac: the closed form of the Mott problem. In units hbar = m =
  c = 1 (x = m c r, W = 1 + E/(m c^2), p = k/(m c), y = Z_t alpha,
  eta_D = y W / p = -eta) and for g = +gamma (regular) or g = -gamma
  (irregular), gamma = sqrt(kappa^2 - y^2),

      Phi_g = (2 p x)^g e^(-i p x + i xi_g) (g + i eta_D) 1F1(g + 1 + i eta_D; 2 g + 1; 2 i p x),
      e^(2 i xi_g) = -(kappa - i y / p) / (g + i eta_D),
      P = sqrt(W + 1) Re Phi_g,   Q = -sqrt(W - 1) Im Phi_g,

  solve P' = -kappa P/x + (W + 1 + y/x) Q, Q' = kappa Q/x - (W - 1 + y/x) P.
  From the large-|z| form of 1F1,
  P ~ sqrt(W + 1) Gamma(2 g + 1) e^(-pi eta_D / 2) / |Gamma(g + i eta_D)|
  cos(p x + eta_D ln 2 p x + xi_g - pi g / 2 - arg Gamma(g + i eta_D)), so
  c_g = sqrt(W + 1) Gamma(2 g + 1) e^(-pi eta_D / 2) / |Gamma(g + i eta_D)|
  e^(i [(l + 1) pi/2 + xi_g - pi g/2 - arg Gamma(g + i eta_D)]).
  (Derived here from the standard 1F1 asymptotics; the ODE and the
  asymptotic phase are checked with mpmath in the tests.) e^(2 i xi_g)
  fixes xi_g only modulo pi, and the other branch flips the sign of the
  solution and moves its phase by pi; the branch taken is the one
  continuous with the Schrodinger phase: theta -> sigma_l =
  arg Gamma(l + 1 + i eta) as c -> infinity, for either sign of kappa and
  of the charge (:func:`_xi`).

The reference phase returned, theta = arg c_F, is reduced to (-pi, pi].

From F and G the module forms F^ ~ sin(Theta + theta_F) and
G^ ~ cos(Theta + theta_F), theta_F = arg c_F the reference (Coulomb) phase.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import spherical_jn, spherical_yn

from ..equations.schrodinger import inverse_square_order
from ..units import C_AU

__all__ = ["wave_number", "sommerfeld", "Reference", "reference_at", "free_zero_count", "inverse_square_shift"]

_DPS = 30   # mpmath precision (digits) for the Coulomb functions; near-integer 2 gamma needs headroom


def wave_number(equation: str, E, mass: float):
    """k (1/bohr) of kinetic energy E (hartree) for a particle of mass ``mass`` (atomic units).

    Notes
    -----
    Schrodinger k^2 = 2 m E; Klein-Gordon and Dirac k^2 c^2 = E (E + 2 m c^2),
    written with E itself so that there is no cancellation of rest energies.
    """
    E = np.asarray(E, dtype=float)
    if equation == "schrodinger":
        return np.sqrt(2 * mass * E)
    return np.sqrt(E * (E + 2 * mass * C_AU**2)) / C_AU


def sommerfeld(equation: str, E, mass: float, tail_charge: float):
    """Sommerfeld parameter eta of a tail V ~ -Z_t/r (eta < 0 for attraction).

    Notes
    -----
    Schrodinger eta = -Z_t m / k; Klein-Gordon and Dirac
    eta = -Z_t (E + m c^2) / (c^2 k) (-> -Z_t m / k as c -> infinity).
    """
    E = np.asarray(E, dtype=float)
    k = wave_number(equation, E, mass)
    if equation == "schrodinger":
        return -tail_charge * mass / k
    return -tail_charge * (E / C_AU**2 + mass) / k


@dataclass(frozen=True)
class Reference:
    """Tail solutions at one radius: F^ ~ sin(Theta + theta), G^ ~ cos(Theta + theta).

    ``F``, ``G`` are (u, du/dr) pairs (floats for a free tail, mpmath numbers for a Coulomb
    tail, where they may lie far outside the double range); ``theta`` the reference phase
    (0 for a free tail, the Coulomb phase otherwise); ``eta`` the Sommerfeld
    parameter (0 for a free tail); ``k`` the wave number.
    """

    F: tuple
    G: tuple
    theta: float
    eta: float
    k: float


def _normalised(F, G, cF, cG):
    """F^ = F / |cF| ~ sin(Theta + arg cF) and G^ = (G - x F) / (y |cF|) ~ cos(Theta + arg cF),
    x + i y = cG / cF; in mpmath, because F and G can differ by hundreds of orders of
    magnitude (a strong repulsive Coulomb barrier)."""
    import mpmath  # lazy: only Coulomb-tail references need it
    z = cG / cF
    x, y = mpmath.re(z), mpmath.im(z)
    a = abs(cF)
    Fh = (F[0] / a, F[1] / a)
    Gh = ((G[0] - x * F[0]) / (y * a), (G[1] - x * F[1]) / (y * a))
    return Fh, Gh, float(mpmath.arg(cF))


def reference_at(eq, E: float, R: float, tail_charge: float, p_R: float, tail_b: float = 0.0) -> Reference:
    """Regular and irregular tail solutions of channel ``eq`` at radius R (bohr).

    ``p_R`` is the equation's p(E) at R (needed to turn the Dirac small
    component into du/dr); ``tail_b`` the B of an inverse-square tail
    V ~ -Z_t/r + B/r^2 (Schrodinger), whose Coulomb functions have the order L
    with L (L + 1) = l (l + 1) + 2 m B.
    """
    import mpmath  # lazy: only Coulomb-tail references need it
    name, m = eq.name, eq.mass
    k = float(wave_number(name, E, m))
    l = eq.l
    if tail_charge == 0.0 and tail_b == 0.0:
        x = k * R
        F = (x * spherical_jn(l, x), k * (spherical_jn(l, x) + x * spherical_jn(l, x, derivative=True)))
        G = (-x * spherical_yn(l, x), -k * (spherical_yn(l, x) + x * spherical_yn(l, x, derivative=True)))
        return Reference(F, G, 0.0, 0.0, k)
    eta = float(sommerfeld(name, E, m, tail_charge))
    with mpmath.workdps(_DPS):
        if name == "dirac":
            F, G, cF, cG = _dirac_coulomb(eq.kappa, l, E, m, tail_charge, R, p_R)
        else:
            if name == "schrodinger":
                L = l if tail_b == 0.0 else inverse_square_order(l, m, tail_b)
            else:
                L = _kg_L(l, tail_charge)
            rho = mpmath.mpf(k) * R

            def pair(fun):
                # (L + 1) f_L' = ((L + 1)^2 / rho + eta) f_L - sqrt((L + 1)^2 + eta^2) f_(L+1), for F and G
                # alike (the standard Coulomb-function recurrence, e.g. Abramowitz & Stegun 14.2)
                v, v1 = fun(L, eta, rho), fun(L + 1, eta, rho)
                d = (((L + 1) ** 2 / rho + eta) * v - mpmath.sqrt((L + 1) ** 2 + eta**2) * v1) / (L + 1)
                return (v, d * k)

            F, G = pair(mpmath.coulombf), pair(mpmath.coulombg)
            th = mpmath.im(mpmath.loggamma(L + 1 + 1j * eta)) + (l - L) * mpmath.pi / 2
            cF = mpmath.expj(th)
            cG = 1j * cF
        Fh, Gh, th = _normalised(F, G, cF, cG)
    return Reference(Fh, Gh, th, eta, k)


def inverse_square_shift(eq, E: float, tail_charge: float, tail_b: float) -> float:
    """The phase an inverse-square tail B/r^2 adds to the Coulomb (or free) one:
    sigma_L - sigma_l + (l - L) pi / 2, L (L + 1) = l (l + 1) + 2 m B, sigma_L = arg Gamma(L + 1 + i eta)
    taken continuous in eta (imaginary part of log Gamma), so it is continuous in E and tends to
    (l - L) pi / 2, the phase of B/r^2 alone, at high energy (Schrodinger)."""
    import mpmath  # lazy: only long tails need it
    l, m = eq.l, eq.mass
    eta = float(sommerfeld(eq.name, E, m, tail_charge)) if tail_charge else 0.0
    with mpmath.workdps(_DPS):
        L = -mpmath.mpf(0.5) + mpmath.sqrt((l + mpmath.mpf(0.5)) ** 2 + 2 * mpmath.mpf(m) * tail_b)
        return float(mpmath.im(mpmath.loggamma(L + 1 + 1j * eta)) - mpmath.im(mpmath.loggamma(l + 1 + 1j * eta))
                     + (l - L) * mpmath.pi / 2)


def _kg_L(l: int, Z: float) -> float:
    """L with L (L + 1) = l (l + 1) - (Z alpha)^2 (Klein-Gordon Coulomb tail)."""
    return -0.5 + math.sqrt((l + 0.5) ** 2 - (Z / C_AU) ** 2)    # real: the channel checks Z alpha < l + 1/2


def _dirac_coulomb(kappa: int, l: int, E: float, m: float, Z: float, R: float, p_R: float):
    """(P, dP/dr) of the regular and irregular Dirac-Coulomb solutions and their coefficients c."""
    import mpmath  # lazy: only Coulomb-tail references need it
    c = C_AU
    y = mpmath.mpf(Z) / c
    gamma = mpmath.sqrt(kappa**2 - y**2)      # real: the channel checks Z alpha < |kappa|
    eps = mpmath.mpf(E) / (m * c * c)              # W - 1, exact
    W = 1 + eps
    p = mpmath.sqrt(eps * (eps + 2))
    etaD = y * W / p
    x = mpmath.mpf(m * c) * R
    out, coef = [], []
    for g in (gamma, -gamma):
        xi = _xi(kappa, y, p, g, etaD)
        Phi = ((2 * p * x) ** g * mpmath.exp(-1j * p * x + 1j * xi) * (g + 1j * etaD)
               * mpmath.hyp1f1(g + 1 + 1j * etaD, 2 * g + 1, 2j * p * x))
        P = mpmath.sqrt(W + 1) * mpmath.re(Phi)
        Q = -mpmath.sqrt(eps) * mpmath.im(Phi)
        # du/dr = c Q / p(R) - kappa P / R, with w = c Q in the factorized form
        out.append((P, c * Q / p_R - kappa * P / R))
        lg = mpmath.loggamma(g + 1j * etaD)
        amp = mpmath.sqrt(W + 1) * mpmath.gamma(2 * g + 1) * mpmath.exp(-mpmath.pi * etaD / 2 - mpmath.re(lg))
        phase = (l + 1) * mpmath.pi / 2 + xi - mpmath.pi * g / 2 - mpmath.im(lg)
        coef.append(amp * mpmath.expj(phase))
    return out[0], out[1], coef[0], coef[1]


def _xi(kappa: int, y, p, g, etaD):
    """xi with e^(2 i xi) = -(kappa - i y/p) / (g + i etaD), on the branch that makes the Coulomb phase
    tend to sigma_l as c -> infinity.

    e^(2 i xi) fixes xi only modulo pi, and xi + pi flips the sign of the solution and moves its phase
    by pi (delta and e^(2 i theta) do not change). Half the principal argument gave theta = sigma_l + pi
    for kappa > 0 and an attractive tail (and sigma_l for a repulsive one). Here
    2 xi = arg(-kappa + i y/p) - arg(g + i etaD), the second argument principal and the first taken in
    (-pi/2, pi/2) for kappa < 0 and as -pi - atan(y / (p kappa)) for kappa > 0: as c -> infinity
    (y/p -> etaD, g -> |kappa|) xi -> 0 for kappa < 0 and -pi/2 - atan(etaD / kappa) for kappa > 0,
    which make theta = sigma_l (and theta -> 0 as Z -> 0 from either side).
    """
    import mpmath  # lazy: only Coulomb-tail references need it
    first = mpmath.atan(y / (p * -kappa)) - (mpmath.pi if kappa > 0 else 0)
    return (first - mpmath.arg(g + 1j * etaD)) / 2


def free_zero_count(l: int, x: float) -> int:
    """Number of zeros of the Riccati-Bessel function x j_l(x) on (0, x)."""
    if x <= l:
        return 0     # the first zero of j_l lies above l + 1/2
    # the grid ends at x itself: a zero between the last step and x counts (it decides the branch)
    xs = np.append(np.arange(max(l, 1e-3), x, 0.05), x)
    v = np.sign(spherical_jn(l, xs))
    v = v[v != 0]
    return int(np.count_nonzero(v[1:] != v[:-1]))
