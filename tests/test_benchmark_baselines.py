"""The benchmark's own baselines (benchmarks/baselines.py) against exact formulas.

The speed benchmark (benchmarks/run.py) is not run under pytest; only the
yardsticks it times boundkit against are checked here, on small sizes:
Schrodinger-Coulomb E_n = -Z^2/(2 n^2) and the Sommerfeld-Dirac formula
(Bethe & Salpeter, Quantum Mechanics of One- and Two-Electron Atoms, 1957,
eq. 14.29; standard), alpha from scipy.constants (CODATA).
"""
from __future__ import annotations

import numpy as np
import pytest
import scipy.constants as sc

from exact import benchmark_baselines

bl = benchmark_baselines()


def _hydrogen(n, l=0):
    return -1.0 / (2.0 * np.asarray(n, float) ** 2)


def test_finite_difference_baseline_converges_at_second_order():
    n = np.arange(1, 4)
    errs = [np.abs(bl.fd_hydrogen(N, 60.0, 3) - _hydrogen(n)) for N in (2000, 4000)]
    assert np.max(errs[1] / np.abs(_hydrogen(n))) < 1e-4
    # three-point stencil: halving h divides the error by 4 (O(h^2), common practice)
    assert errs[0][0] / errs[1][0] == pytest.approx(4.0, rel=0.05)


def test_finite_difference_baseline_p_levels():
    E = bl.fd_hydrogen(4000, 80.0, 3, l=1)
    assert np.max(np.abs(E - _hydrogen(np.arange(2, 5))) / np.abs(_hydrogen(np.arange(2, 5)))) < 1e-5


@pytest.mark.parametrize("l, N, h, tol", [(0, 26, 1.5, 2e-12), (1, 30, 1.5, 1e-10)])
def test_laguerre_mesh_baseline_reaches_machine_accuracy(l, N, h, tol):
    E = bl.laguerre_hydrogen(N, h, 5, l=l)
    exact = _hydrogen(np.arange(l + 1, l + 6))
    assert np.max(np.abs(E - exact) / np.abs(exact)) < tol


def test_laguerre_mesh_baseline_converges_with_points():
    exact = _hydrogen(np.arange(1, 6))
    errs = [np.max(np.abs(bl.laguerre_hydrogen(N, 1.0, 5) - exact) / np.abs(exact)) for N in (20, 30, 36)]
    assert errs[0] > 1e4 * errs[1] and errs[1] > 100 * errs[2]     # exponential convergence, not a plateau
    assert errs[2] < 1e-11


def test_dirac_exact_formula_against_textbook_form_in_high_precision():
    # textbook form E_total = m c^2 [1 + (Z alpha/(n_r + gamma))^2]^(-1/2) evaluated with 40 digits
    # (mpmath), so that subtracting m c^2 loses nothing; the benchmark's form has no cancellation
    mpmath = pytest.importorskip("mpmath")
    with mpmath.workdps(40):
        c = 1 / mpmath.mpf(sc.fine_structure)
        for Z in (1.0, 54.0, 92.0):
            for n, kappa in [(1, -1), (2, 1), (2, -2), (3, -1), (5, 4), (5, -5)]:
                g = mpmath.sqrt(kappa**2 - (Z / c) ** 2)
                binding = c**2 / mpmath.sqrt(1 + (Z / c / (n - abs(kappa) + g)) ** 2) - c**2
                assert bl.dirac_coulomb_exact(n, kappa, Z) == pytest.approx(float(binding), rel=1e-14)
    # nonrelativistic limit -Z^2/(2 n^2)
    assert bl.dirac_coulomb_exact(3, -2, 1e-3) == pytest.approx(-0.5e-6 / 9, rel=1e-9)


def test_dirac_exact_formula_rejects_missing_level():
    with pytest.raises(ValueError, match="no Dirac level n=1 in channel kappa=1"):
        bl.dirac_coulomb_exact(1, 1, 92.0)


def test_dense_pencil_is_well_conditioned():
    a, b = bl.dense_pencil(50, seed=3)
    assert np.allclose(b, b.T) and np.linalg.cond(b) <= 3.0 + 1e-9
    assert np.all(np.isfinite(bl.dense_geneig(a, b)))


def test_hulthen_exact_formula_in_rational_arithmetic():
    """The many-level row's reference: Hulthen s levels -(Z m/n - n delta/2)^2 / (2 m) (Flugge 1971,
    from memory), exact in rationals; against mpmath at 40 digits, and the delta -> 0 limit, hydrogen's
    -m Z^2 / (2 n^2)."""
    mpmath = pytest.importorskip("mpmath")
    m = 273.13243953150706
    with mpmath.workdps(40):
        for n in (1, 2, 30, 73):
            want = -((mpmath.mpf(m) / n - n * mpmath.mpf(0.1) / 2) ** 2) / (2 * mpmath.mpf(m))
            assert bl.hulthen_exact(n, m, 1, 0.1) == pytest.approx(float(want), rel=1e-15)
    assert bl.hulthen_exact(3, 2.0, 1.0, 1e-12) == pytest.approx(-2.0 / 18, rel=1e-10)


def test_hydrogen_dipole_integrals_against_closed_form_and_quadrature():
    """<1s|r|2p> = 2^7 sqrt(6) / 3^5 bohr (Bethe & Salpeter 1957; from memory, and checked by the quadrature), and higher pairs
    against mpmath quadrature of the exact radial functions written out here (independent of the rational sum)."""
    import math

    import mpmath as mp

    assert bl.hydrogen_dipole_exact(2, 1, 1, 0) == pytest.approx(2**7 * math.sqrt(6) / 3**5, rel=1e-15)
    mp.mp.dps = 30

    def R(n, l, r):
        norm = mp.sqrt((mp.mpf(2) / n) ** 3 * mp.factorial(n - l - 1) / (2 * n * mp.factorial(n + l)))
        return norm * mp.exp(-r / n) * (2 * r / n) ** l * mp.laguerre(n - l - 1, 2 * l + 1, 2 * r / n)

    for n, l, n2, l2 in [(8, 1, 3, 0), (8, 7, 7, 6), (5, 2, 4, 3)]:
        ref = abs(mp.quad(lambda r: R(n, l, r) * R(n2, l2, r) * r**3, [0, 10, 40, 100, mp.inf]))
        assert bl.hydrogen_dipole_exact(n, l, n2, l2) == pytest.approx(float(ref), rel=1e-14)


def test_yukawa_critical_length_baseline():
    """The benchmark's zero-energy integration reaches the published critical screening: Rogers, Graboske &
    Harwood, Phys. Rev. A 1, 1577 (1970), 1/D_c = 1.19061 (from memory), i.e. D_c = 0.83990 to their digits."""
    d = bl.yukawa_1s_critical_length()
    assert 1 / d == pytest.approx(1.19061, abs=1e-5)
