"""Hardening against faults and hostile input (issue 12).

Each test reproduces one failure found by an adversarial pass (it failed on
the code before the fix) and pins the repaired behaviour: nothing computed is
lost, nothing stale is reused, nothing grows without bound, and every refusal
is one line ``boundkit: error: ...`` with exit 2 (CLI) or a ValueError naming
the argument (API).
"""
from __future__ import annotations

import json
import re
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

import boundkit
from boundkit.cli import main
from boundkit.potentials.expression import ExpressionTerm

HYDROGEN = """\
title = "Hydrogen, Schrodinger"
description = "Test spec: exact Coulomb levels."
equations = ["schrodinger"]
channels = ["s"]
levels = 1

[models.h]
terms = ["coulomb"]
params = { Z = 1 }

[solve]
figures = []
"""


def cli(*args, **kw):
    return CliRunner().invoke(main, [str(a) for a in args], **kw)


def one_line_error(res, pattern: str) -> None:
    """Exit 2, no traceback, stderr one line ``boundkit: error: ...`` matching ``pattern``."""
    assert res.exit_code == 2, (res.exit_code, res.output, res.exception)
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1, res.stderr
    assert lines[0].startswith("boundkit: error: "), res.stderr
    assert "Traceback" not in res.output
    assert len(lines[0]) < 300, len(lines[0])
    import re
    assert re.search(pattern, lines[0]), lines[0]


def write(tmp_path: Path, text: str, name: str = "spec.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


# --- item 2: --force removes only what boundkit created -----------------------------------------
def test_force_refuses_a_folder_that_merely_holds_a_results_json(tmp_path):
    from boundkit.runspec import run

    spec = write(tmp_path, HYDROGEN)
    out = tmp_path / "thesis"
    (out / "sub").mkdir(parents=True)
    (out / "results.json").write_text("{}")
    (out / "thesis.tex").write_text("years of work")
    (out / "sub" / "data.csv").write_text("1,2")
    with pytest.raises(FileExistsError, match="no boundkit run marker"):
        run(spec, out, force=True)
    assert (out / "thesis.tex").read_text() == "years of work"
    assert (out / "sub" / "data.csv").read_text() == "1,2"
    res = cli("run", spec, "--out", out, "--force")
    one_line_error(res, "no boundkit run marker")
    assert (out / "thesis.tex").is_file()


def test_force_replaces_a_folder_boundkit_wrote_and_a_copied_marker_is_not_enough(tmp_path):
    from boundkit.runspec import run
    from boundkit.runspec.engine import MARKER

    spec = write(tmp_path, HYDROGEN)
    out = tmp_path / "o"
    run(spec, out)
    marker = json.loads((out / MARKER).read_text())
    assert marker["run_id"] == json.loads((out / "results.json").read_text())["run_id"]
    run(spec, out, force=True)                     # our own run: replaced
    other = tmp_path / "other"
    other.mkdir()
    (other / MARKER).write_text((out / MARKER).read_text())   # a marker copied by hand
    (other / "results.json").write_text("{}")
    (other / "notes.txt").write_text("mine")
    with pytest.raises(FileExistsError, match="does not match"):
        run(spec, other, force=True)
    assert (other / "notes.txt").read_text() == "mine"


def test_force_keeps_the_earlier_run_when_the_new_one_computes_nothing(tmp_path, monkeypatch):
    """A run whose every solve was refused replaced a good earlier run with a folder of errors."""
    import importlib

    from boundkit.runspec import run

    spec = write(tmp_path, HYDROGEN)
    out = tmp_path / "o"
    assert cli("run", spec, "--out", out).exit_code == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}

    def refuse(*args, **kwargs):
        raise ValueError("Z: refused for this test")

    monkeypatch.setattr(importlib.import_module("boundkit.solver"), "solve", refuse)
    res = cli("run", spec, "--out", out, "--force")
    assert res.exit_code == 3, res.output
    assert "problem: solve model h, schrodinger, channel s: Z: refused for this test" in res.stderr
    assert re.search(r"the run computed nothing; the earlier run in \S+ is kept as it was", res.stderr)
    assert "wrote" not in res.stdout
    report = run(spec, out, force=True)
    assert report.kept_earlier and not report.success and report.files == ()
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert sorted(os.listdir(tmp_path)) == ["o", "spec.toml"]
    report = run(spec, tmp_path / "new")          # no earlier run: the failed one is written, report and all
    assert not report.kept_earlier and (tmp_path / "new" / "report.md").is_file()


# --- item 7: overflow refused at the edge ------------------------------------------------------
@pytest.mark.parametrize("equation,Z", [("dirac", 1e200), ("klein-gordon", 1e308), ("schrodinger", 1e300)])
def test_huge_parameters_are_refused_before_the_solver(equation, Z):
    with pytest.raises(ValueError, match=r"params\['Z'\]: magnitude .* beyond 1e\+30"):
        boundkit.solve(equation, "coulomb", {"Z": Z}, levels=1)
    res = cli("solve", "-e", equation, "--param", f"Z={Z}")
    one_line_error(res, r"params\['Z'\]: magnitude")


def test_huge_values_of_an_expression_or_callable_are_refused():
    with pytest.raises(ValueError, match=r"params\['Z'\]: magnitude"):
        boundkit.solve("dirac", [boundkit.potentials.expression.ExpressionTerm("-Z/r", {"Z": 1e200})], levels=1)
    with pytest.raises(ValueError, match=r"potential: .* charge .* beyond 1e\+30"):
        boundkit.solve("dirac", lambda r: -1e200 / r, levels=1)
    res = cli("converge", "--expr", "-Z/r", "--param", "Z=1e200")
    one_line_error(res, r"params\['Z'\]: magnitude")


# --- item 8: complex values are refused --------------------------------------------------------
def test_a_callable_returning_complex_values_is_refused():
    with pytest.raises(ValueError, match="complex values .* takes real potentials only; use boundkit.resonances"):
        boundkit.solve("schrodinger", lambda r: -1 / r + 0.1j / r, levels=1)
    # only far out: found when the solver samples it, still a ValueError
    with pytest.raises(ValueError, match="takes real potentials only; use boundkit.resonances"):
        boundkit.solve("schrodinger", lambda r: -1 / r + 1j * (r > 5) * 1e-3, levels=1)
    # a complex dtype with zero imaginary part is a real potential
    res = boundkit.solve("schrodinger", lambda r: (-1 / r).astype(complex), levels=1)
    assert res.levels[0].energy == pytest.approx(-0.5, rel=1e-9)   # exact: -Z^2/2 (common practice)


def test_a_table_with_huge_values_is_refused(tmp_path):
    from boundkit.potentials.tabulated import TabulatedTerm

    r = np.geomspace(1e-3, 10, 12)
    with pytest.raises(ValueError, match=r"table table: point 1 has V = .* beyond 1e\+30"):
        TabulatedTerm(r, -1e300 / r)
    with pytest.raises(ValueError, match=r"tail_charge: magnitude"):
        TabulatedTerm(r, -1 / r, tail_charge=1e200)


# --- one error format everywhere (items 9, 10) ---------------------------------------------------
@pytest.mark.parametrize("args,pattern", [
    (["solve", "--no-such-option"], r"no such option.*--no-such-option.*boundkit solve --help"),
    (["solve", "--levels", "three"], r"--levels.*'three' is not a valid integer.*--help"),
    (["nosuchcommand"], r"no such command 'nosuchcommand'.*boundkit --help"),
    (["scan"], r"missing option '--vary'"),
    (["solve", "--param", "Z=1", "--param", "Z=2"], r"--param Z is given twice \(1 and 2\); give it once"),
    (["solve", "--particle", "muon", "--mass-mev", "100"],
     r"--particle muon and --mass-mev 100: give one of them"),
    (["solve", "--tol", "1"], r"--tol: must lie between 0 and 1, got 1"),
    (["scan", "--vary", "Z=1:2:2", "--tol", "2"], r"--tol: must lie between 0 and 1, got 2"),
    (["solve", "--plot", "/"], r"--plot '/': not a file name; write e.g. --plot levels.png"),
    (["solve", "--plot", "x.gif"], r"--plot 'x.gif': unsupported figure format '.gif'; use .png, .svg or .pdf"),
])
def test_usage_and_option_errors_are_one_line(args, pattern):
    one_line_error(cli(*args), pattern)


