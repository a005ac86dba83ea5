"""The potential sampler every solver path reads V and S through (boundkit.solver._sample).

Its finiteness check is one pass over a sum in the usual case; these tests pin the cases where that
sum is not finite: a value that is not finite (refused on mesh nodes, +inf read as a wall on scan
radii), and finite values whose sum overflows (accepted, values untouched).
"""
import numpy as np
import pytest

from boundkit.potentials.base import Potential, Term
from boundkit.solver import _sample


class _Table(Term):
    """A term returning given values at the radii 1, 2, 3, 4 bohr (and -1/r elsewhere)."""

    name = "table-for-test"

    def __init__(self, values):
        super().__init__()
        self._values = np.asarray(values)

    def _evaluate(self, r):
        return self._values if r.shape == self._values.shape else -1.0 / r


R = np.array([1.0, 2.0, 3.0, 4.0])


def test_finite_values_pass_unchanged():
    s = _sample(Potential((_Table([-1.0, -0.5, -0.25, -0.125]),)), R)
    assert s.V.tolist() == [-1.0, -0.5, -0.25, -0.125]
    assert s.S.tolist() == [0.0] * 4 and s.W is None


def test_finite_values_whose_sum_overflows_are_accepted():
    # each value is finite; their sum is inf, which must not be taken for a non-finite value
    big = [1e308, 1e308, 1e308, -1.0]
    for scan in (False, True):
        s = _sample(Potential((_Table(big),)), R, scan=scan)
        assert s.V.tolist() == big


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf])
def test_non_finite_value_on_nodes_is_refused(bad):
    with pytest.raises(ValueError, match=r"potential: not finite at r = 3 bohr; check the expression"):
        _sample(Potential((_Table([-1.0, -0.5, bad, -0.125]),)), R)


def test_positive_infinity_on_scan_radii_is_a_wall():
    s = _sample(Potential((_Table([-1.0, -0.5, np.inf, np.inf]),)), R, scan=True)
    assert s.V.tolist() == [-1.0, -0.5, 1e300, 1e300]


@pytest.mark.parametrize("bad", [np.nan, -np.inf])
def test_nan_or_negative_infinity_on_scan_radii_is_refused(bad):
    with pytest.raises(ValueError, match=r"potential: not finite at r = 2 bohr"):
        _sample(Potential((_Table([-1.0, bad, np.inf, -0.125]),)), R, scan=True)


def test_complex_values_are_refused_and_real_complex_ones_read_as_real():
    with pytest.raises(ValueError, match="potential: V has complex values"):
        _sample(Potential((_Table(np.array([-1.0, -0.5 + 1e-3j, -0.25, -0.125])),)), R)
    s = _sample(Potential((_Table(np.array([-1.0, -0.5, -0.25, -0.125], dtype=complex)),)), R)
    assert s.V.dtype == np.float64 and s.V.tolist() == [-1.0, -0.5, -0.25, -0.125]


def test_the_strength_kept_from_the_last_call_belongs_to_that_potential_and_mass():
    # _strength keeps its last result (the natural length and the far-box range both read it in a
    # solve); it must never hand one potential's or mass's values to another
    from boundkit.equations import Schrodinger
    from boundkit.potentials import make_potential
    from boundkit.solver import _strength

    a = make_potential("yukawa", {"Z": 1.0, "screening_length": 2.0})
    b = make_potential("yukawa", {"Z": 3.0, "screening_length": 2.0})
    light, heavy = Schrodinger(l=0, mass=1.0), Schrodinger(l=0, mass=273.0)
    sa = _strength(light, a)[1]
    assert _strength(light, a)[1] is sa                       # kept for the same object and mass
    sb = _strength(light, b)[1]
    normal = sa > 1e-280                                       # far out e^(-r/2) is subnormal, then 0
    assert np.allclose(sb[normal], 3.0 * sa[normal], rtol=1e-14, atol=0)     # 2 m r^2 |V| scales with Z
    again = _strength(light, a)[1]
    assert again is not sb and np.array_equal(again, sa)
    assert np.allclose(_strength(heavy, a)[1][normal], 273.0 * sa[normal], rtol=1e-14, atol=0)
    assert not sa.flags.writeable
