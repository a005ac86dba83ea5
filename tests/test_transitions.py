"""Radiative lines: hydrogen Lyman-alpha against published values, length = velocity, Z^4 scaling,
Dirac gauge invariance and an independent mpmath integration at Z = 92, lifetimes and branching."""
from __future__ import annotations

import functools
import math

import mpmath as mp
import pytest
import scipy.constants as sc

import boundkit
from boundkit.transitions import line, reduced_c, wigner3j

from exact_dirac_states import coefficients, radial

ALPHA = sc.fine_structure
PROTON_MASS_MEV = sc.physical_constants["proton mass energy equivalent in MeV"][0]
AU_TIME = sc.physical_constants["atomic unit of time"][0]


@functools.lru_cache(maxsize=None)
def _tr(equation, Z=1, max_n=2, nucleus=None, multipoles=("E1",)):
    return boundkit.transitions(equation, "coulomb", {"Z": Z}, max_n=max_n, nucleus_mass_mev=nucleus,
                                multipoles=multipoles)


def test_wigner3j_known_values():
    """(1 1 0; 0 0 0) = -1/sqrt(3), (1/2 1 1/2; -1/2 0 1/2) = -1/sqrt(6)? checked against the
    closed form (j 1 j; -m 0 m) = (-1)^(j-m) m / sqrt(j (j+1)(2j+1)) (Edmonds, Angular Momentum in
    Quantum Mechanics, 1957, table 2; from memory)."""
    assert wigner3j(1, 1, 0, 0, 0, 0) == pytest.approx(-1 / math.sqrt(3))
    for j in (0.5, 1.5, 2):
        for m in (0.5, 1.5) if j != 2 else (1, 2):
            if m > j:
                continue
            exact = (-1) ** round(j - m) * m / math.sqrt(j * (j + 1) * (2 * j + 1))
            assert wigner3j(j, 1, j, -m, 0, m) == pytest.approx(exact, rel=1e-14)
    # spinless E1: |<l||C_1||l+1>|^2 = l + 1 (standard)
    for l in range(4):
        assert reduced_c(-(l + 1), -(l + 2), 1) ** 2 == pytest.approx(
            (2 * l + 2) * (2 * l + 4) * wigner3j(l + 0.5, 1, l + 1.5, -0.5, 0, 0.5) ** 2)


def test_lyman_alpha_schrodinger_with_reduced_mass():
    """Hydrogen 2p -> 1s: f = 0.41641, A = 6.2649e8 /s (NIST Atomic Spectra Database, from the
    Wiese and Fuhr compilation, J. Phys. Chem. Ref. Data 38, 565 (2009); values from memory),
    lifetime 1.596 ns. With the reduced mass A scales by mu/m and f by m/mu against the
    infinite-mass values 2^13/3^9 (exact)."""
    tr = _tr("schrodinger", nucleus=PROTON_MASS_MEV)
    ly = tr.line("2p", "1s")
    assert ly.oscillator_strength == pytest.approx(0.41641, rel=2e-4)
    assert ly.einstein_a == pytest.approx(6.2649e8, rel=2e-4)
    assert tr.level("2p").lifetime_s == pytest.approx(1.596e-9, rel=5e-4)
    assert ly.gauge_agreement < 1e-10
    # Bohr model with the reduced mass: 1/lambda = R_inf (mu/m)(1 - 1/4) (Rydberg constant, CODATA)
    r_h = sc.physical_constants["Rydberg constant"][0] / (1 + sc.m_e / sc.m_p)
    assert ly.wavelength_nm == pytest.approx(1e9 / (0.75 * r_h), rel=1e-12)
    inf = _tr("schrodinger").line("2p", "1s")
    assert inf.oscillator_strength == pytest.approx(2**13 / 3**9, rel=1e-12)
    mu = 1 / (1 + sc.m_e / sc.m_p)
    assert ly.oscillator_strength == pytest.approx(inf.oscillator_strength / mu, rel=1e-11)
    assert ly.einstein_a == pytest.approx(inf.einstein_a * mu, rel=1e-11)