def test_paths_of_the_wrong_kind_are_one_line(tmp_path):
    one_line_error(cli("solve", "--potential-file", tmp_path), r"--potential-file.*is a directory")
    f = tmp_path / "file"
    f.write_text("x")
    one_line_error(cli("scan", "--vary", "Z=1:2:2", "--out", f), r"--out.*is a file")
    one_line_error(cli("run", tmp_path), r"SPEC.toml.*is a directory")


def test_a_huge_argument_is_not_echoed_whole():
    one_line_error(cli("solve", "--potential", "x" * 1_000_000), r"potential: unknown potential 'xxx")
    one_line_error(cli("solve", "--levels", "7" * 100_000 + "x"), r"--levels")


def test_a_unicode_parameter_name_reaches_the_expression():
    # Python reads identifiers in NFKC form: the expression's name is Z, and so is the --param name
    res = cli("solve", "-e", "schrodinger", "-n", "1", "--expr", "-ℤ/r", "--param", "ℤ=1")
    assert res.exit_code == 0, res.output
    assert "-0.5" in res.stdout


def test_the_api_takes_integers_and_numbers_only():
    for bad in ("3", True, 2.5):
        with pytest.raises(ValueError, match=r"^levels: expected an integer"):
            boundkit.solve("schrodinger", "coulomb", {"Z": 1}, levels=bad)
    with pytest.raises(ValueError, match=r"params\['Z'\]: expected a number, got True"):
        boundkit.solve("schrodinger", "coulomb", {"Z": True})
    with pytest.raises(ValueError, match=r"params\['Z'\]: expected a number, got '1'"):
        boundkit.solve("schrodinger", "coulomb", {"Z": "1"})


def test_ctrl_c_exits_130_and_runtime_warnings_stay_quiet(monkeypatch):
    import warnings

    import boundkit.solver as cli_mod     # the CLI imports solve from here when a command runs

    def interrupted(**kw):
        raise KeyboardInterrupt

    monkeypatch.setattr(cli_mod, "solve", interrupted)
    res = cli("solve")
    assert res.exit_code == 130
    assert res.stderr.strip() == "boundkit: interrupted"

    real = boundkit.solve

    def noisy(**kw):
        warnings.warn("overflow encountered in exp", RuntimeWarning)
        return real(**kw)

    monkeypatch.setattr(cli_mod, "solve", noisy)
    res = cli("solve", "-n", "1")
    assert res.exit_code == 0 and "RuntimeWarning" not in res.stderr and "overflow" not in res.stderr


def test_converge_says_when_fewer_levels_than_asked_were_found():
    res = cli("converge", "-e", "schrodinger", "--expr", "-exp(-r)/r", "--levels", "4", "--method", "spectral")
    assert res.exit_code == 3, res.output
    assert "partial: found 1 of 4 requested levels" in res.stderr


def test_a_tolerance_below_the_rounding_floor_is_reported_by_solve_and_converge():
    """solve took tol = 1e-100 to one rung of the largest degree and reported an infinite error
    estimate; converge accepted tol = 1e-300 and labelled its table 'reference solve at tol 1e-300'
    with exit 0, its reference's status unread. Both now say the tolerance is out of reach, exit 3."""
    res = cli("solve", "--tol", "1e-100")
    assert res.exit_code == 3, res.output
    # a finite estimate, and -0.5 to the digits printed (where long double is double, -0.499999999999999)
    assert re.search(r"1s .* -0\.(5|49999999999999\d*) +[0-9.]+e-1[45]\n", res.stdout), res.stdout
    assert "the rounding floor (about 2e-14 relative) lies above it" in res.stdout
    res = cli("converge", "--tol", "1e-300", "--method", "spectral")
    assert res.exit_code == 3, res.output
    assert "errors relative to a spectral solve at tol 1e-300, which it did not meet" in res.stdout
    assert re.fullmatch(r"boundkit: tolerance-not-met: reference solve: .*the rounding floor \(about 2e-14 "
                        r"relative\) lies above it.*\n", res.stderr), res.stderr
    assert cli("converge", "--method", "spectral").exit_code == 0           # the default tol 1e-13 is met


def test_a_run_spec_converge_below_the_rounding_floor_is_a_problem(tmp_path):
    from boundkit.runspec import run

    spec = write(tmp_path, HYDROGEN.replace("[solve]\nfigures = []\n", '[converge]\nmodel = "h"\nmethods = '
                                           '["spectral"]\ntol = 1e-30\n'))
    report = run(spec, tmp_path / "o")
    assert len(report.problems) == 1 and re.match(
        r"converge \(h, schrodinger s\): reference solve: tolerance-not-met: .*rounding floor", report.problems[0])


# --- item 5: an output error costs only that output ---------------------------------------------
SCAN = ["scan", "-e", "schrodinger", "--l", "0", "-n", "1", "--vary", "Z=1,2", "--workers", "1",
        "--no-progress"]


def test_solve_prints_levels_before_a_figure_that_cannot_be_written():
    res = cli("solve", "-e", "schrodinger", "-n", "1", "--plot", "/proc/no-such-dir/x.png")
    assert "1s" in res.stdout and "-0.5" in res.stdout        # the levels are out
    one_line_error(res, r"--plot '/proc/no-such-dir/x.png': cannot write the figure .* results above are complete")


@pytest.mark.parametrize("extra", [(), ("--json",)])
def test_phases_print_before_a_figure_that_cannot_be_written(extra):
    """phases drew its figure before printing: an unwritable --plot lost the table (or the JSON) and
    the OSError reached the standard-output handler, which blamed the output instead of the figure."""
    res = cli("phases", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=2", "--energies", "0.1,1",
              "--plot", "/proc/no-such-dir/x.png", *extra)
    if extra:
        assert len(json.loads(res.stdout)["phases"]["points"]) == 2
    else:
        assert "status: ok" in res.stdout and "0.1 " in res.stdout
    one_line_error(res, r"--plot '/proc/no-such-dir/x.png': cannot write the figure .* results above are complete")


def test_scan_prints_rows_before_a_figure_or_files_that_cannot_be_written(tmp_path, monkeypatch):
    res = cli(*SCAN, "--plot", "/proc/no-such-dir/x.png")
    assert "-0.5" in res.stdout and " 2 schrodinger" in res.stdout        # both rows are out
    one_line_error(res, r"cannot write the figure")
    one_line_error(cli(*SCAN, "--out", "/proc/boundkit-out"), r"out: cannot create the folder")

    scan_mod = sys.modules["boundkit.studies.scan"]

    def full(path, data):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(scan_mod, "write_json_atomic", full)
    res = cli(*SCAN, "--out", tmp_path / "o")
    assert "-0.5" in res.stdout
    assert res.exit_code == 2
    assert "No space left on device" in res.stderr and "Traceback" not in res.output


def test_run_into_an_unwritable_place_is_one_line(tmp_path):
    spec = write(tmp_path, HYDROGEN)
    one_line_error(cli("run", spec, "--out", "/proc/boundkit-out"), r"cannot create the output folder")


