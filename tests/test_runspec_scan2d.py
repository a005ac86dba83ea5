"""Two-parameter scans in run specs (``[scan.second]``): the grid, the CSV rows per grid point
and level with unit-carrying columns, the differences table, the families-of-curves figures,
the report, and the errors (file, key, line)."""
from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from boundkit.runspec import load_spec, run
from boundkit.runspec.plan import plan

SPEC = """\
title = "Hulthen wells over strength and range"
description = "Test spec: a two-parameter scan with exact s levels."
energy_unit = "hartree"

[models.h]
terms = ["hulthen"]
params = { Z = 1.0, delta = 0.1 }

[scan]
model = "h"
parameter = "Z"
values = [1.0, 1.5, 2.0]
levels = 2
tol = 1e-11
workers = 1
differences = [["2s", "1s"]]

[scan.second]
parameter = "delta"
range = { start = 0.05, stop = 0.2, num = 3, spacing = "log" }
"""


def hulthen(Z: float, delta: float, n: int) -> float:
    """Hulthen s levels, V = -Z delta e^(-delta r)/(1 - e^(-delta r)), m = 1 (hartree):
    E_n = -(Z/n - n delta/2)^2 / 2 for n < sqrt(2 Z/delta) (Flugge, Practical Quantum Mechanics
    (1971), the Hulthen potential; from memory, and checked by the exact catalogue's solves)."""
    return -((Z / n - n * delta / 2) ** 2) / 2