def test_lyman_alpha_dirac_and_klein_gordon_close_to_schrodinger():
    """Relativistic corrections to Lyman-alpha are O((Z alpha)^2) ~ 5e-5."""
    schr = _tr("schrodinger").line("2p", "1s")
    kg = _tr("klein-gordon").line("2p", "1s")
    assert kg.einstein_a == pytest.approx(schr.einstein_a, rel=2e-4)
    assert kg.gauge_agreement < 1e-10
    tr = _tr("dirac")
    for upper in ("2p1/2", "2p3/2"):
        ln = tr.line(upper, "1s1/2")
        assert ln.einstein_a == pytest.approx(schr.einstein_a, rel=2e-4)
        assert ln.gauge_agreement < 1e-10
        assert ln.long_wavelength_a == pytest.approx(ln.einstein_a, rel=1e-4)
    f = tr.line("2p1/2", "1s1/2").oscillator_strength + tr.line("2p3/2", "1s1/2").oscillator_strength
    assert f == pytest.approx(schr.oscillator_strength, rel=2e-4)
    # with the reduced mass, against the NIST values quoted above (f = 0.41641, A = 6.2649e8 /s)
    red = _tr("dirac", nucleus=PROTON_MASS_MEV)
    lines = [red.line(u, "1s1/2") for u in ("2p1/2", "2p3/2")]
    assert sum(ln.oscillator_strength for ln in lines) == pytest.approx(0.41641, rel=2e-4)
    for ln in lines:
        assert ln.einstein_a == pytest.approx(6.2649e8, rel=2e-4)
    assert red.level("2p1/2").lifetime_s == pytest.approx(1.596e-9, rel=5e-4)


def test_hydrogen_2s_two_photon_free_m1_rate():
    """Relativistic M1 2s1/2 -> 1s1/2 of hydrogen: 2.496e-6 /s (Johnson, Phys. Rev. Lett. 29,
    1123 (1972), A = 2.496e-6 Z^10 /s; from memory). It vanishes in the long-wavelength limit."""
    tr = _tr("dirac", multipoles=("E1", "M1", "E2"))
    m1 = tr.line("2s1/2", "1s1/2", "M1")
    assert m1.einstein_a == pytest.approx(2.496e-6, rel=2e-3)


def test_z4_scaling_nonrelativistic():
    """Hydrogen-like ions: A(2p -> 1s) = Z^4 A_H (exact scaling of the Schrodinger problem)."""
    a1 = _tr("schrodinger").line("2p", "1s").einstein_a
    for Z in (2, 10):
        assert _tr("schrodinger", Z=Z).line("2p", "1s").einstein_a == pytest.approx(Z**4 * a1, rel=1e-10)


def _exact_e1(upper, lower, Z):
    """Dirac E1 length-gauge amplitude from the exact mpmath states (independent integration)."""
    with mp.workdps(20):
        (nu, ku), (nl, kl) = upper, lower

        def energy(n, kappa):
            *_, eps = coefficients(n, kappa, Z, ALPHA)
            return (eps - 1) / ALPHA**2

        omega = energy(nu, ku) - energy(nl, kl)
        k = omega * ALPHA

        def norm(n, kappa):
            return mp.quad(lambda r: sum(x**2 for x in radial(n, kappa, Z, ALPHA, r)), [0, 0.05, mp.inf])

        na, nb = mp.sqrt(norm(nu, ku)), mp.sqrt(norm(nl, kl))

        def sj(n, x):
            return mp.sqrt(mp.pi / (2 * x)) * mp.besselj(n + 0.5, x)

        def integrand(r):
            Pa, Qa = radial(nu, ku, Z, ALPHA, r)
            Pb, Qb = radial(nl, kl, Z, ALPHA, r)
            x = k * r
            return (sj(1, x) * (Pa * Pb + Qa * Qb)
                    + sj(2, x) * (-(ku - kl) / 2 * (Pa * Qb + Qa * Pb) + (Qa * Pb - Pa * Qb)))

        val = mp.quad(integrand, [0, 0.005, 0.05, mp.inf]) / (na * nb) * 3 / k
        return float(val * reduced_c(ku, kl, 1)), float(omega)


