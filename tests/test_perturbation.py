"""First-order shifts of an added term beside the exact solve with it."""
from __future__ import annotations

import math

import mpmath as mp
import pytest
import scipy.constants as sc

import boundkit
from boundkit.perturbation import compare_shift, first_order_shift

ALPHA = sc.fine_structure
BOHR_FM = sc.physical_constants["Bohr radius"][0] * 1e15
HARTREE_EV = sc.physical_constants["Hartree energy in eV"][0]
U238_RMS_FM = 5.8569   # 238U charge radius (Angeli and Marinova, At. Data Nucl. Data Tables 99, 69 (2013); from memory)


def test_u91_1s_finite_size_first_order_vs_exact():
    """U91+ 1s, uniform sphere. First order with the point-nucleus 1s density
    rho = (2Z)^(2g+1) r^(2g) e^(-2Zr) / Gamma(2g+1) (exact; integrated here with mpmath):
    287.55 eV. The exact solve gives 199.02 eV (near the 198.5 eV of Johnson and Soff,
    At. Data Nucl. Data Tables 33, 405 (1985), for a Fermi distribution; from memory):
    first order overshoots by 44% because the point-nucleus density is singular at the origin."""
    (cmp,) = compare_shift("dirac", "coulomb", "uniform-sphere", {"Z": 92},
                           perturbed_params={"Z": 92, "rms_fm": U238_RMS_FM}, kappa=-1, energy_unit="eV")
    Z = 92
    with mp.workdps(25):
        g = mp.sqrt(1 - (Z * ALPHA) ** 2)
        R = mp.sqrt(mp.mpf(5) / 3) * U238_RMS_FM / BOHR_FM
        norm = (2 * Z) ** (2 * g + 1) / mp.gamma(2 * g + 1)
        dV = lambda r: Z / r - Z / (2 * R) * (3 - r**2 / R**2)  # noqa: E731
        first = float(norm * mp.quad(lambda r: r ** (2 * g) * mp.exp(-2 * Z * r) * dV(r), [0, R])) * HARTREE_EV
    assert cmp.first_order == pytest.approx(first, rel=1e-10)
    assert cmp.first_order_error < 1e-9 * first
    assert cmp.exact_shift == pytest.approx(198.5, rel=1e-2)
    assert cmp.exact_error < 1e-6
    assert cmp.relative_difference == pytest.approx(-0.445, abs=0.005)   # measured -0.4448


def test_u91_1s_uniform_sphere_exact_solve_against_shooting_and_finite_differences():
    """The exact U91+ 1s level behind the comparison above, checked the way tests/test_finite_nucleus.py
    checks finite nuclei (the finite-difference family agrees within the estimates) and against the
    independent shooting integration of tests/test_locator_shooting.py, matched at the nuclear surface
    R (where the potential has its kink). Measured: -4853.88389396 hartree, shooting agrees to 2e-13."""
    from test_locator_shooting import _matched_energy

    params = {"Z": 92, "rms_fm": U238_RMS_FM}
    lv = boundkit.solve("dirac", "uniform-sphere", params, kappa=-1, levels=1, tol=1e-12).levels[0]
    fd = boundkit.solve("dirac", "uniform-sphere", params, kappa=-1, levels=1, tol=1e-10,
                        method="finite-difference").levels[0]
    assert abs(lv.energy - fd.energy) <= 2 * (lv.error_estimate + fd.error_estimate)
    pot = boundkit.make_potential("uniform-sphere", params)
    (R,) = pot.breakpoints
    shot = _matched_energy(pot, -1, 1.0, lv.energy, 1e-8 * R, R, 40 / 92)
    assert lv.energy == pytest.approx(shot, rel=1e-11)
    (cmp,) = compare_shift("dirac", "coulomb", "uniform-sphere", {"Z": 92}, perturbed_params=params, kappa=-1,
                           energy_unit="hartree")
    assert cmp.base_energy + cmp.exact_shift == pytest.approx(shot, rel=1e-11)


def test_light_ion_first_order_close_to_exact():
    """Z = 10, rms 3 fm: first order equals (2/3) Z^4 <r^2> / n^3 to O(Z R) and the exact shift
    to 3e-4 (Schrodinger; leading-order formula as in tests/test_finite_nucleus.py)."""
    cmps = compare_shift("schrodinger", "coulomb", "uniform-sphere", {"Z": 10},
                         perturbed_params={"Z": 10, "rms_fm": 3.0}, l=0, levels=2)
    for n, c in enumerate(cmps, start=1):
        assert c.first_order == pytest.approx((2 / 3) * 10**4 * (3.0 / BOHR_FM) ** 2 / n**3, rel=2e-3)
        assert abs(c.relative_difference) < 5e-4


def test_uehling_first_order_close_to_exact():
    """Vacuum polarization is a small smooth term: first order and exact agree to ~1e-4."""
    (c,) = compare_shift("schrodinger", "coulomb", ["coulomb", "uehling"], {"Z": 20}, l=0)
    assert c.exact_shift < 0
    assert abs(c.relative_difference) < 3e-4


def test_first_order_shift_refuses_a_non_callable():
    lv = boundkit.solve("schrodinger", "coulomb", {"Z": 1}).levels[0]
    with pytest.raises(ValueError, match="delta: give a vectorised function of r"):
        first_order_shift(lv, 0.1)
    # a constant shift moves the level by exactly that constant
    assert first_order_shift(lv, lambda r: 0 * r + 1e-3).value == pytest.approx(1e-3, rel=1e-13)
    assert math.isfinite(first_order_shift(lv, lambda r: 1 / r).error)
    kg = boundkit.solve("klein-gordon", "coulomb", {"Z": 1}).levels[0]
    with pytest.raises(ValueError, match="scalar: the first-order shift of a scalar term is not implemented for "
                                         "Klein-Gordon; compare exact solves instead"):
        first_order_shift(kg, lambda r: 0 * r, scalar=True)
