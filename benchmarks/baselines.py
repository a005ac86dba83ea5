"""Reference solvers and exact formulas carried by the benchmark suite.

Nothing here imports boundkit: these are the yardsticks boundkit is timed
against in the same run (benchmarks/run.py), and their accuracy is checked
against the exact formulas in tests/test_benchmark_baselines.py.

(a) Uniform three-point finite differences for the radial Schrodinger
    equation of hydrogen, u'' on r in (0, R]:

        -u''/2 - (Z/r) u = E u,   u(0) = u(R + h) = 0,
        r_i = i h (i = 1..N), h = R/(N + 1),
        -u''(r_i) ~ (-u_{i-1} + 2 u_i - u_{i+1}) / h^2,

    a symmetric tridiagonal matrix; its lowest k eigenvalues come from
    scipy.linalg.eigh_tridiagonal (LAPACK bisection + inverse iteration).
    Error O(h^2) (common practice).

(b) Lagrange-Laguerre mesh, x-regularized, Gauss approximation (formulas
    from memory of D. Baye, "The Lagrange-mesh method", Phys. Rep. 565, 1
    (2015), sec. 3.4, and D. Baye & P.-H. Heenen, J. Phys. A 19, 2041 (1986);
    verified here only by the accuracy they reach on hydrogen). Mesh points
    x_i are the zeros of the Laguerre polynomial L_N, r_i = h x_i, the
    regularized Lagrange functions are
    f_i(x) = (-1)^i x_i^(-1/2) x L_N(x) e^(-x/2) / (x - x_i), and with the
    Gauss quadrature the matrix of -d^2/dx^2 is

        T_ii = (4 + (4N + 2) x_i - x_i^2) / (12 x_i^2),
        T_ij = (-1)^(i-j) (x_i + x_j) / (sqrt(x_i x_j) (x_i - x_j)^2),  i != j,

    while a local potential is diagonal, V_ij = V(h x_i) delta_ij. The
    Hamiltonian H = T / (2 h^2) + diag(l(l+1)/(2 r_i^2) - Z/r_i) is real
    symmetric: one eigh gives all levels.

(c) A dense 200 x 200 generalized eigenproblem A x = lambda B x
    (scipy.linalg.eig with right eigenvectors, QZ), random A and a random
    symmetric positive definite, well-conditioned B, fixed seed, one BLAS
    thread: a unit of machine speed.

Exact formulas (see /work/shared/REFERENCES.md): Schrodinger-Coulomb
E_n = -Z^2 / (2 n^2) (Bethe & Salpeter 1957); Dirac-Coulomb binding energy in
the cancellation-free Sommerfeld-Dirac form
E = -m c^2 (Z alpha)^2 / [N (N + n_r + gamma)], gamma = sqrt(kappa^2 - (Z alpha)^2),
N = sqrt(n_r^2 + 2 n_r gamma + kappa^2) (Bethe & Salpeter eq. 14.29), in
hartree with m = 1, c = 1/alpha, alpha from scipy.constants (CODATA).
Hulthen, l = 0: E_n = -(Z m/n - n delta/2)^2 / (2 m), bound while n^2 delta < 2 Z m (Flugge,
Practical Quantum Mechanics, 1971; citation from memory), evaluated in exact rational arithmetic
from the binary values of m and delta (near the threshold the difference loses digits in double).
Hydrogen radial dipole integrals R = integral_0^inf R_nl R_n'l' r^3 dr from the exact radial functions
R_nl = sqrt(N) e^(-r/n) (2r/n)^l L^(2l+1)_(n-l-1)(2r/n), N = (2/n)^3 (n-l-1)! / (2n (n+l)!) (Bethe &
Salpeter 1957, sec. 3), term by term with integral_0^inf r^k e^(-a r) dr = k! / a^(k+1), in exact
rational arithmetic up to the final square root of the norms.
Critical screening length of the Yukawa 1s level (V = -exp(-r/D)/r, Z = m = 1): the D where the
zero-energy s-wave solution of -u''/2 + V u = 0, u(0) = 0, turns flat far out (u'(inf) = 0), by DOP853
from the series start u = r - r^2 + (1 + 1/D) r^3/3 to r = 40 bohr and brentq on D; Rogers, Graboske &
Harwood, Phys. Rev. A 1, 1577 (1970) list 1/D = 1.19061 (from memory), D = 0.8399, which this reaches.
"""
from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import scipy.constants as sc
import scipy.linalg as sla
from scipy.special import roots_laguerre
from threadpoolctl import threadpool_limits

__all__ = ["hydrogen_exact", "dirac_coulomb_exact", "hulthen_exact", "hydrogen_dipole_exact", "fd_hydrogen",
           "laguerre_hydrogen", "dense_geneig", "dense_pencil"]


def hydrogen_exact(n, Z: float = 1.0) -> np.ndarray:
    """Schrodinger-Coulomb binding energies -Z^2/(2 n^2) in hartree."""
    n = np.asarray(n, dtype=float)
    return -Z**2 / (2.0 * n**2)


