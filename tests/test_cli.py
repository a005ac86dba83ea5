"""Command-line behaviour: output keys scripts depend on, exit codes, messages."""
from __future__ import annotations

import json
import re

import pytest
from click.testing import CliRunner

from boundkit.cli import main
from boundkit.units import ALPHA


def run(*args):
    return CliRunner().invoke(main, list(args))


def test_default_case_runs_and_prints_a_table():
    res = run("solve")   # the defaults of boundkit.solve: Schrodinger, l = 0, one level
    assert res.exit_code == 0, res.output
    assert "schrodinger equation" in res.output and "1s " in res.output and "2s " not in res.output
    assert "status: ok" in res.output
    res = run("solve", "-e", "dirac", "--levels", "3")   # the README quick start
    assert res.exit_code == 0, res.output
    assert "1s1/2" in res.output and "2s1/2" in res.output and "3s1/2" in res.output


def test_json_keys_and_units():
    res = run("solve", "--equation", "schrodinger", "--param", "Z=2", "--l", "1", "--levels", "2",
              "--energy-unit", "eV", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    for key in ("equation", "potential", "units", "constants", "settings", "levels", "diagnostics"):
        assert key in data
    assert data["units"] == {"energy": "eV", "length": "bohr", "time": "s",
                             "parameters": "atomic (each parameter in hartree and bohr as its unit says)"}
    assert data["constants"]["alpha"] == ALPHA
    lv = data["levels"][0]
    for key in ("n", "l", "j", "kappa", "label", "energy", "error_estimate"):
        assert key in lv
    assert lv["label"] == "2p"
    # -Z^2/(2 n^2) hartree with Z = 2, n = 2 (Bethe & Salpeter 1957), in eV via CODATA
    from scipy.constants import physical_constants
    expected = -0.5 * physical_constants["Hartree energy in eV"][0]
    assert lv["energy"] == pytest.approx(expected, rel=1e-12)


def test_repeatable_potential_terms_add():
    res = run("solve", "--equation", "schrodinger", "-p", "coulomb", "-p", "coulomb", "--param", "Z=1",
              "--json")
    assert res.exit_code == 0, res.output
    # two unit charges act as Z = 2: E_1s = -2 hartree (Bethe & Salpeter 1957)
    assert json.loads(res.output)["levels"][0]["energy"] == pytest.approx(-2.0, rel=1e-12)


@pytest.mark.parametrize(
    "args, message",
    [
        (("--equation", "foo"), "equation: unknown value 'foo'"),
        (("--potential", "bar"), "unknown potential 'bar'"),
        (("--param", "Z"), "malformed; write NAME=VALUE"),
        (("--param", "Z=abc"), "is not a number"),
        (("--param", "Z=1_0"), "'1_0' has an underscore in the number; write the digits without it"),   # read as 10
        (("--param", "Q=1"), "--param: no potential term takes parameter 'Q'"),
        # the API's message gives params={'rms_fm': 1} and the option; the command line only the option
        (("--potential", "fermi", "--param", "Z=82"),
         r"boundkit: error: --param: term 'fermi' needs parameter 'rms_fm' \(rms charge radius, fm\); give it, "
         r"e.g. --param rms_fm=1\n$"),
        (("-e", "dirac", "--kappa", "0"), "kappa: must be a non-zero integer"),
        (("--kappa", "-1"), "kappa: only the Dirac equation takes kappa; give l for schrodinger"),
        (("--equation", "schrodinger", "--l", "-1"), "l: must be >= 0"),
        (("--levels", "0"), "levels: must be >= 1"),
        (("-e", "dirac", "--param", "Z=140"), "Z alpha < \\|kappa\\|"),
        (("--equation", "klein-gordon", "--param", "Z=70"), "Z alpha < l \\+ 1/2"),
        (("--energy-unit", "parsec"), "unknown unit 'parsec'"),
        (("--tol", "-1"), "--tol: must lie between 0 and 1"),
        (("--method", "magic"), "--method.*'magic' is not one of 'auto', 'spectral', 'finite-difference'"),
        (("--particle", "tauon"), "particle: unknown value 'tauon'"),
    ],
)
def test_bad_input_gives_one_message_and_exit_2(args, message):
    import re

    res = run("solve", *args)
    assert res.exit_code == 2
    assert re.search(message, res.output), res.output
    assert "Traceback" not in res.output


_NEEDS_D = (r"^boundkit: error: --param: term 'yukawa' needs parameter 'screening_length' \(screening length D, "
            r"bohr\); give it, e.g. --param screening_length=1")


@pytest.mark.parametrize("args, tail", [
    (("solve",), ""),
    (("phases", "--energies", "0.1"), ""),
    (("scan", "--vary", "Z=1:2:2"), r" \(at Z = 1\)"),
    # critical and resonances printed the API's wording, params={'screening_length': 1} (--param ... on the
    # command line)
    (("critical", "--state", "1s", "--vary", "Z"), ""),
    (("resonances", "--window", "1,2"), ""),
])
def test_every_command_names_a_missing_parameter_as_its_option(args, tail):
    res = run(args[0], "-p", "yukawa", "--param", "Z=1", *args[1:])
    assert res.exit_code == 2 and "Traceback" not in res.output
    assert re.fullmatch(_NEEDS_D + tail + "\n", res.output), res.output


def test_critical_without_a_start_value_names_the_options():
    """It printed the API's wording, '(params['screening_length']) or a bracket'."""
    res = run("critical", "-p", "yukawa", "--param", "Z=1", "--state", "1s", "--vary", "screening_length")
    assert res.exit_code == 2
    assert re.fullmatch(r"boundkit: error: --param: give a start value of 'screening_length' where 1s is bound "
                        r"\(--param screening_length=VALUE\) or --bracket A,B\n", res.output), res.output


def test_solve_footer_names_what_each_family_counts():
    """The spectral family reports re-seeded guesses and levels found by bisection (it used to print
    finite-difference counters that it never set, always 0); the finite-difference family its
    dropped candidates, and its header names its own grid (it named the seeding spectral elements)."""
    # S = V = -Z/r: no point-Coulomb formula seeds it, and the linearised pencil's guesses for its
    # upper s levels lie between two levels (a vector tail alone is seeded by the exact formula now)
    res = run("solve", "-e", "klein-gordon", "--param", "Z=50", "--scalar", "coulomb", "--levels", "5")
    assert res.exit_code == 0, res.output
    assert re.search(r"guesses re-seeded: [1-9]\d*, levels located by bisection: 0; ", res.output), res.output
    assert "dropped candidates" not in res.output and "unstable seeds" not in res.output
    res = run("solve", "--levels", "2", "--method", "finite-difference")
    assert res.exit_code == 0, res.output
    assert "dropped candidates: 0 (node mismatch or unstable); " in res.output
    assert re.search(r"method finite-difference \(finite differences, \d+ grid points\)", res.output), res.output


def test_confining_vector_potential_in_dirac_is_one_message():
    """A linear vector potential in the Dirac equation (Klein's paradox) used to end in a MemoryError
    traceback from the layout."""
    res = run("solve", "-e", "dirac", "-p", "linear", "--param", "F=1", "--levels", "3")
    assert res.exit_code == 2
    assert "the vector part outgrows the scalar part" in res.output and "--scalar" in res.output
    assert " ..." not in res.output            # the whole message, with its fix, fits the line
    assert "Traceback" not in res.output


def test_unreachable_tolerance_prints_levels_and_exits_3():
    res = run("solve", "-e", "dirac", "--tol", "1e-17", "--levels", "1")
    assert res.exit_code == 3
    assert "1s1/2" in res.output
    assert "tolerance-not-met" in res.output


def test_a_plot_name_too_long_for_the_file_system_is_named_as_the_problem(tmp_path):
    """--plot with a 300-character name was reported as 'cannot write the output ... redirect it', blaming
    standard output (a tester): the option and the reason are named, exit 2, nothing computed."""
    res = run("solve", "--plot", str(tmp_path / ("x" * 300 + ".png")))
    assert res.exit_code == 2
    assert re.search(r"--plot '.*': cannot be a file here \(File name too long\); choose a shorter name", res.output)
    assert "Traceback" not in res.output and "redirect" not in res.output


def test_a_plot_path_under_a_file_and_a_name_without_suffix(tmp_path, monkeypatch):
    """--plot a.png/x.png with a.png a file said '(File exists)' after solving; a name without a suffix was
    written as name.png without a word (a tester). The first is refused before solving (exit 2, one line),
    the second names the file written."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "a.png").write_text("not a folder")
    res = run("solve", "--plot", "a.png/x.png")
    assert res.exit_code == 2
    assert re.search(r"--plot 'a.png/x.png': 'a.png' is a file, not a folder; choose another folder", res.output)
    assert "level" not in res.output              # nothing solved
    res = run("solve", "--plot", "fig")
    assert res.exit_code == 0, res.output
    assert "figure: fig.png" in res.output and (tmp_path / "fig.png").exists()


@pytest.mark.parametrize("args, message", [
    (("solve", "--l", "-1"), r"invalid value for '--l': l: must be >= 0, got -1; see boundkit solve --help"),
    (("scan", "--vary", "Z=1:2:2", "--l", "0", "--l", "-2"),
     r"invalid value for '--l': l: must be >= 0, got -2; see boundkit scan --help"),
    (("solve", "-e", "dirac", "--kappa", "0"),
     r"invalid value for '--kappa': kappa: must be a non-zero integer \(kappa = -1 is s1/2, \+1 is p1/2, -2 is "
     r"p3/2, \.\.\.\); see boundkit solve --help"),
])
def test_a_bad_channel_number_is_a_usage_error_with_the_help_tail(args, message):
    """--l -1 ended 'l: must be >= 0, got -1' without the '; see boundkit solve --help' that --levels 0 and
    other bad option values get: the channel numbers are checked where click reads them."""
    res = run(*args)
    assert res.exit_code == 2
    assert re.fullmatch(r"boundkit: error: " + message + "\n", res.output), res.output
