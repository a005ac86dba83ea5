"""Run specs with the user's own files: a table of r and V and a model file (TOML) used as
potential models, paths relative to the spec; errors naming the spec's key and line and the
file's own line; `boundkit run --dry-run` and the progress bar / `--quiet`."""
from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from boundkit.cli import main
from boundkit.runspec import load_spec, run
from boundkit.runspec import engine as engine_module
from boundkit.runspec.plan import plan

# A proton in a Woods-Saxon well (Woods & Saxon, Phys. Rev. 95, 577 (1954)): V = -V0 / (1 + exp((r - R)/a)),
# demonstration values V0 = 50 MeV, R = 5 fm, a = 0.6 fm.
V0, R, A = 50.0, 5.0, 0.6

MODEL_FILE = """\
name = "my-well"
description = "a Woods-Saxon well of the user's own"
source = "test"
term = "woods-saxon"
units = "nuclear"

[parameters.depth]
default = 50.0
unit = "MeV"
description = "depth"

[parameters.radius]
default = 5.0
unit = "fm"
description = "radius"

[parameters.diffuseness]
default = 0.6
unit = "fm"
description = "diffuseness"
"""

SPEC = """\
title = "Proton in a Woods-Saxon well, four ways"
description = "Test spec: a table file and a model file against the built-in term."
units = "nuclear"

[particle]
name = "proton"

[models.builtin]
terms = ["woods-saxon"]
params = { depth = 50.0, radius = 5.0, diffuseness = 0.6 }

[models.table]
[[models.table.term]]
table = "data/ws.txt"
tail = "zero"
origin = "finite"

[models.listed]
files = ["data/well.toml"]
params = { depth = 50.0 }

[models.own]
[[models.own.term]]
model_file = "data/well.toml"
params = { radius = 5.0 }

[solve]
tol = 1e-12
figures = []
"""


def ws_table(path: Path, n: int = 1600, header: str = "# units: r=fm V=MeV\n") -> None:
    """The demonstration well tabulated on n log-spaced points. 1600 points: the levels of 400 are 1.4e-11
    (relative) off the built-in term's, more than the specs' tol 1e-12, and their estimates now say so."""
    r = np.geomspace(1e-3, 30.0, n)
    v = -V0 / (1.0 + np.exp((r - R) / A))
    path.write_text(header + "".join(f"{float(a)!r} {float(b)!r}\n" for a, b in zip(r, v)), encoding="utf-8")


@pytest.fixture()
def study(tmp_path: Path) -> Path:
    (tmp_path / "data").mkdir()
    ws_table(tmp_path / "data" / "ws.txt")
    (tmp_path / "data" / "well.toml").write_text(MODEL_FILE, encoding="utf-8")
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC, encoding="utf-8")
    return spec


def line_of(text: str, needle: str) -> int:
    return next(i for i, line in enumerate(text.splitlines(), start=1) if needle in line)


def test_table_and_model_files_give_the_builtin_levels(study, tmp_path):
    # run from another folder: the paths are relative to the spec, not to the working directory
    report = run(load_spec(study), tmp_path / "out")
    assert report.success, report.problems
    rows = list(csv.DictReader(io.StringIO((tmp_path / "out" / "levels.csv").read_text())))
    e = {r["model"]: float(r["energy_MeV"]) for r in rows}
    assert set(e) == {"builtin", "table", "listed", "own"}
    assert -V0 < e["builtin"] < 0
    # the model files build the same term: the same numbers
    assert e["listed"] == pytest.approx(e["builtin"], rel=1e-12)
    assert e["own"] == pytest.approx(e["builtin"], rel=1e-12)
    # the table (1600 points, quintic spline of r V in ln r) to its interpolation accuracy
    assert e["table"] == pytest.approx(e["builtin"], rel=1e-7)
    import json

    doc = json.loads((tmp_path / "out" / "results.json").read_text())
    (own,) = doc["solve"]["models"]["table"]["potential"]["own_terms"]
    assert own["table"] == "data/ws.txt" and own["path"] == str(study.parent / "data" / "ws.txt")
    assert own["options"] == {"tail": "zero", "origin": "finite"}