def test_dirac_e1_at_z92_against_independent_integration():
    """U91+ 2p1/2 -> 1s1/2: the solver's states and quadrature against exact Dirac states
    integrated by mpmath (same multipole formula; the formula itself is checked by gauge
    invariance)."""
    res = {kappa: boundkit.solve("dirac", "coulomb", {"Z": 92}, kappa=kappa, levels=1, tol=1e-13).levels[0]
           for kappa in (-1, 1)}
    ln = line(res[1], res[-1], "E1", equation="dirac")
    q, omega = _exact_e1((2, 1), (1, -1), 92)
    assert ln.energy_hartree == pytest.approx(omega, rel=1e-12)
    assert ln.line_strength == pytest.approx(q * q, rel=1e-10)
    assert ln.gauge_agreement < 1e-9
    rate = 4 * omega**3 * ALPHA**3 * q * q / (3 * 2) / AU_TIME      # A = 4 w^3 S / (3 c^3 g_u)
    assert ln.einstein_a == pytest.approx(rate, rel=1e-10)
    # measured: A(Z = 92) / (92^4 A_H) = 1.052 (larger omega, smaller S than nonrelativistic)
    ratio = ln.einstein_a / (92**4 * _tr("schrodinger").line("2p", "1s").einstein_a)
    assert ratio == pytest.approx(1.052, abs=1e-3)


def test_lifetimes_and_branching_ratios():
    """Hydrogen 3p decays to 1s and 2s; branching 3p -> 1s is 0.88 (A = 1.6725e8 and 2.2449e7 /s,
    NIST ASD; from memory)."""
    tr = _tr("schrodinger", max_n=3, nucleus=PROTON_MASS_MEV)
    level = tr.level("3p")
    assert sum(level.branching.values()) == pytest.approx(1.0, rel=1e-14)
    assert level.branching["1s E1"] == pytest.approx(1.6725e8 / (1.6725e8 + 2.2449e7), rel=1e-3)
    assert level.lifetime_s == pytest.approx(1 / (1.6725e8 + 2.2449e7), rel=1e-3)
    assert tr.level("1s").lifetime_s == math.inf
    # no line between the degenerate 2s and 2p of the Schrodinger problem
    assert all({ln.upper, ln.lower} != {"2s", "2p"} for ln in tr.lines)
    d = tr.to_dict()
    assert set(d["lines"][0]) >= {"upper", "lower", "multipole", "energy", "wavelength_nm", "line_strength",
                                  "oscillator_strength", "einstein_a"}
    assert set(d["levels"][0]) >= {"label", "lifetime_s"}


def test_transitions_refuse_bad_input():
    with pytest.raises(ValueError, match="max_n: needs at least 2"):
        boundkit.transitions("schrodinger", max_n=1)
    with pytest.raises(ValueError, match="multipoles: M1 is computed for the Dirac equation only"):
        boundkit.transitions("schrodinger", max_n=2, multipoles=["M1"])
    with pytest.raises(ValueError, match="multipoles: 'E7' is not one of E1, M1, E2"):
        boundkit.transitions("dirac", max_n=2, multipoles=["E7"])
    with pytest.raises(ValueError, match="levels: 5s not found"):
        boundkit.transitions("schrodinger", "coulomb", {"Z": 1}, max_n=2, levels=["1s", "5s"])
    tr = _tr("schrodinger")
    s = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=0).levels[0]
    p = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=1).levels[0]
    with pytest.raises(ValueError, match="upper: 1s does not lie above 2p; swap them"):
        line(s, p, equation="schrodinger")
    assert tr.lines


def test_line_strength_error_estimate_covers_the_exact_value():
    """Hydrogen Lyman-alpha S = |<1s|r|2p>|^2 = 2^15 / 3^9 (exact; Bethe and Salpeter 1957)."""
    ln = _tr("schrodinger").line("2p", "1s")
    exact = 2**15 / 3**9
    assert abs(ln.line_strength - exact) <= ln.line_strength_error + 1e-15
    assert ln.line_strength_error < 1e-10 * exact
    d = _tr("dirac").line("2p1/2", "1s1/2")
    assert 0 < d.line_strength_error < 1e-9 * d.line_strength


def test_klein_gordon_gauges_agree_at_high_z():
    """Length form with the charge-density product, velocity form with the current: equal for exact
    states (continuity equation); measured 1e-15 at Z = 60. With the plain product they would not be."""
    tr = _tr("klein-gordon", Z=60)
    ln = tr.line("2p", "1s")
    assert ln.gauge_agreement < 1e-10
    assert 0 < ln.line_strength_error < 1e-9 * ln.line_strength
