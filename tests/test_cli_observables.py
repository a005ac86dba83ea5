"""`boundkit solve --observables / --states` and `boundkit transitions` on the command line,
and exported states read back."""
from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner

import boundkit
from boundkit.cli import main
from boundkit.io_states import read_states, write_states
from boundkit.observables import LENGTH_UNITS, mean_radius


def run(*args):
    return CliRunner().invoke(main, list(args))


def test_solve_observables_json_has_the_keys_and_values():
    r = run("solve", "-e", "schrodinger", "--l", "1", "-n", "2", "--tol", "1e-13", "--observables", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["units"]["length"] == "bohr" and data["units"]["inverse_length"] == "1/bohr"   # <1/r>
    for lv in data["levels"]:
        n = lv["n"]
        obs = lv["observables"]
        # hydrogen <r> = (3 n^2 - l(l+1))/2, <1/r> = 1/n^2 (Bethe and Salpeter 1957)
        assert obs["r_mean"] == pytest.approx((3 * n * n - 2) / 2, rel=1e-11)
        assert obs["r_inverse"] == pytest.approx(1 / n**2, rel=1e-11)
        assert "g_factor" not in obs


def test_solve_observables_dirac_table_shows_g():
    r = run("solve", "-e", "dirac", "-p", "coulomb", "--param", "Z=20", "-n", "1", "--observables")
    assert r.exit_code == 0, r.output
    assert "expectation values (<r>, r_rms in bohr, <1/r> in 1/bohr;" in r.output
    assert "g" in r.output.splitlines()[-2]
    r = run("solve", "-e", "dirac", "-n", "1", "--observables", "--json")
    assert "g_factor" in json.loads(r.output)["levels"][0]["observables"]


def test_solve_observables_klein_gordon_says_charge_density():
    r = run("solve", "-e", "klein-gordon", "--param", "Z=30", "-n", "1", "--observables")
    assert r.exit_code == 0, r.output
    assert "conserved charge density" in r.output


@pytest.mark.parametrize("suffix", [".csv", ".npz"])
def test_exported_states_integrate_to_one_and_reproduce_mean_radius(tmp_path, suffix):
    path = tmp_path / f"states{suffix}"
    r = run("solve", "-e", "dirac", "--param", "Z=40", "-n", "2", "--tol", "1e-13", "--states", str(path))
    assert r.exit_code == 0, r.output
    meta, levels = read_states(path)
    assert meta["units"]["r"] == "bohr" and meta["density"] == "P^2 + Q^2"
    res = boundkit.solve("dirac", "coulomb", {"Z": 40}, levels=2, tol=1e-13)
    for lv in res.levels:
        cols = levels[lv.label]
        assert np.sum(cols["weight"] * cols["density"]) == pytest.approx(1.0, rel=1e-13)
        assert np.sum(cols["weight"] * cols["r"] * cols["density"]) == pytest.approx(mean_radius(lv), rel=1e-13)
        assert np.allclose(cols["density"], cols["P"] ** 2 + cols["Q"] ** 2, rtol=1e-14, atol=0)


def test_exported_states_in_angstrom_keep_the_normalisation(tmp_path):
    res = boundkit.solve("klein-gordon", "coulomb", {"Z": 30}, levels=1, tol=1e-13)
    path = write_states(res, tmp_path / "kg.csv", length_unit="angstrom")
    meta, levels = read_states(path)
    cols = levels[res.levels[0].label]
    assert "charge density" in meta["density"]
    assert np.sum(cols["weight"] * cols["density"]) == pytest.approx(1.0, rel=1e-13)
    assert np.sum(cols["weight"] * cols["r"] * cols["density"]) == pytest.approx(
        mean_radius(res.levels[0]) * LENGTH_UNITS["angstrom"], rel=1e-13)
    head = path.read_text().splitlines()[1]
    assert head.startswith("# units: r in angstrom")


def test_states_refuse_a_bad_suffix():
    r = run("solve", "-e", "schrodinger", "-n", "1", "--states", "out.txt")
    assert r.exit_code == 2
    # refused before solving (it printed every level first)
    assert r.output.strip().splitlines() == ["boundkit: error: --states 'out.txt': unsupported states format '.txt'; "
                                             "use .csv or .npz"]
    with pytest.raises(ValueError, match="states: file 'x.dat' must end in .csv or .npz"):
        read_states("x.dat")
    import dataclasses

    empty = dataclasses.replace(boundkit.solve("schrodinger", "coulomb", {"Z": 1}), levels=())
    with pytest.raises(ValueError, match="states: the result has no levels to write"):
        write_states(empty, "unused.csv")
    with pytest.raises(ValueError, match="states: file 'unused.txt' must end in .csv or .npz"):
        write_states(empty, "unused.txt")


def test_transitions_command_table_and_json():
    r = run("transitions", "--max-n", "2")
    assert r.exit_code == 0, r.output
    assert "2p       1s       E1" in r.output
    r = run("transitions", "-e", "dirac", "--max-n", "2", "--multipole", "E1", "--multipole", "M1", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    keys = {"upper", "lower", "multipole", "energy", "wavelength_nm", "line_strength", "oscillator_strength",
            "einstein_a"}
    assert data["lines"] and all(keys <= set(ln) for ln in data["lines"])
    assert {lv["label"] for lv in data["levels"]} == {"1s1/2", "2s1/2", "2p1/2", "2p3/2"}
    assert {ln["multipole"] for ln in data["lines"]} == {"E1", "M1"}


def test_transitions_command_errors():
    r = run("transitions", "--max-n", "1")
    assert r.exit_code == 2 and "boundkit: error: max_n: needs at least 2" in r.output
    r = run("transitions", "--multipole", "M1")
    assert r.exit_code == 2 and "boundkit: error: multipoles: M1 is computed for the Dirac equation only" in r.output
    r = run("transitions", "--energy-unit", "furlong")
    assert r.exit_code == 2 and "boundkit: error: energy_unit: unknown unit 'furlong'" in r.output
    assert "Traceback" not in r.output


def test_transitions_max_n_limit_is_an_option_named_in_the_refusal():
    """transitions(max_n_limit=) is --max-n-limit; the refusal names the option on the command line
    (the API names the keyword: tests/test_transitions.py)."""
    r = run("transitions", "--max-n", "3", "--max-n-limit", "2")
    assert r.exit_code == 2 and "Traceback" not in r.output
    assert r.output.strip() == ("boundkit: error: max_n: 3 is more than the limit of 2; use fewer, or raise the "
                                "limit with --max-n-limit")
    r = run("transitions", "--max-n", "21")            # the default limit, 20
    assert r.exit_code == 2 and r.output.strip().endswith("more than the limit of 20; use fewer, or raise the "
                                                          "limit with --max-n-limit")
    r = run("transitions", "--max-n", "2", "--max-n-limit", "1")
    assert r.exit_code == 2 and r.output.strip() == "boundkit: error: --max-n-limit: must be >= 2, got 1"
    assert run("transitions", "--max-n", "2", "--max-n-limit", "2").exit_code == 0


def test_run_spec_solve_states_option_writes_csv(tmp_path):
    """[solve] states = true writes one CSV per model, equation and channel (length_unit of the spec)."""
    from boundkit.runspec import load_spec, run as run_spec

    spec = tmp_path / "h.toml"
    spec.write_text('title = "H"\ndescription = "states test"\nequations = ["schrodinger"]\nchannels = ["s"]\n'
                    'levels = 2\n'
                    'length_unit = "angstrom"\n\n[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n\n'
                    '[solve]\nfigures = []\nstates = true\n', encoding="utf-8")
    out = tmp_path / "out"
    run_spec(load_spec(spec), out)
    (path,) = out.glob("states-*.csv")
    meta, levels = read_states(path)
    assert meta["units"]["r"] == "angstrom"
    cols = levels["2s"]
    # hydrogen 2s: <r> = 6 bohr (Bethe and Salpeter 1957)
    assert np.sum(cols["weight"] * cols["r"] * cols["density"]) == pytest.approx(6 * LENGTH_UNITS["angstrom"],
                                                                                  rel=1e-9)


def test_hyperfine_command_hydrogen_json_and_table():
    """`boundkit hyperfine`: hydrogen 1s with the proton's moment and the reduced mass. Point dipole:
    A = A_Fermi (mu/m)^3 / (gamma (2 gamma - 1)), A_Fermi = (8/3) alpha^2 (mu_p / I)(m_e / m_p) / 2 hartree
    (Fermi 1930; relativistic factor Breit, Phys. Rev. 35, 1447 (1930); both from memory, the formula
    also checked in tests/test_observables.py); g from Breit's 1s formula (Breit, Nature 122, 649 (1928),
    from memory). Constants from scipy.constants."""
    import math

    import scipy.constants as sc

    from boundkit.units import hartree_to

    alpha = sc.fine_structure
    mu_p = sc.physical_constants["proton mag. mom. to nuclear magneton ratio"][0]
    m_p = sc.physical_constants["proton mass energy equivalent in MeV"][0]
    r = run("hyperfine", "--nuclear-moment", repr(mu_p), "--nuclear-spin", "0.5", "--nucleus-mass-mev", repr(m_p),
            "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.output)
    assert data["units"]["hyperfine_a"] == "MHz" and data["nucleus"]["magnetization"] == "point dipole"
    (lv,) = data["levels"]
    g = math.sqrt(1 - alpha**2)
    fermi = (8 / 3) * alpha**2 * (mu_p / 0.5) * (sc.m_e / sc.m_p) / 2 / (1 + sc.m_e / sc.m_p) ** 3
    assert lv["hyperfine_a"] == pytest.approx(float(hartree_to(fermi / (g * (2 * g - 1)), "MHz")), rel=1e-10)
    assert lv["g_factor"] == pytest.approx((2 / 3) * (1 + 2 * g), rel=1e-12)
    assert 0 < lv["errors"]["hyperfine_a"] < 1e-9 * lv["hyperfine_a"]
    r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.5", "--param", "Z=80", "-n", "2",
            "--magnetized-sphere-fm", "7", "--energy-unit", "eV")
    assert r.exit_code == 0, r.output
    assert "uniformly magnetized sphere, R = 7 fm" in r.output and "A in eV" in r.output
    assert [ln.split()[0] for ln in r.output.splitlines()[-2:]] == ["1s1/2", "2s1/2"]


def test_hyperfine_command_prints_the_splitting():
    """Beside A, the splitting of the two uppermost hyperfine sublevels, E(F) - E(F - 1) = A F with
    F = I + j (Lande's interval rule, a textbook consequence of E(F) = A [F(F+1) - I(I+1) - j(j+1)] / 2;
    common practice, no source needed): hydrogen's 1s doublet (I = 1/2) is split by A, a 2p3/2 level
    of a spin-3/2 nucleus by 3 A."""
    for spin, kappa, factor in (("0.5", "-1", 1.0), ("1.5", "-2", 3.0)):
        r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", spin, "--kappa", kappa, "--json")
        assert r.exit_code == 0, r.output
        (lv,) = json.loads(r.output)["levels"]
        assert lv["hyperfine_splitting"] == pytest.approx(factor * lv["hyperfine_a"], rel=1e-15)
        assert lv["errors"]["hyperfine_splitting"] == pytest.approx(factor * lv["errors"]["hyperfine_a"], rel=1e-15)
    r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "1.5", "--kappa", "-2")
    assert r.exit_code == 0, r.output
    assert "E(F) - E(F-1) = A F at F = I + j" in r.output
    row = r.output.splitlines()[-1].split()
    assert row[0] == "2p3/2" and float(row[-3]) == pytest.approx(3 * float(row[-6]), rel=1e-10)   # value +- error


def test_hyperfine_command_errors():
    r = run("hyperfine", "--nuclear-spin", "0.5")
    assert r.exit_code == 2
    assert r.output.strip() == "boundkit: error: missing option '--nuclear-moment'; see boundkit hyperfine --help"
    r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.3")
    assert r.exit_code == 2
    assert r.output.strip() == ("boundkit: error: --nuclear-spin: must be a positive multiple of 1/2 (e.g. 0.5 for "
                                "the proton), got 0.3")
    r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.5", "--magnetized-sphere-fm", "0")
    assert r.exit_code == 2
    assert r.output.strip() == "boundkit: error: --magnetized-sphere-fm: must be > 0 and finite (fm), got 0"
    # beyond Z alpha = sqrt(3)/2 the point dipole's integral diverges: refused (it printed 2.2e12 MHz, exit 0)
    r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.5", "--param", "Z=120")
    assert r.exit_code == 2 and len(r.output.strip().splitlines()) == 1
    assert ("boundkit: error: level: the point-dipole hyperfine integral of 1s1/2 diverges at the origin"
            in r.output and "--magnetized-sphere-fm" in r.output)
    r = run("hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.5", "--energy-unit", "furlong")
    assert r.exit_code == 2 and "boundkit: error: energy_unit: unknown unit 'furlong'" in r.output
    assert "Traceback" not in r.output


def test_a_states_file_named_with_an_upper_case_suffix_is_written_under_that_name(tmp_path):
    """--states H.NPZ wrote H.NPZ.npz (numpy appends .npz to a name not ending in lower-case .npz) and
    said it wrote H.NPZ, which then could not be read back (a tester)."""
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=0, levels=1)
    path = write_states(res, tmp_path / "H.NPZ")
    assert path.exists() and not (tmp_path / "H.NPZ.npz").exists()
    meta, levels = read_states(path)
    assert meta["levels"][0]["label"] == "1s"


