"""Channels of high angular momentum on spectral elements.

The elements' weight w^2 = (r / (r + r_core))^(2 gamma) (gamma = l + 1 for the Schrodinger equation) fell
below 1e-300 at the inner end of the mesh for l of about 20 and more where the potential is finite at
the origin (a tester): the mass matrix was singular and the solve ended in LAPACK's 'leading minor of
order 1 of B is not positive definite' (a LinAlgError in the API, that text on the command line). The
inner end now moves out to where w^2 is 1e-100 (solver._weight_floor). Beyond what double precision
resolves on these elements (an oscillator at l = 50 and more), the solve is refused by name.
"""
from __future__ import annotations

import pytest

import boundkit


@pytest.mark.parametrize("l", [18, 20])
def test_an_oscillator_at_high_l_has_its_exact_levels(l):
    # V = k r^2 / 2, k = m = 1: E = 2 n_r + l + 3/2 (common practice). Before: a LinAlgError at l = 20.
    # From l = 20 the rounding of the elements grows by about 3x per unit of l (5e-14 relative at l = 20,
    # 2e-11 at l = 25; measured) and the estimates fall up to 2.6x below it there (a known limit, see
    # DEVELOPERS.md): at l = 20 the check is the accuracy, at l = 18 the estimate too.
    res = boundkit.solve("schrodinger", "oscillator", {"k": 1.0}, l=l, levels=2, tol=1e-10)
    assert res.status == "ok", res.message
    for n_r, lv in enumerate(res.levels):
        exact = 2 * n_r + l + 1.5
        assert abs(lv.energy - exact) <= 1e-13 * exact, (lv.label, lv.energy - exact)
        if l < 20:
            assert abs(lv.energy - exact) <= max(lv.error_estimate, 1e-14 * exact), (lv.label, lv.energy - exact)


@pytest.mark.parametrize("equation, potential, params, kw", [
    ("schrodinger", "woods-saxon", {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6}, {"l": 30}),
    ("klein-gordon", "uniform-sphere", {"Z": 82.0, "rms_fm": 5.5}, {"l": 25, "particle": "pion"}),
])
def test_high_l_channels_that_failed_in_lapack_are_solved(equation, potential, params, kw):
    res = boundkit.solve(equation, potential, params, levels=2, tol=1e-10, **kw)
    assert res.status == "ok", res.message
    assert len(res.levels) == 2


def test_an_l_beyond_what_the_elements_resolve_is_refused_by_name():
    with pytest.raises(ValueError, match=r"^l: at l = 50 the spectral elements' mass matrix is singular to double "
                                         r"precision .* lower l solve"):
        boundkit.solve("schrodinger", "oscillator", {"k": 1.0}, l=50, levels=2)


def test_the_command_line_refuses_it_in_one_line():
    from click.testing import CliRunner

    from boundkit.cli import main

    out = CliRunner().invoke(main, ["solve", "-p", "oscillator", "--param", "k=1", "--l", "50"])
    assert out.exit_code == 2
    assert "Traceback" not in out.output
    assert "l = 50 the spectral elements' mass matrix is singular" in out.output
