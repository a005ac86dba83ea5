"""Levels that met the stop rule are not solved again on the rungs above (spectral elements).

Reference values, computed here from a closed form: the Hulthen s levels
E_n = -(Z m/n - n delta/2)^2 / (2 m), bound while n^2 delta < 2 Z m (Flugge, Practical Quantum
Mechanics, 1971; citation from memory, formula checked by the limit delta -> 0), evaluated with
mpmath at 40 digits (near the threshold the difference loses digits in double).
"""
from __future__ import annotations

import mpmath
import pytest

import boundkit
import boundkit.solver as solver

SETTLED_NOTE = "were not solved on the rungs above"
DELTA = "0.1"


def _hulthen():
    # a pion in a Hulthen well, Z = 1, delta = 0.1: 73 s levels; 71 settle a rung before the top two
    return boundkit.solve("schrodinger", "hulthen", {"Z": 1, "delta": float(DELTA)}, l=0, levels="all",
                          tol=1e-12, particle="pion")


def _assert_exact(res):
    m = mpmath.mpf(res.settings["mass_atomic_units"])
    assert res.status == "ok" and len(res.levels) == 73 == res.diagnostics["bound_count"]
    with mpmath.workdps(40):
        for lv in res.levels:
            exact = float(-((m / lv.n - lv.n * mpmath.mpf(DELTA) / 2) ** 2) / (2 * m))
            assert abs(lv.energy - exact) <= lv.error_estimate, (lv.label, lv.energy, exact, lv.error_estimate)


def test_settled_levels_keep_their_rung_and_bound_the_true_error():
    res = _hulthen()
    _assert_exact(res)
    notes = [x for x in res.diagnostics["notes"] if SETTLED_NOTE in x]
    assert len(notes) == 1 and int(notes[0].split()[0]) >= 8
    sizes = [d["sizes"] for d in res.diagnostics["levels"]]
    low, top = sizes[0], sizes[-1]
    # the lowest level stopped on a lower rung: its rungs are the first of the top level's
    assert len(low) < len(top) and top[:len(low)] == low
    assert res.levels[0].resolution == low[-1] < res.levels[-1].resolution == top[-1]
    for lv in res.levels:
        assert lv.error_estimate <= 1e-12 * abs(lv.energy)
        # the state comes from the rung the level was last solved on
        assert lv.state.r.size == lv.resolution


def test_a_rung_that_does_not_confirm_the_settled_levels_solves_every_level(monkeypatch):
    calls = []

    def refuse(*args):
        calls.append(args)
        return False

    monkeypatch.setattr(solver, "_settled_confirmed", refuse)
    res = _hulthen()
    assert calls, "no rung was solved above settled levels"
    _assert_exact(res)
    assert any("every level solved again" in x for x in res.diagnostics["notes"])
    assert not any(SETTLED_NOTE in x for x in res.diagnostics["notes"])
    sizes = [d["sizes"] for d in res.diagnostics["levels"]]
    assert all(s == sizes[-1] for s in sizes)        # every level was solved on the top rung again


def test_few_levels_are_not_settled():
    # fewer than eight levels to settle are not worth the two counts a rung
    res = boundkit.solve("dirac", "coulomb", {"Z": 92}, kappa=-1, levels=5, tol=1e-12)
    assert not any(SETTLED_NOTE in x for x in res.diagnostics["notes"])


def test_the_settled_check_counts_on_the_grid(monkeypatch):
    """_settled_confirmed itself: true for the rung above the settled levels, false when told that a
    different number of levels settled (the count below the window's bottom disagrees)."""
    seen = []
    real = solver._settled_confirmed

    def spy(op, located, lo_r, dived, settled, want):
        ok = real(op, located, lo_r, dived, settled, want)
        seen.append((bool(ok), bool(real(op, located, lo_r, dived, settled - 1, want)),
                     bool(real(op, located, lo_r, dived + 1, settled, want))))
        return ok

    monkeypatch.setattr(solver, "_settled_confirmed", spy)
    _hulthen()
    assert seen and all(s == (True, False, False) for s in seen)


@pytest.mark.slow
def test_many_level_well_settles_most_levels():
    # a pion in a Woods-Saxon well of depth 300 hartree, radius and diffuseness 1 bohr: 328 l = 0 levels
    res = boundkit.solve("schrodinger", "woods-saxon", {"depth": 300, "radius": 1, "diffuseness": 1}, l=0,
                         levels="all", tol=1e-12, particle="pion")
    assert len(res.levels) == 328 == res.diagnostics["bound_count"]
    note = [x for x in res.diagnostics["notes"] if SETTLED_NOTE in x]
    assert note and int(note[0].split()[0]) >= 300
