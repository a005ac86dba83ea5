"""Built-in potential terms with exact behaviour declared at both ends."""
from __future__ import annotations

import numpy as np

from .base import Parameter, Term

__all__ = ["Coulomb", "Oscillator"]


class Coulomb(Term):
    """Point Coulomb attraction of a charge Z.

    Notes
    -----
    V(r) = -Z / r (hartree, r in bohr). Z0 = Z at the origin, Z_inf = Z far out.
    """

    name = "coulomb"
    parameters = (Parameter("Z", None, "e", "nuclear charge number"),)
    formula = "V(r) = -Z/r"
    source = "Coulomb's law"

    def _evaluate(self, r):
        return -self.values["Z"] / r

    def continued(self, z):
        return -self.values["Z"] / np.asarray(z, dtype=complex)

    @property
    def origin_charge(self) -> float:
        return self.values["Z"]

    @property
    def tail_charge(self) -> float:
        return self.values["Z"]


class Oscillator(Term):
    """Isotropic harmonic well.

    Notes
    -----
    V(r) = k r^2 / 2 with k in hartree/bohr^2; for a particle of mass m the
    oscillator frequency is omega = sqrt(k/m) and the Schrodinger levels are
    E = omega (2 n_r + l + 3/2).
    """

    name = "oscillator"
    parameters = (Parameter("k", None, "hartree/bohr^2", "spring constant"),)
    formula = "V(r) = k r^2 / 2"
    source = "standard"
    far = "confining"

    def _validate(self) -> None:
        if self.values["k"] <= 0:
            raise ValueError(f"params['k']: the oscillator needs k > 0, got {self.quote('k')}")

    def _evaluate(self, r):
        return 0.5 * self.values["k"] * r**2
