"""Attractive cores more singular than 1/r^2: the particle falls to the centre.

For V ~ -B r^-s near the origin with s > 2 the Hamiltonian is unbounded below and there is no lowest
level (Landau & Lifshitz, Quantum Mechanics, sec. 35 "fall of a particle to the centre", from memory).
boundkit laid such potentials out on element grids of 1.2e8 nodes (-1/r^2.5, killed for memory) or
8.5e16 bytes (-1/r^3, a MemoryError traceback), and reported levels at -9e49 hartree for -1/r^2.01
(a tester). Each solve here runs with the element layout replaced by a stub that fails the test, so a
solve that would lay out elements never allocates anything.
"""
from __future__ import annotations

import numpy as np
import pytest
from click.testing import CliRunner

import boundkit
from boundkit.cli import main

def expr(text: str):
    from boundkit.potentials.expression import ExpressionTerm

    return ExpressionTerm(text, {})


FALLS = "falls faster than -1/r\\^2 at the origin .*the particle falls to the centre.*regularise the core"


@pytest.fixture
def no_layout(monkeypatch):
    """Fail the test, without allocating, if a solve reaches the element layout."""
    from boundkit import ladder

    def refuse(*args, **kwargs):
        raise AssertionError("the element layout was reached")

    monkeypatch.setattr(ladder, "layout", refuse)


@pytest.mark.parametrize("text", ["-1/r**2.5", "-1/r**3", "-exp(-r)/r**3", "-1/r**2.01", "log(r)/r**2 - 1/r"])
def test_an_attractive_core_steeper_than_inverse_square_is_refused(no_layout, text):
    with pytest.raises(ValueError, match=FALLS):
        boundkit.solve("schrodinger", expr(text), levels=1)


def test_a_callable_core_and_the_relativistic_equations_are_refused_too(no_layout):
    with pytest.raises(ValueError, match=FALLS):
        boundkit.solve("schrodinger", lambda r: -1 / r**3)
    with pytest.raises(ValueError, match=FALLS):
        boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=2, scalar=expr("-0.5/r**3"))
    with pytest.raises(ValueError, match=FALLS):
        boundkit.solve("dirac", expr("-1/r**3"), kappa=-1)
    with pytest.raises(ValueError, match=FALLS):
        boundkit.solve("klein-gordon", expr("-1/r**3"))


def test_the_message_names_the_core_it_measured(no_layout):
    # r^2 V = -1/sqrt(r): -1e6 at r = 1e-12 bohr, -1e5 at 1e-10 bohr
    with pytest.raises(ValueError, match=r"r\^2 V = -1e\+06 hartree bohr\^2 at r = 1e-12 bohr, -1e\+05 at r = "
                                         r"1e-10 bohr"):
        boundkit.solve("schrodinger", expr("-1/r**2.5"))


def test_the_command_line_refuses_in_one_line(no_layout):
    res = CliRunner().invoke(main, ["solve", "--expr", "-1/r**3"])
    assert res.exit_code == 2, (res.output, res.exception)
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("boundkit: error: potential: "), res.stderr
    assert "Traceback" not in res.output


def test_a_repulsive_or_regularised_or_inverse_square_core_still_solves():
    # a repulsive 1/r^3 core only raises the 1s of -2/r (exact -2 hartree, common practice)
    res = boundkit.solve("schrodinger", expr("1/r**3 - 2/r"))
    assert res.status == "ok", res.message
    assert -2.0 < res.levels[0].energy < 0.0
    # a steady r^2 V (Kratzer-like, 2 m B > -(l + 1/2)^2) is not a fall: -1/r - 0.1/r^2 at l = 0 has
    # l'(l'+1) = -0.2, l' = sqrt(0.05) - 1/2, E = -1/(2 (l' + 1)^2) (Kratzer levels, common practice)
    res = boundkit.solve("schrodinger", expr("-1/r - 0.1/r**2"), tol=1e-10)
    lp = np.sqrt(0.05) - 0.5
    assert res.levels[0].energy == pytest.approx(-1 / (2 * (lp + 1) ** 2), rel=1e-9)


def test_the_layout_refuses_an_absurd_element_count():
    # the safety net behind the refusal: a layout of 1e16 elements stops before it allocates one
    from boundkit.ladder import layout
    from boundkit.potentials import make_potential
    from boundkit.solver import make_equation, sampler

    pot = make_potential(expr("-1/r**3"))
    eq = make_equation("schrodinger", l=0)
    with pytest.raises(ValueError, match="potential: the element layout needs .* elements"):
        layout(eq, pot, sampler(pot), 1e-33, 1e4, [0.0])


