"""Potential terms: the contract every term follows, and sums of terms.

A *term* is one physical contribution to the radial potential, with named
parameters. Terms add: a :class:`Potential` holds the vector terms (which shift
the energy, like the Coulomb field of a nucleus) and the Lorentz-scalar terms
(which act as a position-dependent mass in the Dirac and Klein-Gordon
equations). All values are in atomic units: r in bohr, V in hartree.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, ClassVar, Mapping

import numpy as np

from .._checks import check_finite

__all__ = ["Parameter", "Term", "Potential", "CallableTerm"]


@dataclass(frozen=True, slots=True)
class Parameter:
    """A named parameter of a term: default (None if required), unit, meaning."""

    name: str
    default: float | None
    unit: str
    doc: str


class Term:
    """Base class of a potential term.

    A subclass must provide, as class attributes and methods:

    1. ``name``: the registry name (lower case, words joined by ``-``).
    2. ``parameters``: a tuple of :class:`Parameter`; required ones have
       ``default=None``.
    3. ``formula`` and ``source``: one line each, for listings and reports.
    4. ``_evaluate(r)``: the potential in hartree at radii ``r`` (bohr, an
       array), vectorised, using the checked values in ``self.values``.
    5. ``origin_charge``: Z0 such that V ~ -Z0/r as r -> 0 (0 when V is finite
       at the origin). The solver uses it for the r^gamma behaviour there.
    6. ``far``: ``"zero"`` when V -> 0 at infinity, ``"confining"`` when
       V -> +infinity; and ``tail_charge``, Z_inf with V ~ -Z_inf/r far out
       (0 for a short-range term).

    Parameter values are checked in ``__init__``: unknown names, missing
    required values and non-finite numbers raise :class:`ValueError`.
    """

    name: ClassVar[str] = "term"
    parameters: ClassVar[tuple[Parameter, ...]] = ()
    formula: ClassVar[str] = ""
    source: ClassVar[str] = ""
    far: ClassVar[str] = "zero"

    def __init__(self, **params: float) -> None:
        known = {p.name for p in self.parameters}
        unknown = sorted(set(params) - known)
        if unknown:
            raise ValueError(
                f"params: term {self.name!r} has no parameter {unknown[0]!r}; "
                f"its parameters are {', '.join(sorted(known)) or 'none'}"
            )
        values = {}
        for p in self.parameters:
            if p.name in params:
                values[p.name] = check_finite(f"params[{p.name!r}]", params[p.name])
            elif p.default is not None:
                values[p.name] = float(p.default)
            else:
                raise ValueError(
                    f"params: term {self.name!r} needs parameter {p.name!r} ({p.doc}, {p.unit}); "
                    f"give it, e.g. --param {p.name}=1"
                )
        self.values: dict[str, float] = values
        self._validate()

    def _validate(self) -> None:
        """Hook for range checks of parameter values (raise ValueError)."""

    def __call__(self, r) -> np.ndarray:
        return self._evaluate(np.asarray(r))

    def _evaluate(self, r: np.ndarray) -> np.ndarray:  # pragma: no cover - contract
        raise NotImplementedError

    @property
    def origin_charge(self) -> float:
        return 0.0

    @property
    def tail_charge(self) -> float:
        return 0.0

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """Radii (bohr) where V or a low derivative jumps, or where V changes
        over a short length; the spectral mesh puts an element boundary there.
        Empty for smooth, featureless terms."""
        return ()

    @property
    def origin_inverse_square(self) -> float:
        """Coefficient B0 of an inverse-square part of the term at the origin.

        V ~ B0 / r^2 as r -> 0 (B0 in hartree bohr^2). Such a part adds 2 m B0
        to l(l+1) in the radial Schrodinger equation and so changes the
        exponent gamma of u ~ r^gamma at the origin. 0.0 for terms without one.
        """
        return 0.0

    def __repr__(self) -> str:
        args = ", ".join(f"{k}={v:g}" for k, v in self.values.items())
        return f"{type(self).__name__}({args})"


class CallableTerm(Term):
    """A term from a user's Python callable ``V(r)`` (r in bohr, V in hartree).

    Its behaviour at the ends is probed numerically: Z0 from ``-r V(r)`` at
    very small r (accepted as Coulomb-like when it is steady over two decades),
    and the far side from V at large r.
    """

    name = "callable"
    formula = "user function V(r)"
    source = "user"

    def __init__(self, func: Callable, label: str | None = None) -> None:
        if not callable(func):
            raise ValueError("potential: expected a built-in name or a callable V(r)")
        self.func = func
        self.label = label or getattr(func, "__name__", "callable")
        self.values = {}
        r_small = np.array([1e-12, 1e-11, 1e-10])
        v = self._evaluate(r_small)
        rv = -r_small * v
        if np.all(np.isfinite(rv)) and abs(rv[0] - rv[2]) <= 1e-6 * max(1.0, abs(rv[0])) and abs(rv[0]) > 1e-8:
            self._z0 = float(rv[0])
        else:
            self._z0 = 0.0
        r_big = np.array([1e3, 1e4, 1e5])
        vb = self._evaluate(r_big)
        if vb[2] > 1e3 and vb[2] > vb[1] > vb[0]:
            self._far = "confining"
            self._zinf = 0.0
        else:
            self._far = "zero"
            self._zinf = float(-r_big[2] * vb[2]) if abs(r_big[2] * vb[2]) > 1e-6 else 0.0

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        out = np.asarray(self.func(r), dtype=float)
        if out.shape != np.shape(r):
            out = np.broadcast_to(out, np.shape(r)).astype(float)
        return out

    @property
    def origin_charge(self) -> float:
        return self._z0

    @property
    def tail_charge(self) -> float:
        return self._zinf

    @property
    def far(self) -> str:  # type: ignore[override]
        return self._far

    def __repr__(self) -> str:
        return f"CallableTerm({self.label})"


@dataclass(frozen=True)
class Potential:
    """A sum of vector terms and Lorentz-scalar terms.

    Notes
    -----
    The total vector potential is V(r) = sum of the vector terms; the scalar
    potential S(r) = sum of the scalar terms. In the Dirac equation S adds to
    the rest energy (m c^2 -> m c^2 + S); the Schrodinger equation sees V + S.
    """

    vector: tuple[Term, ...] = ()
    scalar: tuple[Term, ...] = ()
    description: str = field(default="")

    def V(self, r) -> np.ndarray:
        r = np.asarray(r)
        return sum((t(r) for t in self.vector), np.zeros_like(r, dtype=float))

    def S(self, r) -> np.ndarray:
        r = np.asarray(r)
        return sum((t(r) for t in self.scalar), np.zeros_like(r, dtype=float))

    @property
    def z_vector(self) -> float:
        return float(sum(t.origin_charge for t in self.vector))

    @property
    def z_scalar(self) -> float:
        return float(sum(t.origin_charge for t in self.scalar))

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """Sorted radii where some term is not smooth."""
        return tuple(sorted({float(b) for t in self.vector + self.scalar for b in t.breakpoints}))

    @property
    def confining(self) -> bool:
        return any(t.far == "confining" for t in self.vector + self.scalar)

    @property
    def tail_charge(self) -> float:
        return float(sum(t.tail_charge for t in self.vector + self.scalar))

    @property
    def origin_inverse_square(self) -> float:
        """Sum of the terms' 1/r^2 coefficients at the origin (vector and scalar terms)."""
        return float(sum(t.origin_inverse_square for t in self.vector + self.scalar))

    @property
    def name(self) -> str:
        """Short description: term names joined by ' + ', scalar terms marked."""
        parts = [getattr(t, "label", t.name) for t in self.vector]
        parts += [f"scalar {getattr(t, 'label', t.name)}" for t in self.scalar]
        return " + ".join(parts)

    def __repr__(self) -> str:
        parts = [repr(t) for t in self.vector] + [f"scalar {t!r}" for t in self.scalar]
        return "Potential(" + " + ".join(parts) + ")"