@pytest.fixture(scope="module")
def output(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("scan2d")
    spec = folder / "spec.toml"
    spec.write_text(SPEC, encoding="utf-8")
    report = run(load_spec(spec), folder / "out")
    assert report.success, report.problems
    return folder / "out"


def test_rows_per_grid_point_and_level_match_the_exact_levels(output):
    rows = list(csv.DictReader(io.StringIO((output / "scan.csv").read_text())))
    assert list(rows[0])[:2] == ["Z", "delta_per_bohr"]          # unit-carrying columns (Z is a charge)
    assert "energy_hartree" in rows[0] and "error_estimate_hartree" in rows[0]
    deltas = [0.05, 0.1, 0.2]
    seen = set()
    for r in rows:
        Z, d = float(r["Z"]), float(r["delta_per_bohr"])
        n = {"1s": 1, "2s": 2}[r["label"]]
        assert r["status"] == "ok"
        assert float(r["energy_hartree"]) == pytest.approx(hulthen(Z, d, n), rel=1e-9)
        seen.add((Z, round(d, 12), n))
    assert seen == {(Z, round(d, 12), n) for Z in (1.0, 1.5, 2.0) for d in deltas for n in (1, 2)}


def test_differences_table_and_results(output):
    rows = list(csv.DictReader(io.StringIO((output / "scan-differences.csv").read_text())))
    assert len(rows) == 9 and "difference_hartree" in rows[0] and "error_estimate_hartree" in rows[0]
    for r in rows:
        Z, d = float(r["Z"]), float(r["delta_per_bohr"])
        assert float(r["difference_hartree"]) == pytest.approx(hulthen(Z, d, 2) - hulthen(Z, d, 1), rel=1e-9)
    doc = json.loads((output / "results.json").read_text())
    scan = doc["scan"][0]
    assert scan["parameters"] == ["Z", "delta"] and scan["parameter_units"] == {"Z": "", "delta": "1/bohr"}
    assert len(scan["differences"]) == 9


def test_figures_and_report(output):
    from matplotlib.image import imread

    for name in ("scan.png", "scan-differences.png"):
        img = imread(output / name)
        assert img.shape[0] > 300 and img.std() > 0.05           # drawn, not blank
    md = (output / "report.md").read_text()
    assert "## Scan: levels against Z and delta" in md
    assert "| Z | delta (1/bohr) | 1s (hartree) | 2s (hartree) |" in md
    assert md.count("\n| 1.5 | ") == 3                        # one report row per grid point


def test_dry_run_counts_the_grid(tmp_path):
    spec = tmp_path / "s.toml"
    spec.write_text(SPEC)
    (st,) = plan(load_spec(spec)).studies
    assert st.solves == 9 and "3 grid point" not in st.summary and "9 grid point(s)" in st.summary


@pytest.mark.parametrize("edit, match", [
    (('parameter = "delta"', 'parameter = "Z"'), r"line 19, key 'scan\.second\.parameter': 'Z' is the first "
                                                 r"parameter already"),
    (('parameter = "delta"', 'parameter = "depth"'), r"line 19, key 'scan\.second\.parameter': a scan varies a "
                                                     r"parameter of a built-in term of model 'h' \(Z, delta\)"),
    (('parameter = "delta"', 'parameter = "delta"\nstep = 2'), r"line 20, key 'scan\.second\.step': unknown key; "
                                                                r"allowed here: parameter, values, range"),
    (('workers = 1', 'workers = 1\nmax_points = 8'), r"line 19, key 'scan\.second': 3 x 3 = 9 grid points is more "
                                                     r"than the limit of 8"),
    (('range = { start = 0.05, stop = 0.2, num = 3, spacing = "log" }', 'values = []'),
     r"line 20, key 'scan\.second\.values': give at least one value"),
    (('range = { start = 0.05, stop = 0.2, num = 3, spacing = "log" }', 'values = [0.1, -1.0]'),
     r"line 20, key 'scan\.second\.values': value -1: .*delta"),
])
def test_second_parameter_errors(tmp_path, edit, match):
    spec = tmp_path / "s.toml"
    spec.write_text(SPEC.replace(*edit))
    with pytest.raises(ValueError, match=match):
        load_spec(spec)


def test_progress_follows_the_scan_points(tmp_path):
    spec = tmp_path / "s.toml"
    spec.write_text(SPEC.split("[scan.second]")[0].replace("differences = [[\"2s\", \"1s\"]]\n", ""))
    calls = []
    report = run(load_spec(spec), tmp_path / "out", progress=lambda done, total: calls.append((done, total)))
    assert report.success
    done = [c[0] for c in calls]
    assert done == sorted(done) and calls[-1] == (3, 3) and all(t == 3 for _, t in calls)


def test_plan_of_a_convergence_study(tmp_path):
    spec = tmp_path / "s.toml"
    spec.write_text('title = "t"\ndescription = "d"\n[models.h]\nterms = ["coulomb"]\nparams = { Z = 1.0 }\n'
                    '[converge]\nmodel = "h"\nlevels = 2\nmethods = ["spectral"]\n')
    (st,) = plan(load_spec(spec)).studies
    assert st.section == "converge" and st.line == 6 and st.solves == 2
    assert "convergence of model h, schrodinger s, 2 level(s)" in st.summary


def test_a_one_parameter_scan_slope_over_an_inverse_length_is_in_energy_times_length(tmp_path):
    """The slope d[E(2s) - E(1s)]/d delta of a Hulthen well is in hartree bohr (delta is in 1/bohr); the label
    read 'hartree/1/bohr' (a tester)."""
    one = SPEC.split("[scan.second]")[0].replace('parameter = "Z"\nvalues = [1.0, 1.5, 2.0]',
                                                'parameter = "delta"\nvalues = [0.05, 0.1, 0.15]')
    spec = tmp_path / "spec.toml"
    spec.write_text(one, encoding="utf-8")
    report = run(load_spec(spec), tmp_path / "out")
    assert report.success, report.problems
    text = (tmp_path / "out" / "report.md").read_text()
    assert "hartree/1/bohr" not in text and "hartree bohr" in text
    doc = json.loads((tmp_path / "out" / "results.json").read_text())
    (item,) = doc["scan"][0]["differences"]
    assert item["slope_unit"] == "hartree bohr"
    # E(2s) - E(1s) = 3 (Z^2 - delta^2) / 8 with Z = 1 (the levels above): linear fit of -3 delta^2 / 8 over
    # delta = 0.05, 0.1, 0.15 has slope -3 (0.05 + 0.15) / 8 = -0.075 (least squares of a parabola on three
    # equally spaced points: its secant over the ends)
    assert item["slope_per_parameter"] == pytest.approx(-0.075, rel=1e-9)
