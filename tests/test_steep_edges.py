"""Smooth edges narrower than the breakpoint search's grid (potentials.switches.steep_edges).

Check values: the Woods-Saxon shape's own numbers (centre R, and the half-rise points R -+ a ln 3 that
give the diffuseness; common practice, from its closed form), and the graded radii the built-in term
declares for the same edge (boundkit.potentials.library.WoodsSaxon.breakpoints).
"""

import numpy as np
import pytest

from boundkit.potentials import make_potential
from boundkit.potentials.expression import ExpressionTerm
from boundkit.potentials.switches import steep_edges


def _built_in(R, a):
    return make_potential("woods-saxon", {"depth": 50.0, "radius": R, "diffuseness": a}).breakpoints


# a/R = 1e-4, 2e-5, 1.5e-4: narrower than the grid's spacing (0.23 %); 5.8e-4, 4e-3, 3e-3: wider, but
# below the 1e-2 under which the built-in term grades its edge
@pytest.mark.parametrize("R, a", [(5.0, 5e-4), (5.0, 1e-4), (0.02, 3e-6), (5.0, 0.0029), (5.0, 0.02), (1e4, 30.0)])
def test_a_sharp_woods_saxon_edge_gets_the_built_in_terms_graded_radii(R, a):
    got = steep_edges(lambda r: -50.0 / (1.0 + np.exp((r - R) / a)))
    want = _built_in(R, a)
    assert len(got) == len(want)
    # the centre to 1e-9 R (narrower than the spacing) or 1e-8 R (the plateaus of a wider edge are read
    # where it is within 1e-8 of them), the width (hence every graded radius) to 1 % of a
    assert abs(got[len(got) // 2] - R) <= (1e-9 if a < 1e-3 * R else 1e-8) * R
    assert np.allclose(got, want, rtol=0, atol=0.01 * a * 128)


def test_a_steep_callable_gets_the_graded_radii_and_no_jump():
    """a/R = 1e-3, wider than the grid's spacing: the built-in term's graded radii, no radius of a jump."""
    from boundkit.potentials.base import CallableTerm

    got = CallableTerm(lambda r: -50.0 / (1.0 + np.exp((r - 1.0) / 1e-3))).breakpoints
    assert np.allclose(got, _built_in(1.0, 1e-3), rtol=0, atol=1e-5)


def test_the_same_edge_on_a_coulomb_slope_and_in_an_expression():
    R, a = 5.0, 5e-4
    want = _built_in(R, a)
    assert np.allclose(ExpressionTerm(f"-1/r - 50/(1 + exp((r - {R})/{a}))").breakpoints, want, atol=0.02)


def test_smooth_shapes_and_true_jumps_get_no_graded_radii():
    assert steep_edges(lambda r: -1.0 / r) == ()
    assert steep_edges(lambda r: -np.exp(-r) / r) == ()
    # a/R = 1.2e-2: the layout's sampling sees it (the built-in term grades only below 1e-2)
    assert steep_edges(lambda r: -50.0 / (1.0 + np.exp((r - 5.0) / 0.06))) == ()
    # a steep wall is no step between two plateaus (a Morse well with a r_e = 100)
    assert steep_edges(lambda r: 10.0 * (np.exp(-200.0 * (r / 5.0 - 1.0)) - 2.0 * np.exp(-100.0 * (r / 5.0 - 1.0)))) == ()
    # a jump is a jump (reported by the jump search), not an edge with a width
    assert steep_edges(lambda r: np.where(r < 2.0, -1.3, -1.0)) == ()
    assert ExpressionTerm("-1/r + where(r < 2, -0.3, 0)").breakpoints == (2.0,)
