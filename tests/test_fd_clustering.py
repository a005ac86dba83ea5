"""Finite-difference grids clustered at narrow edges (discretize.finite_difference.clustered_nodes).

Checks from outside: derivatives and integrals of closed-form functions (tanh, its derivative sech^2,
and the integral of sech^2), and the observed order of accuracy as a log-log slope.
"""
import math

import numpy as np
import pytest

from boundkit.discretize.finite_difference import POINTS_PER_WIDTH, FiniteDifference, clustered_nodes
from boundkit.mesh import LogMap

MESH = LogMap(math.exp(-12.0), math.exp(3.0))


def sech2(x):
    """sech^2 x = 4 e^(-2|x|) / (1 + e^(-2|x|))^2, without overflow."""
    e = np.exp(-2.0 * np.abs(x))
    return 4.0 * e / (1.0 + e) ** 2
EDGE = (math.log(5.0), 2e-3)                 # an edge of width 2e-3 in t at r = 5


def test_nodes_increase_from_end_to_end_and_crowd_at_the_edge():
    t, ds_dt, h = clustered_nodes(MESH.t_min, MESH.t_max, [EDGE], 600, 600)
    assert t[0] == MESH.t_min and t[-1] == MESH.t_max and np.all(np.diff(t) > 0)
    gap_at_edge = np.min(np.diff(t))
    # the first size puts about POINTS_PER_WIDTH nodes across the width (its spacing is width / K)
    assert 0.5 <= EDGE[1] / POINTS_PER_WIDTH / gap_at_edge <= 2.0
    # and the map does not depend on the size: ds/dt at the same t is the same for 1200 nodes
    t2, ds2, h2 = clustered_nodes(MESH.t_min, MESH.t_max, [EDGE], 1199, 600)
    assert np.allclose(ds2[::2], ds_dt, rtol=1e-12) and h2 == pytest.approx(h / 2, rel=1e-12)


@pytest.mark.parametrize("order", [4, 8])
def test_derivative_of_a_sharp_tanh_converges_at_the_stencil_order(order):
    """d/dt tanh((t - t0)/w) = sech^2((t - t0)/w) / w on clustered grids of 600 and 1200 nodes: the
    worst error falls with the slope of the stencil's order (log-log), as on a uniform grid for a
    smooth function; a uniform grid of 2400 nodes (spacing 6e-3, three widths) does not resolve it.
    (From 2400 nodes on, order 8 meets the rounding floor of nodes at t = 1.6 resolving w = 2e-3:
    about 2e-11 of the peak derivative.)"""
    fd = FiniteDifference(order)
    t0, w = EDGE
    errs = []
    for n in (600, 1200):
        g = fd.grid(MESH, n, edges=[EDGE])
        f = np.tanh((g.t - t0) / w)
        exact = sech2((g.t - t0) / w) / w
        errs.append(float(np.max(np.abs(g.D @ f - exact)) * w))
    slopes = -np.diff(np.log(errs)) / math.log(2.0)
    assert np.all(slopes > order - 1.0), (errs, slopes)
    uniform = fd.grid(MESH, 2400)
    f = np.tanh((uniform.t - t0) / w)
    bad = float(np.max(np.abs(uniform.D @ f - sech2((uniform.t - t0) / w) / w)) * w)
    assert bad > 1e3 * errs[-1]


def test_weights_integrate_across_the_edge():
    # integral of sech^2((t - t0)/w) / w over the mesh is tanh's rise, 2 (to e^-2000)
    fd = FiniteDifference(8)
    t0, w = EDGE
    g = fd.grid(MESH, 2400, edges=[EDGE])
    assert float(g.w @ (sech2((g.t - t0) / w) / w)) == pytest.approx(2.0, rel=1e-6)


def test_no_features_is_the_uniform_grid_bit_for_bit():
    fd = FiniteDifference(8)
    a, b = fd.grid(MESH, 600), fd.grid(MESH, 600, edges=())
    assert np.array_equal(a.t, b.t) and np.array_equal(a.w, b.w) and (a.D != b.D).nnz == 0
    assert np.array_equal(a.t, np.linspace(MESH.t_min, MESH.t_max, 600))