def test_a_steady_inverse_square_core_under_a_strong_repulsive_coulomb_term_is_not_a_fall():
    # r^2 V = B + |A| r grows in magnitude towards the origin, but only linearly: a steady B/r^2 core
    from boundkit.potentials import make_potential

    for pot in (make_potential("kratzer", {"A": -1000.0, "B": -0.01}),
                make_potential(lambda r: 1000 / r - 0.01 / r**2)):
        assert pot.origin_fall() is None
    assert make_potential(lambda r: 1000 / r - 0.01 / r**2.001).origin_fall() is not None


# A Lorentz scalar enters the relativistic equations as (m c^2 + S)^2. S ~ -B r^-s with s > 1 makes the
# mass term change sign near the origin (a pole of the Dirac equation's eliminated form) and, squared, a
# core steeper than 1/r^2 with an essential singularity at the origin, which the elements' r^gamma factor
# (gamma from a Coulomb-like -Zs/r scalar) was not built for: the Klein-Gordon solve of -1/r^3 ended in
# LAPACK's 'Eigenvalues did not converge' (0.2 s), of -1/r**3 - 1/r in 'found 0 of 2', status partial (24 s),
# and the Dirac one in a message about a 'strong repulsive V - S'.
SCALAR_CORE = (r"scalar: S falls faster than -1/r at the origin \(r S = .* hartree bohr at r = 1e-12 bohr, .* at "
               r"r = 1e-10 bohr\): .*\(m c\^2 \+ S\)\^2.*regularise the scalar's core")


@pytest.mark.parametrize("equation", ["klein-gordon", "dirac"])
@pytest.mark.parametrize("text", ["-1/r**3", "-1/r**2.5", "-1/r**2", "-1/r**4", "-exp(-r)/r**3",
                                  "-exp(-r)/r**1.1"])
def test_a_scalar_steeper_than_coulomb_at_the_origin_is_refused(no_layout, equation, text):
    with pytest.raises(ValueError, match=SCALAR_CORE):
        boundkit.solve(equation, None, scalar=expr(text))


def test_a_callable_scalar_core_under_a_coulomb_well_is_refused_too(no_layout):
    with pytest.raises(ValueError, match=SCALAR_CORE):
        boundkit.solve("klein-gordon", None, scalar=lambda r: -1 / r**3)
    with pytest.raises(ValueError, match=SCALAR_CORE):
        boundkit.solve("klein-gordon", "coulomb", {"Z": 1}, scalar=expr("-1/r**3"), levels=2)
    with pytest.raises(ValueError, match=SCALAR_CORE):
        boundkit.solve("dirac", "coulomb", {"Z": 1}, kappa=-1, scalar=lambda r: -np.exp(-r) / r**2.5)


def test_the_command_line_refuses_a_steep_scalar_in_one_line(no_layout):
    for equation in ("klein-gordon", "dirac"):
        res = CliRunner().invoke(main, ["solve", "--equation", equation, "--scalar-expr", "-1/r**3"])
        assert res.exit_code == 2, (res.output, res.exception)
        lines = res.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("boundkit: error: scalar: S falls faster than -1/r"), \
            res.stderr
        assert "Traceback" not in res.output


def test_a_coulomb_like_or_repulsive_scalar_is_not_a_steep_scalar_core():
    from boundkit.potentials import make_potential

    # r S = -Zs + S0 r is steady (a Coulomb-like scalar, with or without a constant part); r S > 0 for a
    # repulsive core; no scalar at all
    for scalar in (expr("-2/r"), expr("-2/r + 0.3"), expr("-2*exp(-r)/r"), expr("1/r**3"), expr("exp(-r)/r**3")):
        assert make_potential("coulomb", {"Z": 1}, scalar=scalar).scalar_origin_fall() is None
    assert make_potential("coulomb", {"Z": 1}).scalar_origin_fall() is None
    r, rs = make_potential(None, scalar=expr("-1/r**1.1")).scalar_origin_fall()
    # r S = -r^-0.1 at 1e-12 and 1e-10 bohr: -10^1.2 and -10 (exact)
    assert rs[0] == pytest.approx(-10**1.2, rel=1e-12) and rs[-1] == pytest.approx(-10.0, rel=1e-12)


def test_a_repulsive_scalar_core_in_front_of_a_coulomb_well_still_solves():
    # not refused: the core only raises the 1s of -1/r (exact -1/2 hartree, common practice)
    res = boundkit.solve("klein-gordon", "coulomb", {"Z": 1}, scalar=expr("1/r**3"))
    assert res.status == "ok", res.message
    assert -0.5 < res.levels[0].energy < 0.0


