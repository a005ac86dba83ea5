"""One interface: the same option names, meanings, defaults and help texts in every command, the
CLI's defaults equal to the API's, and the public functions with their real signatures.

These are checks of boundkit's own conventions (no physics values here); the numbers the three
entry points give for the same study are compared in tests/test_parity.py.
"""
from __future__ import annotations

import inspect
import json
import subprocess
import sys

import click
import pytest
from click.testing import CliRunner

import boundkit
from boundkit.cli import main

COMMANDS = dict(main.commands)

# command -> the API function it calls (its defaults are the command's defaults)
API = {
    "solve": "boundkit.solve", "converge": "boundkit.accuracy.converge", "scan": "boundkit.scan",
    "critical": "boundkit.critical", "compare": "boundkit.compare", "transitions": "boundkit.transitions",
    "phases": "boundkit.phase_shifts", "resonances": "boundkit.resonances",
}
# the settings a command shares with its API function by name (the potential options are built into
# terms and parameters, so they are not keywords of the same form)
SETTINGS = ("equation", "levels", "tol", "method", "order", "l_max", "max_n", "energy_tol", "max_evaluations",
            "energy_unit", "angles", "kind", "r0", "r_max", "hard_core")


def _api(path: str):
    obj = boundkit
    for part in path.split(".")[1:]:
        obj = getattr(obj, part)
    return obj


def _options(cmd):
    return [p for p in cmd.params if isinstance(p, click.Option)]


def test_every_option_of_every_command_has_help():
    missing = [f"{name} {p.opts[0]}" for name, cmd in COMMANDS.items() for p in _options(cmd)
               if not (p.help or "").strip()]
    assert missing == []


def test_plot_takes_a_file_and_method_is_a_choice_everywhere():
    for name, cmd in COMMANDS.items():
        for p in _options(cmd):
            if "--plot" in p.opts:
                assert p.metavar == "FILE", name
                assert ".png, .svg or .pdf" in p.help, name
            if "--method" in p.opts:
                assert isinstance(p.type, click.Choice), name


def test_shared_options_read_the_same_in_every_command():
    # the options that mean the same thing everywhere have one help text
    helps: dict[str, set] = {}
    for cmd in COMMANDS.values():
        for p in _options(cmd):
            if p.opts[0] in ("--particle", "--mass-mev", "--nucleus-mass-mev", "--potential", "--param",
                             "--units", "--expr", "--potential-file"):
                helps.setdefault(p.opts[0], set()).add(p.help)
    assert helps and all(len(h) == 1 for h in helps.values()), helps


def test_the_commands_that_solve_take_tol_method_units_and_energy_unit():
    for name in ("solve", "converge", "scan", "critical", "compare", "transitions", "phases", "resonances"):
        names = {o for p in _options(COMMANDS[name]) for o in p.opts}
        assert {"--tol", "--equation", "--units", "--particle"} <= names or name == "compare", name
        if name != "critical":   # critical reports a parameter value, not energies
            assert "--energy-unit" in names, name
    for name in ("solve", "converge", "scan", "critical", "compare", "transitions"):
        assert "--method" in {o for p in _options(COMMANDS[name]) for o in p.opts}, name


def test_equation_defaults_to_schrodinger_everywhere():
    for name, cmd in COMMANDS.items():
        for p in _options(cmd):
            if "--equation" in p.opts and not p.multiple:
                assert p.default == "schrodinger", name
    assert "default schrodinger" in next(p for p in COMMANDS["scan"].params if p.name == "equations").help
    for path in ("boundkit.solve", "boundkit.accuracy.converge", "boundkit.transitions", "boundkit.phase_shifts",
                 "boundkit.resonances"):
        assert inspect.signature(_api(path)).parameters["equation"].default == "schrodinger", path


@pytest.mark.parametrize("command", sorted(API))
def test_cli_defaults_are_the_api_defaults(command):
    api = inspect.signature(_api(API[command])).parameters
    compared = 0
    for p in _options(COMMANDS[command]):
        key = p.name
        if key not in SETTINGS or key not in api or api[key].default is inspect.Parameter.empty \
                or p.default is None or p.multiple:
            continue
        cli_default = p.default
        if key == "levels" and isinstance(cli_default, str):   # --levels N|all
            cli_default = int(cli_default)
        if key == "angles":
            cli_default = tuple(float(x) for x in cli_default.split(","))
        assert cli_default == api[key].default, (command, key, cli_default, api[key].default)
        compared += 1
    assert compared >= 1


def test_energy_unit_names_in_help_are_the_units_module_s():
    from boundkit.cli.options import ENERGY_UNIT_NAMES
    from boundkit.units import ENERGY_UNITS

    assert tuple(ENERGY_UNITS) == ENERGY_UNIT_NAMES