def test_standard_output_on_a_full_disk_is_one_line():
    if not os.path.exists("/dev/full"):
        pytest.skip("no /dev/full here")
    with open("/dev/full", "w") as full:
        proc = subprocess.run([sys.executable, "-m", "boundkit.cli", "solve", "-e", "schrodinger", "-n", "1"],
                              stdout=full, stderr=subprocess.PIPE, text=True, timeout=120)
    assert proc.returncode == 2, proc.stderr
    assert proc.stderr.strip().splitlines() == ["boundkit: error: cannot write the output (No space left on "
                                                "device); redirect it to a writable place"]


def test_scan_files_are_as_readable_as_run_files(tmp_path):
    old = os.umask(0o022)
    try:
        res = cli(*SCAN, "--out", tmp_path / "o")
    finally:
        os.umask(old)
    assert res.exit_code == 0, res.output
    for f in [tmp_path / "o" / "scan.csv", tmp_path / "o" / "scan.json", *(tmp_path / "o" / "points").iterdir()]:
        assert oct(f.stat().st_mode & 0o777) == oct(0o644), f


def test_sigterm_to_run_leaves_no_partial_folder(tmp_path):
    slow = HYDROGEN + """
[scan]
model = "h"
parameter = "Z"
range = { start = 1.0, stop = 3.0, num = 5000 }
workers = 1
"""
    # 5000 points: long enough (tens of seconds) that SIGTERM always arrives mid-run (400 points
    # finished within the 0.3 s wait once solves got faster)
    spec = write(tmp_path, slow)
    proc = subprocess.Popen([sys.executable, "-m", "boundkit.cli", "run", str(spec), "--out", str(tmp_path / "o")],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 60
        while not list(tmp_path.glob(".o.partial-*")) and time.monotonic() < deadline and proc.poll() is None:
            time.sleep(0.05)
        assert list(tmp_path.glob(".o.partial-*")), "the run never started"
        time.sleep(0.3)
        proc.send_signal(signal.SIGTERM)
        _, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 143, err
    assert err.strip() == "boundkit: interrupted"
    assert sorted(os.listdir(tmp_path)) == ["spec.toml"]


# --- item 1: resume only what is truly the same --------------------------------------------------
def _coulomb_table(path: Path, charge: float) -> Path:
    r = np.geomspace(1e-4, 400.0, 300)
    path.write_text("\n".join(f"{float(x)!r} {float(-charge / x)!r}" for x in r) + "\n")
    return path


def test_scan_resume_sees_an_edited_table_file(tmp_path):
    # V = table (-c/r) + coulomb (-Z/r): E_1s = -(c + Z)^2 / 2 hartree (hydrogen-like, exact)
    table = _coulomb_table(tmp_path / "t.dat", 1.0)
    args = ["scan", "-e", "schrodinger", "--l", "0", "-n", "1", "--potential-file", table, "-p", "coulomb",
            "--vary", "Z=1,2", "--workers", "1", "--no-progress", "--json", "--out", tmp_path / "o"]
    first = json.loads(cli(*args).stdout)
    assert [r["energy"] for r in first["rows"]] == pytest.approx([-2.0, -4.5], rel=1e-9)
    _coulomb_table(table, 2.0)                      # same name, new content
    again = json.loads(cli(*args).stdout)
    assert again["reused"] == 0
    assert [r["energy"] for r in again["rows"]] == pytest.approx([-4.5, -8.0], rel=1e-9)
    third = json.loads(cli(*args).stdout)           # unchanged now: reused
    assert third["reused"] == 2 and third["solved"] == 0


def test_scan_never_silently_resumes_a_python_callable(tmp_path, caplog):
    from boundkit.studies import scan

    def make(c):
        def V(r):
            return -c / r
        return V

    kw = dict(vary={"Z": [1.0]}, channels=[{"l": 0}], levels=1, workers=1, out=tmp_path / "o", progress=False)
    one = scan("schrodinger", [make(1.0), "coulomb"], {}, **kw)
    assert one.rows[0]["energy"] == pytest.approx(-2.0, rel=1e-9)
    with caplog.at_level("WARNING"):
        two = scan("schrodinger", [make(2.0), "coulomb"], {}, **kw)   # another V with the same name
    assert two.reused == 0 and two.rows[0]["energy"] == pytest.approx(-4.5, rel=1e-9)
    assert "not reused" in caplog.text and "resume_key" in caplog.text
    assert two.settings["resume"].startswith("off")
    # with an explicit key the user vouches for the callable: reused
    a = scan("schrodinger", [make(2.0), "coulomb"], {}, resume_key="V-c2", **kw)
    b = scan("schrodinger", [make(2.0), "coulomb"], {}, resume_key="V-c2", **kw)
    assert a.reused == 0 and b.reused == 1 and b.solved == 0
    with pytest.raises(ValueError, match="resume_key: expected a non-empty string"):
        scan("schrodinger", [make(2.0), "coulomb"], {}, resume_key="", **kw)


def test_scan_point_keys_cover_the_expression_text_and_the_code_version(tmp_path, monkeypatch):
    from boundkit.studies import _common, scan

    kw = dict(vary={"Z": [1.0]}, channels=[{"l": 0}], levels=1, workers=1, out=tmp_path / "o", progress=False)
    from boundkit.potentials.expression import ExpressionTerm
    a = scan("schrodinger", [ExpressionTerm("-Z/r", {"Z": 1.0})], {}, **kw)
    b = scan("schrodinger", [ExpressionTerm("-2*Z/r", {"Z": 1.0})], {}, **kw)
    assert b.reused == 0 and b.rows[0]["energy"] == pytest.approx(-2.0, rel=1e-9)
    c = scan("schrodinger", [ExpressionTerm("-2*Z/r", {"Z": 1.0})], {}, **kw)
    assert c.reused == 1
    monkeypatch.setattr(_common, "code_version", lambda: "another-build")
    d = scan("schrodinger", [ExpressionTerm("-2*Z/r", {"Z": 1.0})], {}, **kw)
    assert d.reused == 0


# --- item 3: nothing unbounded ------------------------------------------------------------------
def test_a_huge_scan_grid_is_refused_at_once_with_the_override_named():
    from boundkit.studies import linspace, parse_vary, scan

    one_line_error(cli("scan", "--vary", "screening_length=1:5:1000000000", "-p", "yukawa", "--param", "Z=1"),
                   r"vary: 1000000000 points is more than the limit of 10000; .*--max-points")
    with pytest.raises(ValueError, match=r"vary: 1000000000 points is more than the limit of 10000"):
        parse_vary("D=1:5:1000000000")
    with pytest.raises(ValueError, match=r"num: 1000000000 points is more than the limit of 10000"):
        linspace(0, 1, 10**9)
    with pytest.raises(ValueError, match=r"scan: 40000 points .* more than the limit of 10000; .*max_points"):
        scan("schrodinger", "yukawa", {}, {"Z": linspace(1, 2, 200), "screening_length": linspace(1, 2, 200)})
    assert parse_vary("D=1:5:20000", max_points=20000)[1][-1] == 5.0     # the override


def test_a_huge_spec_range_is_refused_at_once(tmp_path):
    from boundkit.runspec import load_spec

    text = HYDROGEN + '\n[scan]\nmodel = "h"\nparameter = "Z"\nrange = { start = 1.0, stop = 2.0, num = 1000000000 }\n'
    line = text.splitlines().index("range = { start = 1.0, stop = 2.0, num = 1000000000 }") + 1
    with pytest.raises(ValueError, match=rf"line {line}, key 'scan.range.num': 1000000000 points is more than the "
                                         r"limit of 10000; .*max_points = N in this \[scan\] section"):
        load_spec(write(tmp_path, text))
    lifted = text.replace("num = 1000000000 }", "num = 20000 }\nmax_points = 20000")
    assert len(load_spec(write(tmp_path, lifted, "b.toml")).scan[0].values) == 20000


def test_workers_beyond_the_cores_are_refused(monkeypatch):
    from boundkit.studies import scan

    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    monkeypatch.setattr(os, "sched_getaffinity", lambda pid: {0, 1}, raising=False)
    with pytest.raises(ValueError, match=r"workers: 40 is more than the 2 cores this process may use; use at "
                                         r"most 2"):
        scan("schrodinger", "coulomb", {}, {"Z": [1.0, 2.0]}, workers=40)
    one_line_error(cli("scan", "--vary", "Z=1,2", "--workers", "40"), r"workers: 40 is more than the 2 cores")


def test_workers_count_the_cores_this_process_may_use(monkeypatch):
    # a container or `taskset` may give the process fewer cores than the machine has: the workers
    # are capped at those it may run on (os.sched_getaffinity), not at os.cpu_count()
    from boundkit._threads import usable_cores
    from boundkit.studies import scan

    if not hasattr(os, "sched_getaffinity"):
        pytest.skip("no CPU affinity on this platform")
    monkeypatch.setattr(os, "cpu_count", lambda: 8)
    monkeypatch.setattr(os, "sched_getaffinity", lambda pid: {3})
    assert usable_cores() == 1
    with pytest.raises(ValueError, match=r"workers: 2 is more than the 1 cores this process may use; use at most 1"):
        scan("schrodinger", "coulomb", {}, {"Z": [1.0, 2.0]}, workers=2)


def test_l_max_is_bounded_with_an_override():
    from boundkit.studies import compare

    with pytest.raises(ValueError, match=r"l_max: 1000 is more than the limit of 20; .*max_l_max="):
        compare("coulomb", {"Z": 1}, l_max=1000)
    one_line_error(cli("compare", "--l-max", "1000"), r"l_max: 1000 is more than the limit of 20")


def test_table_size_is_bounded_and_the_file_is_streamed(tmp_path):
    from boundkit.potentials.tabulated import read_table

    small = _coulomb_table(tmp_path / "t.dat", 1.0)             # 300 points
    with pytest.raises(ValueError, match=r"potential file .*: more than 100 points \(the limit\); thin the table "
                                         r"or pass max_points="):
        read_table(small, max_points=100)
    assert read_table(small)[0].size == 300
    long_line = tmp_path / "long.dat"
    long_line.write_text("1 " + "2" * 5_000_000)                 # one 5 MB line: not read whole
    with pytest.raises(ValueError, match=r"line 1 is longer than 1000 characters"):
        read_table(long_line)
    one_line_error(cli("solve", "--potential-file", long_line), r"line 1 is longer than 1000 characters")


# --- item 4: figure names never collide --------------------------------------------------------
def test_run_figures_of_similar_model_names_do_not_collide(tmp_path):
    from boundkit.runspec import run

    text = HYDROGEN.replace('[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n',
                            '[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n'
                            '[models.H]\nterms = ["coulomb"]\nparams = { Z = 2 }\n'
                            '[models."h/"]\nterms = ["coulomb"]\nparams = { Z = 3 }\n')
    text = text.replace("[solve]\nfigures = []", '[solve]\nmodels = ["h", "H", "h/"]\nfigures = ["radial"]')
    out = tmp_path / "o"
    report = run(write(tmp_path, text), out)
    on_disk = sorted(str(p.relative_to(out)) for p in out.rglob("*") if p.is_file())
    assert sorted(report.files) == on_disk
    figures = [f for f in on_disk if f.endswith(".png")]
    assert len(figures) == 3, figures
    res = cli("run", write(tmp_path, text, "b.toml"), "--out", tmp_path / "o2")
    assert f"wrote {len(on_disk)} files" in res.stdout


# --- item 9: files that are not UTF-8 -----------------------------------------------------------
def test_files_that_are_not_utf8_name_the_file(tmp_path):
    from boundkit.potentials.catalog import read_model_file
    from boundkit.runspec import load_spec

    bad = tmp_path / "latin1.toml"
    bad.write_bytes("title = \"Grüße\"\n".encode("latin-1"))
    with pytest.raises(ValueError, match=r"run spec .*latin1.toml: not UTF-8 text \(byte 0xfc at position 11\); "
                                         r"save it as UTF-8"):
        load_spec(bad)
    with pytest.raises(ValueError, match=r"potential file .*latin1.toml: not UTF-8 text"):
        read_model_file(bad)
    one_line_error(cli("run", bad), r"latin1.toml: not UTF-8 text")
    one_line_error(cli("solve", "--potential-file", bad), r"latin1.toml: not UTF-8 text")


def test_a_byte_order_mark_is_read_past_in_tables_model_files_and_run_specs(tmp_path):
    """UTF-8 with a byte-order mark (spreadsheet exports, some Windows editors) read as UTF-8. Before: a table
    failed on its first line ("expected 2 columns (r and V), found 1") and TOML files on their first key."""
    from boundkit.potentials.catalog import read_model_file
    from boundkit.potentials.tabulated import read_table
    from boundkit.runspec import load_spec

    bom = b"\xef\xbb\xbf"
    table = tmp_path / "bom.txt"
    table.write_bytes(bom + "# units: r=bohr V=hartree\n".encode() +
                      "".join(f"{0.1 * i:.3f} {-1 / (0.1 * i):.15g}\n" for i in range(1, 31)).encode())
    plain = tmp_path / "plain.txt"
    plain.write_bytes(table.read_bytes()[3:])
    assert np.array_equal(np.asarray(read_table(table)[0]), np.asarray(read_table(plain)[0]))
    out = cli("solve", "--potential-file", table, "--json")
    assert out.exit_code == 0, out.output
    for name in ("coulomb.toml",):
        src = Path(__file__).resolve().parents[1] / "potentials" / name      # the repository's, not the install's
        copy = tmp_path / name
        copy.write_bytes(bom + src.read_bytes())
        assert read_model_file(copy).name == read_model_file(src).name
    spec = Path(__file__).resolve().parents[1] / "examples" / "plasma-screened-ion.toml"
    copy = tmp_path / "spec.toml"
    copy.write_bytes(bom + spec.read_bytes())
    assert load_spec(copy).title == load_spec(spec).title


def test_table_unit_errors_name_the_options_on_the_command_line(tmp_path):
    table = tmp_path / "t.txt"
    table.write_text("".join(f"{0.1 * i:.3f} {-1 / (0.1 * i):.15g}\n" for i in range(1, 31)))
    one_line_error(cli("solve", "--potential-file", table, "--table-v-unit", "meV"),
                   r"--table-v-unit: unknown energy unit 'meV'; choose one of hartree, eV, keV, MeV")
    one_line_error(cli("solve", "--potential-file", table, "--table-r-unit", "mile"),
                   r"--table-r-unit: unknown")


def test_a_swallowed_sigterm_is_raised_again_at_the_next_progress_update():
    """SIGTERM raised inside a finalizer is printed and dropped by Python ("Exception ignored");
    the recorded signal is raised again at the next safe point (a progress update)."""
    from boundkit import _signals
    from boundkit.studies._common import ProgressBar

    bar = ProgressBar(3, mode=False)
    bar.update(1)
    _signals._pending["code"] = 143
    try:
        with pytest.raises(_signals.Terminated) as info:
            bar.update(2)
        assert info.value.code == 143
    finally:
        _signals.reset()
    bar.update(3)


# --- inputs that ran for minutes with no output, and messages that did not name the problem ---------
def test_a_nuclear_radius_beyond_the_bohr_radius_is_refused():
    # 1e20 fm (a sphere 1e15 bohr wide) ran for minutes; the largest nuclei have about 6 fm
    for term in ("uniform-sphere", "fermi"):
        with pytest.raises(ValueError, match=rf"params\['rms_fm'\]: an rms radius of 1e\+20 fm is larger than the "
                                             rf"Bohr radius \(52917.7 fm\), the limit of the {term} term.*--expr"):
            boundkit.make_potential(term, {"Z": 92, "rms_fm": 1e20})
    assert boundkit.make_potential("uniform-sphere", {"Z": 92, "rms_fm": 5e4}).vector[0].radius > 0
    one_line_error(cli("solve", "-p", "uniform-sphere", "--param", "Z=92", "--param", "rms_fm=1e20"),
                   r"params\['rms_fm'\]: an rms radius of 1e\+20 fm is larger than the Bohr radius")


def test_max_n_of_transitions_is_bounded_with_an_override():
    with pytest.raises(ValueError, match=r"max_n: 21 is more than the limit of 20; .*max_n_limit="):
        boundkit.transitions(max_n=21)
    with pytest.raises(ValueError, match=r"max_n: 3 is more than the limit of 2; .*max_n_limit="):
        boundkit.transitions(max_n=3, max_n_limit=2)
    one_line_error(cli("transitions", "--max-n", "100000"), r"max_n: 100000 is more than the limit of 20")


def test_phase_shifts_refuse_more_nodes_than_the_integration_can_follow():
    from boundkit.scattering import continuum_state, phase_shifts

    yukawa = dict(potential="yukawa", params={"Z": 1, "screening_length": 2})
    with pytest.raises(ValueError, match=r"hard_core: at E = 1 hartree the solution has about 2.3e\+09 nodes "
                                         r"between r = 1e\+10 and 1.5e\+10 bohr, more than the limit of 10000 .*"
                                         r"smaller hard core.*max_nodes="):
        phase_shifts([0.1, 1], hard_core=1e10, **yukawa)
    with pytest.raises(ValueError, match=r"energies: at E = 1e\+300 hartree the solution has about 1.3e\+150 "
                                         r"nodes .*use lower energies"):
        phase_shifts([1e300], **yukawa)
    with pytest.raises(ValueError, match=r"energies: at E = 1e\+300 hartree the solution has more than 1e308 nodes"):
        phase_shifts([1e300], "dirac", kappa=-1, **yukawa)
    with pytest.raises(ValueError, match=r"energies: at E = 1 hartree .* more than the limit of 10 the"):
        phase_shifts([1.0], max_nodes=10, **yukawa)                 # about 18 nodes: the override
    with pytest.raises(ValueError, match=r"energies: at E = 1 hartree .* nodes between r = .* and 1e\+08 bohr"):
        continuum_state(1.0, r=[1.0, 1e8], **yukawa)
    one_line_error(cli("phases", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=2",
                       "--energies", "0.1,1", "--hard-core", "1e10"), r"hard_core: at E = 1 hartree")
    one_line_error(cli("phases", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=2",
                       "--energies", "1e300"), r"energies: at E = 1e\+300 hartree .* nodes")


def test_phase_shifts_refuse_energies_deep_under_a_repulsive_coulomb_barrier():
    """A tester's hang: a muon at 1e-4 hartree on a Z = -2 tail (eta = +2033) ran for minutes in the
    irregular Coulomb function (measured here: 3.5 s at eta = 300, 16 s at 500, 47 s at 800 for one
    energy), to return delta = 0: the phase relative to the Coulomb waves is of order e^(-2 pi eta)."""
    from boundkit.scattering import continuum_state, phase_shifts

    with pytest.raises(ValueError, match=r"energies: at E = 0.0001 hartree the repulsive Coulomb tail gives eta = "
                                         r"2\.03e\+03, more than the limit of 300: .*e\^\(-2 pi eta\).*use "
                                         r"higher energies, or raise the limit with max_eta= \(API\)"):
        phase_shifts([1e-4, 1.0], "schrodinger", "coulomb", {"Z": -2}, particle="muon")
    with pytest.raises(ValueError, match=r"energies: at E = 0.0008 hartree .* eta = 50, more than the limit of 10: "):
        phase_shifts([8e-4], "schrodinger", "coulomb", {"Z": -2}, max_eta=10)     # the override, both ways
    with pytest.raises(ValueError, match=r"energies: at E = 1e-06 hartree the repulsive Coulomb tail gives eta"):
        continuum_state(1e-6, "schrodinger", "coulomb", {"Z": -2})
    assert phase_shifts([8e-4], "schrodinger", "coulomb", {"Z": -2}, max_eta=60).status == "ok"
    with pytest.raises(ValueError, match=r"energies: at E = 1e-06 hartree the repulsive Coulomb tail gives eta"):
        phase_shifts([1e-6], "klein-gordon", "coulomb", {"Z": -2})          # the same functions: also slow
    # attraction is not limited: eta < 0 (no barrier); nor is Dirac (its functions come from 1F1, fast)
    assert phase_shifts([1e-4], "schrodinger", "coulomb", {"Z": 1}, estimate_error=False).status in ("ok",)
    one_line_error(cli("phases", "--param", "Z=-2", "--energies", "1e-6"),
                   r"energies: at E = 1e-06 hartree the repulsive Coulomb tail gives eta = 1\.41e\+03")


def test_resonances_refuse_a_mesh_too_large_before_laying_it():
    from boundkit.resonances import resonances

    well = boundkit.potentials.expression.ExpressionTerm("7.5*r**2*exp(-r)")
    with pytest.raises(ValueError, match=r"r_max: the scaled mesh out to r_max = 1e\+12 bohr needs at least .* "
                                         r"unknowns, more than the limit of 2400 .*give a smaller r_max"):
        resonances("schrodinger", well, window=(3, 4), r_max=1e12)
    with pytest.raises(ValueError, match=r"window: the mesh for this window needs at least .* unknowns, more than the "
                                         r"limit of 2400 of a dense eigenproblem; narrow the window"):
        resonances("schrodinger", well, window=(1e-300, 1e300))
    one_line_error(cli("resonances", "--window", "3,4", "--expr", "7.5*r**2*exp(-r)", "--r-max", "1e12"),
                   r"--r-max: the scaled mesh out to r_max = 1e\+12 bohr .*give a smaller --r-max \(or none")
    one_line_error(cli("resonances", "--window", "1e-300,1e300", "--expr", "7.5*r**2*exp(-r)"),
                   r"--window: the mesh for this window needs at least .* or give --r0 and --r-max$")


def test_a_mass_beyond_1e30_electron_masses_is_refused():
    # 1e300 MeV made infinities in the matrices: 'array must not contain infs or NaNs'
    with pytest.raises(ValueError, match=r"mass_mev: 1e\+300 MeV is beyond 5.11e\+29 MeV \(1e\+30 electron masses\)"):
        boundkit.solve("schrodinger", "coulomb", {"Z": 1}, mass_mev=1e300)
    with pytest.raises(ValueError, match=r"nucleus_mass_mev: 1e\+300 MeV is beyond 5.11e\+29 MeV"):
        boundkit.solve("schrodinger", "coulomb", {"Z": 1}, nucleus_mass_mev=1e300)
    one_line_error(cli("solve", "--mass-mev", "1e300"), r"mass_mev: 1e\+300 MeV is beyond .*give a smaller mass")


def test_a_bad_parameter_in_nuclear_units_is_quoted_as_given():
    ws = {"depth": 50, "radius": -5, "diffuseness": 0.6}
    with pytest.raises(ValueError, match=r"params\['radius'\]: the woods-saxon term needs radius >= 0, got -5 fm$"):
        boundkit.make_potential("woods-saxon", ws, units="nuclear")
    with pytest.raises(ValueError, match=r"params\['radius'\]: the woods-saxon term needs radius >= 0, got -5$"):
        boundkit.make_potential("woods-saxon", ws)
    with pytest.raises(ValueError, match=r"params\['k'\]: the oscillator needs k > 0, got -2 MeV/fm\^2$"):
        boundkit.make_potential("oscillator", {"k": -2}, units="nuclear")
    one_line_error(cli("solve", "-p", "woods-saxon", "--units", "nuclear", "--param", "radius=-5", "--param",
                       "depth=50", "--param", "diffuseness=0.6"), r"needs radius >= 0, got -5 fm$")


@pytest.mark.parametrize("args", [("--param", "Z=-1"), ("--expr", "1/r"), ("--param", "Z=-1", "--levels", "all")])
def test_a_potential_repulsive_everywhere_binds_nothing_at_once(args):
    # a repulsive Coulomb field took 5 s and exited 3 ('the box could not be made to hold them'); like
    # a repulsive short-range potential (tests/test_locator.py) it is a result with no level
    res = cli("solve", *args)
    assert res.exit_code == 0, res.output
    assert "binds no level: it is nowhere attractive" in res.stdout
    assert "status: ok" in res.stdout
    out = boundkit.solve("schrodinger", "coulomb", {"Z": -1}, l=1, levels=2)
    assert out.status == "ok" and out.levels == () and out.diagnostics["bound_count"] == 0


# A section whose every state or point failed computed nothing (a tester's report: a 10-file run was
# replaced by a 4-file failed one when every [critical] state or every [scan] point failed).
_HEAD = 'title = "t"\ndescription = "t"\n'
_FAILING_SECTIONS = {
    "critical": _HEAD + '[models.y]\nterms = ["yukawa"]\nparams = { Z = 1.0, screening_length = 5.0 }\n'
                        '[critical]\nmodel = "y"\nstates = ["1s"]\nbracket = [2.0, 3.0]\n',
    "scan": _HEAD + 'equations = ["dirac"]\nchannels = ["s1/2"]\n[models.c]\nterms = ["coulomb"]\n'
                    'params = { Z = 1.0 }\n[scan]\nmodel = "c"\nparameter = "Z"\nvalues = [140.0, 150.0]\n'
                    'workers = 1\n',
}
_SUCCEEDING_ONCE = {
    "critical": _HEAD + 'levels = 2\n[models.h]\nterms = ["hulthen"]\nparams = { Z = 1.0, delta = 0.1 }\n'
                        '[critical]\nmodel = "h"\nparameter = "delta"\nstates = ["1s", "2s"]\n'
                        'bracket = [0.3, 1.5]\nworkers = 1\n',
    "scan": _FAILING_SECTIONS["scan"].replace("[140.0, 150.0]", "[1.0, 140.0]"),
}


def _earlier_run(tmp_path):
    out = tmp_path / "o"
    assert cli("run", write(tmp_path, HYDROGEN, "good.toml"), "--out", out).exit_code == 0
    return out, {p.name: p.read_bytes() for p in out.iterdir()}


@pytest.mark.parametrize("section", sorted(_FAILING_SECTIONS))
def test_force_keeps_the_earlier_run_when_every_state_or_point_of_a_study_failed(tmp_path, section):
    from boundkit.runspec import run

    out, before = _earlier_run(tmp_path)
    spec = write(tmp_path, _FAILING_SECTIONS[section])
    res = cli("run", spec, "--out", out, "--force")
    assert res.exit_code == 3, res.output
    assert re.search(r"the run computed nothing; the earlier run in \S+ is kept as it was", res.stderr)
    assert "wrote" not in res.stdout
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    report = run(spec, out, force=True)
    assert report.kept_earlier and report.files == () and report.problems
    assert sorted(os.listdir(tmp_path)) == ["good.toml", "o", "spec.toml"]


@pytest.mark.parametrize("section", sorted(_SUCCEEDING_ONCE))
def test_force_replaces_the_earlier_run_when_one_state_or_point_succeeded(tmp_path, section):
    from boundkit.runspec import run

    out, _ = _earlier_run(tmp_path)
    report = run(write(tmp_path, _SUCCEEDING_ONCE[section]), out, force=True)
    assert not report.kept_earlier and not report.success         # one failed, one stands: written
    assert f"{section}.csv" in report.files and (out / f"{section}.csv").is_file()
    assert json.loads((out / "results.json").read_text())["spec"]["title"] == "t"


def _nothing_found(monkeypatch):
    """Make every solve return as the solver does when it finds no level it was asked for."""
    import importlib
    from dataclasses import replace

    real = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, levels=1)

    def found_nothing(*args, **kwargs):
        return replace(real, levels=(), success=False, status="partial",
                       message="found 0 of 1 requested bound levels: refused for this test")

    monkeypatch.setattr(importlib.import_module("boundkit.solver"), "solve", found_nothing)
    monkeypatch.setattr(importlib.import_module("boundkit.studies.compare"), "solve", found_nothing)

    def converged_nothing(*args, **kwargs):
        from boundkit.accuracy import ConvergenceResult

        return ConvergenceResult(equation="schrodinger", potential="coulomb", reference={}, rows=[], orders={},
                                 local_orders={}, reference_status="partial",
                                 reference_message="found 0 of 1 requested bound levels: refused for this test")

    monkeypatch.setattr(importlib.import_module("boundkit.accuracy"), "converge", converged_nothing)