def test_json_and_states_file_give_n_in_the_labels_convention(tmp_path):
    """--labels nuclear: the JSON said label '0s' with n = 1 (the atomic n) while the table showed n = 0;
    the states file's metadata likewise (a tester). n follows the label's convention in both."""
    res = CliRunner().invoke(main, ["solve", "--labels", "nuclear", "--levels", "2", "--json",
                                    "--states", str(tmp_path / "h.csv")])
    assert res.exit_code == 0, res.output
    data, _ = json.JSONDecoder().raw_decode(res.output[res.output.index("{"):])     # stderr's line follows
    assert [(lv["label"], lv["n"]) for lv in data["levels"]] == [("0s", 0), ("1s", 1)]
    meta, _ = read_states(tmp_path / "h.csv")
    assert [(lv["label"], lv["n"]) for lv in meta["levels"]] == [("0s", 0), ("1s", 1)]


def test_the_header_says_when_the_reduced_mass_is_used():
    """With --nucleus-mass-mev the header named only the particle's mass (a tester); it now gives the reduced
    mass m M / (m + M) too (standard), here electron and proton (CODATA, scipy.constants)."""
    import scipy.constants as sc

    me, mp = (sc.physical_constants[k][0] for k in ("electron mass energy equivalent in MeV",
                                                     "proton mass energy equivalent in MeV"))
    r = CliRunner().invoke(main, ["solve", "--nucleus-mass-mev", repr(mp)])
    assert r.exit_code == 0, r.output
    first = r.output.splitlines()[0]
    assert f"reduced mass {me * mp / (me + mp):.9g} MeV/c^2 with a nucleus of {mp:.9g} MeV/c^2" in first


