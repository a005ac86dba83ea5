"""Exactly solvable cases: closed-form binding energies with their sources.

Every function returns the binding energy (total minus rest energy) in
hartree, written so that no two large numbers are subtracted. Units: atomic
(hbar = e = m_e = 1, c = 1/alpha with alpha from scipy.constants); ``m`` is
the particle mass in electron masses.
"""
from __future__ import annotations

import math

from scipy.special import ai_zeros

from .units import ALPHA, C_AU

__all__ = ["schrodinger_coulomb", "dirac_coulomb", "klein_gordon_coulomb", "oscillator",
           "dirac_spin_symmetric_oscillator", "hulthen", "kratzer", "linear", "SOURCES"]

SOURCES = {
    "schrodinger_coulomb": "Bethe & Salpeter, Quantum Mechanics of One- and Two-Electron Atoms (1957)",
    "dirac_coulomb": "Sommerfeld-Dirac fine-structure formula; Bethe & Salpeter (1957) eq. 14.29",
    "klein_gordon_coulomb": "Greiner, Relativistic Quantum Mechanics: Wave Equations, ch. 1 (spin-0 Coulomb)",
    "oscillator": "3D isotropic oscillator, standard (common practice)",
    "dirac_spin_symmetric_oscillator": "spin-symmetry limit S = V; Ginocchio, Phys. Rep. 414, 165 (2005) "
                                       "(citation from memory; formula derived in the docstring)",
    "hulthen": "Flugge, Practical Quantum Mechanics (1971), Hulthen potential (from memory)",
    "kratzer": "Flugge (1971); Landau & Lifshitz, Quantum Mechanics, sec. 36 problems (from memory)",
    "linear": "zeros of the Airy function, scipy.special.ai_zeros (standard)",
}


def schrodinger_coulomb(Z: float, n: int, m: float = 1.0) -> float:
    """E = -Z^2 m / (2 n^2)."""
    return -Z * Z * m / (2 * n * n)


def dirac_coulomb(Z: float, n: int, kappa: int, m: float = 1.0) -> float:
    """Sommerfeld-Dirac levels without cancellation.

    gamma = sqrt(kappa^2 - (Z alpha)^2), n_r = n - |kappa|,
    N = sqrt(n_r^2 + 2 n_r gamma + kappa^2), E = -m c^2 (Z alpha)^2 / (N (N + n_r + gamma)).
    """
    za = Z * ALPHA
    g = math.sqrt(kappa * kappa - za * za)
    nr = n - abs(kappa)
    N = math.sqrt(nr * nr + 2 * nr * g + kappa * kappa)
    return -m * C_AU**2 * za * za / (N * (N + nr + g))


def klein_gordon_coulomb(Z: float, n: int, l: int, m: float = 1.0) -> float:
    """Spin-0 Coulomb levels: E_total = m c^2 (1 + x)^(-1/2), x = (Z alpha / d)^2,
    d = n - l - 1/2 + sqrt((l + 1/2)^2 - (Z alpha)^2); E = -m c^2 x / (sqrt(1+x) (1 + sqrt(1+x)))."""
    za = Z * ALPHA
    d = n - l - 0.5 + math.sqrt((l + 0.5) ** 2 - za * za)
    x = (za / d) ** 2
    s = math.sqrt(1 + x)
    return -m * C_AU**2 * x / (s * (1 + s))


def oscillator(k: float, n_r: int, l: int, m: float = 1.0) -> float:
    """V = k r^2/2: E = omega (2 n_r + l + 3/2), omega = sqrt(k/m)."""
    return math.sqrt(k / m) * (2 * n_r + l + 1.5)


def dirac_spin_symmetric_oscillator(k: float, n_r: int, l: int, m: float = 1.0) -> float:
    """Dirac levels for S = V = k r^2/2 (so S + V = m omega^2 r^2/2 with k = m omega^2/2).

    Notes
    -----
    With S = V the small component is Q = c (P' + kappa P/r)/(E + 2mc^2), and
    the large component obeys p^2 c^2 /(E + 2mc^2) + (S + V) = E (E the
    binding energy): a Schrodinger oscillator with the energy-dependent mass
    m* = (E + 2mc^2)/(2c^2), frequency Omega = omega sqrt(m/m*). Hence
    E = Omega (2 n_r + l + 3/2), i.e.
    E sqrt((E + 2mc^2)/(2mc^2)) = omega (2 n_r + l + 3/2), l the orbital of the
    large component; solved here by bracketing.
    """
    omega = math.sqrt(2 * k / m)
    rhs = omega * (2 * n_r + l + 1.5)
    mc2 = m * C_AU**2
    from scipy.optimize import brentq  # lazy: scipy.optimize costs ~0.2 s to import
    return brentq(lambda e: e * math.sqrt((e + 2 * mc2) / (2 * mc2)) - rhs, 0.0, rhs, xtol=1e-300, rtol=1e-15)


def hulthen(Z: float, delta: float, n: int, m: float = 1.0) -> float:
    """V = -Z delta e^(-delta r)/(1 - e^(-delta r)), l = 0: E = -(Z m/n - n delta/2)^2/(2m);
    bound while delta < 2 Z m / n^2."""
    return -((Z * m / n - n * delta / 2) ** 2) / (2 * m)


def kratzer(A: float, B: float, n_r: int, l: int, m: float = 1.0) -> float:
    """V = -A/r + B/r^2: l'(l'+1) = l(l+1) + 2 m B, E = -m A^2 / (2 (n_r + l' + 1)^2)."""
    lp = -0.5 + math.sqrt((l + 0.5) ** 2 + 2 * m * B)
    return -m * A * A / (2 * (n_r + lp + 1) ** 2)


def linear(F: float, k: int, m: float = 1.0) -> float:
    """V = F r, l = 0: E_k = (F^2 / (2m))^(1/3) (-a_k), a_k the k-th zero of Ai (k from 1)."""
    a = ai_zeros(k)[0][-1]
    return (F * F / (2 * m)) ** (1 / 3) * (-a)