@pytest.mark.parametrize("section", ["solve", "converge", "compare"])
def test_force_keeps_the_earlier_run_when_every_solve_of_a_section_found_nothing(tmp_path, monkeypatch, section):
    from boundkit.runspec import run

    out, before = _earlier_run(tmp_path)
    spec = write(tmp_path, HYDROGEN.replace("[solve]\nfigures = []\n", f'[{section}]\n'
                                            + ('model = "h"\n' if section != "solve" else "")))
    _nothing_found(monkeypatch)
    report = run(spec, out, force=True)
    assert report.kept_earlier and report.files == ()
    assert any(": partial" in p for p in report.problems), report.problems     # each says what failed
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before


# A requested level the potential does not hold was passed over: report.md said "Every requested level was
# found", results.json had no problem and the exit code was 0 (a tester's report), against docs/runspec.md.
# The Yukawa 2s is unbound at screening length D = 2 bohr (Z = 1): its critical D is about 3.22 bohr
# (Rogers, Graboske and Harwood, Phys. Rev. A 1, 1577 (1970), from memory); at D = 0.5 bohr even the 1s is
# unbound (critical D about 0.84 bohr, same source).
_YUKAWA = _HEAD + ('equations = ["schrodinger"]\nchannels = ["s"]\nlevels = 2\n[models.y]\nterms = ["yukawa"]\n'
                   'params = {{ Z = 1.0, screening_length = {D} }}\n[solve]\nfigures = []\n')


