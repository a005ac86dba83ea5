"""Tolerance control, honest error estimates, convergence study, cross-check, validator."""
from __future__ import annotations

import json
import re

import numpy as np
import pytest
from click.testing import CliRunner

import boundkit
from boundkit import exact
from boundkit.accuracy import converge, observed_order
from boundkit.cli import main
from boundkit.validate import catalogue


@pytest.mark.parametrize("order", [4, 6, 8])
def test_finite_difference_order_is_the_order_asked(order):
    """Hydrogen-like Dirac 1s1/2 (Z = 10): log-log slope of the error against the number of
    nodes, errors taken against the Sommerfeld-Dirac value (boundkit.exact, Bethe & Salpeter 1957)."""
    res = converge("dirac", "coulomb", {"Z": 10}, kappa=-1, methods=("finite-difference",), order=order,
                   sizes={"finite-difference": (150, 212, 300, 424, 600)})
    ref = exact.dirac_coulomb(10, 1, -1)
    rows = [r for r in res.rows if r["method"] == "finite-difference"]
    errs = [abs(r["energy"] - ref) / abs(ref) for r in rows]
    slope = observed_order([r["size"] for r in rows], errs)
    assert abs(slope - order) < 0.6, (order, slope, errs)


def test_spectral_convergence_is_faster_than_any_power():
    """The error falls geometrically with the number of nodes: log(error) is closer to a
    straight line in N than in log N, and the algebraic slope is far above any FD order."""
    # the spectral sizes are element degrees (the family solve uses); rows give the number of nodes
    res = converge("dirac", "coulomb", {"Z": 10}, kappa=1, methods=("spectral",),
                   sizes={"spectral": (4, 6, 8, 10, 12, 15, 18, 21)})
    rows = [r for r in res.rows if r["error"] > 1e-14]
    n = np.array([r["size"] for r in rows], float)
    le = np.log([r["error"] for r in rows])
    assert len(rows) >= 4
    resid_exp = np.polyfit(n, le, 1, full=True)[1][0]
    resid_pow = np.polyfit(np.log(n), le, 1, full=True)[1][0]
    assert resid_exp < resid_pow
    assert res.orders[("spectral", "2p1/2")] > 12      # FD orders here are 2 to 10
    assert min(r["error"] for r in res.rows) < 1e-13


@pytest.mark.parametrize("tol", [1e-6, 1e-9, 1e-12])
def test_tolerance_is_met_and_estimates_are_honest(tol):
    """A representative part of the exact catalogue (boundkit.validate; the whole one runs in
    `boundkit validate` and the slow test below): true relative error <= tol and
    error_estimate >= true error / 2."""
    cases = [c for c in catalogue(quick=True)]
    for case in cases:
        for channel, levels in case.channels:
            res = boundkit.solve(case.equation, case.potential, case.params, levels=levels, tol=tol,
                                 scalar=case.scalar, **channel)
            assert res.success, res.message
            for lv in res.levels:
                err = abs(lv.energy - case.exact(lv))
                assert err <= tol * abs(lv.energy), (case.name, lv.label, err)
                assert lv.error_estimate >= err / 2, (case.name, lv.label, err, lv.error_estimate)


@pytest.mark.slow
@pytest.mark.parametrize("method, tol", [("spectral", 1e-6), ("spectral", 1e-9), ("spectral", 1e-12),
                                         ("finite-difference", 1e-6), ("finite-difference", 1e-9)])
def test_whole_catalogue_tolerances(method, tol):
    for case in catalogue(quick=False):
        for channel, levels in case.channels:
            res = boundkit.solve(case.equation, case.potential, case.params, levels=levels, tol=tol,
                                 method=method, scalar=case.scalar, **channel)
            for lv in res.levels:
                err = abs(lv.energy - case.exact(lv))
                assert err <= tol * abs(lv.energy), (case.name, lv.label, err)
                assert lv.error_estimate >= err / 2, (case.name, lv.label, err, lv.error_estimate)


def test_unreachable_tolerance_is_reported():
    res = boundkit.solve("dirac", "coulomb", {"Z": 1}, kappa=-1, tol=1e-16)
    assert not res.success
    assert res.status == "tolerance-not-met"
    assert "rounding floor" in res.message
    assert len(res.levels) == 1                 # the best estimate is still there


def test_cross_check_reports_agreement_beside_estimates():
    res = boundkit.solve("dirac", "coulomb", {"Z": 20}, kappa=-1, levels=2, cross_check=True)
    rows = res.diagnostics["cross_check"]
    assert [r["label"] for r in rows] == ["1s1/2", "2s1/2"]
    for r in rows:
        assert r["other_method"] == "finite-difference"
        assert r["difference"] <= 2 * (r["error_estimate"] + r["other_error_estimate"])


