"""Every number that leaves the command line carries its unit: a matrix of commands x unit options.

For each command the JSON ``units`` block (and the CSV column names) must name the units asked for,
and the values must agree with the API's atomic-unit result converted with CODATA factors taken here
from scipy.constants, independently of boundkit.units.
"""
from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest
import scipy.constants as sc
from click.testing import CliRunner

import boundkit
from boundkit.cli import main

# CODATA via scipy.constants: value of one hartree / one bohr in each unit
_HARTREE_EV = sc.physical_constants["Hartree energy in eV"][0]
_HARTREE_J = sc.physical_constants["Hartree energy"][0]
PER_HARTREE = {"hartree": 1.0, "eV": _HARTREE_EV, "meV": _HARTREE_EV * 1e3, "keV": _HARTREE_EV / 1e3,
               "MeV": _HARTREE_EV / 1e6, "GHz": _HARTREE_J / sc.h / 1e9, "cm^-1": _HARTREE_J / (sc.h * sc.c) / 100}
_BOHR = sc.physical_constants["Bohr radius"][0]
PER_BOHR = {"bohr": 1.0, "fm": _BOHR / sc.femto, "pm": _BOHR / sc.pico, "angstrom": _BOHR / sc.angstrom,
            "nm": _BOHR / sc.nano}

HYDROGEN = ("-e", "schrodinger", "--param", "Z=1", "--l", "1")
HYDROGEN_API = dict(equation="schrodinger", potential="coulomb", params={"Z": 1}, l=1)
# a proton in a 50 MeV, R = 5 fm, a = 0.6 fm Woods-Saxon well (illustrative nuclear values)
WS = ("-e", "schrodinger", "--units", "nuclear", "--particle", "proton", "-p", "woods-saxon",
      "--param", "depth=50", "--param", "radius=5", "--param", "diffuseness=0.6")
WS_API = dict(equation="schrodinger", potential="woods-saxon",
              params={"depth": 50, "radius": 5, "diffuseness": 0.6}, units="nuclear", particle="proton")


def run(*args):
    res = CliRunner().invoke(main, [str(a) for a in args])
    assert res.exit_code == 0, res.output
    return res.output


