"""CLI: library listing, expressions, model files and tables, unit systems."""
from __future__ import annotations

import json
import re

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.constants import physical_constants

from boundkit.cli import main
from boundkit.potentials import TERMS
from boundkit.potentials.catalog import library_models, read_model_file


def run(*args):
    return CliRunner().invoke(main, list(args))


def energies(res):
    assert res.exit_code == 0, res.output
    return [lv["energy"] for lv in json.loads(res.output)["levels"]]


def test_every_built_in_term_has_a_model_file_that_matches_it():
    models = library_models()
    assert set(models) == set(TERMS)
    for name, spec in models.items():
        cls = TERMS[name]
        assert spec.term == name
        assert {p.name: p.unit for p in cls.parameters} == {k: v["unit"] for k, v in spec.parameters.items()}
        assert {p.name: p.default for p in cls.parameters if p.default is not None} == spec.defaults


def test_potentials_lists_and_shows():
    res = run("potentials")
    assert res.exit_code == 0 and "uehling" in res.output and "woods-saxon" in res.output
    res = run("potentials", "woods-saxon")
    assert res.exit_code == 0
    assert "MeV" in res.output and "Woods & Saxon" in res.output
    res = run("potentials", "nope")
    assert res.exit_code == 2 and "no model named 'nope'" in res.output


def test_expression_and_built_in_give_identical_levels():
    a = energies(run("solve", "-e", "schrodinger", "--expr", "-Z*exp(-r/D)/r", "--param", "Z=1",
                     "--param", "D=10", "--levels", "2", "--json"))
    b = energies(run("solve", "-e", "schrodinger", "-p", "yukawa", "--param", "Z=1",
                     "--param", "screening_length=10", "--levels", "2", "--json"))
    assert np.allclose(a, b, rtol=1e-13, atol=0)


def test_terms_add_and_scalar_terms():
    # coulomb + coulomb with Z = 1 acts as Z = 2: E_1s = -2 hartree (Bethe & Salpeter 1957)
    e = energies(run("solve", "-e", "schrodinger", "-p", "coulomb", "--expr", "-1/r", "--param", "Z=1", "--json"))
    assert e[0] == pytest.approx(-2.0, rel=1e-13)


def test_user_model_file(tmp_path):
    f = tmp_path / "screened.toml"
    f.write_text('name = "screened"\ndescription = "test"\nsource = "ours"\n'
                 'expression = "-Z*exp(-r/D)/r"\n[parameters.Z]\ndefault = 1.0\nunit = "e"\n'
                 'description = "charge"\n[parameters.D]\ndefault = 10.0\nunit = "bohr"\ndescription = "length"\n')
    a = energies(run("solve", "-e", "schrodinger", "--potential-file", str(f), "--json"))
    b = energies(run("solve", "-e", "schrodinger", "-p", "yukawa", "--param", "Z=1",
                     "--param", "screening_length=10", "--json"))
    assert np.allclose(a, b, rtol=1e-13, atol=0)


@pytest.mark.parametrize("body, key, line", [
    ('name = "x"\ndescription = "d"\nsource = "s"\nexpression = "-1/r"\ncolour = "red"\n', "colour", 5),
    ('name = "x"\ndescription = "d"\nsource = 3\nexpression = "-1/r"\n', "source", 3),
    ('name = "x"\ndescription = "d"\nexpression = "-1/r"\n', "source", 1),
    ('name = "x"\ndescription = "d"\nsource = "s"\nexpression = "-Z/r"\n\n[parameters.Z]\nunit = "e"\n'
     'description = "z"\ndefault = "one"\n', "default", 9),
])
def test_bad_model_file_names_file_key_and_line(tmp_path, body, key, line):
    f = tmp_path / "bad.toml"
    f.write_text(body)
    with pytest.raises(ValueError, match=rf"bad.toml, line {line}, key '{key}'"):
        read_model_file(f)
    res = run("solve", "--potential-file", str(f))
    assert res.exit_code == 2 and "Traceback" not in res.output


def test_table_in_fm_and_mev_with_nuclear_units(tmp_path):
    # a Coulomb table written in fm and MeV must give hydrogen's levels (Bethe & Salpeter 1957)
    bohr_fm = physical_constants["Bohr radius"][0] * 1e15
    ha_mev = physical_constants["Hartree energy in eV"][0] * 1e-6
    r = np.logspace(-4, np.log10(60), 300)
    f = tmp_path / "coulomb.dat"
    f.write_text("# units: r=fm V=MeV\n" + "\n".join(f"{x * bohr_fm:.17g} {-ha_mev / x:.17g}" for x in r))
    e = energies(run("solve", "-e", "schrodinger", "--potential-file", str(f), "--levels", "2", "--json"))
    assert np.allclose(e, [-0.5, -0.125], rtol=1e-8, atol=0)


def test_nuclear_units_convert_parameters():
    # oscillator k in MeV/fm^2 for a proton: E = hbar c sqrt(k / m c^2) (n + 3/2), hbar c from CODATA
    hbarc = physical_constants["reduced Planck constant times c in MeV fm"][0]
    mp = physical_constants["proton mass energy equivalent in MeV"][0]
    res = run("solve", "-e", "schrodinger", "--units", "nuclear", "-p", "oscillator", "--param", "k=2",
              "--particle", "proton", "--levels", "2", "--json")
    data = json.loads(res.output)
    assert data["units"]["energy"] == "MeV"
    w = hbarc * np.sqrt(2 / mp)
    # 1e-10: the printed CODATA values of hbar c, the hartree and the bohr agree to ~1e-12 only
    assert np.allclose([lv["energy"] for lv in data["levels"]], [1.5 * w, 3.5 * w], rtol=1e-10, atol=0)


@pytest.mark.parametrize("args, message", [
    (("--expr", "__import__('os')"), "expression"),
    (("--expr", "-Z/r"), "Z"),
    (("--potential-file", "/nonexistent/table.dat"), "table.dat"),
    (("-p", "fermi", "--param", "Z=82", "--param", "rms_fm=-1"), "rms_fm"),
    (("-p", "coulomb", "--param", "Z=1", "--param", "Zz=2"), "no potential term takes parameter 'Zz'"),
])
def test_hostile_or_bad_potential_input(args, message):
    res = run("solve", *args)
    assert res.exit_code == 2
    assert re.search(re.escape(message), res.output), res.output
    assert "Traceback" not in res.output