def test_a_requested_level_that_is_not_bound_is_a_problem(tmp_path):
    res = boundkit.solve("schrodinger", "yukawa", {"Z": 1, "screening_length": 2}, levels=2)
    assert res.status == "ok" and len(res.levels) == 1          # the solver: all there are, said in the message
    spec = write(tmp_path, _YUKAWA.format(D=2.0))
    out = tmp_path / "o"
    cli_res = cli("run", spec, "--out", out)
    assert cli_res.exit_code == 3, cli_res.output
    problem = ("solve model y, schrodinger, channel s: found 1 of 2 requested levels: all 1 bound level(s) "
               "of this channel (2 requested)")
    assert f"boundkit: problem: {problem}" in cli_res.stderr
    doc = json.loads((out / "results.json").read_text())
    assert not doc["success"] and any(p.startswith(problem) for p in doc["problems"]), doc["problems"]
    assert [r["label"] for r in doc["solve"]["levels"]] == ["1s"]
    report = (out / "report.md").read_text()
    assert "Every requested level was found" not in report and f"- {problem}" in report


def test_force_keeps_the_earlier_run_when_no_requested_level_is_bound(tmp_path):
    from boundkit.runspec import run

    out, before = _earlier_run(tmp_path)
    spec = write(tmp_path, _YUKAWA.format(D=0.5))
    res = cli("run", spec, "--out", out, "--force")
    assert res.exit_code == 3, res.output
    assert "problem: solve model y, schrodinger, channel s: found 0 of 2 requested levels" in res.stderr
    assert re.search(r"the run computed nothing; the earlier run in \S+ is kept as it was", res.stderr)
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    report = run(spec, tmp_path / "new")          # no earlier run: written, saying what went wrong
    assert not report.kept_earlier and not report.success
    assert "found 0 of 2 requested levels" in (tmp_path / "new" / "report.md").read_text()