def test_converge_cli_writes_a_figure(tmp_path):
    fig = tmp_path / "conv.svg"
    out = CliRunner().invoke(main, ["converge", "-e", "dirac", "--param", "Z=1", "--kappa", "-1", "--plot", str(fig)])
    assert out.exit_code == 0, out.output
    assert "observed order finite-difference" in out.output
    assert fig.exists() and fig.read_text().lstrip().startswith("<?xml")


def test_validate_quick_passes_and_speaks_json():
    out = CliRunner().invoke(main, ["validate", "--quick", "--json"])
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    assert data["passed"] is True
    assert {r["method"] for r in data["cases"]} == {"spectral", "finite-difference"}
    assert all(r["source"] for r in data["cases"])
    orders = [r["observed_order"] for r in data["cases"] if r["method"] == "finite-difference"]
    assert all(abs(o - 8) < 1 for o in orders)


def _faulty_solve(kind):
    """boundkit.solve with one fault planted: a skipped level, estimates of 0, or a status that is not ok."""
    from dataclasses import replace

    real = boundkit.solve

    def solve(*args, levels=1, **kwargs):
        if kind == "skip":          # the second level of each channel silently left out
            res = real(*args, levels=levels + 1, **kwargs)
            return replace(res, levels=res.levels[:1] + res.levels[2:])
        res = real(*args, levels=levels, **kwargs)
        if kind == "estimates":
            return replace(res, levels=tuple(replace(lv, error_estimate=0.0) for lv in res.levels))
        return replace(res, status="tolerance-not-met", success=False)
    return solve


@pytest.mark.parametrize("kind, field", [("skip", "out_of_order"), ("estimates", "estimate_misses"),
                                         ("status", "not_ok")])
def test_validation_fails_a_solver_that_skips_levels_or_misstates_its_errors(monkeypatch, kind, field):
    """The validator compared each level with the exact value of its own label and counted only how many
    came back: a solver that drops the second level of every channel, or reports estimates of 0 and
    status tolerance-not-met, passed (a tester). Now the k-th level must be the exact k-th one, its
    true error within twice its estimate, and the status ok."""
    import boundkit.validate as validate

    monkeypatch.setattr(validate, "solve", _faulty_solve(kind))
    rows = [r for r in validate.run_validation(quick=True, methods=("spectral",))
            if r["case"] in ("Schrodinger Coulomb Z=1", "Dirac Coulomb Z=1")]
    assert rows and not any(r["passed"] for r in rows)
    assert all(r[field] > 0 for r in rows)


def test_cross_check_says_in_the_message_what_the_other_family_did_not_confirm():
    """cross_check=True on a square double well: the finite-difference family refined 2 of the 4 levels
    (its own status 'partial'), and the result was status 'ok' with nothing in its message (a tester; the
    table of the command line said 'not found by the other family', the API only in diagnostics rows).
    Reference: the rows themselves, and the levels of the same well (two tunnelling doublets)."""
    from boundkit.potentials.expression import ExpressionTerm

    V = ExpressionTerm("where(r<3, 0, where(r<5, -3, where(r<11, 0, where(r<13, -3, 0))))")
    res = boundkit.solve("schrodinger", V, l=0, levels="all", cross_check=True)
    missing = [r["label"] for r in res.diagnostics["cross_check"] if r["other_energy"] is None]
    assert len(res.levels) == 4 and missing
    assert re.search(rf"cross-check \(finite-difference\): {4 - len(missing)} of 4 level\(s\) found by it; not "
                     rf"{', '.join(missing)} \(its status partial", res.message), res.message
    nuclear = boundkit.solve("schrodinger", V, l=0, levels="all", cross_check=True, labels="nuclear")
    named = [r["label"] for r in nuclear.diagnostics["cross_check"] if r["other_energy"] is None]
    assert named == [f"{int(label[0]) - 1}s" for label in missing]          # nuclear n = atomic n - 1 for s levels
    assert f"not {', '.join(named)} (its status" in nuclear.message, nuclear.message      # a review: it said 1s, 3s
    ok = boundkit.solve("dirac", "coulomb", {"Z": 20}, kappa=-1, levels=2, cross_check=True)
    assert ok.message.endswith("cross-check (finite-difference): 2 of 2 level(s) found by it, within twice their "
                               "joint estimates"), ok.message
