"""Equation layer: Schrodinger, Klein-Gordon and Dirac radial operators."""
from __future__ import annotations

from .base import FactorizedOperator, RadialEquation, Sample
from .dirac import Dirac, kappa_to_lj
from .klein_gordon import KleinGordon
from .schrodinger import Schrodinger

__all__ = ["RadialEquation", "FactorizedOperator", "Sample", "Schrodinger", "KleinGordon", "Dirac",
           "EQUATIONS", "kappa_to_lj"]

EQUATIONS: dict[str, type[RadialEquation]] = {
    "schrodinger": Schrodinger,
    "klein-gordon": KleinGordon,
    "dirac": Dirac,
}
