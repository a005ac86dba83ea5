"""Levels of a problem posed in MeV and fm agree with formulas written with hbar c to rounding.

A Schrodinger problem in nuclear units has one constant, hbar c (and alpha with a Coulomb term,
through e^2 = alpha hbar c). boundkit solves in atomic units; the conversions must therefore satisfy
E_h a0 = alpha hbar c exactly. CODATA's tabulated Bohr radius does not, to 5.6e-12 relative (the
rounding of the tables), so the fm <-> bohr factor is derived as a0 = alpha hbar c / E_h from
scipy.constants (CODATA 2022: the Bohr radius's own uncertainty is 1.5e-10 relative, and the
derived value lies well inside it).
"""
from __future__ import annotations

import math

import pytest
import scipy.constants as sc

import boundkit
from boundkit.units import FM_PER_BOHR, bohr_to, constants_record, hartree_to
from exact import HBARC_MEV_FM      # CODATA via scipy.constants

CODATA_BOHR_FM = sc.physical_constants["Bohr radius"][0] / sc.femto


@pytest.mark.parametrize("l", [0, 1, 3])
def test_a_nuclear_oscillator_matches_hbar_omega(l):
    """Isotropic oscillator V = k r^2 / 2: E = hbar omega (2 n_r + l + 3/2), hbar omega = hbar c sqrt(k / m c^2)
    (any quantum-mechanics text, e.g. Messiah, Quantum Mechanics, 1961, ch. XII). Before the derived a0 the
    levels were 5.6e-12 above it with an estimate of 2e-14."""
    m, k = 938.0, 2.0                                  # MeV and MeV/fm^2 (a nucleon-like mass, illustrative)
    res = boundkit.solve("schrodinger", "oscillator", {"k": k}, l=l, levels=3, tol=1e-13, mass_mev=m,
                         units="nuclear")
    assert res.success, res.message
    for lv in res.levels:
        exact = HBARC_MEV_FM * math.sqrt(k / m) * (2 * lv.nodes + l + 1.5)
        got, est = hartree_to(lv.energy, "MeV"), hartree_to(lv.error_estimate, "MeV")
        assert abs(got - exact) <= max(est, 4e-16 * exact), (lv.label, got / exact - 1, est / exact)


def test_the_bohr_radius_in_fm_is_consistent_with_hbar_c():
    """alpha hbar c / E_h (CODATA via scipy.constants) in fm, and within CODATA's uncertainty of its Bohr radius."""
    e_h_mev = sc.physical_constants["Hartree energy in eV"][0] * 1e-6
    assert FM_PER_BOHR == pytest.approx(sc.fine_structure * HBARC_MEV_FM / e_h_mev, rel=1e-15)
    assert bohr_to(1.0, "fm") == FM_PER_BOHR
    sigma = sc.physical_constants["Bohr radius"][2] / sc.physical_constants["Bohr radius"][0]
    assert abs(FM_PER_BOHR / CODATA_BOHR_FM - 1) < 0.1 * sigma


def test_the_recorded_constants_hold_e_h_a0_equal_to_alpha_hbar_c():
    """Every result's constants record names hbar c (CODATA via scipy.constants), and the record is consistent:
    E_h a0 = alpha hbar c to rounding."""
    rec = constants_record()
    assert rec["hbar_c_MeV_fm"] == pytest.approx(HBARC_MEV_FM, rel=1e-15)
    e_h_a0 = rec["hartree_eV"] * 1e-6 * rec["bohr_m"] / sc.femto
    assert e_h_a0 == pytest.approx(rec["alpha"] * rec["hbar_c_MeV_fm"], rel=1e-15)


@pytest.mark.parametrize("built_in", ["nuclear", "atomic-read-as-nuclear"])
def test_a_term_instance_is_converted_once(built_in):
    """A Term made with units='nuclear' holds its values converted already; solve(units='nuclear') must not
    convert it again (it did, silently: status ok and the oscillator's 1s 1.0e7 times hbar omega 3/2; a
    Woods-Saxon well was refused as too weak to bind). A term made without units is read in the caller's system, as before. Reference: the oscillator's
    hbar omega (2 n_r + l + 3/2), hbar c from scipy.constants (CODATA)."""
    from boundkit.potentials import TERMS

    m, k = 938.0, 2.0                                  # MeV and MeV/fm^2 (illustrative)
    term = TERMS["oscillator"]("nuclear", k=k) if built_in == "nuclear" else TERMS["oscillator"](k=k)
    res = boundkit.solve("schrodinger", term, {}, l=0, levels=2, tol=1e-13, mass_mev=m, units="nuclear")
    assert res.success, res.message
    for lv in res.levels:
        exact = HBARC_MEV_FM * math.sqrt(k / m) * (2 * lv.nodes + 1.5)
        got, est = hartree_to(lv.energy, "MeV"), hartree_to(lv.error_estimate, "MeV")
        assert abs(got - exact) <= max(est, 4e-16 * exact), (lv.label, got / exact - 1, est / exact)