class NuclearUnitsTerm(Term):
    """Wrap a term written in MeV and fm so that it reads bohr and returns hartree.

    Notes
    -----
    V_au(r) = V_nuc(r / FM_IN_BOHR) * MEV_IN_HARTREE; a charge-like coefficient
    (V ~ -Z/r) in MeV fm becomes Z * MEV_IN_HARTREE * FM_IN_BOHR in hartree bohr.
    """

    def __init__(self, inner: Term) -> None:
        from ..units import FM_IN_BOHR, MEV_IN_HARTREE

        self.inner = inner
        self.values = dict(inner.values)
        self.name = inner.name
        self.label = getattr(inner, "label", inner.name)
        self._r, self._v = FM_IN_BOHR, MEV_IN_HARTREE

    def _evaluate(self, r):
        return self.inner(np.asarray(r) / self._r) * self._v

    @property
    def origin_charge(self) -> float:
        return self.inner.origin_charge * self._v * self._r

    @property
    def tail_charge(self) -> float:
        return self.inner.tail_charge * self._v * self._r

    @property
    def origin_inverse_square(self) -> float:
        return self.inner.origin_inverse_square * self._v * self._r**2

    @property
    def breakpoints(self) -> tuple[float, ...]:
        return tuple(b * self._r for b in self.inner.breakpoints)

    @property
    def far(self) -> str:  # type: ignore[override]
        return self.inner.far

    def __repr__(self) -> str:
        return f"{self.inner!r} [MeV, fm]"
