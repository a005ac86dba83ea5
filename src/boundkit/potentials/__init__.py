"""Potential layer: built-in terms, user callables and their sums."""
from __future__ import annotations

from typing import Callable, Mapping, Sequence

from .base import CallableTerm, NuclearUnitsTerm, Parameter, Potential, Term
from .builtin import Coulomb, Oscillator
from .library import LIBRARY
from .optical import OPTICAL

__all__ = ["Term", "Parameter", "Potential", "CallableTerm", "TERMS", "make_potential"]

TERMS: dict[str, type[Term]] = {cls.name: cls for cls in (Coulomb, Oscillator, *LIBRARY, *OPTICAL)}
"""Registry of built-in terms by name. Add a :class:`Term` subclass here."""


def _as_list(x) -> list:
    if x is None:
        return []
    if isinstance(x, (str, Term)) or callable(x):
        return [x]
    return list(x)


def _make_term(spec, params: Mapping[str, float], used: set, units: str = "atomic") -> Term:
    if isinstance(spec, Term):
        used.update(getattr(spec, "values", {}))
        return spec.in_system(units)
    if isinstance(spec, type) and issubclass(spec, Term):
        cls = spec
    elif isinstance(spec, str):
        key = spec.strip().lower()
        if key not in TERMS:
            raise ValueError(
                f"potential: unknown potential {spec!r}; built-in ones are {', '.join(sorted(TERMS))} "
                "(or pass a Python callable V(r))"
            )
        cls = TERMS[key]
    elif callable(spec):
        if units == "nuclear":
            return NuclearUnitsTerm(CallableTerm(spec))
        return CallableTerm(spec)
    else:
        raise ValueError(f"potential: expected a name, a Term or a callable, got {spec!r}")
    units_of = {p.name: p.unit for p in cls.parameters}
    mine = {k: v for k, v in params.items() if k in units_of}
    used.update(mine)
    return cls(units, **mine)     # the term converts its parameters (and quotes them as given)


def make_potential(
    potential: str | Callable | Term | Sequence = "coulomb",
    params: Mapping[str, float] | None = None,
    scalar: str | Callable | Term | Sequence | None = None,
    units: str = "atomic",
) -> Potential:
    """Build a :class:`Potential` from names, callables or terms.

    Parameters
    ----------
    potential : str, callable, Term or sequence of them
        Vector terms (they add).
    params : mapping
        Parameter values shared by all terms (a term takes the ones it knows).
    scalar : same as ``potential``, optional
        Lorentz-scalar terms (Dirac and Klein-Gordon only).
    units : {'atomic', 'nuclear'}
        System the parameters (and callables) are written in: hartree and
        bohr, or MeV and fm. Each parameter is converted by its declared unit.

    Raises
    ------
    ValueError
        Unknown term name, a parameter no term uses, or a missing/bad value.
    """
    if isinstance(potential, Potential):
        return potential
    params = dict(params or {})
    used: set = set()
    from .._checks import check_choice

    check_choice("units", units, ("atomic", "nuclear"))
    vec = tuple(_make_term(s, params, used, units) for s in _as_list(potential))
    sca = tuple(_make_term(s, params, used, units) for s in _as_list(scalar))
    if not vec and not sca:
        raise ValueError("potential: give at least one potential term")
    unused = sorted(set(params) - used)
    if unused:
        raise ValueError(
            f"params: no potential term takes parameter {unused[0]!r}; "
            "check its spelling against `boundkit potentials`"
        )
    return Potential(vec, sca)