def test_the_header_does_not_call_a_smooth_surface_a_kink():
    """A Woods-Saxon well is smooth everywhere; the header listed its radius as a 'jump or kink'."""
    r = CliRunner().invoke(main, ["solve", "--units", "nuclear", "--particle", "neutron", "-p", "woods-saxon",
                                  "--param", "depth=50", "--param", "radius=5", "--param", "diffuseness=0.6"])
    assert r.exit_code == 0, r.output
    line = next(x for x in r.output.splitlines() if x.startswith("potential breakpoints"))
    assert line == "potential breakpoints (jumps, kinks or surfaces, where the mesh puts an edge): r = 5 fm"


@pytest.mark.parametrize("suffix", [".csv", ".npz"])
def test_exported_states_give_level_energies_in_the_unit_asked(tmp_path, suffix):
    """A tester found the --states files in hartree whatever --energy-unit said: write_states takes
    energy_unit (MeV here) and keeps the hartree value beside it, both named in the units."""
    import scipy.constants as sc

    res = boundkit.solve("schrodinger", "coulomb", {"Z": 2}, levels=2, tol=1e-13)
    path = write_states(res, tmp_path / f"he{suffix}", length_unit="fm", energy_unit="MeV")
    meta, _ = read_states(path)
    assert meta["units"]["energy"] == "MeV" and meta["units"]["energy_hartree"] == "hartree"
    mev_per_hartree = sc.physical_constants["Hartree energy in eV"][0] * 1e-6        # CODATA via scipy
    for lv, n in zip(meta["levels"], (1, 2)):
        # -Z^2 / (2 n^2) hartree (Bethe & Salpeter 1957)
        assert lv["energy_hartree"] == pytest.approx(-2.0 / n**2, rel=1e-12)
        assert lv["energy"] == pytest.approx(-2.0 / n**2 * mev_per_hartree, rel=1e-12)
    if suffix == ".csv":
        assert path.read_text().splitlines()[1].endswith("level energies (below) in MeV")
    with pytest.raises(ValueError, match=r"energy_unit: unknown unit 'furlong'; choose one of hartree, eV"):
        write_states(res, tmp_path / f"x{suffix}", energy_unit="furlong")


