"""Masses in MeV and in electron masses: the ratio E / (m c^2) comes out exact.

Energies leave atomic units through CODATA's hartree in eV; a mass given in MeV must enter them through
the same factor, m_e c^2 = E_h / alpha^2. CODATA's tabulated "electron mass energy equivalent in MeV"
differs from that by 1.4e-11 relative (rounding of the tables, inside the 3.1e-10 uncertainty of m_e c^2),
and dividing by it put every level of a particle given in MeV 1.4e-11 off -m alpha^2 / 2 (a tester:
700 times the error estimate). The references below need nothing but alpha from scipy.constants and the
mass in MeV: the ratio E / (m c^2) of a Coulomb level depends on Z alpha alone.
"""
from __future__ import annotations

import mpmath as mp
import pytest
import scipy.constants as sc

import boundkit
from boundkit.observables import masses_of
from boundkit.units import PARTICLES, get_particle, hartree_to

PION_MEV = 139.57039     # negative pion, Particle Data Group, Review of Particle Physics (from memory)
MUON_MEV = sc.physical_constants["muon mass energy equivalent in MeV"][0]      # CODATA via scipy.constants
ALPHA = mp.mpf(sc.fine_structure)                                              # CODATA via scipy.constants


def _schrodinger(m_mev, Z, n):
    """-m c^2 (Z alpha)^2 / (2 n^2) (Bohr 1913; common practice)."""
    return float(-mp.mpf(m_mev) * (Z * ALPHA) ** 2 / (2 * n * n))


def _dirac(m_mev, Z, n, kappa):
    """Sommerfeld-Dirac: E_total = m c^2 (1 + (Z alpha / (n - |kappa| + gamma))^2)^(-1/2), gamma =
    sqrt(kappa^2 - (Z alpha)^2) (Bethe & Salpeter, Quantum Mechanics of One- and Two-Electron Atoms, 1957,
    eq. 14.29), at 40 digits, minus m c^2."""
    with mp.workdps(40):
        za = Z * ALPHA
        d = n - abs(kappa) + mp.sqrt(kappa * kappa - za * za)
        return float(mp.mpf(m_mev) * (1 / mp.sqrt(1 + (za / d) ** 2) - 1))


def _klein_gordon(m_mev, Z, n, l):
    """Spin 0: E_total = m c^2 (1 + (Z alpha / d)^2)^(-1/2), d = n - l - 1/2 + sqrt((l + 1/2)^2 - (Z alpha)^2)
    (Greiner, Relativistic Quantum Mechanics: Wave Equations, 2000, ch. 1), at 40 digits, minus m c^2."""
    with mp.workdps(40):
        za = Z * ALPHA
        d = n - l - mp.mpf(1) / 2 + mp.sqrt((l + mp.mpf(1) / 2) ** 2 - za * za)
        return float(mp.mpf(m_mev) * (1 / mp.sqrt(1 + (za / d) ** 2) - 1))


def _check(res, exact):
    assert res.status == "ok", res.message
    lv = res.levels[0]
    got, est = lv.energy_in("MeV"), lv.error_in("MeV")
    # the solver's floor is 2e-14 relative; the old conversion was 1.4e-11 off
    assert abs(got - exact) <= 1e-13 * abs(exact), (got, exact, est)
    assert abs(got - exact) <= max(3 * est, 4e-16 * abs(exact)), (got, exact, est)


def test_pion_given_in_mev_has_the_bohr_level_of_its_mass():
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, mass_mev=PION_MEV, tol=1e-12, levels=1)
    _check(res, _schrodinger(PION_MEV, 1, 1))


@pytest.mark.parametrize("Z", [1, 60])
def test_muon_given_in_mev_has_the_dirac_coulomb_level_of_its_mass(Z):
    res = boundkit.solve("dirac", "coulomb", {"Z": Z}, kappa=-1, mass_mev=MUON_MEV, tol=1e-12, levels=1)
    _check(res, _dirac(MUON_MEV, Z, 1, -1))