# --- --levels had no upper limit: 10^8 levels grew to 3.6 GB in 15 s and never finished -----------
def test_levels_are_bounded_with_an_override(monkeypatch):
    import importlib

    from boundkit._checks import MAX_LEVELS, LimitError
    from boundkit.studies import compare, scan

    limit = r"is more than the limit of 1000; use fewer, or raise the limit with max_levels= \(API\)"
    assert MAX_LEVELS == 1000
    hulthen = ("schrodinger", "hulthen", {"Z": 1, "delta": 0.3})      # two bound s levels (delta < 2/n^2)
    with pytest.raises(LimitError, match=r"^levels: 3 is more than the limit of 2; use fewer, or raise the limit "
                                         r"with max_levels= \(API\)$"):
        boundkit.solve(*hulthen, levels=3, max_levels=2)
    assert len(boundkit.solve(*hulthen, levels=2, max_levels=2).levels) == 2
    assert len(boundkit.solve(*hulthen, levels="all", max_levels=1).levels) == 2    # 'all' is not limited
    with pytest.raises(ValueError, match=r"max_levels: must be >= 1, got 0"):
        boundkit.solve(*hulthen, max_levels=0)
    for n in (100_000_000, 100_000, MAX_LEVELS + 1):
        with pytest.raises(LimitError, match=rf"^levels: {n} {limit}$"):
            boundkit.solve("schrodinger", "coulomb", {"Z": 1}, levels=n)
        with pytest.raises(LimitError, match=rf"^levels: {n} {limit}$"):
            scan("schrodinger", "coulomb", {}, {"Z": [1.0, 2.0]}, levels=n, workers=1)
        with pytest.raises(LimitError, match=rf"^levels: {n} {limit}$"):
            compare("coulomb", {"Z": 1}, levels=n)
    with pytest.raises(LimitError, match=r"^levels: 3 is more than the limit of 2"):
        compare(hulthen[1], hulthen[2], levels=3, max_levels=2)          # compare passes it to solve
    # scan's override reaches the solve of every point (recorded by a stand-in; 1001 real levels take a minute)
    seen = []
    real = importlib.import_module("boundkit.studies.scan").solve

    def record(*args, **kwargs):
        seen.append((kwargs["levels"], kwargs["max_levels"]))
        return real(*args, **{**kwargs, "levels": 1, "max_levels": MAX_LEVELS})

    monkeypatch.setattr(importlib.import_module("boundkit.studies.scan"), "solve", record)
    res = scan("schrodinger", "coulomb", {}, {"Z": [1.0]}, levels=MAX_LEVELS + 1, max_levels=MAX_LEVELS + 1,
               workers=1)
    assert seen == [(MAX_LEVELS + 1, MAX_LEVELS + 1)]
    assert res.rows[0]["status"] == "ok" and len(res.rows) == MAX_LEVELS + 1


