"""Exact bound-state spectra used as reference values by the test suite.

Every formula returns a *binding* energy (total energy minus rest energy) in
hartree, the quantity :func:`boundkit.solve` reports, in atomic units
(hbar = m_e = e = 1, c = 1/alpha). The fine-structure constant is taken from
:mod:`scipy.constants` (CODATA), the same source boundkit uses, so the
comparison tests the solver and not a difference of constants.

Each function names its source beside it. The relativistic formulas are
written without the catastrophic cancellation of their textbook forms
(a binding energy of 1e-5 m c^2 computed as m c^2 (x - 1) with x ~ 1 keeps
only about 11 significant digits); ``*_mp`` variants evaluate the textbook
forms in 50-digit arithmetic with mpmath so that a test can check the
rewriting.

The second half of the module holds cached solver calls, so that one solve
serves several test modules (accuracy, error estimate, states) without
being repeated.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import mpmath
import scipy.constants as sc
from scipy.optimize import brentq

ALPHA = sc.fine_structure
"""Fine-structure constant (CODATA via scipy.constants)."""
C = 1.0 / ALPHA
"""Speed of light in atomic units (c = 1/alpha)."""
HBARC_MEV_FM = sc.physical_constants["reduced Planck constant times c in MeV fm"][0]
"""hbar c in MeV fm (CODATA via scipy.constants; exact in the SI 2019)."""
BOHR_M = ALPHA * HBARC_MEV_FM / (sc.physical_constants["Hartree energy in eV"][0] * 1e-6) * sc.femto
"""The Bohr radius in metres as alpha hbar c / E_h (CODATA via scipy.constants), the one consistent with hbar c;
CODATA's tabulated a0 differs from it by 5.6e-12 relative (rounding of the tables, inside a0's uncertainty)."""

__all__ = [
    "ALPHA", "C", "HBARC_MEV_FM", "BOHR_M", "kappa_to_l", "schrodinger_coulomb", "dirac_coulomb", "dirac_coulomb_mp",
    "klein_gordon_coulomb", "klein_gordon_coulomb_mp", "oscillator", "dirac_spin_symmetric_oscillator",
    "Case", "solve_case",
]


def kappa_to_l(kappa: int) -> int:
    """Orbital l of the large component for a Dirac kappa.

    kappa = -(l+1) for j = l + 1/2 and kappa = l for j = l - 1/2
    (common practice).
    """
    if kappa == 0:
        raise ValueError("kappa must be non-zero")
    return -kappa - 1 if kappa < 0 else kappa


# ---------------------------------------------------------------------------
# Coulomb: Schrodinger, Dirac, Klein-Gordon
# ---------------------------------------------------------------------------

def schrodinger_coulomb(Z: float, n: int, mu: float = 1.0) -> float:
    """Non-relativistic hydrogen-like level E_n = -Z^2 mu / (2 n^2) (hartree).

    Source: H. A. Bethe and E. E. Salpeter, *Quantum Mechanics of One- and
    Two-Electron Atoms* (Springer, 1957) (the Bohr levels, here in atomic
    units with the reduced mass mu in units of m_e).

    Parameters
    ----------
    Z : float
        Nuclear charge number.
    n : int
        Principal quantum number, n >= 1 (independent of l).
    mu : float
        (Reduced) mass in units of the electron mass.
    """
    return -Z * Z * mu / (2.0 * n * n)


def dirac_coulomb(Z: float, n: int, kappa: int, mass: float = 1.0) -> float:
    """Dirac-Coulomb binding energy (Sommerfeld-Dirac fine-structure formula).

    Source: H. A. Bethe and E. E. Salpeter, *Quantum Mechanics of One- and
    Two-Electron Atoms* (Springer, 1957), eq. (14.29); W. Greiner,
    *Relativistic Quantum Mechanics: Wave Equations* (Springer), the
    hydrogen-atom chapter of the Dirac equation.

    Notes
    -----
    The textbook form is E = m c^2 ([1 + (Z alpha / (n_r + gamma))^2]^(-1/2) - 1)
    with gamma = sqrt(kappa^2 - (Z alpha)^2) and n_r = n - |kappa|. Writing
    N^2 = (n_r + gamma)^2 + (Z alpha)^2 = n_r^2 + 2 n_r gamma + kappa^2, the
    bracket is (n_r + gamma)/N and

        E = m c^2 ((n_r + gamma) - N) / N
          = -m c^2 (Z alpha)^2 / [N (N + n_r + gamma)],

    (multiply by N + n_r + gamma, use N^2 - (n_r + gamma)^2 = (Z alpha)^2),
    which has no cancellation: every term is positive.

    Parameters
    ----------
    Z : float
        Nuclear charge number, Z alpha < |kappa|.
    n : int
        Principal quantum number, n >= |kappa| (n > kappa for kappa > 0).
    kappa : int
        Dirac quantum number (non-zero).
    mass : float
        Particle mass in units of the electron mass.
    """
    za = Z * ALPHA
    n_r = n - abs(kappa)
    if n_r < 0 or (kappa > 0 and n_r == 0):
        raise ValueError(f"no level n={n} for kappa={kappa}")
    gamma = math.sqrt(kappa * kappa - za * za)
    N = math.sqrt(n_r * n_r + 2.0 * n_r * gamma + kappa * kappa)
    return -mass * C * C * za * za / (N * (N + n_r + gamma))


def dirac_coulomb_mp(Z: float, n: int, kappa: int, mass: float = 1.0, dps: int = 50):
    """Textbook Sommerfeld-Dirac form in ``dps``-digit arithmetic (mpmath).

    E = m c^2 ([1 + (Z alpha / (n_r + gamma))^2]^(-1/2) - 1), Bethe &
    Salpeter 1957, eq. (14.29). Used only to check :func:`dirac_coulomb`.
    Returns an ``mpmath.mpf``.
    """
    with mpmath.workdps(dps):
        alpha = mpmath.mpf(ALPHA)
        za = mpmath.mpf(Z) * alpha
        mc2 = mpmath.mpf(mass) / alpha**2
        gamma = mpmath.sqrt(kappa * kappa - za * za)
        n_r = n - abs(kappa)
        return +(mc2 * ((1 + (za / (n_r + gamma)) ** 2) ** mpmath.mpf(-0.5) - 1))


def klein_gordon_coulomb(Z: float, n: int, l: int, mass: float = 1.0) -> float:
    """Klein-Gordon (spin-0) Coulomb binding energy.

    Source: W. Greiner, *Relativistic Quantum Mechanics: Wave Equations*
    (Springer), ch. 1 (the pionic atom / Klein-Gordon Coulomb problem):

        E_total = m c^2 [1 + (Z alpha)^2 / d^2]^(-1/2),
        d = n - l - 1/2 + sqrt((l + 1/2)^2 - (Z alpha)^2).

    Notes
    -----
    With x = (Z alpha / d)^2 the binding energy m c^2 ((1 + x)^(-1/2) - 1) is
    rewritten without cancellation as

        E = -m c^2 x / (sqrt(1 + x) (1 + sqrt(1 + x))).
    """
    za = Z * ALPHA
    d = n - l - 0.5 + math.sqrt((l + 0.5) ** 2 - za * za)
    x = (za / d) ** 2
    s = math.sqrt(1.0 + x)
    return -mass * C * C * x / (s * (1.0 + s))


def klein_gordon_coulomb_mp(Z: float, n: int, l: int, mass: float = 1.0, dps: int = 50):
    """Textbook Klein-Gordon Coulomb form in ``dps``-digit arithmetic (mpmath).

    E = m c^2 ([1 + (Z alpha)^2 / d^2]^(-1/2) - 1) (Greiner, op. cit., ch. 1).
    Used only to check :func:`klein_gordon_coulomb`.
    """
    with mpmath.workdps(dps):
        alpha = mpmath.mpf(ALPHA)
        za = mpmath.mpf(Z) * alpha
        mc2 = mpmath.mpf(mass) / alpha**2
        half = mpmath.mpf(1) / 2
        d = n - l - half + mpmath.sqrt((l + half) ** 2 - za * za)
        return +(mc2 * ((1 + za * za / (d * d)) ** (-half) - 1))


# ---------------------------------------------------------------------------
# Oscillators
# ---------------------------------------------------------------------------

def oscillator(k: float, n_r: int, l: int, mass: float = 1.0) -> float:
    """3D isotropic oscillator V = k r^2 / 2: E = omega (2 n_r + l + 3/2).

    omega = sqrt(k / m); n_r is the number of radial nodes (common practice).
    """
    return math.sqrt(k / mass) * (2 * n_r + l + 1.5)


def dirac_spin_symmetric_oscillator(k: float, n_r: int, l: int, mass: float = 1.0) -> float:
    """Dirac binding energy for equal scalar and vector oscillators S = V = k r^2/2.

    Source: the spin-symmetry limit S = V of the Dirac equation, reviewed in
    J. N. Ginocchio, Phys. Rep. 414, 165 (2005) (citation from memory). The
    spectrum is derived here, so the test does not depend on the citation.

    Notes
    -----
    Derivation. Write E for the total energy, M for the mass, Sigma = S + V.
    The radial Dirac equations for P = r g (large) and Q = r f (small) are

        P' + kappa P / r = (E + M c^2 - V + S) Q / c,
        Q' - kappa Q / r = -(E - M c^2 - V - S) P / c.

    With S = V the factor E + M c^2 - V + S = E + M c^2 is a constant, so
    Q = c (P' + kappa P / r) / (E + M c^2) and the second equation gives

        -[c^2 / (E + M c^2)] (d/dr - kappa/r)(d/dr + kappa/r) P + Sigma P
            = (E - M c^2) P.

    Since (d/dr - kappa/r)(d/dr + kappa/r) = d^2/dr^2 - kappa (kappa + 1)/r^2
    and kappa (kappa + 1) = l (l + 1) for both kappa = -(l+1) and kappa = l
    (l the orbital of the large component), this is
    p^2 c^2 / (E + M c^2) + Sigma = E - M c^2 : a Schrodinger equation with
    the energy-dependent mass m* = (E + M c^2) / (2 c^2) and eigenvalue
    eps = E - M c^2 (the binding energy).

    Here Sigma = k r^2 = M omega^2 r^2 / 2 with omega = sqrt(2 k / M), the
    frequency Sigma would have for the mass M. For the mass m* it is
    Sigma = m* Omega^2 r^2 / 2 with Omega = omega sqrt(M / m*), and the
    Schrodinger oscillator gives eps = Omega (2 n_r + l + 3/2) = Omega Nq.
    With m* / M = (eps + 2 M c^2) / (2 M c^2) this is the condition

        eps sqrt((eps + 2 M c^2) / (2 M c^2)) = omega Nq,

    i.e. (E - M c^2) sqrt((E + M c^2) / (2 M c^2)) = omega Nq. Its left side
    grows monotonically from 0, so there is one root with 0 < eps <= omega Nq,
    found here with :func:`scipy.optimize.brentq`. It depends on n_r and l
    only, not on kappa: kappa = -(l+1) and kappa = l are degenerate (the
    pseudo-orbital doublets of spin symmetry). As c -> infinity,
    eps -> omega Nq (with omega of S + V, not of V alone).

    Parameters
    ----------
    k : float
        Spring constant of each of S and V (hartree/bohr^2).
    n_r : int
        Number of radial nodes of the large component.
    l : int
        Orbital of the large component.
    mass : float
        Particle mass in units of the electron mass.
    """
    mc2 = mass * C * C
    target = math.sqrt(2.0 * k / mass) * (2 * n_r + l + 1.5)

    def f(eps):
        return eps * math.sqrt((eps + 2.0 * mc2) / (2.0 * mc2)) - target

    return brentq(f, 0.0, target, xtol=1e-300, rtol=4.0 * 2.220446049250313e-16, maxiter=500)


# ---------------------------------------------------------------------------
# Cached solver calls shared by the test modules
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Case:
    """One solver call of the catalogue (hashable, so solves can be cached).

    ``channel`` is kappa for the Dirac equation and l otherwise; ``params`` is
    a tuple of (name, value) pairs; ``order`` is the finite-difference order
    (None: the package default).
    """

    equation: str
    potential: str
    params: tuple
    channel: int
    levels: int
    method: str = "auto"
    scalar: str | None = None
    order: int | None = None

    def kwargs(self) -> dict:
        key = "kappa" if self.equation == "dirac" else "l"
        return dict(equation=self.equation, potential=self.potential, params=dict(self.params),
                    levels=self.levels, method=self.method, scalar=self.scalar, order=self.order,
                    **{key: self.channel})

    @property
    def l(self) -> int:
        return kappa_to_l(self.channel) if self.equation == "dirac" else self.channel


@functools.lru_cache(maxsize=None)
def solve_case(case: Case):
    """:func:`boundkit.solve` for ``case``, computed once per test session."""
    import boundkit

    return boundkit.solve(**case.kwargs())


@functools.lru_cache(maxsize=1)
def benchmark_baselines():
    """The benchmark's own yardsticks, benchmarks/baselines.py (no boundkit in it), loaded as a module."""
    import importlib.util
    from pathlib import Path

    path = Path(__file__).resolve().parents[1] / "benchmarks" / "baselines.py"
    spec = importlib.util.spec_from_file_location("boundkit_bench_baselines", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module
