"""Run specs: strict reading (file, key, line), the run engine's output and its safety, the
figures it draws, the expectation values it reports, and `boundkit run` on the command line."""
from __future__ import annotations

import json
import math
import os
import re
from pathlib import Path

import numpy as np
import pytest
import scipy.constants as sc
from click.testing import CliRunner

import boundkit
from boundkit.cli import main
from boundkit.observables import bohr_to, expectation, mean_radius, rms_radius
from boundkit.runspec import RunSpec, _KeyLines, load_spec, run
from boundkit.units import ENERGY_UNITS, energy_unit

# A small, fast spec: hydrogen, Schrodinger, whose levels are known exactly (-Z^2/(2n^2) hartree,
# Bethe & Salpeter 1957).
HYDROGEN = """\
title = "Hydrogen, Schrodinger"
description = "Test spec: exact Coulomb levels."
equations = ["schrodinger"]
channels = ["s", { l = 1, levels = 1 }]
levels = 2

[models.h]
terms = ["coulomb"]
params = { Z = 1 }

[solve]
differences = [["2p", "2s"]]
"""

FAST = HYDROGEN.replace("[solve]\n", "[solve]\nfigures = []\n")   # the same without figures


def write(tmp_path: Path, text: str, name: str = "spec.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def line_of(text: str, needle: str) -> int:
    """1-based line of the first line containing ``needle`` (the test's own search)."""
    for i, line in enumerate(text.splitlines(), start=1):
        if needle in line:
            return i
    raise AssertionError(f"{needle!r} not in text")


def tree(folder: Path) -> dict:
    """{relative path: bytes} of every file below ``folder``."""
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


# ----------------------------------------------------------------------------------------------
# reading
# ----------------------------------------------------------------------------------------------
def test_the_small_spec_reads():
    spec = load_spec("hydrogen.toml", HYDROGEN)
    assert isinstance(spec, RunSpec)
    assert spec.equations == ("schrodinger",)
    assert spec.energy_unit == "hartree" and spec.length_unit == "bohr"
    assert spec.solve is not None and spec.solve.differences == (("2p", "2s"),)
    assert set(spec.models) == {"h"}


# (replace this, with that, key named in the message, text of the line it must point at)
BAD = [
    ('levels = 2', 'levels = 2\ncolour = "red"', "colour", 'colour = "red"', "unknown key"),
    ('levels = 2', 'levels = "2"', "levels", 'levels = "2"', "expected an integer"),
    ('title = "Hydrogen, Schrodinger"\n', '', "title", None, "missing"),
    ('params = { Z = 1 }', 'params = { Z = "one" }', "models.h.params.Z", 'params = { Z = "one" }',
     "expected a number"),
    ('params = { Z = 1 }', 'params = { Z = 1, D = 2 }', "models.h.params.D", "params = { Z = 1, D = 2 }",
     "no term of model 'h' takes this parameter"),
    ('terms = ["coulomb"]', 'terms = ["colomb"]', "models.h.terms[0]", 'terms = ["colomb"]',
     "unknown built-in term 'colomb'"),
    ('params = { Z = 1 }', 'params = { Z = 1 }\nshape = "round"', "models.h.shape", 'shape = "round"',
     "unknown key"),
    ('channels = ["s", { l = 1, levels = 1 }]', 'channels = ["s", "e"]', "channels[1]",
     'channels = ["s", "e"]', "channel 'e' not understood"),
    ('channels = ["s", { l = 1, levels = 1 }]', 'channels = ["p5/2"]', "channels[0]", 'channels = ["p5/2"]',
     "j must be l - 1/2 or l + 1/2"),
    ('equations = ["schrodinger"]', 'equations = ["dirak"]', "equations[0]", 'equations = ["dirak"]',
     "unknown equation 'dirak'"),
    ('differences = [["2p", "2s"]]', 'differences = [["2p", "2s"]]\nmodels = ["h", "x"]', "solve.models[1]",
     'models = ["h", "x"]', "no model 'x'"),
    ('differences = [["2p", "2s"]]', 'differences = [["2p"]]', "solve.differences[0]",
     'differences = [["2p"]]', "pair of level labels"),
    ('levels = 2', 'levels = 2\ntolerance = 2.0', "tolerance", "tolerance = 2.0", "between 0 and 1"),
    ('levels = 2', 'levels = 2\ntol = 2.0', "tol", "tol = 2.0", "between 0 and 1"),
    ('levels = 2', 'levels = 2\ntol = 1e-9\ntolerance = 1e-9', "tolerance", "tolerance = 1e-9",
     "give tol (or its older name tolerance), not both"),
    ('levels = 2', 'levels = 2\nenergy_unit = "furlong"', "energy_unit", 'energy_unit = "furlong"',
     "unknown unit 'furlong'"),
    ('levels = 2', 'levels = 2\nunits = "imperial"', "units", 'units = "imperial"', "must be \"atomic\""),
    ('levels = 2', 'levels = 2\n[particle]\nname = "tauon"', "particle.name", 'name = "tauon"',
     "unknown value 'tauon'"),
    ('levels = 2', 'levels = 2\n[particle]\nmass_mev = -5.0', "particle.mass_mev", "mass_mev = -5.0",
     "must be positive"),
    ('[solve]\ndifferences = [["2p", "2s"]]\n', '[converge]\nmodel = "hh"\n', "converge.model", 'model = "hh"',
     "no model 'hh'"),
    ('[solve]\ndifferences = [["2p", "2s"]]\n', '', "solve", None, "asks for no study"),
    ('[solve]\ndifferences = [["2p", "2s"]]\n', '[converge]\nmodel = "h"\nmethods = ["spectral"]\norder = 4\n',
     "converge.order", "order = 4", "only the finite-difference method takes an order"),
    ('levels = 2', 'levels = 2\nlabels = "spectroscopic"', "labels", 'labels = "spectroscopic"',
     "must be one of atomic, nuclear, quarkonium"),
]


@pytest.mark.parametrize("old, new, key, line_text, message", BAD, ids=[b[2] + ":" + b[4][:18] for b in BAD])
def test_bad_spec_names_file_key_and_line(tmp_path, old, new, key, line_text, message):
    assert old in HYDROGEN
    text = HYDROGEN.replace(old, new, 1)
    path = write(tmp_path, text)
    with pytest.raises(ValueError) as err:
        load_spec(path)
    msg = str(err.value)
    assert str(path) in msg
    assert f"key {key!r}" in msg
    assert message in msg
    expected_line = line_of(text, line_text) if line_text else 1
    assert f"line {expected_line}," in msg, msg


def test_missing_key_in_a_table_points_at_the_table(tmp_path):
    text = HYDROGEN.replace('[solve]\ndifferences = [["2p", "2s"]]\n', '[critical]\nstates = ["1s"]\n')
    path = write(tmp_path, text)
    with pytest.raises(ValueError, match=r"line \d+, key 'critical.model': missing") as err:
        load_spec(path)
    assert f"line {line_of(text, '[critical]')}," in str(err.value)


def test_errors_inside_arrays_of_tables_point_at_the_right_entry(tmp_path):
    text = HYDROGEN.replace('[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n', """\
[models.h]
terms = ["coulomb"]
params = { Z = 1 }

[[models.h.term]]
name = "yukawa"
params = { Z = 0.1, screening_length = 3.0 }

[[models.h.term]]
name = "yukawa"
params = { Z = 0.1, screening_length = -3.0 }
""")
    path = write(tmp_path, text)
    with pytest.raises(ValueError, match="screening_length > 0") as err:
        load_spec(path)
    msg = str(err.value)
    assert "key 'models.h.term[1].params.screening_length'" in msg
    assert f"line {line_of(text, 'screening_length = -3.0')}," in msg


def test_invalid_toml_names_the_line(tmp_path):
    text = HYDROGEN.replace("levels = 2", "levels = = 2")
    path = write(tmp_path, text)
    with pytest.raises(ValueError, match=rf"run spec .*spec.toml, line {line_of(text, 'levels = = 2')}: "
                                         "not valid TOML"):
        load_spec(path)


def test_unreadable_file(tmp_path):
    with pytest.raises(ValueError, match="run spec .*nothing.toml: cannot read it"):
        load_spec(tmp_path / "nothing.toml")


def test_key_lines_follow_tables_arrays_inline_tables_and_multiline_values():
    text = '''\
title = "t"
description = """
levels = 99
"""
channels = [
  "s",
  { kappa = -2 },
]
[models.a]
params = { Z = 1, "rms_fm" = 2 }
[[scan]]
model = "a"
[[scan]]
model = "b"
[scan.range]
start = 1
'''
    lines = _KeyLines(text)
    assert lines.find(("description",)) == 2
    assert lines.find(("levels",)) == 1           # inside the string: not a key; falls back to line 1
    assert lines.find(("channels", 1, "kappa")) == 5
    assert lines.find(("models", "a")) == 9
    assert lines.find(("models", "a", "params", "Z")) == 10
    assert lines.find(("models", "a", "params", "rms_fm")) == 10
    assert lines.find(("scan", 0, "model")) == 12
    assert lines.find(("scan", 1, "model")) == 14
    assert lines.find(("scan", 1, "range", "start")) == 16


DIRAC_150 = FAST.replace('equations = ["schrodinger"]', 'equations = ["dirac"]').replace("{ Z = 1 }", "{ Z = 150 }")


def test_a_channel_that_solve_refuses_is_a_spec_error(tmp_path):
    """A point charge Z = 150 (Z alpha > 1) in the Dirac equation: `boundkit solve` refuses it as bad
    input, but the spec read as valid (--dry-run said so) and the run wrote a folder of errors."""
    spec = write(tmp_path, DIRAC_150)
    pattern = (rf"line {line_of(DIRAC_150, 'params')}, key 'models\.h\.params': \[solve\] dirac s1/2: Z: for the Dirac equation a point "
               r"Coulomb charge needs Z alpha < \|kappa\|")
    with pytest.raises(ValueError, match=pattern):
        load_spec(spec)
    for extra in (["--dry-run"], []):
        res = CliRunner().invoke(main, ["run", str(spec), "--out", str(tmp_path / "o"), *extra])
        assert res.exit_code == 2, res.output
        assert re.fullmatch(r"boundkit: error: run spec .*" + pattern + r".*\n", res.output), res.output
    assert sorted(os.listdir(tmp_path)) == ["spec.toml"]
    conv = FAST.replace("{ Z = 1 }", "{ Z = 150 }") + '\n[converge]\nmodel = "h"\nequation = "dirac"\n'
    conv = conv.replace("[solve]\ndifferences", "[solve]\nmodels = []\ndifferences")
    with pytest.raises(ValueError, match=r"\[converge\] dirac s1/2: Z: for the Dirac equation"):
        load_spec(write(tmp_path, conv, "conv.toml"))


# ----------------------------------------------------------------------------------------------
# running
# ----------------------------------------------------------------------------------------------
def test_run_writes_results_tables_figures_and_report(tmp_path):
    spec = write(tmp_path, HYDROGEN)
    out = tmp_path / "out" / "h"
    report = run(spec, out)
    assert report.out_dir == out and report.success, report.problems
    files = set(os.listdir(out))
    for name in ("results.json", "report.md", "levels.csv", "differences.csv", "spec.toml",
                 "radial-h-schrodinger.png", "density-h-schrodinger.png", "levels-h.png"):
        assert name in files
    assert set(report.files) <= files
    # nothing but the output folder was created next to it (no temporary folders left)
    assert os.listdir(out.parent) == ["h"]
    data = json.loads((out / "results.json").read_text())
    assert data["boundkit_version"] == boundkit.__version__
    assert data["constants"]["alpha"] == pytest.approx(0.0072973525643, rel=1e-9)
    assert data["units"]["energy"] == "hartree" and data["units"]["length"] == "bohr"
    assert data["settings"]["particle"] == "electron"
    assert data["success"] is True and data["problems"] == []
    levels = {r["label"]: r for r in data["solve"]["levels"]}
    assert set(levels) == {"1s", "2s", "2p"}
    # exact: E_n = -1/(2 n^2) hartree; <r> = (3 n^2 - l(l+1))/2 bohr (Bethe & Salpeter 1957, eq. 3.24)
    for label, n, l in (("1s", 1, 0), ("2s", 2, 0), ("2p", 2, 1)):
        assert levels[label]["energy_hartree"] == pytest.approx(-0.5 / n**2, rel=1e-12)
        assert levels[label]["mean_radius"] == pytest.approx((3 * n * n - l * (l + 1)) / 2, rel=1e-9)
    (diff,) = data["solve"]["differences"]
    assert abs(diff["difference_hartree"]) < 1e-12        # 2s and 2p are degenerate in the Coulomb field
    md = (out / "report.md").read_text()
    assert md.startswith("# Hydrogen, Schrodinger")
    assert "![" in md and "(radial-h-schrodinger.png)" in md
    assert "hartree" in md and "-0.5" in md
    csv_head = (out / "levels.csv").read_text().splitlines()[0]
    assert csv_head.startswith("model,equation,channel,label,n,l,j,kappa,nodes,energy")


@pytest.mark.parametrize("unit", ["hartree", "eV"])
def test_csv_column_names_are_unique_in_any_energy_unit(tmp_path, unit):
    """With energies in hartree, levels.csv had energy_hartree twice (the reported energy and its
    hartree copy), and differences.csv difference_hartree twice."""
    out = tmp_path / "o"
    run(write(tmp_path, FAST.replace("levels = 2", f'levels = 2\nenergy_unit = "{unit}"')), out)
    for name in ("levels.csv", "differences.csv"):
        head = (out / name).read_text().splitlines()[0].split(",")
        assert len(head) == len(set(head)), (name, head)
    head = (out / "levels.csv").read_text().splitlines()[0].split(",")
    assert {"energy_hartree", f"energy_{unit}", f"error_estimate_{unit}"} <= set(head)
    rows = (out / "levels.csv").read_text().splitlines()[1:]
    one = dict(zip(head, next(r for r in rows if ",1s," in r).split(",")))
    assert float(one["energy_hartree"]) == pytest.approx(-0.5, rel=1e-12)
    assert float(one[f"energy_{unit}"]) == pytest.approx(-0.5 * ENERGY_UNITS[unit], rel=1e-12)


def test_units_and_figure_format_options(tmp_path):
    text = HYDROGEN.replace("levels = 2", 'levels = 2\nenergy_unit = "eV"\nlength_unit = "angstrom"\n'
                                          'figure_format = "svg"')
    out = tmp_path / "o"
    run(write(tmp_path, text), out)
    data = json.loads((out / "results.json").read_text())
    one = next(r for r in data["solve"]["levels"] if r["label"] == "1s")
    assert one["energy"] == pytest.approx(-0.5 * ENERGY_UNITS["eV"], rel=1e-12)
    assert one["mean_radius"] == pytest.approx(bohr_to(1.5, "angstrom"), rel=1e-9)
    assert (out / "radial-h-schrodinger.svg").read_text().lstrip().startswith("<?xml")
    assert not list(out.glob("*.png"))


def test_existing_output_is_refused_without_force_and_kept(tmp_path):
    spec = write(tmp_path, FAST)
    out = tmp_path / "o"
    out.mkdir()
    (out / "results.json").write_text("{}")
    (out / "mine.txt").write_text("keep me")
    before = tree(out)
    with pytest.raises(FileExistsError, match="exists; choose another with --out or replace it with --force"):
        run(spec, out)
    assert tree(out) == before


def test_force_replaces_an_earlier_run_and_leaves_nothing_else(tmp_path):
    spec = write(tmp_path, FAST)
    out = tmp_path / "o"
    run(spec, out)
    (out / "stale.txt").write_text("from before")
    run(spec, out, force=True)
    assert not (out / "stale.txt").exists()
    assert (out / "results.json").is_file()
    assert sorted(os.listdir(tmp_path)) == ["o", "spec.toml"]


def test_force_never_replaces_a_folder_that_is_not_run_output(tmp_path):
    spec = write(tmp_path, HYDROGEN)
    out = tmp_path / "important"
    out.mkdir()
    (out / "thesis.tex").write_text("years of work")
    with pytest.raises(FileExistsError, match="has no boundkit run marker"):
        run(spec, out, force=True)
    assert (out / "thesis.tex").read_text() == "years of work"


def test_a_failing_run_leaves_existing_output_untouched_and_no_debris(tmp_path, monkeypatch):
    from boundkit import runspec

    spec = write(tmp_path, FAST)
    out = tmp_path / "o"
    run(spec, out)
    before = tree(out)

    def boom(self, seconds):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(runspec._Engine, "_write_report", boom)
    with pytest.raises(RuntimeError, match="disk on fire"):
        run(spec, out, force=True)
    assert tree(out) == before
    assert sorted(os.listdir(tmp_path)) == ["o", "spec.toml"]


def test_levels_that_are_not_found_are_reported_as_problems(tmp_path):
    # a shallow Yukawa well (Z = 1, D = 2 bohr) holds 1s but no 2s: critical D of 2s is 3.22 bohr
    # (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970))
    text = FAST.replace('terms = ["coulomb"]\nparams = { Z = 1 }',
                            'terms = ["yukawa"]\nparams = { Z = 1, screening_length = 2.0 }')
    text = text.replace('channels = ["s", { l = 1, levels = 1 }]', 'channels = ["s"]')
    # asking for more levels than the channel holds returns all of them, status ok, in the solver (the
    # counting locator knows the well holds exactly one s level); the run spec asked for 2 and got 1,
    # which is a problem (docs/runspec.md), and so is the difference 2p - 2s it cannot form
    report = run(write(tmp_path, text), tmp_path / "o")
    assert not report.success
    assert len(report.problems) == 2, report.problems
    assert report.problems[0].startswith("solve model h, schrodinger, channel s: found 1 of 2 requested levels: "
                                         "all 1 bound level(s) of this channel (2 requested)")
    assert "E(2p) - E(2s): no model and equation has both levels" in report.problems[1]
    data = json.loads((tmp_path / "o" / "results.json").read_text())
    assert [r["label"] for r in data["solve"]["levels"]] == ["1s"]


def test_nuclear_units_and_own_term_parameters_reach_the_solver(tmp_path):
    # the same Woods-Saxon well given once by shared parameters and once as a term with its own
    text = """\
title = "well"
description = "Two spellings of one nuclear well."
units = "nuclear"
equations = ["schrodinger"]
levels = 1
[particle]
name = "proton"
[models.shared]
terms = ["woods-saxon"]
params = { depth = 50.0, radius = 4.0, diffuseness = 0.6 }
[models.own]
[[models.own.term]]
name = "woods-saxon"
params = { depth = 50.0, radius = 4.0, diffuseness = 0.6 }
[solve]
figures = []
reference = "shared"
"""
    run(write(tmp_path, text), tmp_path / "o")
    data = json.loads((tmp_path / "o" / "results.json").read_text())
    (shift,) = data["solve"]["shifts"]
    assert abs(shift["shift_hartree"]) <= 1e-12 * abs(data["solve"]["levels"][0]["energy_hartree"])
    direct = boundkit.solve("schrodinger", "woods-saxon", {"depth": 50.0, "radius": 4.0, "diffuseness": 0.6},
                            particle="proton", units="nuclear")
    assert data["solve"]["levels"][0]["energy_hartree"] == pytest.approx(direct.levels[0].energy, rel=1e-12)
    assert data["units"]["energy"] == "MeV" and data["units"]["length"] == "fm"


# ----------------------------------------------------------------------------------------------
# command line
# ----------------------------------------------------------------------------------------------
def test_cli_run_success_and_default_folder(tmp_path, monkeypatch):
    spec = write(tmp_path, FAST, "hyd.toml")
    monkeypatch.chdir(tmp_path)
    runner = CliRunner()
    res = runner.invoke(main, ["run", str(spec)])
    assert res.exit_code == 0, res.output
    assert (tmp_path / "out" / "hyd" / "results.json").is_file()
    assert "Hydrogen, Schrodinger" in res.output and "wrote" in res.output
    again = runner.invoke(main, ["run", str(spec)])
    assert again.exit_code == 2
    assert "exists" in again.output and "--force" in again.output
    assert runner.invoke(main, ["run", str(spec), "--force"]).exit_code == 0


@pytest.mark.parametrize("force", [False, True])
def test_cli_bad_spec_exit_2_one_message_and_output_untouched(tmp_path, force):
    good = write(tmp_path, FAST)
    out = tmp_path / "o"
    assert CliRunner().invoke(main, ["run", str(good), "--out", str(out)]).exit_code == 0
    before = tree(out)
    text = FAST.replace('params = { Z = 1 }', 'params = { Z = 1 }\ncolour = "blue"')
    bad = write(tmp_path, text, "bad.toml")
    args = ["run", str(bad), "--out", str(out)] + (["--force"] if force else [])
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 2
    assert "Traceback" not in res.output
    msg = res.output.strip()
    assert msg.count("\n") == 0, msg
    assert msg.startswith("boundkit: error: run spec ")
    assert str(bad) in msg and "key 'models.h.colour'" in msg
    assert f"line {line_of(text, 'colour')}," in msg
    assert tree(out) == before
    assert sorted(os.listdir(tmp_path)) == ["bad.toml", "o", "spec.toml"]


def test_cli_problems_give_exit_3_with_output_written(tmp_path):
    text = FAST.replace('terms = ["coulomb"]\nparams = { Z = 1 }',
                            'terms = ["yukawa"]\nparams = { Z = 1, screening_length = 2.0 }')
    text = text.replace('channels = ["s", { l = 1, levels = 1 }]', 'channels = ["s"]')
    res = CliRunner().invoke(main, ["run", str(write(tmp_path, text)), "--out", str(tmp_path / "o")])
    assert res.exit_code == 3
    assert "problem:" in res.output
    assert (tmp_path / "o" / "report.md").is_file()


def test_solve_plot_option_writes_the_radial_figure(tmp_path):
    fig = tmp_path / "h.png"
    res = CliRunner().invoke(main, ["solve", "--equation", "schrodinger", "--levels", "2", "--plot", str(fig)])
    assert res.exit_code == 0, res.output
    assert fig.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    bad = CliRunner().invoke(main, ["solve", "--plot", str(tmp_path / "h.gif")])
    assert bad.exit_code == 2 and "unsupported figure format" in bad.output


# ----------------------------------------------------------------------------------------------
# observables and figures
# ----------------------------------------------------------------------------------------------
def test_expectation_values_of_hydrogen_match_the_exact_ones():
    # <r> = (3n^2 - l(l+1))/(2Z), <r^2> = n^2 (5n^2 + 1 - 3l(l+1))/(2Z^2), <1/r> = Z/n^2
    # (Bethe & Salpeter 1957, eqs. 3.24-3.26)
    Z = 3.0
    for l, levels in ((0, 3), (1, 2)):
        res = boundkit.solve("schrodinger", "coulomb", {"Z": Z}, l=l, levels=levels)
        for lv in res.levels:
            n = lv.n
            assert mean_radius(lv) == pytest.approx((3 * n * n - l * (l + 1)) / (2 * Z), rel=1e-9)
            assert rms_radius(lv) ** 2 == pytest.approx(n * n * (5 * n * n + 1 - 3 * l * (l + 1)) / (2 * Z * Z),
                                                        rel=1e-9)
            assert expectation(lv, lambda r: 1 / r) == pytest.approx(Z / n**2, rel=1e-9)
            assert expectation(lv, np.ones_like) == pytest.approx(1.0, rel=1e-12)


def test_expectation_uses_both_dirac_components():
    # Dirac-Coulomb 1s: P and Q both go like r^gamma e^(-Z r) (atomic units), so the density is
    # r^(2 gamma) e^(-2 Z r) and <r> = (2 gamma + 1)/(2 Z), gamma = sqrt(1 - (Z alpha)^2)
    # (Bethe & Salpeter 1957, sec. 14). P^2 alone integrates to less than one.
    Z = 80
    lv = boundkit.solve("dirac", "coulomb", {"Z": Z}, kappa=-1).levels[0]
    st = lv.state
    assert np.sum(st.weights * (st.P**2 + st.Q**2)) == pytest.approx(1.0, rel=1e-10)
    assert np.sum(st.weights * st.P**2) < 0.99
    g = math.sqrt(1 - (Z * boundkit.units.ALPHA) ** 2)
    assert mean_radius(lv) == pytest.approx((2 * g + 1) / (2 * Z), rel=1e-9)


def test_cornell_virial_theorem_from_expectation_values():
    # Schrodinger: 2<T> = <r dV/dr>, so E = <V> + <r V'>/2 = -kappa<1/r>/2 + 3 sigma<r>/2 for
    # V = -kappa/r + sigma r (virial theorem, any bound state)
    kappa, sigma = 0.7, 0.3
    res = boundkit.solve("schrodinger", "cornell", {"kappa_c": kappa, "sigma": sigma}, l=1, levels=2)
    for lv in res.levels:
        rhs = -0.5 * kappa * expectation(lv, lambda r: 1 / r) + 1.5 * sigma * mean_radius(lv)
        assert lv.energy == pytest.approx(rhs, rel=1e-9)


def test_node_radii_of_hydrogen_s_levels():
    from boundkit.plots import node_radii

    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=0, levels=3)
    _, two, three = res.levels
    # R_20 ~ (2 - r): node at r = 2; R_30 ~ 27 - 18 r + 2 r^2: nodes at (9 -+ 3 sqrt 3)/2 bohr
    assert node_radii(two.state.r, two.state.P) == pytest.approx([2.0], rel=1e-3)
    assert node_radii(three.state.r, three.state.P) == pytest.approx(
        [(9 - 3 * math.sqrt(3)) / 2, (9 + 3 * math.sqrt(3)) / 2], rel=1e-3)


