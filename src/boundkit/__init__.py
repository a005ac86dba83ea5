"""boundkit: bound states of central potentials.

Schrodinger, Klein-Gordon and Dirac radial equations, solved with a spectral
or a finite-difference discretization on a logarithmic radial mesh, each level
refined to double precision and reported as a binding energy with an error
estimate.
"""
from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from .potentials import Potential, make_potential
from .results import Level, RadialState, SolveResult
from . import exact
from .solver import make_equation, solve, solve_channel
from .studies import scan, critical, compare
from .observables import matrix_element, observables
from .transitions import transitions
from .perturbation import compare_shift, first_order_shift
from .scattering import continuum_state, levinson, phase_shifts, scattering_length
from .resonances import Resonance, ResonanceResult, resonances

try:
    __version__ = version("boundkit")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0+unknown"

__all__ = ["solve", "solve_channel", "make_equation", "make_potential", "Potential", "Level",
           "RadialState", "SolveResult", "scan", "critical", "compare", "matrix_element", "observables",
           "transitions", "compare_shift", "first_order_shift", "phase_shifts", "scattering_length",
           "levinson", "continuum_state", "resonances", "Resonance", "ResonanceResult", "__version__"]
