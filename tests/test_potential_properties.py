"""Properties of a Potential read from its terms: the tail charges and whether it has a spin-orbit
factor (the checks the equations, the Coulomb seed and resonances make)."""
import pytest

import boundkit
from boundkit.potentials import make_potential


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
