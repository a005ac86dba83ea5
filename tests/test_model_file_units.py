"""A model file's per-parameter ``unit`` is the unit of the value: converted to the unit the parameter is
read in (the file's system, or a built-in term's own unit), refused when boundkit does not know it or when
it is of another dimension than a built-in term reads. A tester found R = 1 "bohr" in a nuclear file used
as 1 fm, V0 in "MeV" in an atomic file used as hartree, and unit = "parsec" accepted."""
from __future__ import annotations

import math
import re

import mpmath as mp
import numpy as np
import pytest
import scipy.constants as sc
from click.testing import CliRunner

import boundkit
from boundkit.cli import main
from boundkit.potentials import TERMS
from boundkit.potentials.catalog import library_models, read_model_file
from boundkit.units import PARTICLES, hartree_to

# CODATA via scipy.constants: the conversions the tests check against
HBARC_MEV_FM = sc.physical_constants["reduced Planck constant times c in MeV fm"][0]
HARTREE_MEV = sc.physical_constants["Hartree energy in eV"][0] * 1e-6
BOHR_FM = sc.physical_constants["Bohr radius"][0] / sc.femto
LENGTH_FM = {"fm": 1.0, "pm": 1e3, "angstrom": 1e5, "nm": 1e6, "bohr": BOHR_FM}


def _model(tmp_path, units, params, expression="-V0*exp(-r/R)", term=None):
    body = 'name = "well"\ndescription = "exponential well"\nsource = "test"\n'
    body += f'term = "{term}"\n' if term else f'expression = "{expression}"\n'
    body += f'units = "{units}"\n'
    for name, (default, unit) in params.items():
        body += f'\n[parameters.{name}]\ndefault = {default!r}\nunit = "{unit}"\ndescription = "{name}"\n'
    path = tmp_path / "well.toml"
    path.write_text(body)
    return path


def _exponential_well_1s_mev(v0_mev, r_fm, mass_mev):
    """s levels of V = -V0 exp(-r/R): u = J_nu(x0 exp(-r/2R)), x0 = 2R sqrt(2 m V0)/hbar,
    nu = 2R sqrt(2 m |E|)/hbar, and u(0) = 0 makes J_nu(x0) = 0 (the Bessel-function solution of the
    exponential well, common practice; e.g. Fluegge, Practical Quantum Mechanics, 1971, from memory).
    The 1s is the largest nu, found by mpmath."""
    mp.mp.dps = 30
    x0 = 2 * r_fm * mp.sqrt(2 * mass_mev * v0_mev) / HBARC_MEV_FM
    nu = mp.findroot(lambda n: mp.besselj(n, x0), 0.6)
    return -float((nu * HBARC_MEV_FM / (2 * r_fm)) ** 2 / (2 * mass_mev))


@pytest.mark.parametrize("unit", ["fm", "bohr", "pm", "angstrom"])
def test_a_nuclear_file_reads_a_radius_in_its_declared_unit(tmp_path, unit):
    """R = 1 fm written in bohr (pm, angstrom) in a nuclear file: the 1s of a proton is the exact one of
    R = 1 fm (before: R = 1.89e-5 'bohr' was read as 1.89e-5 fm, a well that binds nothing)."""
    path = _model(tmp_path, "nuclear", {"V0": (50.0, "MeV"), "R": (1.0 / LENGTH_FM[unit], unit)})
    term, _ = read_model_file(path).build({})
    res = boundkit.solve("schrodinger", term, particle="proton", levels=1, tol=1e-12)
    assert res.success, res.message
    exact = _exponential_well_1s_mev(50.0, 1.0, PARTICLES["proton"].mass_mev)
    assert exact == pytest.approx(-1.16534590300555, rel=1e-9)       # the tester's mpmath value
    assert hartree_to(res.levels[0].energy, "MeV") == pytest.approx(exact, rel=1e-9)


def test_an_atomic_file_reads_mev_and_fm_as_mev_and_fm(tmp_path):
    """V0 in MeV and R in fm in an atomic file (before: used as hartree and bohr); a value given to build
    is in the declared unit too."""
    path = _model(tmp_path, "atomic", {"V0": (2.0, "MeV"), "R": (1.0, "fm")})
    spec = read_model_file(path)
    r = np.array([1e-6, 1e-5, 4e-5])                                   # bohr
    for given, v0_mev, r_fm in (({}, 2.0, 1.0), ({"V0": 3.0, "R": 2.5}, 3.0, 2.5)):
        term, _ = spec.build(given)
        exact = -(v0_mev / HARTREE_MEV) * np.exp(-r * BOHR_FM / r_fm)
        np.testing.assert_allclose(term(r), exact, rtol=1e-10)