def test_cli_states_file_follows_energy_unit(tmp_path):
    """`solve --states F --energy-unit eV` wrote the levels' energies in hartree (labelled): now in eV, the
    hydrogen 1s -1/2 hartree times CODATA's hartree in eV (scipy.constants), with the hartree value beside it."""
    import scipy.constants as sc

    path = tmp_path / "h.csv"
    r = run("solve", "-n", "1", "--tol", "1e-13", "--energy-unit", "eV", "--states", str(path))
    assert r.exit_code == 0, r.output
    meta, _ = read_states(path)
    assert meta["units"]["energy"] == "eV"
    assert meta["levels"][0]["energy"] == pytest.approx(-0.5 * sc.physical_constants["Hartree energy in eV"][0],
                                                        rel=1e-12)
    assert "(r in bohr, energies in eV)" in r.output


def test_transitions_text_names_the_line_strength_unit():
    """The text header said 'S in atomic units' only; it names the unit and convention the JSON gives."""
    from boundkit.transitions import LINE_STRENGTH_UNIT

    r = run("transitions", "--max-n", "2")
    assert r.exit_code == 0, r.output
    assert f"S in {LINE_STRENGTH_UNIT};" in r.output and "e^2 bohr^(2J)" in LINE_STRENGTH_UNIT
