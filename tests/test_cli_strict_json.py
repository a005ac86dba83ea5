"""Every ``--json`` of the command line is strict JSON: no NaN, Infinity or -Infinity (RFC 8259 has none)."""
from __future__ import annotations

import json
import math
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

import boundkit.cli
from boundkit.cli import main


def _strict(text: str):
    """json.loads that refuses NaN, Infinity and -Infinity, as strict parsers do."""
    def refuse(name):
        raise ValueError(f"not strict JSON: {name}")
    return json.loads(text, parse_constant=refuse)


def test_json_text_writes_null_for_non_finite_numbers():
    import numpy as np

    from boundkit.cli.common import json_text

    doc = {"a": math.nan, "b": [math.inf, -math.inf, 1.5], "c": np.float64("nan"), "d": (np.int64(3), "x")}
    assert _strict(json_text(doc)) == {"a": None, "b": [None, None, 1.5], "c": None, "d": [3, "x"]}


def test_converge_json_is_strict():
    """A tester: the first row of each method had "difference": NaN, which strict parsers reject."""
    res = CliRunner().invoke(main, ["converge", "--param", "Z=1", "--json"])
    assert res.exit_code == 0, res.output
    data = _strict(res.output)
    assert data["rows"][0]["difference"] is None


def test_critical_json_is_strict_when_a_search_does_not_settle():
    """A merge search stopped by its budget before any value past the merge was met: the uncertainty is not
    finite (it was printed as Infinity, as for the Klein-Gordon point charge a tester ran); in JSON it is null."""
    res = CliRunner().invoke(main, ["critical", "-e", "klein-gordon", "-p", "uniform-sphere", "--param", "Z=20",
                                    "--param", "rms_fm=5", "--state", "1s", "--vary", "Z", "--kind", "merge",
                                    "--max-evaluations", "4", "--json"])
    assert res.exit_code == 3, res.output
    data = _strict(res.stdout)
    assert data["status"] == "tolerance-not-met"
    assert data["uncertainty"] is None and data["bracket"][1] is None


def test_every_command_prints_json_through_the_one_helper():
    """--json output goes through cli.common.json_text (boundkit._jsonsafe.json_text), which cleans NaN and
    inf; no command calls json.dumps itself."""
    root = Path(boundkit.cli.__file__).parent
    calls = {p.name for p in root.glob("*.py") if re.search(r"json\.dumps\(", p.read_text())}
    assert calls == set()
    assert re.search(r"json\.dumps\(.*allow_nan=False", (root.parent / "_jsonsafe.py").read_text())