def test_figures_are_written_in_each_format(tmp_path):
    from boundkit.plots import density_figure, level_diagram, radial_figure

    d = boundkit.solve("dirac", "coulomb", {"Z": 50}, kappa=1, levels=2)
    s = boundkit.solve("schrodinger", "coulomb", {"Z": 50}, l=1, levels=2)
    pot = boundkit.make_potential("coulomb", {"Z": 50})
    for suffix in (".png", ".svg", ".pdf"):
        for func, args in ((radial_figure, ({"dirac": d.levels, "schrodinger": s.levels},)),
                           (density_figure, (d.levels,)),
                           (level_diagram, (pot, {"dirac": d.levels}))):
            path = func(*args, tmp_path / f"{func.__name__}{suffix}")
            assert path.stat().st_size > 1000
    with pytest.raises(ValueError, match="no levels to draw"):
        radial_figure([], tmp_path / "empty.png")


def test_energy_unit_keeps_milli_and_mega_apart():
    # "meV" and "MeV" differ only in case; both must keep their own meaning
    assert energy_unit("meV") == "meV" and energy_unit("MeV") == "MeV"
    assert ENERGY_UNITS[energy_unit("meV")] == pytest.approx(ENERGY_UNITS["MeV"] * 1e9, rel=1e-15)


