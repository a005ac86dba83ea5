"""Potentials whose far tail falls off as a power r^-s other than 1 or 2.

A user's potential is probed far out (r = 1e3, 1e4, 1e5 bohr) for a Coulomb tail -Z/r, a 1/r^2 tail and
a constant it tends to (:class:`boundkit.potentials.base.ProbedTerm`). A tail -A/r^1.5 fitted none of
them, and the Coulomb-plus-constant fit of the two outer radii read -1/(r + 1)**1.5 as a tail charge
0.011 plus a constant 7.6e-8 hartree: the Schrodinger levels were reported with 'threshold at 7.59586e-08
hartree', and the same term as a relativistic scalar was refused as 'a change of mass far out' (found by a
helper). An attractive tail falling slower than 1/r^2 binds infinitely many levels (the WKB count of
levels below -e grows without bound as e -> 0 when s < 2; Landau & Lifshitz, Quantum Mechanics, sec. 18,
from memory), as a Coulomb tail does.
"""
from __future__ import annotations

import pytest

import boundkit
from boundkit.potentials import make_potential


def expr(text: str):
    from boundkit.potentials.expression import ExpressionTerm

    return ExpressionTerm(text, {})


@pytest.mark.parametrize("text, constant", [("-1/(r + 1)**1.5", 0.0), ("0.5 - 1/(r + 1)**1.5", 0.5),
                                            ("-2/(r + 1)**1.2", 0.0), ("0.25 + 3/(r + 3)**1.7", 0.25)])
def test_a_power_tail_is_not_read_as_a_coulomb_tail_and_a_constant(text, constant):
    pot = make_potential(expr(text))
    assert abs(pot.far_constant - constant) <= 1e-10 + 1e-12 * abs(constant), pot.far_constant
    assert pot.tail_charge == 0.0 and pot.tail_inverse_square == 0.0


def test_a_coulomb_tail_with_a_constant_is_still_read_as_one():
    pot = make_potential(expr("0.3 - 2/r + 1/r**3"))
    assert pot.far_constant == pytest.approx(0.3, rel=1e-12) and pot.tail_charge == pytest.approx(2.0, rel=1e-6)


def test_a_slow_scalar_tail_is_not_refused_as_a_change_of_mass():
    res = boundkit.solve("klein-gordon", "coulomb", {"Z": 1}, scalar=expr("-1/(r + 1)**1.5"), levels=2)
    assert res.status == "ok", res.message


SLOW = (r"levels: 'all' needs a potential with finitely many bound levels; this one has an attractive tail far out "
        r"falling off as r\^-1.5, slower than 1/r\^2.*infinitely many")


@pytest.mark.parametrize("method", ["spectral", "finite-difference"])
def test_all_levels_of_a_slow_attractive_tail_are_refused(method):
    with pytest.raises(ValueError, match=SLOW):
        boundkit.solve("schrodinger", expr("-1/(r + 1)**1.5"), levels="all", method=method)


# Independent reference: outward and inward DOP853 integrations (scipy solve_ivp, rtol 1e-13) matched in
# log-derivative at r = 2 bohr (and 1 bohr: they agree to 2e-16 and 2e-15), V = -1/(r + 1)^1.5, l = 0, m = 1
# (this project's own shooting, /work/scratch/s31/shoot3.py of the session that added this test)
SHOT = (-0.06220736159743092, -0.008601857339124643)


@pytest.mark.parametrize("method", ["spectral", "finite-difference"])
def test_the_lowest_levels_of_a_slow_tail_have_their_threshold_at_zero(method):
    res = boundkit.solve("schrodinger", expr("-1/(r + 1)**1.5"), levels=2, tol=1e-10, method=method)
    assert res.status == "ok" and "threshold at" not in res.message, res.message
    assert res.diagnostics["threshold_hartree"] == 0.0 and res.diagnostics["bound_count"] is None
    for lv, ref in zip(res.levels, SHOT, strict=True):
        assert abs(lv.energy - ref) <= max(lv.error_estimate, 1e-10 * abs(ref)), (lv.energy, ref)