def test_scan_help_ends_cleanly_and_describes_following_by_label():
    out = CliRunner().invoke(main, ["scan", "--help"]).output
    assert "followed across the grid by its label" in out
    assert "followed by label." not in out


def test_scan_refuses_kappa_without_dirac_like_solve():
    res = CliRunner().invoke(main, ["scan", "-e", "schrodinger", "--kappa", "-1", "--vary", "Z=1,2"])
    assert res.exit_code == 2
    assert "kappa: only the Dirac equation takes kappa; give l for schrodinger" in res.stderr
    with pytest.raises(ValueError, match="kappa: only the Dirac equation takes kappa; give l for schrodinger"):
        boundkit.scan("schrodinger", "coulomb", {}, {"Z": [1.0]}, channels=[{"kappa": -1}])
    with pytest.raises(ValueError, match="kappa: only the Dirac equation takes kappa"):
        boundkit.solve("schrodinger", kappa=-1)
    with pytest.raises(ValueError, match="channels: give either channels= or l=/kappa="):
        boundkit.scan("schrodinger", "coulomb", {}, {"Z": [1.0]}, channels=[{"l": 0}], l=0)


def test_scan_takes_l_and_kappa_like_solve():
    one = boundkit.scan("schrodinger", "coulomb", {}, {"Z": [1.0]}, l=1, levels=1, workers=1)
    assert [r["label"] for r in one.rows] == ["2p"]
    # -Z^2 / (2 n^2) hartree (Bethe & Salpeter 1957): n = 2
    assert one.rows[0]["energy"] == pytest.approx(-0.125, rel=1e-12)
    two = boundkit.scan("dirac", "coulomb", {}, {"Z": [1.0]}, kappa=1, levels=1, workers=1)
    assert [r["label"] for r in two.rows] == ["2p1/2"]


def test_public_functions_show_their_real_signatures_and_docstrings():
    for name in ("solve", "scan", "critical", "compare", "transitions", "phase_shifts", "resonances",
                 "observables", "matrix_element"):
        f = getattr(boundkit, name)
        sig = inspect.signature(f)
        assert not any(p.kind is p.VAR_POSITIONAL for p in sig.parameters.values()), name
        assert f.__doc__ and "Parameters" in f.__doc__, name
    assert list(inspect.signature(boundkit.critical).parameters)[:3] == ["equation", "potential", "params"]
    assert boundkit.critical.__name__ == "critical"


def test_documented_submodules_are_reachable_after_import_boundkit():
    out = subprocess.run([sys.executable, "-c", (
        "import boundkit\n"
        "print(boundkit.accuracy.converge.__name__, boundkit.validate.run_validation.__name__, "
        "boundkit.runspec.load_spec.__name__)")], check=True, capture_output=True, text=True).stdout
    assert out.split() == ["converge", "run_validation", "load_spec"]


def test_api_reference_page_is_current():
    from pathlib import Path

    script = Path(__file__).resolve().parents[1] / "docs" / "make_api.py"
    res = subprocess.run([sys.executable, str(script), "--check"], capture_output=True, text=True)
    assert res.returncode == 0, res.stderr


def test_solve_without_a_potential_is_hydrogen_in_the_api_as_on_the_command_line():
    """`boundkit solve` with no potential option is hydrogen; boundkit.solve() was a refusal
    ("needs parameter 'Z'"). Exact: E_n = -Z^2 / (2 n^2) hartree (Bohr; common practice)."""
    assert boundkit.solve().levels[0].energy == pytest.approx(-0.5, rel=1e-13)
    assert [lv.energy for lv in boundkit.solve(params={"Z": 2}, levels=2).levels] == \
        pytest.approx([-2.0, -0.5], rel=1e-13)
    out = CliRunner().invoke(main, ["solve", "--json"])
    assert json.loads(out.output)["levels"][0]["energy"] == pytest.approx(boundkit.solve().levels[0].energy, rel=1e-15)
    # a Coulomb term named explicitly still needs its charge
    with pytest.raises(ValueError, match=r"^params: term 'coulomb' needs parameter 'Z'"):
        boundkit.solve(potential="coulomb")


def test_the_hydrogen_default_holds_for_every_solving_function_with_a_potential_default():
    """converge, transitions and phase_shifts default to hydrogen as solve does (and as their
    commands do); the 2p -> 1s line of hydrogen is 3/8 hartree (Bohr; common practice), reported in eV
    (the hartree in eV from scipy.constants, CODATA)."""
    from scipy.constants import physical_constants

    for path in ("boundkit.solve", "boundkit.accuracy.converge", "boundkit.transitions", "boundkit.phase_shifts"):
        assert inspect.signature(_api(path)).parameters["potential"].default is None, path
    res = boundkit.transitions(max_n=2)
    assert [ln.energy for ln in res.lines] == pytest.approx([0.375 * physical_constants["Hartree energy in eV"][0]],
                                                            rel=1e-12)