def test_report_headline_numbers_carry_units(tmp_path):
    report = run(write(tmp_path, FAST), tmp_path / "o")
    assert report.headline
    for line in report.headline:
        assert re.search(r"hartree|bohr", line), line



def test_converge_headline_gives_the_nominal_order_to_the_finite_differences_only(tmp_path):
    """The headline said '(nominal 8)', the finite differences' order, of the laguerre-mesh family too (a
    Schrodinger p channel of hydrogen solves on its Lagrange-Laguerre mesh, which is spectral: no nominal order)."""
    text = ('title = "t"\ndescription = "d"\n[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n'
            '[converge]\nmodel = "h"\nchannel = "p"\nlevels = 2\norder = 6\n')
    report = run(write(tmp_path, text), tmp_path / "o")
    md = (tmp_path / "o" / "report.md").read_text()
    for label in ("2p", "3p"):          # the family was studied, with a finite log-log slope
        assert re.search(rf"^\| laguerre-mesh \| {label} \| \d", md, re.M), md
    orders = [line for line in report.headline if line.startswith("observed order")]
    assert len(orders) == 2, report.headline
    for line, label in zip(orders, ("2p", "3p")):
        assert re.fullmatch(rf"observed order of finite-difference \(h, schrodinger {label}\): \d+\.\d\d "
                            r"\(nominal 6\)", line), orders
    assert not any("laguerre" in line or "spectral" in line for line in report.headline), report.headline

