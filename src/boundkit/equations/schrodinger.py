"""Radial Schrodinger equation for one orbital l."""
from __future__ import annotations

import math

from .._checks import check_int, check_positive
from .base import RadialEquation, Sample, letter

__all__ = ["Schrodinger"]


class Schrodinger(RadialEquation):
    """Non-relativistic radial equation for orbital ``l`` and (reduced) mass ``mass``.

    Notes
    -----
    -u''/(2 mu) + [l(l+1)/(2 mu r^2) + V + S] u = E u, u(0) = u(inf) = 0.
    In the factorized form: p = 1/(2 mu), q = V + S, kappa_eff = -(l+1)
    (so that kappa(kappa+1) = l(l+1)); u ~ r^(l+1) at the origin, or
    u ~ r^(l'+1) with l'(l'+1) = l(l+1) + 2 mu B0 when V ~ B0/r^2 there. The
    pencil is linear in E.
    """

    name = "schrodinger"
    spin = 0.0

    def __init__(self, l: int = 0, mass: float = 1.0) -> None:
        self.l = check_int("l", l, minimum=0)
        self.mass = check_positive("mass", mass)
        self.kappa = None
        self.j = None
        self.kappa_eff = -(self.l + 1)

    def p(self, E, s: Sample):
        return 0 * s.r + 1 / (2 * s.r.dtype.type(self.mass))

    def q(self, E, s: Sample):
        return s.V + s.S

    def gamma(self, potential) -> float:
        """l' + 1 with l'(l'+1) = l(l+1) + 2 mu B0, B0 the 1/r^2 coefficient of V at 0."""
        b0 = getattr(potential, "origin_inverse_square", 0.0)
        if b0 == 0.0:
            return float(self.l + 1)
        disc = (self.l + 0.5) ** 2 + 2 * self.mass * b0
        if disc <= 0:
            raise ValueError(
                f"params: the 1/r^2 term B = {b0:g} is too attractive for l = {self.l}: "
                f"l(l+1) + 2 m B < -1/4 makes the particle fall to the centre; use B > "
                f"{-(self.l + 0.5) ** 2 / (2 * self.mass):.6g}"
            )
        return 0.5 + math.sqrt(disc)

    def label(self, n: int) -> str:
        return f"{n}{letter(self.l)}"