def keys(obj):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield k
            yield from keys(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from keys(v)


@pytest.fixture(scope="module")
def references():
    return {"atomic": boundkit.solve(**HYDROGEN_API, levels=2), "nuclear": boundkit.solve(**WS_API, levels=2)}


@pytest.mark.parametrize("system, energy, length", [
    ("atomic", None, None), ("atomic", "eV", None), ("atomic", "keV", "pm"), ("atomic", "cm^-1", "angstrom"),
    ("nuclear", None, None), ("nuclear", "keV", "fm"), ("nuclear", "hartree", "bohr"), ("nuclear", "MeV", "nm"),
])
def test_solve_json_names_every_unit_and_converts_every_value(references, system, energy, length):
    args = list(HYDROGEN if system == "atomic" else WS) + ["--levels", "2", "--json"]
    if energy:
        args += ["--energy-unit", energy]
    if length:
        args += ["--length-unit", length]
    data = json.loads(run("solve", *args))
    eu = energy or ("MeV" if system == "nuclear" else "hartree")   # default: the system of --units
    lu = length or ("fm" if system == "nuclear" else "bohr")
    assert data["units"]["energy"] == eu and data["units"]["length"] == lu and data["units"]["time"] == "s"
    ref = references[system]
    got = [lv["energy"] for lv in data["levels"]]
    assert got == pytest.approx([lv.energy * PER_HARTREE[eu] for lv in ref.levels], rel=1e-9)
    err = [lv["error_estimate"] for lv in data["levels"]]
    assert err == pytest.approx([lv.error_estimate * PER_HARTREE[eu] for lv in ref.levels], rel=0.5, abs=1e-300)
    diag = data["diagnostics"]
    assert diag["natural_length"] == pytest.approx(ref.diagnostics["natural_length_bohr"] * PER_BOHR[lu], rel=1e-9)
    assert diag["levels"][0]["energies"][-1] == pytest.approx(ref.levels[0].energy * PER_HARTREE[eu], rel=1e-9)
    assert diag["levels"][0]["r_max"] == pytest.approx(ref.diagnostics["levels"][0]["r_max"] * PER_BOHR[lu],
                                                       rel=1e-6)
    # no value hides a unit of its own in the record: unit-suffixed keys are gone from the diagnostics
    assert not [k for k in keys(diag) if str(k).endswith(("_hartree", "_bohr"))]


@pytest.mark.parametrize("system, energy", [("atomic", "eV"), ("nuclear", None), ("nuclear", "keV")])
def test_solve_table_prints_units_on_every_line_with_numbers(system, energy):
    args = list(HYDROGEN if system == "atomic" else WS) + ["--levels", "2"]
    if energy:
        args += ["--energy-unit", energy]
    out = run("solve", *args)
    eu = energy or "MeV"
    assert f"binding energies (total minus rest energy) in {eu}" in out
    assert f"({eu})" in out.split("\n\n")[1].splitlines()[0]          # the column header of the table
    thresh = next(x for x in out.splitlines() if x.startswith("bound levels below the threshold"))
    assert eu in thresh


@pytest.mark.parametrize("system, energy", [("atomic", None), ("atomic", "meV"), ("nuclear", None)])
def test_scan_csv_and_json_name_their_units(tmp_path, system, energy):
    if system == "atomic":
        args = ["-e", "schrodinger", "-p", "yukawa", "--param", "Z=1", "--vary", "screening_length=20,40"]
        pname, punit = "screening_length", "bohr"
    else:
        args = list(WS) + ["--vary", "depth=40,50"]
        pname, punit = "depth", "MeV"
    if energy:
        args += ["--energy-unit", energy]
    eu = energy or ("MeV" if system == "nuclear" else "hartree")
    data = json.loads(run("scan", *args, "--levels", "1", "--workers", "1", "--json", "--out", tmp_path))
    assert data["units"]["energy"] == eu and data["parameter_units"][pname] == punit
    rows = list(csv.DictReader(io.StringIO((tmp_path / "scan.csv").read_text())))
    assert f"energy_{eu}" in rows[0] and f"{pname}_{punit}" in rows[0]
    api = (boundkit.solve(**HYDROGEN_API | {"l": 0, "potential": "yukawa",
                                            "params": {"Z": 1, "screening_length": 20}})
           if system == "atomic" else boundkit.solve(**WS_API | {"params": {"depth": 40, "radius": 5,
                                                                            "diffuseness": 0.6}}))
    first = float(rows[0][f"energy_{eu}"])
    assert first == pytest.approx(api.levels[0].energy * PER_HARTREE[eu], rel=1e-9)


@pytest.mark.parametrize("system, unit", [("atomic", "bohr"), ("nuclear", "fm")])
def test_critical_prints_and_records_the_parameter_unit(system, unit):
    args = ["-e", "schrodinger", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=10",
            "--state", "2p", "--vary", "screening_length", "--units", system]
    if system == "nuclear":    # a proton with a 1 MeV fm charge-like strength: same shape, other scale
        args = ["-e", "schrodinger", "-p", "yukawa", "--param", "Z=100", "--param", "screening_length=10",
                "--state", "1s", "--vary", "screening_length", "--units", "nuclear", "--particle", "proton"]
    data = json.loads(run("critical", *args, "--json"))
    assert data["units"]["parameter"] == unit
    out = run("critical", *args)
    line = next(x for x in out.splitlines() if x.startswith("critical screening_length = "))
    assert line.endswith(f" {unit}")
    assert "bracket" in out and "far more precisely than the bracket is wide" in out


@pytest.mark.parametrize("energy, splitting", [(None, None), ("eV", "GHz"), ("keV", "meV")])
def test_compare_json_units(energy, splitting):
    args = ["--param", "Z=1", "--l-max", "1", "--levels", "1"]
    if energy:
        args += ["--energy-unit", energy]
    if splitting:
        args += ["--splitting-unit", splitting]
    data = json.loads(run("compare", *args, "--json"))
    eu = energy or "hartree"
    su = splitting or eu
    assert data["units"]["energy"] == eu and data["units"]["differences"] == su
    ref = boundkit.compare("coulomb", {"Z": 1}, l_max=1, levels=1)
    assert data["rows"][0]["schrodinger"] == pytest.approx(ref.rows[0]["schrodinger"] * PER_HARTREE[eu], rel=1e-9)


@pytest.mark.parametrize("energy", [None, "eV"])
def test_converge_json_units(energy):
    args = ["-e", "schrodinger", "--param", "Z=1", "--json"] + (["--energy-unit", energy] if energy else [])
    data = json.loads(run("converge", *args))
    eu = energy or "hartree"
    assert data["units"]["energy"] == eu
    assert data["units"]["error"].startswith("relative")
    assert data["reference"]["1s"] == pytest.approx(-0.5 * PER_HARTREE[eu], rel=1e-12)   # exact hydrogen 1s


@pytest.mark.parametrize("header", ["# units: r=fm V=MeV\n", "", "# units: V=MeV\n"])
def test_table_with_units_and_nuclear_system_matches_the_builtin_well(tmp_path, references, header):
    """The issue's bug through the command line: a '# units: r=fm V=MeV' table with --units nuclear
    (and tables whose unstated columns follow --units nuclear: fm and MeV)."""
    r = np.logspace(-3, np.log10(40.0), 3000)
    v = -50.0 / (1 + np.exp((r - 5.0) / 0.6))
    path = tmp_path / "ws.dat"
    path.write_text(header + "\n".join(f"{float(a)!r} {float(b)!r}" for a, b in zip(r, v)))
    data = json.loads(run("solve", "-e", "schrodinger", "--units", "nuclear", "--particle", "proton",
                          "--potential-file", path, "--table-tail", "zero", "--table-origin", "finite",
                          "--levels", "2", "--json"))
    want = references["nuclear"].energies("MeV")
    assert [lv["energy"] for lv in data["levels"]] == pytest.approx(list(want), rel=1e-8)


@pytest.mark.parametrize("energy", ["eV", "cm^-1"])
def test_transitions_json_units(energy):
    data = json.loads(run("transitions", "-e", "schrodinger", "--param", "Z=1", "--max-n", "2",
                          "--energy-unit", energy, "--json"))
    assert data["units"]["energy"] == energy and data["units"]["einstein_a"] == "1/s"
    line = next(x for x in data["lines"] if x["upper"] == "2p" and x["lower"] == "1s")
    # hydrogen 2p -> 1s: 1/2 - 1/8 = 0.375 hartree (Bethe & Salpeter 1957)
    assert line["energy"] == pytest.approx(0.375 * PER_HARTREE[energy], rel=1e-10)


@pytest.mark.parametrize("energy", [None, "eV"])
def test_phases_and_resonances_json_units(energy):
    extra = ["--energy-unit", energy] if energy else []
    eu = energy or "hartree"
    ph = json.loads(run("phases", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=2",
                        "--energies", "0.1,0.5", *extra, "--json"))
    assert ph["phases"]["units"]["energy"] == eu and ph["phases"]["units"]["phase"] == "rad"
    window = "3,4" if energy is None else f"{3 * PER_HARTREE['eV']},{4 * PER_HARTREE['eV']}"
    rs = json.loads(run("resonances", "--expr", "7.5*r**2*exp(-r)", "--window", window, *extra, "--json"))
    assert rs["units"]["energy"] == eu and rs["units"]["width"] == eu
    # the model barrier's resonance near 3.426 hartree (Moiseyev, Phys. Rep. 302, 212 (1998))
    assert rs["resonances"][0]["energy"] == pytest.approx(3.42639031 * PER_HARTREE[eu], rel=1e-7)


SPEC = """\
title = "Hydrogen, units test"
description = "Exact Coulomb levels: -1/(2 n^2) hartree (Bethe & Salpeter 1957)."
equations = ["schrodinger"]
channels = ["s"]
levels = 2
{extra}
[models.h]
terms = ["coulomb"]
params = {{ Z = 1 }}

[solve]
figures = []
radii = true
differences = [["2s", "1s"]]

[converge]
model = "h"
equation = "schrodinger"
channel = "s"
levels = 1
"""


@pytest.mark.parametrize("energy, length", [(None, None), ("eV", "angstrom"), ("cm^-1", "pm")])
def test_run_spec_csv_headers_and_json_carry_units(tmp_path, energy, length):
    from boundkit.runspec import load_spec, run as run_spec
    extra = "".join(f'{k} = "{v}"\n' for k, v in (("energy_unit", energy), ("length_unit", length)) if v)
    path = tmp_path / "h.toml"
    path.write_text(SPEC.format(extra=extra))
    run_spec(load_spec(path), tmp_path / "out")
    eu, lu = energy or "hartree", length or "bohr"
    levels = list(csv.DictReader(io.StringIO((tmp_path / "out" / "levels.csv").read_text())))
    col = "energy_cm^-1" if eu == "cm^-1" else f"energy_{eu}"
    assert col in levels[0] and f"mean_radius_{lu}" in levels[0]
    assert float(levels[0][col]) == pytest.approx(-0.5 * PER_HARTREE[eu], rel=1e-10)
    # <r> of hydrogen 1s is 3/2 bohr (Bethe & Salpeter 1957)
    assert float(levels[0][f"mean_radius_{lu}"]) == pytest.approx(1.5 * PER_BOHR[lu], rel=1e-9)
    diffs = list(csv.DictReader(io.StringIO((tmp_path / "out" / "differences.csv").read_text())))
    assert float(diffs[0][col.replace("energy", "difference")]) == pytest.approx(0.375 * PER_HARTREE[eu], rel=1e-10)
    conv = list(csv.DictReader(io.StringIO((tmp_path / "out" / "convergence.csv").read_text())))
    assert col in conv[0] and "relative_error" in conv[0]
    data = json.loads((tmp_path / "out" / "results.json").read_text())
    assert data["solve"]["columns"]["energy"] == eu and data["solve"]["columns"]["mean_radius"] == lu
    assert data["converge"][0]["units"]["energy"] == eu
    assert data["converge"][0]["reference"]["1s"] == pytest.approx(-0.5 * PER_HARTREE[eu], rel=1e-12)


def test_length_unit_help_names_every_length_unit():
    from boundkit.cli.options import LENGTH_UNIT_NAMES
    from boundkit.units import LENGTH_UNITS
    assert tuple(LENGTH_UNITS) == LENGTH_UNIT_NAMES