def test_the_spec_in_the_documentation_reads():
    doc = (Path(__file__).resolve().parent.parent / "docs" / "runspec.md").read_text()
    block = re.search(r"## A first spec\s+```toml\n(.*?)```", doc, re.S).group(1)
    spec = load_spec("docs/runspec.md", block)
    assert set(spec.models) == {"point", "fermi"} and spec.solve.reference == "point"


def test_scan_points_the_solver_refuses_are_reported(tmp_path):
    pytest.importorskip("boundkit.studies")
    # a point charge with Z alpha > 1 has no Dirac 1s1/2 level (gamma = sqrt(1 - (Z alpha)^2) turns
    # imaginary; Bethe & Salpeter 1957): the solver refuses Z = 150, and the scan must say so rather
    # than pass the point over as an absent level
    text = FAST.replace('equations = ["schrodinger"]', 'equations = ["dirac"]')
    text = text.replace('[solve]\nfigures = []\ndifferences = [["2p", "2s"]]\n',
                        '[scan]\nmodel = "h"\nparameter = "Z"\nvalues = [50.0, 150.0]\n'
                        'channels = ["s"]\nlevels = 1\nworkers = 1\n')
    report = run(write(tmp_path, text), tmp_path / "o")
    assert any("status error at Z = 150" in p for p in report.problems), report.problems
    data = json.loads((tmp_path / "o" / "results.json").read_text())
    (scan,) = data["scan"]
    rows = {r["Z"]: r for r in scan["rows"]}
    assert rows[50.0]["status"] == "ok" and rows[50.0]["energy"] < 0
    assert rows[150.0]["status"] == "error"
    assert (tmp_path / "o" / "scan.png").is_file() and (tmp_path / "o" / "scan.csv").is_file()