@pytest.mark.parametrize("command", [["solve"], ["scan", "--vary", "Z=1,2", "--workers", "1"], ["converge"],
                                     ["compare"], ["hyperfine"]])
def test_levels_beyond_the_limit_are_one_line_on_every_command(command):
    for n in ("100000000", "1001"):
        one_line_error(cli(*command, "--levels", n), rf"invalid value for '--levels': levels: {n} is more than the "
                                                     r"limit of 1000; use fewer, .*see boundkit \w+ --help")
    assert cli("solve", "-p", "hulthen", "--param", "Z=1", "--param", "delta=0.3", "--levels", "all").exit_code == 0


@pytest.mark.parametrize("command", [["solve"], ["scan", "--vary", "Z=1,2", "--workers", "1"], ["converge"],
                                     ["compare"], ["hyperfine"]])
def test_the_levels_limit_is_named_and_raised_from_the_command_line(command):
    """The limit's message named max_levels= (API), which a command-line user cannot give."""
    one_line_error(cli(*command, "--levels", "3", "--max-levels", "2"),
                   r"invalid value for '--levels': levels: 3 is more than the limit of 2; use fewer, or raise the "
                   r"limit with --max-levels; see boundkit \w+ --help")
    one_line_error(cli(*command, "--levels", "1", "--max-levels", "0"),
                   r"invalid value for '--max-levels': max_levels: must be >= 1, got 0")


def test_the_levels_limit_raised_from_the_command_line_reaches_the_solve():
    res = cli("solve", "-p", "coulomb", "--param", "Z=1", "--levels", "3", "--max-levels", "3", "--tol", "1e-8")
    assert res.exit_code == 0, res.output
    assert "3s" in res.output
    # compare passes it on to each solve (checked there as well)
    res = cli("compare", "-p", "coulomb", "--param", "Z=1", "--levels", "3", "--max-levels", "3", "--l-max", "0",
              "--json")
    assert res.exit_code == 0, res.output
    assert len(json.loads(res.output)["rows"]) >= 3


def test_the_l_max_limit_of_compare_is_named_and_raised_from_the_command_line():
    one_line_error(cli("compare", "-p", "coulomb", "--param", "Z=1", "--l-max", "2", "--max-l-max", "1"),
                   r"l_max: 2 is more than the limit of 1; use fewer, or raise the limit with --max-l-max$")
    res = cli("compare", "-p", "coulomb", "--param", "Z=1", "--l-max", "1", "--max-l-max", "1", "--levels", "1")
    assert res.exit_code == 0, res.output


@pytest.mark.parametrize("where,text", [
    ("top", "levels = 100000000\n" + HYDROGEN.replace("levels = 1\n", "")),
    ("section", HYDROGEN.replace("[solve]\n", "[solve]\nlevels = 100000000\n")),
    ("channel", HYDROGEN.replace('channels = ["s"]', 'channels = [{ l = 0, levels = 100000000 }]')),
    ("compare", HYDROGEN + '\n[compare]\nmodel = "h"\nlevels = 100000000\n'),
    ("converge", HYDROGEN + '\n[converge]\nmodel = "h"\nlevels = 100000000\n'),
    ("scan", HYDROGEN + '\n[scan]\nmodel = "h"\nparameter = "Z"\nvalues = [1.0]\nlevels = 100000000\n'),
])
def test_a_spec_with_too_many_levels_is_refused_at_load(tmp_path, where, text):
    from boundkit.runspec import load_spec

    spec = write(tmp_path, text)
    line = next(i for i, ln in enumerate(text.splitlines(), 1) if "100000000" in ln)
    message = (rf"line {line}, key '[\w.\[\]]*levels': 100000000 is more than the limit of 1000 levels per channel; "
               r"use fewer \(1000 hydrogen levels already take 40 s and 1.2 GB\)")
    with pytest.raises(ValueError, match=message):
        load_spec(spec)
    one_line_error(cli("run", spec, "--dry-run"), message)
    one_line_error(cli("run", spec, "--out", tmp_path / "o"), message)
    assert sorted(os.listdir(tmp_path)) == ["spec.toml"]           # nothing written
    assert load_spec(write(tmp_path, text.replace("100000000", "1000"), "ok.toml")) is not None


