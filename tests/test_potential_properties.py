"""Properties of a Potential read from its terms: the tail charges and whether it has a spin-orbit
factor (the checks the equations, the Coulomb seed and resonances make)."""
import numpy as np
import pytest
import scipy.constants as sc

import boundkit
from boundkit.potentials import Term, make_potential
from boundkit.potentials.base import NuclearUnitsTerm
from exact import BOHR_M


def test_tail_charges_split_into_vector_and_scalar():
    # Coulomb tails: a point charge has Z_inf = Z (a fact of the trade); a Yukawa term has none
    pot = make_potential(["coulomb", "yukawa"], {"Z": 3.0, "screening_length": 2.0})
    assert (pot.vector_tail_charge, pot.scalar_tail_charge, pot.tail_charge) == (3.0, 0.0, 3.0)
    _, both, _ = boundkit.solver.setup("dirac", "coulomb", {"Z": 2.0}, kappa=-1, scalar="coulomb")
    assert (both.vector_tail_charge, both.scalar_tail_charge, both.tail_charge) == (2.0, 2.0, 4.0)


def test_has_spin_orbit_follows_the_woods_saxon_spin_orbit_strength():
    ws = {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6}
    assert not make_potential("woods-saxon", ws).has_spin_orbit
    assert make_potential("woods-saxon", {**ws, "spin_orbit": 5.0}).has_spin_orbit


def test_a_spin_orbit_term_needs_j_in_the_schrodinger_equation():
    with pytest.raises(ValueError, match=r"j: the potential has a spin-orbit term; give j = l \+- 1/2"):
        boundkit.solve("schrodinger", "woods-saxon", {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6,
                                                      "spin_orbit": 5.0}, l=1)


# --- the far tail of a user's term, V ~ V_inf - Z/r + B/r^2, read once by its probe (ProbedTerm) ------------------
# Each expected Z and B is the coefficient written in the formula itself (its -Z/r and B/r^2 parts far out).
FAR_TAILS = [
    ("-3*exp(-r) + 0.5/r**2", lambda r: -3 * np.exp(-r) + 0.5 / r**2, 0.0, 0.5),     # the last review's case
    ("-2/r + 0.3/r**2", lambda r: -2 / r + 0.3 / r**2, 2.0, 0.3),
    ("1/r - 0.1*r**2/(1 + r**4)", lambda r: 1 / r - 0.1 * r**2 / (1 + r**4), -1.0, -0.1),   # B far out only
    ("-1/r", lambda r: -1 / r, 1.0, 0.0),
    ("-1/r + 1/r**3", lambda r: -1 / r + 1 / r**3, 1.0, 0.0),         # a steeper correction is no 1/r^2 tail
    ("-50/(2*r**4 + 1)", lambda r: -50 / (2 * r**4 + 1), 0.0, 0.0),   # a polarization-like r^-4 tail
    ("-exp(-r)/r", lambda r: -np.exp(-r) / r, 0.0, 0.0),
]


@pytest.mark.parametrize("form", ["callable", "expression"])
@pytest.mark.parametrize("text, func, Z, B", FAR_TAILS, ids=[t[0] for t in FAR_TAILS])
def test_the_probe_reads_the_far_inverse_square_tail_with_the_tail_charge(form, text, func, Z, B):
    """-3 exp(-r) + 0.5/r^2 had tail_charge -5e-6 (the probe fitted -Z/r alone to 0.5/r^2) and no 1/r^2 tail;
    scattering read B again with a fit of its own, whose check took the 1/r^3 of -1/r + 1/r^3 for B = 1.1e-4."""
    from boundkit.potentials.expression import ExpressionTerm

    (term,) = make_potential(func if form == "callable" else ExpressionTerm(text)).vector
    assert term.tail_charge == pytest.approx(Z, rel=1e-9, abs=0)
    assert term.tail_inverse_square == pytest.approx(B, rel=1e-9, abs=0)
    assert term.far_constant == 0.0 and term.far == "zero"