def test_labels_key_names_levels_in_its_convention(tmp_path):
    """The same hydrogen levels named by nodes from 0 (nuclear) and by nodes + 1 (quarkonium)."""
    for labels, want, diff in (("nuclear", {"0s", "1s", "0p"}, '[["0p", "1s"]]'),
                               ("quarkonium", {"1S", "2S", "1P"}, '[["1P", "2S"]]')):
        text = FAST.replace("levels = 2\n", f'levels = 2\nlabels = "{labels}"\n', 1).replace(
            '[["2p", "2s"]]', diff)
        out = tmp_path / labels
        run(load_spec(write(tmp_path, text, f"{labels}.toml")), out)
        data = json.loads((out / "results.json").read_text())
        assert {r["label"] for r in data["solve"]["levels"]} == want
        # 2p - 2s of hydrogen is 0 in the Schrodinger equation (Bethe & Salpeter 1957): printed as 0
        (d,) = data["solve"]["differences"]
        assert abs(d["difference"]) <= d["error_estimate"]
        assert f"| E({json.loads(diff)[0][0]}) - E({json.loads(diff)[0][1]}) | 0 |" in (out / "report.md").read_text()



def test_a_spec_larger_than_the_limit_is_refused_before_it_is_read(tmp_path):
    """A 1 MB description took 157 MB and 0.8 s to check, 20 MB reached 2.8 GB (a tester): a spec over
    MAX_SPEC_BYTES is refused from its size, before parsing; CLI: one line, exit 2."""
    from click.testing import CliRunner

    from boundkit.cli import main
    from boundkit.runspec import load_spec

    spec = tmp_path / "big.toml"
    spec.write_text('title = "big"\ndescription = "' + "x" * 1_100_000 + '"\n[models.a]\nterms = ["coulomb"]\n'
                    'params = { Z = 1 }\n[solve]\n', encoding="utf-8")
    with pytest.raises(ValueError, match=r"run spec .*big.toml: 1100\d+ bytes, more than the limit of 1000000 for "
                                         r"a spec .* raise the limit with max_bytes= \(API\)"):
        load_spec(spec)
    assert load_spec(spec, max_bytes=2_000_000).title == "big"
    res = CliRunner().invoke(main, ["run", str(spec), "--dry-run"])
    assert res.exit_code == 2 and "more than the limit of 1000000" in res.output and "Traceback" not in res.output


