"""The same study through the command line, the Python API and a run spec gives the same numbers
and takes the same defaults (equation, levels, tolerance, method).

Each study runs with every setting left at its default, so a default that differs between the
three entry points shows up as a different equation, a different number of levels or different
energies. Exact values: the hydrogen-like Schrodinger levels E_n = -Z^2 / (2 n^2) hartree
(Bethe & Salpeter, Quantum Mechanics of One- and Two-Electron Atoms, 1957).
"""
from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

import boundkit
from boundkit.accuracy import converge
from boundkit.cli import main
from boundkit.runspec import load_spec, run

SPEC = """
title = "parity"
description = "The same studies as the command line and the API run, with their defaults."

[models.h]
terms = ["coulomb"]
params = { Z = 1.0 }
"""


def _cli(*args) -> dict:
    res = CliRunner().invoke(main, [*args, "--json"])
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def _energy(row: dict) -> float:
    """The energy of a JSON row in hartree (the default unit of every entry point here)."""
    for key in ("energy", "energy_hartree"):
        if key in row:
            return row[key]
    raise KeyError(f"no energy in {sorted(row)}")


def _spec_run(tmp_path, section: str) -> dict:
    path = tmp_path / "parity.toml"
    path.write_text(SPEC + section)
    report = run(load_spec(path), tmp_path / "out")
    assert report.success, report.problems
    return json.loads((tmp_path / "out" / "results.json").read_text())


def test_solve_defaults_and_numbers_agree(tmp_path):
    api = boundkit.solve(potential="coulomb", params={"Z": 1.0})
    cli = _cli("solve")
    spec = _spec_run(tmp_path, "[solve]\nfigures = []\nradii = false\n")["solve"]
    assert api.equation == cli["equation"] == "schrodinger"
    assert {r["equation"] for r in spec["levels"]} == {"schrodinger"}
    assert [lv.label for lv in api.levels] == [lv["label"] for lv in cli["levels"]] \
        == [r["label"] for r in spec["levels"]] == ["1s"]
    e_api = api.levels[0].energy
    assert _energy(cli["levels"][0]) == pytest.approx(e_api, rel=1e-13)
    assert spec["levels"][0]["energy_hartree"] == pytest.approx(e_api, rel=1e-13)
    assert e_api == pytest.approx(-0.5, rel=1e-12)
    assert api.settings["tol"] == cli["settings"]["tol"] == 1e-10


def test_scan_defaults_and_numbers_agree(tmp_path):
    api = boundkit.scan("schrodinger", "coulomb", {}, {"Z": [1.0, 2.0]}, workers=1)
    cli = _cli("scan", "--vary", "Z=1,2", "--workers", "1", "--no-progress")
    spec = _spec_run(tmp_path, '[scan]\nmodel = "h"\nparameter = "Z"\nvalues = [1.0, 2.0]\nworkers = 1\n')
    (spec_scan,) = spec["scan"]

    def table(rows):
        return {(float(r["Z"]), r["label"]): _energy(r) for r in rows}

    a, c = table(api.rows), table(cli["rows"])
    s = {(float(r["Z"]), r["label"]): r["energy_hartree"] if "energy_hartree" in r else r["energy"]
         for r in spec_scan["rows"]}
    assert set(a) == set(c) == set(s) == {(z, f"{n}s") for z in (1.0, 2.0) for n in (1, 2, 3)}   # 3 levels
    for key, e in a.items():
        z, n = key[0], int(key[1][0])
        assert e == pytest.approx(-z * z / (2 * n * n), rel=1e-10)
        assert c[key] == pytest.approx(e, rel=1e-13) and s[key] == pytest.approx(e, rel=1e-13)
    assert api.settings["equations"] == cli["settings"]["equations"] == ["schrodinger"]


def test_converge_defaults_agree(tmp_path):
    api = converge(potential="coulomb", params={"Z": 1.0}, methods=("spectral",))
    cli = _cli("converge", "--method", "spectral")
    spec = _spec_run(tmp_path, '[converge]\nmodel = "h"\nmethods = ["spectral"]\n')["converge"][0]
    assert api.equation == cli["equation"] == spec["equation"] == "schrodinger"
    assert api.reference == cli["reference"] == spec["reference"]
    assert list(api.reference) == ["1s"] and api.reference["1s"] == pytest.approx(-0.5, rel=1e-12)
    assert api.settings["reference_tol"] == cli["settings"]["reference_tol"] == 1e-13


def test_compare_defaults_and_numbers_agree(tmp_path):
    api = boundkit.compare("coulomb", {"Z": 1.0})
    cli = _cli("compare")
    spec = _spec_run(tmp_path, '[compare]\nmodel = "h"\n')["compare"][0]
    labels = [r["label"] for r in api.to_dict("hartree")["rows"]]
    assert labels == [r["label"] for r in cli["rows"]] == [r["label"] for r in spec["rows"]]
    assert labels == ["1s", "2s", "2p", "3p"]   # l <= 1, two levels per l
    for a, c, s in zip(api.to_dict("hartree")["rows"], cli["rows"], spec["rows"]):
        for key in ("schrodinger", "klein_gordon", "dirac_plus"):
            assert c[key] == pytest.approx(a[key], rel=1e-13) and s[key] == pytest.approx(a[key], rel=1e-13)
    n = {"1s": 1, "2s": 2, "2p": 2, "3p": 3}
    assert all(r["schrodinger"] == pytest.approx(-0.5 / n[r["label"]] ** 2, rel=1e-10) for r in cli["rows"])