def test_a_term_built_in_stated_atomic_units_is_not_read_as_nuclear():
    """A Term made with units='atomic' states its units: solve(units='nuclear') must keep them (it re-read its
    numbers as MeV and fm, silently, since an explicit 'atomic' could not be told from the default). Reference:
    the oscillator's hbar omega (2 n_r + l + 3/2) in atomic units, omega = sqrt(k / m) (common practice)."""
    from boundkit.potentials import TERMS
    from boundkit.units import mass_mev_to_au

    m_mev, k = 938.0, 2.0                              # MeV (illustrative) and hartree/bohr^2
    term = TERMS["oscillator"](units="atomic", k=k)
    res = boundkit.solve("schrodinger", term, {}, l=0, levels=2, tol=1e-13, mass_mev=m_mev, units="nuclear")
    assert res.success, res.message
    m = mass_mev_to_au(m_mev)
    for lv in res.levels:
        exact = math.sqrt(k / m) * (2 * lv.nodes + 1.5)                 # hartree
        assert abs(lv.energy - exact) <= max(lv.error_estimate, 4e-16 * exact), (lv.label, lv.energy / exact - 1)


@pytest.mark.parametrize("stated", ["atomic", "nuclear"])
def test_a_varied_term_with_stated_units_keeps_them(stated):
    """scan, critical and the dived-state study rebuild a prebuilt term at each point of a varied parameter: the
    rebuilt term had no units, so its other parameters (atomic already) were read again as MeV and fm under
    units='nuclear' (a review found it: a Yukawa term's 2 bohr became 2 fm, 'too weak to bind anything').
    The varied value is read in the call's system, as for a term given by name. Reference: the single solve of
    the same term."""
    from boundkit.potentials import TERMS
    from boundkit.units import FM_PER_BOHR

    length = 2.0 if stated == "atomic" else 2.0 * FM_PER_BOHR          # 2 bohr either way
    t = TERMS["yukawa"](units=stated, Z=1, screening_length=length)
    one = boundkit.solve("schrodinger", t, {}, l=0, levels=1, mass_mev=0.51099895, units="nuclear")
    assert one.success, one.message
    res = boundkit.scan("schrodinger", t, {}, {"Z": [1.0, 1.5]}, l=0, levels=1, mass_mev=0.51099895,
                        units="nuclear", workers=1, progress=False)
    rows = {r["point"]["Z"] if "point" in r else r["Z"]: r for r in res.rows}
    assert rows[1.0]["energy"] == pytest.approx(one.levels[0].energy, rel=1e-12), rows[1.0]
    assert rows[1.5]["energy"] < rows[1.0]["energy"]


def test_a_resumed_scan_tells_stated_units_from_none(tmp_path):
    """A term built without units and one built with units='atomic' are different potentials under
    units='nuclear', but the resume key fingerprinted name and values alone: the second scan into the same
    folder reused the first one's point, 'solved 0 reused 1' (a tester). Reference: the same scan solved
    afresh (no folder)."""
    from boundkit.potentials import TERMS

    kw = dict(l=0, levels=1, units="nuclear", workers=1, progress=False)
    boundkit.scan("schrodinger", [TERMS["oscillator"](k=1.0), "coulomb"], None, {"Z": [1.0]}, out=tmp_path, **kw)
    atomic = [TERMS["oscillator"](units="atomic", k=1.0), "coulomb"]
    second = boundkit.scan("schrodinger", atomic, None, {"Z": [1.0]}, out=tmp_path, **kw)
    fresh = boundkit.scan("schrodinger", atomic, None, {"Z": [1.0]}, **kw)
    assert second.to_dict()["reused"] == 0
    assert second.rows[0]["energy"] == fresh.rows[0]["energy"]


def test_varying_a_parameter_of_an_expression_with_units_of_its_own_is_refused():
    """A model file's expression is built in its file's units and marked so; rebuilt for a scan point it lost the
    mark and was converted again under units='nuclear' (a review). Its parameters declare no units, so a point's
    value cannot be converted either: refused, with the ways that work."""
    from boundkit.potentials.expression import ExpressionTerm
    from boundkit.studies._common import rebuild_potential

    t = ExpressionTerm("-V0*exp(-r)", {"V0": 2.0})
    t.fixed_units = True
    with pytest.raises(ValueError, match=r"^vary: parameter 'V0' is inside an expression with units of its own "
                                         r"\(a model file's\); vary it through the model file in a run spec"):
        rebuild_potential(t, {"V0": 3.0}, {"V0"}, units="nuclear")
    assert rebuild_potential(ExpressionTerm("-V0*exp(-r)", {"V0": 2.0}), {"V0": 3.0}, {"V0"}, units="atomic").values == {"V0": 3.0}