# ----------------------------------------------------------------------------------------------
# [critical]: bracket order, repeated entries, the unit in the report
# ----------------------------------------------------------------------------------------------
_HULTHEN_1S = """\
title = "t"
description = "d"
[models.h]
terms = ["hulthen"]
params = { Z = 1.0, delta = 0.5 }
[critical]
model = "h"
parameter = "delta"
states = ["1s"]
bracket = BRACKET
workers = 1
"""


@pytest.mark.parametrize("bracket", ["[1.0, 3.0]", "[3.0, 1.0]"])
def test_critical_bracket_in_either_order_as_the_api_takes_it(tmp_path, bracket):
    # Hulthen 1s (Z = 1) unbinds at delta = 2 Z / n^2 = 2 (Flugge 1971, from memory)
    path = write(tmp_path, _HULTHEN_1S.replace("BRACKET", bracket))
    spec = load_spec(path)
    assert spec.critical[0].bracket == tuple(json.loads(bracket))
    report = run(path, tmp_path / "o")
    assert report.success, report.problems
    data = json.loads((tmp_path / "o" / "results.json").read_text())
    assert data["critical"][0]["states"][0]["value"] == pytest.approx(2.0, rel=1e-7)


def test_critical_results_follow_the_spec_energy_unit(tmp_path):
    """results.json's critical entries gave energies in hartree whatever energy_unit the spec named (the
    search's messages too). The last point found, E of the 1s near its threshold, is checked against the
    same search's value in hartree, converted with CODATA's hartree in eV (scipy.constants)."""
    hartree_ev = sc.physical_constants["Hartree energy in eV"][0]
    out = {}
    for unit in ("hartree", "eV"):
        text = _HULTHEN_1S.replace("BRACKET", "[1.0, 3.0]").replace('description = "d"\n',
                                                                    f'description = "d"\nenergy_unit = "{unit}"\n')
        report = run(write(tmp_path, text), tmp_path / unit)
        assert report.success, report.problems
        out[unit] = json.loads((tmp_path / unit / "results.json").read_text())["critical"][0]["states"][0]
    assert out["eV"]["units"]["energy"] == "eV" and out["hartree"]["units"]["energy"] == "hartree"
    found = [p for p in out["hartree"]["points"] if p["found"]]
    found_ev = [p for p in out["eV"]["points"] if p["found"]]
    assert found and len(found) == len(found_ev)
    for a, b in zip(found, found_ev):
        assert b["energy"] == pytest.approx(a["energy"] * hartree_ev, rel=1e-14)


def test_critical_bracket_of_two_equal_values_is_refused(tmp_path):
    text = _HULTHEN_1S.replace("BRACKET", "[2.0, 2.0]")
    with pytest.raises(ValueError, match=rf"line {line_of(text, 'bracket')}, key 'critical.bracket': write two "
                                         r"different numbers, e.g. \[0.5, 20.0\] \(either order\)$"):
        load_spec(write(tmp_path, text))


@pytest.mark.parametrize("equations, states, key, message", [
    ('["schrodinger"]', '["1s", "2s", "1s"]', "critical.states[2]", r"'1s' is listed twice \(first at line 8\)"),
    ('["dirac"]', '["1s", "1s1/2"]', "critical.states[1]", r"'1s1/2' is the same dirac level as '1s' \(line 8\)"),
    ('["schrodinger"]', '["2p1/2", "2p3/2"]', "critical.states[1]",
     r"'2p3/2' is the same schrodinger level as '2p1/2' \(line 8; the schrodinger equation has no j\)"),
])
def test_a_critical_state_listed_twice_is_refused_at_load(tmp_path, equations, states, key, message):
    text = ('title = "t"\ndescription = "d"\nequations = EQ\n[models.y]\nterms = ["yukawa"]\n'
            'params = { Z = 1.0, screening_length = 50.0 }\n[critical]\nstates = STATES\nmodel = "y"\n'
            ).replace("EQ", equations).replace("STATES", states)
    assert line_of(text, "states =") == 8
    with pytest.raises(ValueError, match=rf"^run spec \S+, line 8, key '{re.escape(key)}': {message}.*list it once$"):
        load_spec(write(tmp_path, text))
    res = CliRunner().invoke(main, ["run", str(tmp_path / "spec.toml"), "--dry-run"])
    assert res.exit_code == 2 and len(res.output.strip().splitlines()) == 1, res.output
    assert key in res.output


