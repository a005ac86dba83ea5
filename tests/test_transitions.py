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
    """(1 1 0; 0 0 0) = -1/sqrt(3) (from (j j 0; m -m 0) = (-1)^(j-m)/sqrt(2j+1)), and the closed form
    (j 1 j; -m 0 m) = (-1)^(j-m) m / sqrt(j (j+1)(2j+1)) (Edmonds, Angular Momentum in Quantum
    Mechanics, 1957, table 2; from memory, both standard)."""
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
    Wiese and Fuhr compilation, J. Phys. Chem. Ref. Data 38, 565 (2009)), lifetime 1.596 ns. These
    three values are recalled from memory, not read from the database here; the recollection is
    consistent with the exact infinite-mass f = 2^13/3^9 = 0.416197 divided by mu/m (0.416424) to
    2e-5, which is why the comparison uses rel 2e-4. With the reduced mass A scales by mu/m and f by
    m/mu against the infinite-mass values (exact)."""
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
    1123 (1972), A = 2.496e-6 Z^10 /s; value and citation from memory, not confirmed against the
    paper here). The leading-order expression A = (alpha^11 Z^10 / 972)(m c^2 / hbar) (also recalled;
    the two recollections agree: 2.4958e-6 /s) is met to its O((Z alpha)^2) ~ 5e-5 corrections
    (measured 5.7e-5). It vanishes in the long-wavelength limit."""
    tr = _tr("dirac", multipoles=("E1", "M1", "E2"))
    m1 = tr.line("2s1/2", "1s1/2", "M1")
    assert m1.einstein_a == pytest.approx(2.496e-6, rel=2e-3)
    leading = ALPHA**11 / 972 * sc.m_e * sc.c**2 / sc.hbar
    assert m1.einstein_a == pytest.approx(leading, rel=2e-4)


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


def _closed_form_lyman_alpha(Z, upper):
    """Dirac-Coulomb 2p -> 1s1/2 in the long-wavelength limit, in closed form (derived here).

    a = Z alpha, gamma_k = sqrt(k^2 - a^2), P = r g, Q = r f in the solver's convention
    (P' = -kappa P/r + (E + 2c^2 - V) Q/c, Q' = kappa Q/r - (E - V) P/c). Inserting
    P = r^gamma e^(-lam r) (p0 + p1 r), Q = r^gamma e^(-lam r) (q0 + q1 r) and matching powers of r:

    * 1s1/2 and 2p3/2 (no radial node): P = C sqrt(1 + eps) r^gamma e^(-lam r),
      Q = -C sqrt(1 - eps) r^gamma e^(-lam r), eps = gamma/|kappa|, lam = Z/|kappa|,
      C^2 = (2 lam)^(2 gamma + 1) / (2 Gamma(2 gamma + 1));
    * 2p1/2 (kappa = +1, one node), N = sqrt(2 + 2 gamma_1), eps = N/2, lam = Z/N, b = 2 gamma_1 + 1,
      t = 2 lam (N - 1)/b: P = C sqrt(1 + eps) r^gamma e^(-lam r) [(N - 2) - t r],
      Q = -C sqrt(1 - eps) r^gamma e^(-lam r) [N - t r], C from the normalisation (Gamma functions).
      :func:`_lyman_alpha_coefficient_residual` checks these coefficients against the equations.

    The radial integral R = integral r (P_2p P_1s + Q_2p Q_1s) dr is then a finite sum of
    Gamma(2 gamma + 2 + s) / (Z + lam)^(2 gamma + 2 + s) (for 2p3/2: Gamma(gamma_1 + gamma_2 + 2) /
    (3Z/2)^(gamma_1 + gamma_2 + 2)). Energies without cancellation: E_1s = -c^2 a^2/(1 + gamma_1),
    E_2p3/2 = -c^2 a^2/(2 (2 + gamma_2)), E_2p1/2 = -c^2 a^2/((1 + gamma_1)(N + 2)).
    A = 4 omega^3 |<kappa_u||C_1||kappa_l>|^2 R^2 / (3 c^3 g_u) with |<C_1>|^2 = 2/3 (p1/2 - s1/2) and
    4/3 (p3/2 - s1/2) (standard 3j values), g_u = 2j + 1. Returns (R, omega, A in 1/s)."""
    with mp.workdps(40):
        c = 1 / mp.mpf(ALPHA)
        a = Z / c
        g1 = mp.sqrt(1 - a**2)
        e_1s = -c**2 * a**2 / (1 + g1)
        c1 = mp.sqrt((2 * Z) ** (2 * g1 + 1) / (2 * mp.gamma(2 * g1 + 1)))
        p_1s, q_1s = c1 * mp.sqrt(1 + g1), -c1 * mp.sqrt(1 - g1)
        if upper == "2p3/2":
            g2 = mp.sqrt(4 - a**2)
            eps, lam = g2 / 2, mp.mpf(Z) / 2
            energy = -c**2 * a**2 / (2 * (2 + g2))
            c2 = mp.sqrt((2 * lam) ** (2 * g2 + 1) / (2 * mp.gamma(2 * g2 + 1)))
            R = c2 * (mp.sqrt(1 + eps) * p_1s - mp.sqrt(1 - eps) * q_1s) * mp.gamma(g1 + g2 + 2) / (
                Z + lam) ** (g1 + g2 + 2)
            ang, g_upper = mp.mpf(4) / 3, 4
        else:
            N = mp.sqrt(2 + 2 * g1)
            eps, lam = N / 2, Z / N
            t = 2 * lam * (N - 1) / (2 * g1 + 1)
            pc = (mp.sqrt(1 + eps) * (N - 2), -mp.sqrt(1 + eps) * t)
            qc = (-mp.sqrt(1 - eps) * N, mp.sqrt(1 - eps) * t)
            energy = -c**2 * a**2 / ((1 + g1) * (N + 2))

            def gint(power, mu):   # integral_0^inf r^power e^(-mu r) dr
                return mp.gamma(power + 1) / mu ** (power + 1)

            norm = sum((pc[i] * pc[j] + qc[i] * qc[j]) * gint(2 * g1 + i + j, 2 * lam)
                       for i in range(2) for j in range(2))
            R = sum((pc[s] * p_1s + qc[s] * q_1s) * gint(2 * g1 + 1 + s, Z + lam) for s in range(2)) / mp.sqrt(norm)
            ang, g_upper = mp.mpf(2) / 3, 2
        omega = energy - e_1s
        rate = 4 * omega**3 * ang * R**2 / (3 * c**3 * g_upper) / AU_TIME
        return float(R), float(omega), float(rate)