def test_table_without_units_line_follows_the_spec_units(tmp_path):
    ws_table(tmp_path / "ws.txt", header="")          # fm and MeV from units = "nuclear"
    text = SPEC.replace("data/ws.txt", "ws.txt").split("[models.listed]")[0] + "[solve]\nfigures = []\n"
    spec = tmp_path / "s.toml"
    spec.write_text(text, encoding="utf-8")
    report = run(load_spec(spec), tmp_path / "out")
    rows = list(csv.DictReader(io.StringIO((tmp_path / "out" / "levels.csv").read_text())))
    e = {r["model"]: float(r["energy_MeV"]) for r in rows}
    assert report.success and e["table"] == pytest.approx(e["builtin"], rel=1e-7)


@pytest.mark.parametrize("edit, key, match", [
    (("data/ws.txt", "data/none.txt"), "table = ", r"run spec .*spec\.toml, line {line}, key "
     r"'models\.table\.term\[0\]\.table': potential file '.*none\.txt': cannot read it \(No such file.*relative "
     r"to the spec's folder"),
    (("data/well.toml", "data/none.toml"), "files = ", r"line {line}, key 'models\.listed\.files\[0\]': "
     r"potential file .*none\.toml: cannot read it"),
    (("tail = \"zero\"", "tail = \"nowhere\""), "tail = ", r"line {line}, key 'models\.table\.term\[0\]\.tail': "
     r"must be one of coulomb, zero, exponential"),
    (("model_file = \"data/well.toml\"\n", "model_file = \"data/well.toml\"\ntail = \"zero\"\n"), "tail = \"zero\"\n[",
     r"key 'models\.own\.term\[0\]\.tail': only a table"),
    (("params = { radius = 5.0 }", "params = { width = 5.0 }"), "width", r"line {line}, key "
     r"'models\.own\.term\[0\]\.params\.width': the model file data/well\.toml has no parameter 'width'"),
    (("table = \"data/ws.txt\"", "table = \"data/ws.txt\"\nname = \"coulomb\""), "table = ",
     r"key 'models\.table\.term\[0\]': give exactly one of name"),
])
def test_file_errors_name_spec_key_and_line(study, edit, key, match):
    text = study.read_text().replace(*edit)
    study.write_text(text)
    line = line_of(text, key) if "tail = \"zero\"\n[" not in key else None
    with pytest.raises(ValueError, match=match.format(line=line)):
        load_spec(study)


def test_malformed_files_name_their_own_line(study):
    table = study.parent / "data" / "ws.txt"
    lines = table.read_text().splitlines()
    lines[5] = lines[5] + " 7.0"                       # line 6 of the file: three columns
    table.write_text("\n".join(lines) + "\n")
    line = line_of(study.read_text(), "table = ")
    with pytest.raises(ValueError, match=rf"line {line}, key 'models\.table\.term\[0\]\.table': potential file "
                                         r"'.*ws\.txt', line 6: expected 2 columns"):
        load_spec(study)
    ws_table(table)
    mf = study.parent / "data" / "well.toml"
    mf.write_text(MODEL_FILE.replace('units = "nuclear"', 'units = "nuclear"\nflavour = 3'))
    with pytest.raises(ValueError, match=r"key 'models\.listed\.files\[0\]': potential file .*well\.toml, line 6, "
                                         r"key 'flavour': unknown key"):
        load_spec(study)


def test_cli_bad_file_one_line_exit_2_nothing_written(study, tmp_path):
    (study.parent / "data" / "ws.txt").unlink()
    out = tmp_path / "out"
    res = CliRunner().invoke(main, ["run", str(study), "--out", str(out)])
    assert res.exit_code == 2
    assert res.output.count("\n") == 1 and res.output.startswith("boundkit: error: run spec ")
    assert "Traceback" not in res.output and not out.exists()