def test_pion_given_in_mev_has_the_klein_gordon_coulomb_level_of_its_mass():
    res = boundkit.solve("klein-gordon", "coulomb", {"Z": 20}, l=0, mass_mev=PION_MEV, tol=1e-12, levels=1)
    _check(res, _klein_gordon(PION_MEV, 20, 1, 0))


def test_reduced_mass_from_two_masses_in_mev():
    M = 37215.0          # a nucleus of about 40 nucleons, a mass in MeV chosen for the test
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, mass_mev=PION_MEV, nucleus_mass_mev=M, tol=1e-12,
                         levels=1)
    _check(res, _schrodinger(mp.mpf(PION_MEV) * M / (mp.mpf(PION_MEV) + M), 1, 1))


@pytest.mark.parametrize("name", list(PARTICLES))
def test_named_particles_levels_match_their_listed_mass(name):
    # the mass a particle lists (particle_table, settings["particle_mass_MeV"]) is the mass its levels have
    part = get_particle(name)
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, particle=name, tol=1e-12, levels=1)
    assert res.settings["particle_mass_MeV"] == part.mass_mev
    _check(res, _schrodinger(part.mass_mev, 1, 1))


@pytest.mark.parametrize("name, ratio_key, mev_key", [
    ("muon", "muon-electron mass ratio", "muon mass energy equivalent in MeV"),
    ("proton", "proton-electron mass ratio", "proton mass energy equivalent in MeV"),
    ("antiproton", "proton-electron mass ratio", "proton mass energy equivalent in MeV"),
    ("neutron", "neutron-electron mass ratio", "neutron mass energy equivalent in MeV"),
    ("deuteron", "deuteron-electron mass ratio", "deuteron mass energy equivalent in MeV"),
])
def test_codata_particles_keep_their_mass_ratio(name, ratio_key, mev_key):
    part = get_particle(name)
    ratio, _, _ = sc.physical_constants[ratio_key]             # CODATA via scipy.constants
    assert part.mass_au == ratio
    # in MeV: the ratio times m_e c^2 = E_h / alpha^2, the factor energies use ...
    assert part.mass_mev == pytest.approx(ratio * hartree_to(1.0, "MeV") / sc.fine_structure**2, rel=4e-16)
    # ... which agrees with CODATA's tabulated value within its stated uncertainty
    mev, _, sigma = sc.physical_constants[mev_key]
    assert abs(part.mass_mev - mev) <= sigma


def test_electron_is_the_unit_of_mass():
    e = get_particle("electron")
    assert e.mass_au == 1.0
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, tol=1e-12, levels=1)
    assert res.levels[0].energy == pytest.approx(-0.5, rel=1e-13)           # Bohr 1913: -1/2 hartree
    tabulated, _, sigma = sc.physical_constants["electron mass energy equivalent in MeV"]
    assert abs(e.mass_mev - tabulated) <= sigma
    assert e.mass_mev == hartree_to(1.0, "MeV") / sc.fine_structure**2


def test_masses_of_a_result_in_electron_masses():
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, mass_mev=PION_MEV, tol=1e-8, levels=1)
    expected = PION_MEV * sc.fine_structure**2 / hartree_to(1.0, "MeV")
    mass, own = masses_of(res)
    assert mass == pytest.approx(expected, rel=4e-16) and own == pytest.approx(expected, rel=4e-16)


def test_a_mass_ratio_that_disagrees_with_the_mass_in_mev_is_refused():
    from boundkit.units import Particle
    with pytest.raises(ValueError, match=r"mass_ratio: 2\.0 electron masses is not mass_mev = 1\.0 MeV .*"
                                         r"Particle\.from_ratio"):
        Particle("x", 1.0, "test", mass_ratio=2.0)
    assert Particle.from_ratio("x", 2.0, "test").mass_au == 2.0
