"""Two wells apart: each level lives in one of them, with only a tunnelling tail in the other.

A level's node then sits where its amplitude is about 1e-4 of its peak, and a count of sign changes
that skips the small tail (as it must, against rounding noise) misses it. The finite-difference
family picked its levels by node count: with the outer well the deeper one it reported the
inner well's level (-0.692) as the 1s (the 1s is -0.984) and dropped the 2s. The levels are
certified by counting on the spectral elements first; each finite-difference level is now the one
that stays nearest its certified energy.

No closed form: the reference is the spectral-element solve of the same channel (a different
discretization), and the two agree to the finite-difference tolerance.
"""
from __future__ import annotations

import pytest

import boundkit
from boundkit.potentials.expression import ExpressionTerm

TWO_WELLS = "-2*exp(-((r - 2)/0.5)**2) - D*exp(-((r - 12)/0.5)**2)"


@pytest.mark.parametrize("D", [1.9, 2.5])        # the outer well shallower, then deeper
def test_finite_differences_label_the_levels_of_two_wells_by_energy(D):
    pot = ExpressionTerm(TWO_WELLS, {"D": D})
    ref = boundkit.solve("schrodinger", pot, l=0, levels=2, tol=1e-12)
    fd = boundkit.solve("schrodinger", pot, l=0, levels=2, tol=1e-7, method="fd")
    assert ref.status == "ok" and fd.status == "ok", fd.message
    assert [lv.label for lv in fd.levels] == [lv.label for lv in ref.levels] == ["1s", "2s"]
    for a, b in zip(fd.levels, ref.levels):
        assert abs(a.energy - b.energy) <= 1e-6 * abs(b.energy), (a.label, a.energy, b.energy)