def test_scan_refuses_a_parameter_a_model_file_also_takes(tmp_path):
    (tmp_path / "well.toml").write_text(MODEL_FILE)
    spec = tmp_path / "s.toml"
    spec.write_text('title = "t"\ndescription = "d"\nunits = "nuclear"\n[models.m]\nterms = ["woods-saxon"]\n'
                    'files = ["well.toml"]\nparams = { depth = 40.0, radius = 5.0, diffuseness = 0.6 }\n'
                    '[scan]\nmodel = "m"\nparameter = "depth"\nvalues = [30.0, 40.0]\n')
    with pytest.raises(ValueError, match=r"line 10, key 'scan\.parameter': the model file well\.toml of model 'm' "
                                         r"takes 'depth' too and would keep its value"):
        load_spec(spec)


# --- --dry-run ------------------------------------------------------------------------------------
def test_dry_run_lists_the_work_and_writes_nothing(study, tmp_path):
    out = tmp_path / "out"
    res = CliRunner().invoke(main, ["run", str(study), "--out", str(out), "--dry-run"])
    assert res.exit_code == 0, res.output
    assert "valid" in res.output.splitlines()[0]
    assert "table: table data/ws.txt" in res.output
    assert "listed: model file data/well.toml (depth = 50)" in res.output
    assert "4 solve(s)" in res.output and "schrodinger: s (1 level)" in res.output
    assert not out.exists()


def test_dry_run_counts_scan_points_and_critical_searches(tmp_path):
    spec = tmp_path / "s.toml"
    spec.write_text('title = "t"\ndescription = "d"\nequations = ["dirac"]\nchannels = ["s", "p"]\n'
                    '[models.y]\nterms = ["yukawa"]\nparams = { Z = 1.0, screening_length = 10.0 }\n'
                    '[scan]\nmodel = "y"\nparameter = "screening_length"\nrange = { start = 5, stop = 50, num = 7 }\n'
                    '[[critical]]\nmodel = "y"\nstates = ["1s", "2p1/2", "2p3/2"]\n'
                    '[compare]\nmodel = "y"\nl_max = 1\n')
    p = plan(load_spec(spec))
    sections = {s.section: s.solves for s in p.studies}
    # dirac channels s, p: s1/2, p1/2, p3/2 = 3 channels x 7 values; 3 searches; compare l <= 1:
    # Schrodinger 2 + Klein-Gordon 2 + Dirac s1/2, p1/2, p3/2 = 7
    assert sections == {"scan": 21, "critical[0]": 3, "compare": 7}
    assert p.solves == 31
    res = CliRunner().invoke(main, ["run", str(spec), "--dry-run", "--out", str(tmp_path / "o")])
    assert res.exit_code == 0 and "31 solve(s) in all" in res.output


def test_dry_run_reports_bad_spec_and_occupied_folder(study, tmp_path):
    study.write_text(study.read_text().replace("tol = 1e-12", "tol = 2.0"))
    res = CliRunner().invoke(main, ["run", str(study), "--dry-run"])
    assert res.exit_code == 2
    assert res.output.startswith("boundkit: error: run spec ") and "key 'solve.tol': must lie between 0 and 1" \
        in res.output
    study.write_text(SPEC)
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "mine.txt").write_text("keep")
    res = CliRunner().invoke(main, ["run", str(study), "--dry-run", "--out", str(tmp_path / "busy")])
    assert res.exit_code == 2 and "output folder" in res.output and "exists" in res.output
    assert (tmp_path / "busy" / "mine.txt").read_text() == "keep"