def test_compound_units_of_a_built_in_term_are_converted(tmp_path):
    """An oscillator constant k in eV/angstrom^2 (atomic file) and in keV/fm^2 (nuclear file): the term holds
    k in hartree/bohr^2."""
    ang_bohr = 1e-10 / sc.physical_constants["Bohr radius"][0]
    term, _ = read_model_file(_model(tmp_path, "atomic", {"k": (2.0, "eV/angstrom^2")}, term="oscillator")).build({})
    assert term.values["k"] == pytest.approx(2.0 / (HARTREE_MEV * 1e6) / ang_bohr**2, rel=1e-10)
    term, _ = read_model_file(_model(tmp_path, "nuclear", {"k": (2.0, "keV/fm^2")}, term="oscillator")).build({})
    res = boundkit.solve("schrodinger", term, mass_mev=938.0, levels=1, tol=1e-12)
    # hbar omega (n + 3/2) with hbar omega = hbar c sqrt(k / m c^2) (any text, e.g. Messiah, Quantum Mechanics, 1961)
    assert hartree_to(res.levels[0].energy, "MeV") == pytest.approx(
        1.5 * HBARC_MEV_FM * math.sqrt(2e-3 / 938.0), rel=1e-9)


def test_fixed_unit_parameters_of_built_in_terms_convert_to_their_unit(tmp_path):
    """rms_fm of uniform-sphere is read in fm in any system: given in bohr it is converted to fm."""
    path = _model(tmp_path, "atomic", {"Z": (92.0, "e"), "rms_fm": (1e-4, "bohr")}, term="uniform-sphere")
    term, _ = read_model_file(path).build({})
    assert term.values["rms_fm"] == pytest.approx(1e-4 * BOHR_FM, rel=1e-10)


@pytest.mark.parametrize("unit", ["parsec", "energy", "MeV/", "fm^x", "mev", "hartree/bohr/bohr"])
def test_an_unknown_unit_is_refused(tmp_path, unit):
    path = _model(tmp_path, "nuclear", {"V0": (50.0, "MeV"), "R": (1.0, unit)})
    with pytest.raises(ValueError, match=rf"well.toml, line 14, key 'unit': parameter 'R': unknown unit "
                                         rf"'{re.escape(unit)}'; write a unit of energy \(hartree, eV, .*\) and/or length "
                                         r"\(bohr, fm, pm, angstrom, nm\) with integer powers, such as fm, 1/fm "
                                         "or MeV\\*fm\\^2, or 1 for a number"):
        read_model_file(path)
    res = CliRunner().invoke(main, ["solve", "--potential-file", str(path)])
    assert res.exit_code == 2 and "unknown unit" in res.output and "Traceback" not in res.output
    assert len(res.output.strip().splitlines()) == 1


def test_another_dimension_than_the_term_reads_is_refused(tmp_path):
    path = _model(tmp_path, "nuclear", {"screening_length": (1.0, "MeV")}, term="yukawa")
    with pytest.raises(ValueError, match=r"key 'unit': parameter 'screening_length': unit 'MeV' is an energy, but "
                                         r"term 'yukawa' reads screening_length as a length in fm; write "
                                         r'unit = "fm" \(or another unit of a length\) with the value in it'):
        read_model_file(path)
    path = _model(tmp_path, "atomic", {"delta": (1.0, "bohr")}, term="hulthen")
    with pytest.raises(ValueError, match=r"parameter 'delta': unit 'bohr' is a length, but term 'hulthen' reads "
                                         r"delta as an inverse length in 1/bohr"):
        read_model_file(path)


def test_built_in_units_parse_and_library_files_are_not_converted():
    from boundkit.units import unit_in_atomic

    for cls in TERMS.values():
        for p in cls.parameters:
            assert unit_in_atomic(p.unit) is not None, (cls.name, p.unit)
    for spec in library_models().values():
        assert all(f == 1.0 for f in spec.factors.values()), spec.name


def test_unit_grammar():
    """Powers and factors (CODATA via scipy.constants)."""
    from boundkit.units import unit_in_atomic

    e, l, v = unit_in_atomic("MeV*fm^2")
    assert (e, l) == (1, 2) and v == pytest.approx(1 / HARTREE_MEV / BOHR_FM**2 * 1, rel=1e-10)
    assert unit_in_atomic("1/fm")[:2] == (0, -1) and unit_in_atomic("1/fm")[2] == pytest.approx(BOHR_FM, rel=1e-10)
    assert unit_in_atomic("cm^-1")[:2] == (1, 0)
    assert unit_in_atomic("cm^-1")[2] == pytest.approx(
        sc.h * sc.c * 100 / sc.physical_constants["Hartree energy"][0], rel=1e-12)
    assert unit_in_atomic("e") == unit_in_atomic("1") == (0, 0, 1.0)