def test_converge_api_refuses_a_levels_count_beyond_the_limit():
    """The CLI and run specs refused levels above MAX_LEVELS, the converge API did not (it ran on)."""
    from boundkit.accuracy import converge

    with pytest.raises(ValueError, match=r"levels: 100000000 is more than the limit of 1000; use fewer, or raise "
                                         r"the limit with max_levels= \(API\)"):
        converge("schrodinger", "coulomb", {"Z": 1}, l=0, levels=10**8)
    with pytest.raises(ValueError, match=r"levels: 5 is more than the limit of 2"):
        converge("schrodinger", "coulomb", {"Z": 1}, l=0, levels=5, max_levels=2)


@pytest.mark.parametrize("expr", ["2", "-2", "0.5*r**0"])
def test_a_constant_potential_is_named_as_such(expr):
    """A constant V = 2 was 'too weak to bind anything ... V = 0 everywhere binds nothing' (it is neither weak
    nor zero: the solver measures it from its threshold, its own value)."""
    message = (r"potential: V is the same constant \(-?[0-9.]+ hartree\) at every radius; a constant only moves the "
               r"threshold to its value and binds nothing: add a well")
    one_line_error(cli("solve", "--expr", expr), message)
    with pytest.raises(ValueError, match=message):
        boundkit.solve("schrodinger", lambda r: 2.0 + 0.0 * r)
    with pytest.raises(ValueError, match=r"too weak to bind anything"):      # a zero potential keeps its message
        boundkit.solve("schrodinger", lambda r: 0.0 * r)


@pytest.mark.parametrize("expr, l, B", [("-0.1/r**2", 0, "-0.1"), ("0.3/r**2", 0, "0.3"), ("-0.1/r**2", 2, "-0.1")])
def test_a_pure_inverse_square_potential_is_named_as_such(expr, l, B):
    """V = -0.1/r^2 was 'too weak to bind anything ... 2 m r^2 |V| stays below 1e-3', which is false
    (2 m r^2 |V| = 0.2 at every radius). B/r^2 alone has no length scale: with 2 m B > -(l + 1/2)^2 it binds
    no level, and below that the particle falls to the centre (scale invariance; common practice). Like a
    constant V (above), a potential with no length of its own is refused, with what it is and what to do."""
    message = (rf"potential: B/r\^2 alone \(B = {B} hartree bohr\^2; the rest is weak: 2 m r\^2 \|V - B/r\^2\| < "
               r"1e-3\) has no length scale and binds no level unless it makes the particle fall to the centre "
               r"\(2 m B < -\(l \+ 1/2\)\^2, refused\); add a well to bind a level$")
    one_line_error(cli("solve", "--expr", expr, "--l", str(l)), message)
    with pytest.raises(ValueError, match=message):
        boundkit.solve("schrodinger", ExpressionTerm(expr), l=l)


def test_an_unwritable_states_path_is_refused_before_solving(tmp_path):
    """--states st.txt printed all the levels and only then failed; the format is known before solving."""
    for name, shown in (("st.txt", "'.txt'"), ("x", "'(none)'")):
        res = cli("solve", "--states", tmp_path / name)
        one_line_error(res, rf"--states '.*{name}': unsupported states format {re.escape(shown)}; use .csv or .npz$")
        assert res.stdout == ""                                   # nothing solved, nothing printed
    one_line_error(cli("solve", "--states", tmp_path), r"--states '.*': not a file name; write e.g. --states levels.csv")


def test_states_and_figures_both_create_a_missing_folder(tmp_path):
    """--plot created a missing folder, --states refused it after solving ('No such file or directory')."""
    res = cli("solve", "--states", tmp_path / "a" / "b" / "h.csv", "--plot", tmp_path / "c" / "h.png")
    assert res.exit_code == 0, res.output
    assert (tmp_path / "a" / "b" / "h.csv").is_file() and (tmp_path / "c" / "h.png").is_file()


def test_a_figure_with_no_level_to_draw_says_so(tmp_path):
    """--plot with no bound level wrote nothing and said nothing (exit 0); --states says it, so does --plot."""
    res = cli("solve", "--expr", "0.1*exp(-r)", "--plot", tmp_path / "never.png")
    one_line_error(res, r"no figure written to '.*never.png': there is no level to draw$")
    assert os.listdir(tmp_path) == []


@pytest.mark.parametrize("args, message", [
    (["phases", "--hard-core", "-1", "--energies", "0.1"], r"--hard-core: must be positive, got -1"),
    (["phases", "--max-nodes", "0", "--energies", "0.1"], r"--max-nodes: must be >= 1, got 0"),
    (["hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.3"],
     r"--nuclear-spin: must be a positive multiple of 1/2"),
    (["hyperfine", "--nuclear-moment", "2.79", "--nuclear-spin", "0.5", "--magnetized-sphere-fm", "0"],
     r"--magnetized-sphere-fm: must be > 0 and finite \(fm\), got 0"),
])
def test_command_errors_name_the_option_not_the_api_keyword(args, message):
    """The messages began with the API's keyword (hard_core:, max_nodes:, nuclear_spin:, and
    magnetization_radius:, a name the command line does not have)."""
    one_line_error(cli(*args), "^boundkit: error: " + message)


def test_a_table_point_at_the_origin_names_the_option(tmp_path):
    table = tmp_path / "t.dat"
    table.write_text("0 -1\n1 -0.5\n2 -0.2\n")
    one_line_error(cli("solve", "--potential-file", table), r"r must be > 0; drop the point at r <= 0 \(the behaviour at the "
                                                  r"origin is set by origin=, --table-origin on the command line\)")


@pytest.mark.parametrize("method", ["spectral", "finite-difference"])
def test_a_repulsive_point_charge_binds_no_dirac_level_of_the_particle(method):
    """The Dirac equation refused Z = -1 with a message about a pole of its eliminated form and 'S = -V with a
    confining V' (neither is the user's case), where Schrodinger says it binds no level. A repulsive vector
    potential holds only antiparticle states in the gap (common practice: charge conjugation)."""
    res = boundkit.solve("dirac", "coulomb", {"Z": -1}, method=method)
    assert res.status == "ok" and res.levels == () and res.diagnostics["bound_count"] == 0
    assert "binds no level of the particle: it is nowhere attractive" in res.message
    res_cli = cli("solve", "-e", "dirac", "--param", "Z=-1", "--method", method)
    assert res_cli.exit_code == 0 and "binds no level of the particle" in res_cli.stdout


def test_a_coulomb_term_pulling_a_positive_or_neutral_particle_is_warned_once(caplog, monkeypatch):
    """A proton in a nucleus was bound deeper by the attractive Coulomb term, a neutron bound by Z = 1, with no
    word (a tester): the potential is the particle's potential energy as written, whatever its charge."""
    import logging

    from boundkit import solver

    monkeypatch.setattr(solver, "_CHARGE_WARNED", set())
    with caplog.at_level(logging.WARNING, logger="boundkit.solver"):
        for _ in range(2):
            boundkit.solve("schrodinger", "coulomb", {"Z": 1}, particle="proton")
        boundkit.solve("schrodinger", "coulomb", {"Z": -1}, particle="proton")      # repulsive: as meant
        boundkit.solve("schrodinger", "coulomb", {"Z": 1}, particle="muon")         # negative: as meant
        boundkit.solve("schrodinger", "yukawa", {"Z": 1, "screening_length": 2.0}, particle="neutron")
    texts = [r.getMessage() for r in caplog.records if "not multiplied by its charge" in r.getMessage()]
    assert texts == [
        "particle proton has charge 1 e, and the potential's Coulomb part (charge 1) attracts it: V is used as "
        "written, the particle's potential energy, not multiplied by its charge; write the repulsion a positive "
        "particle feels as Z < 0",
        "particle neutron has charge 0 e, and the potential's Coulomb part (charge 1) acts on it: V is used as "
        "written, the particle's potential energy, not multiplied by its charge; a neutral particle feels no "
        "Coulomb force: leave the Coulomb term out"]