# --- progress ---------------------------------------------------------------------------------------
def test_progress_hook_counts_every_planned_solve(study, tmp_path):
    calls = []
    run(load_spec(study), tmp_path / "out", progress=lambda done, total: calls.append((done, total)))
    assert calls[-1] == (4, 4) and [c[0] for c in calls] == [1, 2, 3, 4]


def test_progress_bar_on_stderr_and_quiet(study, tmp_path, monkeypatch):
    monkeypatch.setattr(engine_module, "PROGRESS_DELAY", 0.0)
    runner = CliRunner(mix_stderr=False) if "mix_stderr" in CliRunner.__init__.__code__.co_varnames else CliRunner()
    res = runner.invoke(main, ["run", str(study), "--out", str(tmp_path / "a")])
    assert res.exit_code == 0
    assert "4/4" in res.stderr and "solve" in res.stderr
    assert "4/4" not in res.stdout
    res = runner.invoke(main, ["run", str(study), "--out", str(tmp_path / "b"), "--quiet"])
    assert res.exit_code == 0 and "4/4" not in res.stderr


def test_verbose_logging_with_quiet(study, tmp_path):
    import subprocess
    import sys

    # a fresh process: logging is configured once per process by the command group
    res = subprocess.run([sys.executable, "-m", "boundkit.cli", "-v", "run", str(study), "--out",
                          str(tmp_path / "c"), "--quiet"], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, res.stderr
    assert "INFO boundkit.runspec" in res.stderr and "solve: model table" in res.stderr


def test_dry_run_reports_every_error(study, tmp_path):
    text = (study.read_text()
            .replace('origin = "finite"', 'origin = "finite"\nflavour = 1')              # error in model 'table'
            .replace("[solve]", '[scan]\nmodel = "builtin"\nparameter = "depth"\nvalues = [40.0, 50.0]\n'
                                'steps = 3\n\n[[critical]]\nmodel = "table"\nstates = ["1s"]\n\n'
                                '[[critical]]\nmodel = "builtin"\nparameter = "depth"\nstates = ["one"]\n\n[solve]')
            .replace("tol = 1e-12", "tol = 1e-12\nradii = 3"))
    study.write_text(text)
    res = CliRunner().invoke(main, ["run", str(study), "--dry-run", "--out", str(tmp_path / "o")])
    assert res.exit_code == 2
    lines = res.output.splitlines()
    assert all(line.startswith("boundkit: error: run spec ") for line in lines)
    # the model's error once, the sections naming it quietly skipped, every other section's error
    assert len(lines) == 4, res.output
    assert f"line {line_of(text, 'flavour')}, key 'models.table.term[0].flavour': unknown key" in lines[0]
    assert f"line {line_of(text, 'radii = 3')}, key 'solve.radii': expected true or false" in lines[1]
    assert f"line {line_of(text, 'steps = 3')}, key 'scan.steps': unknown key" in lines[2]
    assert "key 'critical[1].states[0]': cannot read 'one'" in lines[3]
    # the normal path stops at the first
    with pytest.raises(ValueError, match=r"key 'models\.table\.term\[0\]\.flavour': unknown key") as info:
        load_spec(study)
    assert "\n" not in str(info.value)


def test_complex_model_file_is_refused_while_reading(tmp_path):
    (tmp_path / "cx.toml").write_text('name = "cx"\ndescription = "d"\nsource = "s"\n'
                                      'expression = "-Z/r + W*exp(-r)"\n[parameters.Z]\ndefault = 1.0\nunit = "e"\n'
                                      'description = "z"\n[parameters.W]\ndefault = "-1 - 1j"\nunit = "hartree"\n'
                                      'description = "w"\n')
    spec = tmp_path / "s.toml"
    spec.write_text('title = "t"\ndescription = "d"\n[models.c]\nfiles = ["cx.toml"]\n[solve]\nfigures = []\n')
    with pytest.raises(ValueError, match=r"line 3, key 'models\.c': potential: expression 'cx' returned complex "
                                         r"values .*use boundkit\.resonances"):
        load_spec(spec)
