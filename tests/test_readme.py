"""Every command and Python snippet of README.md runs.

The shell commands are the lines that start with ``boundkit `` inside ```-fenced blocks (a line
ending in a backslash continues on the next); they run in README order in one temporary folder
holding a copy of ``examples/`` (so a command may use what an earlier one wrote), in-process
through click's CliRunner, and must exit 0. The ```python blocks run each on its own (a snippet
a reader copies must carry its imports) with ``exec`` in a temporary folder. The few commands
that take long are marked slow; the rest stays within the quick suite's budget.
"""
from __future__ import annotations

import re
import shlex
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from boundkit.cli import main

ROOT = Path(__file__).resolve().parent.parent
README = (ROOT / "README.md").read_text(encoding="utf-8")
_FENCE = re.compile(r"^```(\w*)[^\n]*\n(.*?)^```", re.S | re.M)

# commands that take more than a few seconds: run with -m slow
SLOW = ("--param Z=180",                                           # the dived 1s: ~10 s of complex scaling
        "heavy-ion-finite-nucleus.toml --out out/uranium --force")  # the same run again, replacing it


def blocks(lang: str | None = None) -> list[str]:
    """Bodies of the fenced blocks of README.md (of one language, or all but python)."""
    out = []
    for m in _FENCE.finditer(README):
        if (lang is None and m.group(1) != "python") or m.group(1) == lang:
            out.append(m.group(2))
    return out


def commands() -> list[str]:
    """The README's ``boundkit ...`` command lines, continuations joined, in order."""
    out = []
    for body in blocks():
        lines = body.splitlines()
        i = 0
        while i < len(lines):
            line = lines[i]
            if line.startswith("boundkit "):
                while line.rstrip().endswith("\\") and i + 1 < len(lines):
                    i += 1
                    line = line.rstrip()[:-1] + " " + lines[i].strip()
                out.append(line.strip())
            i += 1
    return out


COMMANDS = commands()
SNIPPETS = blocks("python")


def test_the_readme_has_commands_and_snippets():
    # the extraction itself: a README without them (or a broken fence pattern) must not pass quietly
    assert len(COMMANDS) >= 15 and len(SNIPPETS) >= 5
    assert any(c.startswith("boundkit run ") for c in COMMANDS)
    assert any(c.startswith("boundkit solve ") and "\\" not in c and "--scalar woods-saxon" in c for c in COMMANDS)


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    """One working folder for all the README's commands, with a copy of examples/."""
    wd = tmp_path_factory.mktemp("readme")
    shutil.copytree(ROOT / "examples", wd / "examples")
    return wd


def _param(i: int, cmd: str):
    marks = (pytest.mark.slow,) if any(s in cmd for s in SLOW) else ()
    return pytest.param(cmd, marks=marks, id=f"{i:02d}-{cmd[9:60]}")


@pytest.mark.parametrize("cmd", [_param(i, c) for i, c in enumerate(COMMANDS)])
def test_readme_command(cmd, folder, monkeypatch):
    monkeypatch.chdir(folder)
    args = shlex.split(cmd, comments=True)[1:]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 0, f"{cmd}\n{res.output}"
    assert "Traceback" not in res.output and res.output.strip()


@pytest.mark.parametrize("code", [pytest.param(c, id=f"python-{i}") for i, c in enumerate(SNIPPETS)])
def test_readme_python_snippet(code, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    exec(compile(code, "README.md", "exec"), {"__name__": "__readme__"})


def test_walkthrough_table_matches_the_run(folder, monkeypatch):
    """The walkthrough's table (Dirac 1s1/2 and Schrodinger 1s of hydrogen-like uranium, point
    nucleus and uniform sphere) is what the README's run writes, to the digits printed."""
    import csv

    monkeypatch.chdir(folder)
    levels = folder / "out" / "uranium" / "levels.csv"
    if not levels.exists():        # this test run alone (-k): run the README's command
        assert CliRunner().invoke(main, ["run", "examples/heavy-ion-finite-nucleus.toml", "--out",
                                         "out/uranium"]).exit_code == 0
    got = {(r["model"], r["equation"], r["label"]): float(r["energy_keV"])
           for r in csv.DictReader(levels.open(encoding="utf-8"))}
    files = re.search(r"writes (\d+) files", README)
    assert files and len([p for p in levels.parent.iterdir() if p.is_file()]) == int(files.group(1))
    rows = re.findall(r"^\| (point nucleus|uniform sphere) \| (-[\d.]+) \| (-[\d.]+) \|$", README, re.M)
    assert len(rows) == 2
    for name, dirac, schrodinger in rows:
        model = {"point nucleus": "point", "uniform sphere": "sphere"}[name]
        for eq, label, text in (("dirac", "1s1/2", dirac), ("schrodinger", "1s", schrodinger)):
            digits = len(text.split(".")[1])
            assert round(got[(model, eq, label)], digits) == float(text), (name, eq)