@pytest.mark.parametrize("labels, equations, terms, params, state, message", [
    # a spin-orbit Schrodinger "2p" passed the load and failed only when the run reached it
    ("atomic", '["schrodinger"]', '["woods-saxon"]', "{ depth = 30, radius = 3, diffuseness = 0.6, spin_orbit = 20 }",
     "2p", "a potential with a spin-orbit term splits '2p' by j; write 2p1/2 or 2p3/2"),
    # the fix a state names is its own l's two j (a "3d" was told to write 3d1/2)
    ("atomic", '["dirac"]', '["yukawa"]', "{ Z = 1.0, screening_length = 50.0 }",
     "3d", "the Dirac equation needs j in '3d'; write 3d3/2 or 3d5/2"),
    # in the spec's own labels
    ("nuclear", '["schrodinger"]', '["woods-saxon"]', "{ depth = 30, radius = 3, diffuseness = 0.6, spin_orbit = 20 }",
     "0d", "a potential with a spin-orbit term splits '0d' by j; write 0d3/2 or 0d5/2"),
    # a label the convention has no level for passed the load too
    ("atomic", '["schrodinger"]', '["yukawa"]', "{ Z = 1.0, screening_length = 50.0 }",
     "1p", r"'1p' needs n >= 2 for an p level"),
])
def test_a_critical_state_without_the_j_its_levels_need_is_refused_at_load(tmp_path, labels, equations, terms, params,
                                                                           state, message):
    text = (f'title = "t"\ndescription = "d"\nlabels = "{labels}"\nunits = "nuclear"\nequations = {equations}\n'
            f'particle = {{ name = "neutron" }}\n[models.m]\nterms = {terms}\nparams = {params}\n[critical]\n'
            f'model = "m"\nparameter = "{"depth" if "depth" in params else "Z"}"\nstates = ["1s", "{state}"]\n')
    with pytest.raises(ValueError, match=rf"^run spec \S+, line {line_of(text, 'states =')}, "
                                         rf"key 'critical\.states\[1\]': {message}"):
        load_spec(write(tmp_path, text))
    res = CliRunner().invoke(main, ["run", str(tmp_path / "spec.toml"), "--dry-run"])
    assert res.exit_code == 2 and len(res.output.strip().splitlines()) == 1, res.output
    assert res.output.startswith("boundkit: error: ") and "critical.states[1]" in res.output


def test_a_critical_state_in_quarkonium_labels_runs(tmp_path):
    """'1P', the spec's own quarkonium label (docs/runspec.md), was refused as not understood: the load
    read states with an atomic pattern of lower-case letters."""
    text = ('title = "t"\ndescription = "d"\nlabels = "quarkonium"\nequations = ["schrodinger"]\n[models.y]\n'
            'terms = ["yukawa"]\nparams = { Z = 1.0, screening_length = 50.0 }\n[critical]\nmodel = "y"\n'
            'states = ["1P"]\ntol = 1e-6\nworkers = 1\n')
    report = run(load_spec(write(tmp_path, text)), tmp_path / "out")
    assert report.success, report.problems
    (state,) = json.loads((tmp_path / "out" / "results.json").read_text())["critical"][0]["states"]
    from boundkit.studies import critical
    direct = critical("schrodinger", "yukawa", {"Z": 1.0, "screening_length": 50.0}, state="2p", tol=1e-6,
                      vary="screening_length")
    assert state["state"] == "1P" and state["value"] == pytest.approx(direct.value, rel=1e-9)


@pytest.mark.parametrize("labels, state, message", [
    ("atomic", "one", r"cannot read 'one'; write n, the orbital letter and optionally j, e\.g\. 1s, 2p"),
    ("quarkonium", "1p1", r"cannot read '1p1'; .* e\.g\. 1S, 2S, 1P, 1D \(quarkonium labels\)"),
])
def test_a_critical_state_that_is_no_label_names_the_spec_convention(tmp_path, labels, state, message):
    text = (f'title = "t"\ndescription = "d"\nlabels = "{labels}"\n[models.y]\nterms = ["yukawa"]\n'
            f'params = {{ Z = 1.0, screening_length = 5.0 }}\n[critical]\nmodel = "y"\nstates = ["{state}"]\n')
    with pytest.raises(ValueError, match=rf"key 'critical\.states\[0\]': {message}"):
        load_spec(write(tmp_path, text))


@pytest.mark.parametrize("old, new, key", [
    ("[solve]\n", '[solve]\nmodels = ["h", "h"]\n', "solve.models[1]"),
    ("[solve]\n", '[solve]\nequations = ["dirac", "Dirac"]\n', "solve.equations[1]"),
    ('equations = ["schrodinger"]', 'equations = ["schrodinger", "schrodinger"]', "equations[1]"),
    ('channels = ["s", { l = 1, levels = 1 }]', 'channels = ["s", { l = 1 }, "p"]', "channels[2]"),
    ('differences = [["2p", "2s"]]', 'differences = [["2p", "2s"], ["1s", "2s"], ["2p", "2s"]]',
     "solve.differences[2]"),
    ('differences = [["2p", "2s"]]\n', 'differences = [["2p", "2s"]]\n[scan]\nmodel = "h"\nparameter = "Z"\n'
                                        'values = [1.0, 2.0, 1.0]\n', "scan.values[2]"),
    ('differences = [["2p", "2s"]]\n', 'differences = [["2p", "2s"]]\n[converge]\nmodel = "h"\n'
                                        'methods = ["spectral", "spectral"]\n', "converge.methods[1]"),
])
def test_an_entry_listed_twice_in_other_lists_is_refused_at_load(tmp_path, old, new, key):
    assert old in HYDROGEN
    text = HYDROGEN.replace(old, new)
    with pytest.raises(ValueError, match=rf"key '{re.escape(key)}': .*(listed twice|the same channel as).*"
                                         r"list it once$"):
        load_spec(write(tmp_path, text))


def test_report_names_the_parameter_unit_when_every_critical_state_failed(tmp_path):
    # a bracket with 1s bound at both ends: the only state fails before any result
    text = ('title = "t"\ndescription = "d"\n[models.y]\nterms = ["yukawa"]\n'
            'params = { Z = 1.0, screening_length = 5.0 }\n[critical]\nmodel = "y"\nstates = ["1s"]\n'
            'bracket = [2.0, 3.0]\nworkers = 1\n')
    report = run(write(tmp_path, text), tmp_path / "o")
    assert not report.success
    md = (tmp_path / "o" / "report.md").read_text()
    assert "units of its own" not in md
    assert "(table `critical.csv`; screening_length in bohr)" in md
    assert "| state | critical screening_length (bohr) | details |" in md


