"""Labelling conventions (atomic, nuclear, quarkonium) and the particle list."""
from __future__ import annotations

import pytest
import scipy.constants as sc

import boundkit
from boundkit.states import level_label, parse_label
from boundkit.units import PARTICLES, get_particle, particle_table


@pytest.mark.parametrize("nodes, l, j, atomic, nuclear, quarkonium", [
    # atomic n = nodes + l + 1 (Bethe & Salpeter 1957); nuclear n_r = nodes (shell-model practice);
    # quarkonium n = nodes + 1 (heavy-quarkonium practice, 1S 2S 1P)
    (0, 0, 0.5, "1s1/2", "0s1/2", "1S1/2"),
    (0, 1, 1.5, "2p3/2", "0p3/2", "1P3/2"),
    (0, 1, 0.5, "2p1/2", "0p1/2", "1P1/2"),
    (1, 0, None, "2s", "1s", "2S"),
    (1, 1, None, "3p", "1p", "2P"),
    (0, 2, 2.5, "3d5/2", "0d5/2", "1D5/2"),
])
def test_labels_in_three_conventions_and_back(nodes, l, j, atomic, nuclear, quarkonium):
    for conv, want in (("atomic", atomic), ("nuclear", nuclear), ("quarkonium", quarkonium)):
        assert level_label(nodes, l, j, conv) == want
        assert parse_label(want, conv) == (nodes, l, j)


@pytest.mark.parametrize("label, conv, match", [
    ("1p", "atomic", r"n >= 2 .*atomic labels: n >= l \+ 1"),
    ("0S", "quarkonium", r"n >= 1 .*quarkonium labels"),
    ("-1s", "nuclear", "cannot read"),
    ("1s", "molecular", "labels: unknown labelling convention 'molecular'; choose one of atomic, nuclear, quarkonium"),
])
def test_bad_labels_are_refused(label, conv, match):
    with pytest.raises(ValueError, match=match):
        parse_label(label, conv)


def test_result_relabels_levels_and_diagnostics():
    res = boundkit.solve("dirac", "woods-saxon", {"depth": 50, "radius": 5, "diffuseness": 0.6},
                         scalar=None, units="nuclear", particle="proton", kappa=1, levels=2)
    nuc = res.with_labels("nuclear")
    assert [lv.label for lv in res.levels] == ["2p1/2", "3p1/2"]
    assert [lv.label for lv in nuc.levels] == ["0p1/2", "1p1/2"]
    assert [d["label"] for d in nuc.diagnostics["levels"]] == ["0p1/2", "1p1/2"]
    assert nuc.settings["labels"] == "nuclear"
    assert nuc.energies("MeV") == pytest.approx(res.energies("MeV"), rel=0)
    assert res.with_labels("quarkonium").levels[1].label == "2P1/2"


@pytest.mark.parametrize("name, key", [
    ("electron", "electron mass energy equivalent in MeV"),
    ("muon", "muon mass energy equivalent in MeV"),
    ("proton", "proton mass energy equivalent in MeV"),
    ("neutron", "neutron mass energy equivalent in MeV"),
    ("deuteron", "deuteron mass energy equivalent in MeV"),
])
def test_particle_masses_are_codata(name, key):
    # CODATA via scipy.constants: the mass ratio times m_e c^2 = E_h / alpha^2 (tests/test_mass_units.py),
    # within the stated uncertainty of the tabulated value in MeV
    value, _, sigma = sc.physical_constants[key]
    assert abs(get_particle(name).mass_mev - value) <= sigma


def test_particle_table_lists_every_particle_with_units():
    rows = {r["name"]: r for r in particle_table()}
    assert set(rows) == set(PARTICLES) >= {"neutron", "deuteron"}
    assert rows["deuteron"]["spin"] == 1.0 and rows["deuteron"]["charge"] == 1.0   # common knowledge
    assert rows["neutron"]["charge"] == 0.0
    for r in rows.values():
        assert r["mass_unit"] == "MeV/c^2" and r["charge_unit"] == "e" and r["spin_unit"] == "hbar"
        assert r["source"]


def test_label_sort_key_puts_p12_before_p32():
    from boundkit.states import label_sort_key
    labels = ["3s1/2", "2p3/2", "2p1/2", "1s1/2", "dirac:2s1/2", "odd"]
    assert sorted(labels, key=label_sort_key) == ["1s1/2", "dirac:2s1/2", "2p1/2", "2p3/2", "3s1/2", "odd"]
    assert sorted(["0p3/2", "1s1/2", "0p1/2"], key=lambda s: label_sort_key(s, "nuclear")) == \
        ["0p1/2", "0p3/2", "1s1/2"]


