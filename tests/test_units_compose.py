"""Table units, model-file units and the --units / units= system compose: nothing is converted twice.

The check value is the built-in Woods-Saxon well solved in nuclear units: a table of the same
function (written in fm and MeV, or in bohr and hartree, with or without a units line) must give
the same 1s to 1e-8 relative, whatever unit system the parameters are read in.
"""
from __future__ import annotations

import numpy as np
import pytest
import scipy.constants as sc

import boundkit
from boundkit.potentials import make_potential
from boundkit.potentials.catalog import read_model_file
from boundkit.potentials.tabulated import TabulatedTerm

FM_PER_BOHR = sc.physical_constants["Bohr radius"][0] / sc.femto        # CODATA via scipy.constants
MEV_PER_HARTREE = sc.physical_constants["Hartree energy in eV"][0] / 1e6  # CODATA via scipy.constants

# a proton in a 50 MeV deep Woods-Saxon well, R = 5 fm, a = 0.6 fm (illustrative nuclear values)
WS = {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6}
R_FM = np.logspace(-3, np.log10(40.0), 3000)
V_MEV = -WS["depth"] / (1 + np.exp((R_FM - WS["radius"]) / WS["diffuseness"]))


def _write(path, r, v, header=""):
    lines = ([header] if header else []) + [f"{float(x)!r} {float(y)!r}" for x, y in zip(r, v)]
    path.write_text("\n".join(lines) + "\n")
    return str(path)


@pytest.fixture(scope="module")
def builtin_1s():
    res = boundkit.solve("schrodinger", "woods-saxon", WS, units="nuclear", particle="proton")
    assert res.success, res.message
    return res.levels[0].energy


@pytest.fixture(scope="module")
def tables(tmp_path_factory):
    d = tmp_path_factory.mktemp("ws")
    return {
        "fm-MeV line": _write(d / "ws_nuc.dat", R_FM, V_MEV, "# units: r=fm V=MeV"),
        "bohr-hartree line": _write(d / "ws_au.dat", R_FM / FM_PER_BOHR, V_MEV / MEV_PER_HARTREE,
                                    "# units: r=bohr V=hartree"),
        "no line (fm, MeV)": _write(d / "ws_plain.dat", R_FM, V_MEV),
        "r only (fm), V in system": _write(d / "ws_r.dat", R_FM, V_MEV, "# units: r=fm"),
    }


def _solve_table(path, units):
    term = TabulatedTerm(path, tail="zero", origin="finite")
    return boundkit.solve("schrodinger", term, units=units, particle="proton").levels[0].energy


@pytest.mark.parametrize("table, units", [
    ("fm-MeV line", "nuclear"),            # the bug: converted twice, "too weak to bind"
    ("fm-MeV line", "atomic"),
    ("bohr-hartree line", "nuclear"),
    ("bohr-hartree line", "atomic"),
    ("no line (fm, MeV)", "nuclear"),      # an unstated unit follows the system: fm and MeV
    ("r only (fm), V in system", "nuclear"),
])
def test_table_units_and_system_compose(tables, builtin_1s, table, units):
    E = _solve_table(tables[table], units)
    assert E == pytest.approx(builtin_1s, rel=1e-8)


def test_unstated_table_units_follow_the_system(tables, builtin_1s):
    """Read as bohr and hartree under the atomic system, the fm/MeV numbers are another (deeper) well."""
    term = make_potential(TabulatedTerm(tables["no line (fm, MeV)"], tail="zero", origin="finite"),
                          units="atomic")
    assert term.V(np.array([1e-3]))[0] == pytest.approx(V_MEV[0], rel=1e-9)
    nuc = make_potential(TabulatedTerm(tables["no line (fm, MeV)"], tail="zero", origin="finite"),
                         units="nuclear")
    assert nuc.V(np.array([1e-3 / FM_PER_BOHR]))[0] == pytest.approx(V_MEV[0] / MEV_PER_HARTREE, rel=1e-9)


@pytest.mark.parametrize("file_units, system", [("nuclear", "nuclear"), ("nuclear", "atomic"),
                                                ("atomic", "nuclear"), ("atomic", "atomic")])
def test_model_file_units_win_over_the_system(tmp_path, builtin_1s, file_units, system):
    """A model file states its own unit system; the caller's system does not convert it again."""
    scale_v, scale_r = (1.0, 1.0) if file_units == "nuclear" else (1 / MEV_PER_HARTREE, 1 / FM_PER_BOHR)
    e_unit, r_unit = ("MeV", "fm") if file_units == "nuclear" else ("hartree", "bohr")
    path = tmp_path / "ws.toml"
    path.write_text(
        'name = "my-ws"\ndescription = "test well"\nsource = "test"\n'
        'expression = "-V0/(1 + exp((r - R)/a))"\n'
        f'units = "{file_units}"\n'
        f'[parameters.V0]\ndefault = {WS["depth"] * scale_v!r}\nunit = "{e_unit}"\ndescription = "depth"\n'
        f'[parameters.R]\ndefault = {WS["radius"] * scale_r!r}\nunit = "{r_unit}"\ndescription = "radius"\n'
        f'[parameters.a]\ndefault = {WS["diffuseness"] * scale_r!r}\nunit = "{r_unit}"\ndescription = "a"\n')
    term, _ = read_model_file(str(path)).build({})
    E = boundkit.solve("schrodinger", term, units=system, particle="proton").levels[0].energy
    assert E == pytest.approx(builtin_1s, rel=1e-8)


@pytest.mark.parametrize("name", ["mev", "MEV", "Mev"])
def test_an_energy_unit_only_the_case_tells_apart_is_refused(name):
    """--energy-unit mev meant MeV, a factor 1e9 from meV (a tester): a spelling that could be either is
    refused; the exact ones stay."""
    from boundkit.units import energy_unit

    with pytest.raises(ValueError, match=rf"energy_unit: '{name}' could be meV or MeV \(a factor 1e\+09 apart\); "
                                         "write it with its exact case"):
        energy_unit(name)
    assert energy_unit("meV") == "meV" and energy_unit("MeV") == "MeV" and energy_unit("ev") == "eV"