def _hydrogen_terms(n: int, l: int) -> tuple[Fraction, list[tuple[int, Fraction]]]:
    """(N, [(power k, coefficient)]) with R_nl = sqrt(N) e^(-r/n) sum coefficient r^k (module docstring)."""
    m, alpha = n - l - 1, 2 * l + 1
    norm = Fraction(2, n) ** 3 * math.factorial(m) / (2 * n * math.factorial(n + l))
    terms = [(l + j, (-1) ** j * Fraction(math.comb(m + alpha, m - j), math.factorial(j)) * Fraction(2, n) ** (l + j))
             for j in range(m + 1)]
    return norm, terms


def hydrogen_dipole_exact(n: int, l: int, n2: int, l2: int) -> float:
    """|integral_0^inf R_nl R_n2l2 r^3 dr| of hydrogen (Z = 1, bohr), exact up to the last rounding."""
    (na, ta), (nb, tb) = _hydrogen_terms(n, l), _hydrogen_terms(n2, l2)
    a = Fraction(1, n) + Fraction(1, n2)
    total = sum(ca * cb * math.factorial(ka + kb + 3) / a ** (ka + kb + 4) for ka, ca in ta for kb, cb in tb)
    return abs(float(total)) * math.sqrt(float(na * nb))


def dirac_coulomb_exact(n: int, kappa: int, Z: float) -> float:
    """Dirac-Coulomb binding energy (hartree, m = 1), cancellation-free form."""
    c = 1.0 / sc.fine_structure
    n_r = n - abs(kappa)
    if n_r < 0 or (kappa > 0 and n_r < 1):
        raise ValueError(f"no Dirac level n={n} in channel kappa={kappa}")
    gamma = math.sqrt(kappa**2 - (Z / c) ** 2)
    N = math.sqrt(n_r**2 + 2 * n_r * gamma + kappa**2)
    return -Z**2 / (N * (N + n_r + gamma))        # m c^2 (Z alpha)^2 = Z^2 hartree


def hulthen_exact(n: int, m: float, Z: float, delta: float) -> float:
    """Hulthen s-level binding energy (hartree) for reduced mass m, in exact rational arithmetic."""
    m, Z, delta = Fraction(m), Fraction(Z), Fraction(delta)
    return float(-((Z * m / n - n * delta / 2) ** 2) / (2 * m))


def yukawa_1s_critical_length() -> float:
    """The Yukawa 1s critical screening length D_c (bohr, Z = 1), by zero-energy integration (see the module
    docstring)."""
    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq

    def slope_far(D: float) -> float:
        r0 = 1e-6
        y0 = [r0 - r0**2 + (1 + 1 / D) * r0**3 / 3, 1 - 2 * r0 + (1 + 1 / D) * r0**2]
        sol = solve_ivp(lambda r, y: [y[1], -2 * math.exp(-r / D) / r * y[0]], (r0, 40.0), y0,
                        method="DOP853", rtol=1e-13, atol=1e-16)
        return float(sol.y[1, -1])

    return brentq(slope_far, 0.7, 1.0, xtol=1e-15, rtol=1e-15)


def fd_hydrogen(N: int = 32000, R: float = 120.0, levels: int = 5, Z: float = 1.0, l: int = 0) -> np.ndarray:
    """Lowest ``levels`` energies (hartree) of baseline (a): uniform 3-point FD on (0, R]."""
    h = R / (N + 1)
    r = h * np.arange(1, N + 1)
    diag = 1.0 / h**2 + l * (l + 1) / (2 * r**2) - Z / r
    off = np.full(N - 1, -0.5 / h**2)
    return sla.eigh_tridiagonal(diag, off, select="i", select_range=(0, levels - 1), eigvals_only=True)


def laguerre_hydrogen(N: int = 26, h: float = 0.6, levels: int = 5, Z: float = 1.0, l: int = 0) -> np.ndarray:
    """Lowest ``levels`` energies (hartree) of baseline (b): regularized Lagrange-Laguerre mesh."""
    x, _ = roots_laguerre(N)
    i = np.arange(N)
    sign = np.where((i[:, None] - i[None, :]) % 2 == 0, 1.0, -1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        T = sign * (x[:, None] + x[None, :]) / (np.sqrt(np.outer(x, x)) * (x[:, None] - x[None, :]) ** 2)
    T[i, i] = (4.0 + (4 * N + 2) * x - x**2) / (12.0 * x**2)
    r = h * x
    H = T / (2 * h**2) + np.diag(l * (l + 1) / (2 * r**2) - Z / r)
    return sla.eigh(H, eigvals_only=True, subset_by_index=(0, levels - 1))


def dense_pencil(n: int = 200, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Random A and well-conditioned symmetric positive definite B (cond(B) <= 3)."""
    rng = np.random.default_rng(seed)
    a = rng.standard_normal((n, n))
    q, _ = np.linalg.qr(rng.standard_normal((n, n)))
    b = (q * rng.uniform(1.0, 3.0, n)) @ q.T
    return a, b


def dense_geneig(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Baseline (c): one dense generalized eig with right eigenvectors, one BLAS thread."""
    with threadpool_limits(limits=1, user_api="blas"):
        w, _ = sla.eig(a, b)
    return w
