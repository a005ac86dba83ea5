"""boundkit: bound states of central potentials.

Schrodinger, Klein-Gordon and Dirac radial equations, solved with a spectral
or a finite-difference discretization on a logarithmic radial mesh, each level
refined to double precision and reported as a binding energy with an error
estimate.

Importing the package is cheap: the public names below (and every submodule,
e.g. ``boundkit.accuracy``, ``boundkit.validate``, ``boundkit.runspec``) are
loaded on first use through a module-level ``__getattr__`` (PEP 562), so
``import boundkit`` does not pay for scipy.optimize, findiff/sympy, mpmath,
matplotlib or dask until a solve, a figure or a parallel scan needs them.
"""
from __future__ import annotations

import importlib
import importlib.util
import sys
import types
from typing import TYPE_CHECKING, Any

# public name -> submodule that defines it
_EXPORTS: dict[str, str] = {
    "solve": "solver", "solve_channel": "solver", "make_equation": "solver",
    "make_potential": "potentials", "Potential": "potentials",
    "Level": "results", "RadialState": "results", "SolveResult": "results",
    "scan": "studies", "critical": "studies", "compare": "studies",
    "matrix_element": "observables", "observables": "observables",
    "transitions": "transitions",
    "compare_shift": "perturbation", "first_order_shift": "perturbation",
    "phase_shifts": "scattering", "scattering_length": "scattering", "levinson": "scattering",
    "continuum_state": "scattering",
    "resonances": "resonances", "Resonance": "resonances", "ResonanceResult": "resonances",
}

__all__ = ["solve", "solve_channel", "make_equation", "make_potential", "Potential", "Level",
           "RadialState", "SolveResult", "scan", "critical", "compare", "matrix_element", "observables",
           "transitions", "compare_shift", "first_order_shift", "phase_shifts", "scattering_length",
           "levinson", "continuum_state", "resonances", "Resonance", "ResonanceResult", "__version__"]

if TYPE_CHECKING:  # static tools see the eager imports
    from . import exact
    from .observables import matrix_element, observables
    from .perturbation import compare_shift, first_order_shift
    from .potentials import Potential, make_potential
    from .resonances import Resonance, ResonanceResult, resonances
    from .results import Level, RadialState, SolveResult
    from .scattering import continuum_state, levinson, phase_shifts, scattering_length
    from .solver import make_equation, solve, solve_channel
    from .studies import compare, critical, scan
    from .transitions import transitions

# Public functions that share their name with the submodule defining them: the
# package attribute is the function (as it always was), even after something
# imports the submodule itself (the import system then sets the attribute).
_SHADOWED = frozenset(name for name, mod in _EXPORTS.items() if name == mod)


class _Package(types.ModuleType):
    def __setattr__(self, name: str, value: Any) -> None:
        if name in _SHADOWED and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version
    try:
        return version("boundkit")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        return "0+unknown"


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        value = getattr(importlib.import_module(f"{__name__}.{_EXPORTS[name]}"), name)
    elif name == "__version__":
        value = _version()
    elif not name.startswith("_") and importlib.util.find_spec(f"{__name__}.{name}") is not None:
        value = importlib.import_module(f"{__name__}.{name}")
    else:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    object.__setattr__(sys.modules[__name__], name, value)  # cached: __getattr__ runs once per name
    return value


def __dir__() -> list[str]:
    import pkgutil
    submodules = {m.name for m in pkgutil.iter_modules(__path__) if not m.name.startswith("_")}
    return sorted(set(__all__) | submodules)