# --- a Schrodinger channel of a spin-orbit model: the spec dropped the channel's j, and the load refused
#     every such spec ("give j = l +- 1/2 (e.g. --j 1.5 with --l 1)"), so no spec could split p3/2 from p1/2
SPIN_ORBIT = """\
title = "Neutron in a spin-orbit Woods-Saxon well"
description = "Demonstration values (not a fit): depth 50 MeV, radius 4 fm, diffuseness 0.6 fm."
units = "nuclear"
particle = { name = "neutron" }
equations = ["schrodinger"]
channels = CHANNELS
levels = 1

[models.ws]
terms = ["woods-saxon"]
params = { depth = 50, radius = 4, diffuseness = 0.6, spin_orbit = 20 }

[solve]
"""


@pytest.mark.parametrize("channels,expected", [
    ('["p3/2", "p1/2"]', {"p3/2": (1, 1.5), "p1/2": (1, 0.5)}),
    ('[{ kappa = -2 }]', {"p3/2": (1, 1.5)}),
    ('["s", "p"]', {"s1/2": (0, 0.5), "p3/2": (1, 1.5), "p1/2": (1, 0.5)}),   # both j of an l, as for Dirac
])
def test_a_spin_orbit_model_solves_each_j_of_a_schrodinger_channel(tmp_path, channels, expected):
    spec = write(tmp_path, SPIN_ORBIT.replace("CHANNELS", channels))
    report = run(load_spec(spec), tmp_path / "out")
    assert report.success, report.problems
    data = json.loads((tmp_path / "out" / "results.json").read_text())
    got = {r["channel"]: r for r in data["solve"]["levels"]}
    assert set(got) == set(expected) and data["units"]["energy"] == "MeV"
    for name, (l, j) in expected.items():
        # the same channel solved directly (the API takes j for a spin-orbit term)
        ref = boundkit.solve("schrodinger", "woods-saxon", {"depth": 50, "radius": 4, "diffuseness": 0.6,
                                                             "spin_orbit": 20}, l=l, j=j, particle="neutron",
                             units="nuclear")
        assert got[name]["j"] == j and got[name]["l"] == l
        assert got[name]["energy"] == pytest.approx(ref.levels[0].energy_in("MeV"), rel=1e-12)
    if "p1/2" in got and "p3/2" in got:      # a positive spin-orbit strength lowers j = l + 1/2
        assert got["p3/2"]["energy"] < got["p1/2"]["energy"]


def test_without_spin_orbit_a_schrodinger_channel_keeps_its_plain_name(tmp_path):
    """Models without a spin-orbit term are unchanged: "p1/2" is the Schrodinger channel p, solved once."""
    text = HYDROGEN.replace('channels = ["s", { l = 1, levels = 1 }]', 'channels = ["s1/2", "p1/2", "p"]')
    assert text != HYDROGEN
    report = run(load_spec(write(tmp_path, text)), tmp_path / "out")
    data = json.loads((tmp_path / "out" / "results.json").read_text())
    assert sorted(r["channel"] for r in data["solve"]["runs"]) == ["p", "s"], report.problems


def test_a_scan_of_a_spin_orbit_model_follows_each_j(tmp_path):
    text = SPIN_ORBIT.replace("CHANNELS", '["p"]').replace("[solve]\n", "") + (
        '\n[scan]\nmodel = "ws"\nparameter = "spin_orbit"\nvalues = [10.0, 20.0]\nworkers = 1\n')
    report = run(load_spec(write(tmp_path, text)), tmp_path / "out")
    assert report.success, report.problems
    data = json.loads((tmp_path / "out" / "results.json").read_text())
    (scan_run,) = data["scan"]
    rows = scan_run["rows"]
    assert sorted({r["label"] for r in rows}) == ["2p1/2", "2p3/2"] and all(r["status"] == "ok" for r in rows)


def test_a_critical_section_of_a_spin_orbit_model_follows_each_j(tmp_path):
    """'2p3/2' and '2p1/2' were refused as the same Schrodinger level (no j), which they are not in a
    spin-orbit well, and the search solved them without j."""
    text = SPIN_ORBIT.replace("CHANNELS", '["p"]').replace("depth = 50", "depth = 30").replace(
        "radius = 4", "radius = 3").replace("[solve]\n", "") + (
        '\n[critical]\nmodel = "ws"\nparameter = "depth"\nstates = ["2p3/2", "2p1/2"]\ntol = 1e-6\nworkers = 1\n')
    report = run(load_spec(write(tmp_path, text)), tmp_path / "out")
    assert report.success, report.problems
    data = json.loads((tmp_path / "out" / "results.json").read_text())
    values = {st["state"]: st["value"] for st in data["critical"][0]["states"]}
    assert set(values) == {"2p3/2", "2p1/2"} and values["2p3/2"] < values["2p1/2"]
    from boundkit.studies import critical
    direct = critical("schrodinger", "woods-saxon", {"depth": 30.0, "radius": 3.0, "diffuseness": 0.6,
                                                     "spin_orbit": 20.0}, state="2p1/2", vary="depth", tol=1e-6,
                      units="nuclear", particle="neutron")
    assert values["2p1/2"] == pytest.approx(direct.value, rel=1e-9)


def test_solve_states_files_follow_the_spec_energy_unit(tmp_path):
    """[solve] states = true wrote the level energies of its radial-function files in hartree under
    energy_unit = "eV" (a tester, for the command line's --states): they follow the spec now."""
    from boundkit.io_states import read_states

    text = FAST.replace("levels = 2", 'levels = 2\nenergy_unit = "eV"').replace("[solve]\n", "[solve]\nstates = true\n")
    out = tmp_path / "o"
    run(write(tmp_path, text), out)
    meta, _ = read_states(out / "states-h-schrodinger-s.csv")
    assert meta["units"]["energy"] == "eV"
    one = next(lv for lv in meta["levels"] if lv["label"] == "1s")
    # -1/2 hartree (Bethe & Salpeter 1957) in eV, CODATA via scipy.constants
    assert one["energy"] == pytest.approx(-0.5 * sc.physical_constants["Hartree energy in eV"][0], rel=1e-12)
