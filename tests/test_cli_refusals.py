"""Command-line input that used to be accepted and silently ignored or mishandled (exit 0), or refused in more
than one line or without a fix named (Tester B, 2026-12-05): each is now one line `boundkit: error: ...`, exit 2."""
from __future__ import annotations

import os
import re
import subprocess
import sys

import pytest
from click.testing import CliRunner

from boundkit.cli import main


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def one_line(res, pattern):
    assert res.exit_code == 2, res.output
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1, res.stderr
    assert re.match(pattern, lines[0]), lines[0]
    assert "Traceback" not in res.output


# --- p9: --vary as strict as a run spec's [scan] values and range --------------------------------
@pytest.mark.parametrize("vary, pattern", [
    ("Z=1,1,2", r"^boundkit: error: --vary 'Z=1,1,2': the value 1 is listed twice \(it would be solved twice\); "
                r"list each value once$"),
    ("Z=1,2,1.0", r"^boundkit: error: --vary 'Z=1,2,1.0': the value 1 is listed twice"),
    ("Z=1:2:1", r"^boundkit: error: --vary 'Z=1:2:1': a range needs N >= 2 points \(N = 1 drops STOP = 2\); write "
                r"e.g. Z=1:2:2, or Z=1 for one value$"),
    ("Z=1:1:3", r"^boundkit: error: --vary 'Z=1:1:3': the range gives the value 1 more than once \(it would be solved "
                r"again\); make START and STOP differ, or write Z=1 for one value$"),
])
def test_vary_refuses_what_a_run_spec_refuses(vary, pattern):
    one_line(run("scan", "--vary", vary, "--levels", "1"), pattern)


# --- p10: options that nothing reads --------------------------------------------------------------
@pytest.mark.parametrize("option, value", [("--table-tail", "zero"), ("--table-tail-charge", "3"),
                                           ("--table-origin", "finite"), ("--table-r-unit", "fm"),
                                           ("--table-v-unit", "MeV"), ("--table-tail", "coulomb")])
def test_table_options_without_a_table_are_refused(option, value):
    one_line(run("solve", option, value),
             rf"^boundkit: error: {option}: there is no table to apply it to \(a --potential-file of r and V other "
             r"than a \.toml model file\); drop it, or give the table$")


def test_table_options_with_a_model_file_only_are_refused():
    model = os.path.join(os.path.dirname(__file__), "..", "potentials", "hulthen.toml")
    res = run("solve", "--potential-file", model, "--param", "Z=1", "--param", "delta=0.1", "--table-origin", "finite")
    one_line(res, r"^boundkit: error: --table-origin: there is no table")


def test_converge_refuses_an_order_for_the_spectral_family_alone():
    one_line(run("converge", "--method", "spectral", "--order", "4"),
             r"^boundkit: error: --order: only the finite-difference family takes an order; drop it, or use "
             r"--method finite-difference or both$")


# --- p12: one line for a potential that is not finite -------------------------------------------
@pytest.mark.parametrize("expr", ["-exp(1000*r)", "-sqrt(-r)"])
def test_a_potential_not_finite_gives_one_line(expr):
    proc = subprocess.run([sys.executable, "-m", "boundkit.cli", "solve", "--expr", expr], capture_output=True,
                          text=True, timeout=300)
    assert proc.returncode == 2, proc.stderr
    assert proc.stderr.strip().splitlines() == [proc.stderr.strip()], proc.stderr
    assert re.match(r"^boundkit: error: potential: not finite at r = \S+ bohr; check the expression or parameters$",
                    proc.stderr.strip())


# --- p13: run --out under a file ------------------------------------------------------------------
HYDROGEN = 'title = "h"\ndescription = "hydrogen"\n[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n[solve]\nmodels = ["h"]\n'


@pytest.mark.parametrize("dry", [False, True])
def test_run_out_under_a_file_names_the_file_and_the_fix(tmp_path, dry):
    spec = tmp_path / "h.toml"
    spec.write_text(HYDROGEN)
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    res = run("run", spec, "--out", blocker / "x", "--quiet", *(("--dry-run",) if dry else ()))
    one_line(res, rf"^boundkit: error: --out '{re.escape(str(blocker / 'x'))}': '{re.escape(str(blocker))}' is a "
                  r"file, not a folder; choose another folder$")
    assert not os.path.isdir(blocker)


def test_scan_out_under_a_file_says_the_same(tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("")
    one_line(run("scan", "--vary", "Z=1,2", "--levels", "1", "--out", blocker / "x"),
             rf"^boundkit: error: --out '{re.escape(str(blocker / 'x'))}': '{re.escape(str(blocker))}' is a file, not "
             r"a folder; choose another folder$")


@pytest.mark.parametrize("show", [True, False])
def test_records_moot_if_refused_are_held_and_shown_unless_refused(caplog, show):
    import logging

    from boundkit.cli.group import MOOT_IF_REFUSED, HeldRecords

    held = HeldRecords()
    with caplog.at_level(logging.WARNING):
        held.attach()
        logging.getLogger("boundkit.test").warning("far note", extra={MOOT_IF_REFUSED: True})
        logging.getLogger("boundkit.test").warning("plain note")
        assert [r.getMessage() for r in caplog.records] == ["plain note"]     # held
        held.release(show=show)
        logging.getLogger("boundkit.test").warning("after")
    assert [r.getMessage() for r in caplog.records] == ["plain note"] + ["far note"] * show + ["after"]