def test_potential_sums_the_tail_inverse_square_of_its_terms():
    from boundkit.potentials.expression import ExpressionTerm

    pot = make_potential(["kratzer", ExpressionTerm("0.5/r**2 - exp(-r)")], {"A": 1.0, "B": 0.25})
    assert pot.tail_inverse_square == pytest.approx(0.75, rel=1e-12)
    assert pot.tail_charge == pytest.approx(1.0, rel=1e-12)



def test_a_huge_inverse_square_tail_is_refused_by_the_probe():
    with pytest.raises(ValueError, match=r"potential: <lambda>: its inverse-square tail r\^2 V\(r\) far out is "
                                         r"1e\+31, beyond 1e\+30 in magnitude \(hartree bohr\^2\); scale the potential"):
        make_potential(lambda r: 1e31 * r**2 / (1 + r**4))

# --- a term written in MeV and fm (NuclearUnitsTerm) declares every end of its inner term, converted ----------
MEV_PER_HARTREE = sc.physical_constants["Hartree energy in eV"][0] / 1e6   # CODATA via scipy.constants
FM_PER_BOHR = BOHR_M / sc.femto              # alpha hbar c / E_h (tests/exact.py)


def test_the_nuclear_units_wrapper_overrides_every_declared_property_of_a_term():
    """A property of Term that the wrapper does not override reads the base class's 0 (tail_inverse_square did:
    phase shifts in nuclear units of a 1/r^2 tail came back as those of no tail)."""
    declared = {name for name, obj in vars(Term).items() if isinstance(obj, property)}
    declared |= {"far", "spin_orbit", "continued"}
    assert {"tail_inverse_square", "origin_inverse_square", "tail_charge"} <= declared
    missing = sorted(declared - set(vars(NuclearUnitsTerm)))
    assert not missing, missing


@pytest.mark.parametrize("form", ["callable", "expression"])
def test_a_term_in_mev_and_fm_converts_its_ends_as_the_built_in_kratzer_does(form):
    """-A/r + B/r^2 with A in MeV fm and B in MeV fm^2, wrapped, against the built-in Kratzer term reading the
    same numbers in the nuclear system (its parameters converted by their declared units) and against
    scipy.constants directly: A [hartree bohr] = A [MeV fm] / (MeV/hartree) / (fm/bohr), B with (fm/bohr)^2."""
    from boundkit.potentials.expression import ExpressionTerm

    A, B = 1.44, 20.0
    spec = (lambda r: -A / r + B / r**2) if form == "callable" else ExpressionTerm(f"-{A}/r + {B}/r**2")
    (wrapped,) = make_potential(spec, units="nuclear").vector
    builtin = make_potential("kratzer", {"A": A, "B": B}, units="nuclear").vector[0]
    a_au, b_au = A / MEV_PER_HARTREE / FM_PER_BOHR, B / MEV_PER_HARTREE / FM_PER_BOHR**2
    for name, exact in (("origin_charge", a_au), ("tail_charge", a_au), ("origin_inverse_square", b_au),
                        ("tail_inverse_square", b_au)):
        assert getattr(builtin, name) == pytest.approx(exact, rel=1e-12), name
        assert getattr(wrapped, name) == pytest.approx(exact, rel=1e-6), name
    assert wrapped.far_constant == 0.0 and wrapped.far == "zero"


@pytest.mark.parametrize("text", ["1e308", "-1e308"])
def test_a_far_value_near_the_largest_double_reads_as_a_constant_without_overflow(text):
    """Found by the thorough fuzz run: the far-tail fit multiplied V = 1e308 by r = 1e5 (an overflow, a
    RuntimeWarning, an error in the suite). The tail is read as a constant, as before the 1/r^2 fit."""
    import warnings

    from boundkit.potentials.expression import ExpressionTerm

    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        term = ExpressionTerm(text, {})
    assert (term.tail_charge, term.tail_inverse_square, term.far_constant) == (0.0, 0.0, float(text))
