"""Potential layer: built-in terms, user callables and their sums."""
from __future__ import annotations

from typing import Callable, Mapping, Sequence

from .base import CallableTerm, Parameter, Potential, Term
from .builtin import Coulomb, Oscillator

__all__ = ["Term", "Parameter", "Potential", "CallableTerm", "TERMS", "make_potential"]

TERMS: dict[str, type[Term]] = {cls.name: cls for cls in (Coulomb, Oscillator)}
"""Registry of built-in terms by name. Add a :class:`Term` subclass here."""


def _as_list(x) -> list:
    if x is None:
        return []
    if isinstance(x, (str, Term)) or callable(x):
        return [x]
    return list(x)


def _make_term(spec, params: Mapping[str, float], used: set) -> Term:
    if isinstance(spec, Term):
        return spec
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
        return CallableTerm(spec)
    else:
        raise ValueError(f"potential: expected a name, a Term or a callable, got {spec!r}")
    names = {p.name for p in cls.parameters}
    mine = {k: v for k, v in params.items() if k in names}
    used.update(mine)
    return cls(**mine)


def make_potential(
    potential: str | Callable | Term | Sequence = "coulomb",
    params: Mapping[str, float] | None = None,
    scalar: str | Callable | Term | Sequence | None = None,
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

    Raises
    ------
    ValueError
        Unknown term name, a parameter no term uses, or a missing/bad value.
    """
    if isinstance(potential, Potential):
        return potential
    params = dict(params or {})
    used: set = set()
    vec = tuple(_make_term(s, params, used) for s in _as_list(potential))
    sca = tuple(_make_term(s, params, used) for s in _as_list(scalar))
    if not vec and not sca:
        raise ValueError("potential: give at least one potential term")
    unused = sorted(set(params) - used)
    if unused:
        raise ValueError(
            f"params: no potential term takes parameter {unused[0]!r}; "
            "check its spelling against `boundkit potentials`"
        )
    return Potential(vec, sca)