def _lyman_alpha_coefficient_residual(Z):
    """Largest residual of the five power-matching conditions for the 2p1/2 closed form above
    (kappa = 1, W = E + c^2 the total energy): (gamma + 1) p0 = a q0,
    (gamma + 2) p1 - lam p0 = (c + W/c) q0 + a q1, -lam p1 = (c + W/c) q1,
    gamma q1 - lam q0 = (c - W/c) p0 - a p1, -lam q1 = (c - W/c) p1."""
    with mp.workdps(40):
        c = 1 / mp.mpf(ALPHA)
        a = Z / c
        g = mp.sqrt(1 - a**2)
        N = mp.sqrt(2 + 2 * g)
        eps, lam = N / 2, Z / N
        t = 2 * lam * (N - 1) / (2 * g + 1)
        p0, p1 = mp.sqrt(1 + eps) * (N - 2), -mp.sqrt(1 + eps) * t
        q0, q1 = -mp.sqrt(1 - eps) * N, mp.sqrt(1 - eps) * t
        up, down = c * (1 + eps), c * (1 - eps)
        res = [(g + 1) * p0 - a * q0, (g + 2) * p1 - lam * p0 - up * q0 - a * q1, -lam * p1 - up * q1,
               g * q1 - lam * q0 - down * p0 + a * p1, -lam * q1 - down * p1]
        return float(max(abs(x) for x in res) / (c * abs(p0) + abs(p1)))


@pytest.mark.parametrize("Z", [1, 50, 92])
def test_dirac_lyman_alpha_long_wavelength_against_closed_form(Z):
    """The solver's long-wavelength E1 rates of 2p1/2 and 2p3/2 -> 1s1/2 against the closed forms of
    :func:`_closed_form_lyman_alpha` (exact, independent of the solver's states and quadrature).
    No published relativistic rate for U91+ could be confirmed here, so the Z = 92 check is this
    closed form (long-wavelength limit) plus, for the full photon wave number, gauge agreement and the
    mpmath integration above. Measured (Z = 92): A_long(2p1/2) = 4.338e16 /s, A_long(2p3/2) = 4.917e16 /s;
    with the full wave number 4.726e16 and 3.922e16 /s, i.e. 1.052 and 0.873 times 92^4 A_H
    (A_H the infinite-mass Schrodinger rate); the long-wavelength values are 0.966 and 1.095 times it."""
    assert _lyman_alpha_coefficient_residual(Z) < 1e-30
    res = {kappa: boundkit.solve("dirac", "coulomb", {"Z": Z}, kappa=kappa, levels=1, tol=1e-14).levels[0]
           for kappa in (-1, 1, -2)}
    nonrel = Z**4 * _tr("schrodinger").line("2p", "1s").einstein_a
    for kappa, upper in ((1, "2p1/2"), (-2, "2p3/2")):
        ln = line(res[kappa], res[-1], "E1", equation="dirac")
        R, omega, rate = _closed_form_lyman_alpha(Z, upper)
        assert ln.upper == upper
        assert ln.energy_hartree == pytest.approx(omega, rel=1e-13)
        assert ln.long_wavelength_a == pytest.approx(rate, rel=1e-10)     # measured <= 2e-11
        if Z == 1:    # the closed form goes over into the Schrodinger value 128 sqrt(6)/243 (Z = 1)
            assert abs(R) == pytest.approx(128 * math.sqrt(6) / 243, rel=1e-4)
            assert rate == pytest.approx(nonrel, rel=1e-4)
    if Z == 92:
        a12 = line(res[1], res[-1], "E1", equation="dirac")
        a32 = line(res[-2], res[-1], "E1", equation="dirac")
        assert a12.einstein_a / nonrel == pytest.approx(1.052, abs=1e-3)
        assert a32.einstein_a / nonrel == pytest.approx(0.873, abs=1e-3)


def test_lifetimes_and_branching_ratios():
    """Hydrogen 3p decays to 1s and 2s; branching 3p -> 1s is 0.88 (A = 1.6725e8 and 2.2449e7 /s,
    NIST ASD; recalled from memory, not read from the database here)."""
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
    with pytest.raises(ValueError, match="multipole: only E1 is computed for the schrodinger equation"):
        line(p, s, "M1", equation="schrodinger")
    with pytest.raises(ValueError, match="equation: 'pauli' is not one of schrodinger, klein-gordon, dirac"):
        line(p, s, equation="pauli")
    with pytest.raises(ValueError, match="max_n: expected an integer, got 2.5"):
        boundkit.transitions("schrodinger", max_n=2.5)
    with pytest.raises(ValueError, match="wigner3j: arguments do not add to integers"):
        wigner3j(0.5, 1, 1, 0.5, 0, -0.5)
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
