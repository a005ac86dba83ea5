"""Channels of high angular momentum on spectral elements.

The elements' weight w^2 = (r / (r + r_core))^(2 gamma) (gamma = l + 1 for the Schrodinger equation) fell
below 1e-300 at the inner end of the mesh for l of about 20 and more where the potential is finite at
the origin (a tester): the mass matrix was singular and the solve ended in LAPACK's 'leading minor of
order 1 of B is not positive definite' (a LinAlgError in the API, that text on the command line). The
inner end now moves out to where w^2 is 1e-100 (solver._weight_floor). Beyond what double precision
resolves on these elements (an oscillator at l = 200), the solve is refused by name; r_core at the minimum
of the effective potential (solver._core_radius) moved that from l = 50 to beyond l = 100.
"""
from __future__ import annotations

import pytest

import boundkit


@pytest.mark.parametrize("tol", [1e-10, 1e-12])
@pytest.mark.parametrize("l", [18, 20, 22, 24, 25, 28])
def test_an_oscillator_at_high_l_has_its_exact_levels(l, tol):
    # V = k r^2 / 2, k = m = 1: E = 2 n_r + l + 3/2 (common practice). Before: a LinAlgError at l = 20.
    # Then, with the weight's r_core at L (l + 1)^2 (676 bohr at l = 25, where the levels live near 5 bohr),
    # the rounding grew about 3x per unit of l from l = 20: errors up to 8.9e-10 hartree at l = 28, estimates
    # up to 15 times below them (l = 28, tol 1e-10), 'tolerance-not-met' at tol 1e-12 from l = 25.
    res = boundkit.solve("schrodinger", "oscillator", {"k": 1.0}, l=l, levels=3, tol=tol)
    assert res.status == "ok", res.message
    for n_r, lv in enumerate(res.levels):
        exact = 2 * n_r + l + 1.5
        assert abs(lv.energy - exact) <= tol * exact, (lv.label, lv.energy - exact)
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
    # (l = 50 was refused while r_core was L (l + 1)^2; an oscillator now solves to l = 100 within 2e-14 relative)
    with pytest.raises(ValueError, match=r"^l: at l = 200 the spectral elements' mass matrix is singular to double "
                                         r"precision .* lower l solve \(up to about 100"):
        boundkit.solve("schrodinger", "oscillator", {"k": 1.0}, l=200, levels=2)


def test_the_command_line_refuses_it_in_one_line():
    from click.testing import CliRunner

    from boundkit.cli import main

    out = CliRunner().invoke(main, ["solve", "-p", "oscillator", "--param", "k=1", "--l", "200"])
    assert out.exit_code == 2
    assert "Traceback" not in out.output
    assert "l = 200 the spectral elements' mass matrix is singular" in out.output


def test_the_elements_refuse_a_singular_mass_matrix_by_name_below_solve_channel_too():
    """The refusal sat around solve_channel only: callers of the element solver below it (prepare_channel, used by
    the studies and the validator; the convergence study's element rows) got LAPACK's raw 'leading minor ... of B
    is not positive definite' (a reviewer)."""
    from boundkit.solver import prepare_channel, setup

    eq, pot, _ = setup("schrodinger", "oscillator", {"k": 1.0}, l=200)
    with pytest.raises(ValueError, match=r"^l: at l = 200 the spectral elements' mass matrix is singular"):
        prepare_channel(eq, pot, 2)