@pytest.mark.parametrize("method", ["spectral", "finite-difference"])
@pytest.mark.parametrize("text", ["1/r**3", "exp(-r)/r**3", "1e-3/r**4"])
def test_a_repulsive_scalar_alone_binds_no_klein_gordon_level(method, text):
    """With V = 0 and S >= 0, q(E) - E = S + S^2/(2 m c^2) - E (1 + E/(2 m c^2)) > 0 for every E in the window
    (-2 m c^2, 0): no level (exact, from the equation). A scalar core steeper than 1/r^2 alone (no well) ended
    in LAPACK's 'Eigenvalues did not converge'."""
    res = boundkit.solve("klein-gordon", None, scalar=expr(text), method=method)
    assert res.status == "ok" and res.levels == () and res.diagnostics["bound_count"] == 0, res.message
    assert "binds no level: it is nowhere attractive" in res.message
    out = CliRunner().invoke(main, ["solve", "-e", "klein-gordon", "--scalar-expr", text, "--method", method])
    assert out.exit_code == 0 and "nowhere attractive" in out.stdout, (out.output, out.exception)


# The relativistic equations take V squared: the Klein-Gordon form has -(E - V)^2 / (2 m c^2), and the
# Dirac equation's V enters beside m c^2 the same way. |V| ~ B r^-s with s > 1, of either sign, is then a
# core steeper than 1/r^2 (an attractive V^2 / (2 m c^2) ~ r^-2s), a fall to the centre that the vector
# probe (r^2 V) missed: a Klein-Gordon solve of -exp(-r)/r**1.5 returned 'tolerance-not-met', estimated
# error 1.5e2, after 64 s, and the Dirac one ran for more than 100 s (a helper's finding).
STEEP_V = (r"potential: V grows faster than 1/r at the origin \(r \|V\| = .* hartree bohr at r = 1e-12 bohr, .* at "
           r"r = 1e-10 bohr\): .*\(E - V\)\^2.*falls to the centre.*regularise the core")


@pytest.mark.parametrize("equation", ["klein-gordon", "dirac"])
@pytest.mark.parametrize("text", ["-exp(-r)/r**1.5", "-1/r**1.5 - 1/r", "1/r**1.5 - 2/r", "-1/r**1.9",
                                  "-1/r**1.05"])
def test_a_vector_potential_steeper_than_coulomb_is_refused_by_the_relativistic_equations(no_layout, equation,
                                                                                          text):
    kw = {"kappa": -1} if equation == "dirac" else {}
    with pytest.raises(ValueError, match=STEEP_V):
        boundkit.solve(equation, expr(text), **kw)


def test_coulomb_like_vector_cores_are_not_steep():
    from boundkit.potentials import make_potential

    # r |V| = Z - c r (steady), finite at the origin, or growing like ln(1/r) (the Uehling correction of
    # a point charge: r |V| = 95.03, 94.71, 94.38 at Z = 92 from 1e-12 to 1e-10 bohr, and alone, with a
    # finite nucleus, 0.033 to 0.026 at Z = 1: the same rise each decade) is not refused
    for pot in (make_potential("coulomb", {"Z": 92}), make_potential(["coulomb", "uehling"], {"Z": 92}),
                make_potential(["uniform-sphere", "uehling"], {"Z": 1, "rms_fm": 0.84}),
                make_potential("uehling", {"Z": 1}),
                make_potential("fermi", {"Z": 92, "rms_fm": 5.86}), make_potential(expr("-2*exp(-r)/r + 3")),
                make_potential(expr("-1/r + 1e4*r**2"))):
        assert pot.vector_origin_steep() is None, pot
    r, y = make_potential(expr("-1/r**1.5")).vector_origin_steep()
    # r |V| = r^-0.5 at 1e-12 and 1e-10 bohr: 1e6 and 1e5 (exact)
    assert y[0] == pytest.approx(1e6, rel=1e-12) and y[-1] == pytest.approx(1e5, rel=1e-12)


def test_the_schrodinger_equation_still_takes_a_core_between_coulomb_and_inverse_square():
    # -1/r**1.5 is no fall for the Schrodinger equation (s < 2): it solves, well below the -1/r 1s
    res = boundkit.solve("schrodinger", expr("-1/r**1.5"))
    assert res.status == "ok", res.message
    assert res.levels[0].energy < -0.5
