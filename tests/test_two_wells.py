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


# --- near an avoided crossing: two levels closer than Newton's method can tell apart -------------
FAR = 30.0          # the outer well: tunnelling couples the wells by far less than 1e-12 hartree
CROSSING = 1.9699030052396658   # depth D where the outer well's level meets the inner one (solved
                                # with each well alone at tol 1e-13, brentq in D; measured here)


def _pair(D):
    pot = ExpressionTerm(TWO_WELLS.replace("12", "R2"), {"D": D, "R2": FAR})
    return boundkit.solve("schrodinger", pot, l=0, levels=2, tol=1e-10)


@pytest.mark.parametrize("shift", [-1e-9, 1e-9, -1e-11])
def test_levels_near_an_avoided_crossing_are_both_found(shift):
    """Away from the crossing the two levels part linearly in D (the wells barely couple):
    E2 - E1 = s |D - D_c|, with s measured here at |D - D_c| = 1e-6. Closer in, at 5e-10 and 5e-12
    hartree apart, the solve used to lose the 2s on most rungs (Newton's method from either guess
    lands on the same level), climb to the top rung and stop at 'tolerance-not-met' after 3-4 s."""
    far = _pair(CROSSING + 1e-6)
    s = (far.levels[1].energy - far.levels[0].energy) / 1e-6
    res = _pair(CROSSING + shift)
    assert res.status == "ok", res.message
    split = res.levels[1].energy - res.levels[0].energy
    assert split == pytest.approx(s * abs(shift), rel=2e-2 if abs(shift) > 1e-10 else 0.2)
    assert [lv.label for lv in res.levels] == ["1s", "2s"]