def test_zero_differences_print_as_zero_and_others_with_supported_digits():
    from boundkit.reporting import difference_error, format_difference
    # two equal levels (Dirac 2s1/2 and 2p1/2 of a point nucleus are degenerate; Dirac 1928): rounding noise
    a, b = -34.21106000000004, -34.21106
    err = difference_error(a, b, 1e-13, 1e-13)
    assert format_difference(a - b, err) == "0"
    # a real shift keeps the digits its estimate supports and no more
    assert format_difference(0.19902934567, difference_error(-132.08, -132.279, 1e-9, 1e-9)) == "0.199029346"
    assert format_difference(-5.0, 0.0) == "-5"


def test_studies_take_a_labelling_convention():
    ws = {"depth": 50, "radius": 5, "diffuseness": 0.6}
    sc_ = boundkit.scan("schrodinger", "woods-saxon", ws, vary={"depth": [45, 50]}, channels=[{"l": 1}],
                        levels=1, units="nuclear", particle="proton", labels="nuclear", workers=1)
    assert {r["label"] for r in sc_.rows} == {"0p"} and sc_.settings["labels"] == "nuclear"
    cmp_ = boundkit.compare("coulomb", {"Z": 1}, l_max=1, levels=1, labels="quarkonium")
    assert [r["label"] for r in cmp_.rows] == ["1S", "1P"]
    # the Hulthen 1s (nuclear 0s) unbinds at delta = 2 Z (Flugge, Practical Quantum Mechanics, 1971)
    crit = boundkit.critical("schrodinger", "hulthen", {"Z": 1, "delta": 1.5}, state="0s", vary="delta",
                             labels="nuclear")
    assert crit.state == "0s" and crit.value == pytest.approx(2.0, rel=1e-7)


def test_particles_command_lists_mass_charge_spin_and_source():
    import json

    from click.testing import CliRunner

    from boundkit.cli import main
    out = CliRunner().invoke(main, ["particles"])
    assert out.exit_code == 0, out.output
    head, *rows = out.output.splitlines()
    assert "mass (MeV/c^2)" in head and "charge (e)" in head and "spin (hbar)" in head
    line = next(r for r in rows if r.startswith("deuteron"))
    # CODATA via scipy.constants (a mass ratio times E_h / alpha^2), printed to 12 significant digits: within
    # the stated uncertainty of the tabulated value in MeV
    value, _, sigma = sc.physical_constants["deuteron mass energy equivalent in MeV"]
    assert abs(float(line.split()[1]) - value) <= sigma
    data = json.loads(CliRunner().invoke(main, ["particles", "--json"]).output)
    assert data["units"] == {"mass": "MeV/c^2", "charge": "e", "spin": "hbar"}
    assert {p["name"] for p in data["particles"]} >= {"neutron", "deuteron"}


def test_solve_labels_option():
    from click.testing import CliRunner

    from boundkit.cli import main
    out = CliRunner().invoke(main, ["solve", "-e", "dirac", "--param", "Z=1", "--kappa", "-2", "--levels", "2",
                                    "--labels", "nuclear"])
    assert out.exit_code == 0, out.output
    assert "nuclear labels: n = radial nodes, counted from 0" in out.output
    rows = [x.split()[0] for x in out.output.splitlines() if x[:1].isdigit()]
    assert rows == ["0p3/2", "1p3/2"]
    bad = CliRunner().invoke(main, ["solve", "--labels", "spectroscopic"])
    assert bad.exit_code == 2 and "boundkit: error:" in bad.output and "'spectroscopic' is not one of" in bad.output


def test_transitions_take_a_labelling_convention():
    # hydrogen 2p -> 1s, 0.375 hartree (Bethe & Salpeter 1957), named in the quarkonium convention
    tr = boundkit.transitions("schrodinger", "coulomb", {"Z": 1}, max_n=2, labels="quarkonium",
                              energy_unit="hartree")
    ln = tr.line("1P", "1S")
    assert ln.energy == pytest.approx(0.375, rel=1e-12)
    assert tr.level("1P").branching == {"1S E1": 1.0}


def test_solve_takes_labels_like_the_other_studies():
    """boundkit.solve(labels=...) names levels as with_labels does (common practice: nuclear counts
    radial nodes from 0, quarkonium nodes + 1); an unknown convention is refused by name."""
    import boundkit

    res = boundkit.solve("dirac", "coulomb", {"Z": 1}, kappa=1, levels=2, labels="nuclear")
    assert [lv.label for lv in res.levels] == ["0p1/2", "1p1/2"] and res.settings["labels"] == "nuclear"
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=1, levels=2, labels="quarkonium")
    assert [lv.label for lv in res.levels] == ["1P", "2P"]
    with pytest.raises(ValueError, match="labels: unknown labelling convention 'x'; choose one of atomic"):
        boundkit.solve(labels="x")
