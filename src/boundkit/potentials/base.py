"""Potential terms: the contract every term follows, and sums of terms.

A *term* is one physical contribution to the radial potential, with named
parameters. Terms add: a :class:`Potential` holds the vector terms (which shift
the energy, like the Coulomb field of a nucleus) and the Lorentz-scalar terms
(which act as a position-dependent mass in the Dirac and Klein-Gordon
equations). All values are in atomic units: r in bohr, V in hartree.
"""
from __future__ import annotations

import contextlib
import contextvars
import functools
import logging
import math

from dataclasses import dataclass, field
from typing import Callable, ClassVar

import numpy as np

from .._checks import MAX_MAGNITUDE, OptionError, check_parameter, shorten

log = logging.getLogger(__name__)

__all__ = ["Parameter", "Term", "Potential", "ProbedTerm", "CallableTerm", "NuclearUnitsTerm", "refuse_complex",
           "complex_values", "table_terms", "TABLE_ERROR_NOTE", "TABLE_FIX"]

_COMPLEX_OK: contextvars.ContextVar[bool] = contextvars.ContextVar("boundkit_complex_ok", default=False)
_REAL_FOR: contextvars.ContextVar[tuple[str, str] | None] = contextvars.ContextVar("boundkit_real_for", default=None)


@contextlib.contextmanager
def complex_values():
    """Inside this context, user callables and expressions may return complex values.

    :func:`boundkit.resonances` evaluates its potential inside it (its dense
    complex eigen solve takes V_R + i W); everywhere else such values are
    refused by :func:`refuse_complex`, never silently made real.
    """
    token = _COMPLEX_OK.set(True)
    try:
        yield
    finally:
        _COMPLEX_OK.reset(token)


@contextlib.contextmanager
def real_values_for(api: str, command_line: str):
    """Inside this context a refusal of complex values by :func:`refuse_complex` names the tool that refused
    them and its fix: ``api`` in the API's words, ``command_line`` in a command's (the two wordings of an
    :class:`boundkit._checks.OptionError`), e.g. ``phase shifts take real potentials only; ...``. Outside,
    the refusal names the bound-state solver."""
    token = _REAL_FOR.set((api, command_line))
    try:
        yield
    finally:
        _REAL_FOR.reset(token)


def refuse_complex(values, label: str, r=None) -> np.ndarray:
    """``values`` as a float array; ValueError when they carry an imaginary part.

    Complex potentials (optical potentials, resonances) are not supported by
    the real bound-state solver, and casting to float would silently drop
    the imaginary part. A complex array whose imaginary part is exactly zero
    is accepted as real. Inside :func:`complex_values` complex values are
    returned as they are.
    """
    arr = np.asarray(values)
    if np.iscomplexobj(arr):
        imag = np.abs(np.imag(arr))
        if np.any(imag != 0) and _COMPLEX_OK.get():
            return arr.astype(complex)
        if np.any(imag != 0):
            i = int(np.argmax(imag))
            at = "" if r is None or np.ndim(r) == 0 else f" at r = {np.ravel(r)[i]:.3g} bohr"
            head = f"potential: {label} returned complex values (imaginary part {np.ravel(imag)[i]:.3g}{at}); "
            if (words := _REAL_FOR.get()) is not None:
                raise OptionError(head + words[0], head + words[1])
            raise ValueError(head + "the bound-state solver takes real potentials only; use boundkit.resonances "
                                    "(boundkit resonances) for complex ones, or return real values")
        arr = np.real(arr)
    try:
        return np.asarray(arr, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"potential: {label} returned values that are not numbers; return an array of "
                         "floats") from None


def _is_number(v) -> bool:
    if isinstance(v, (bool, str, bytes)):   # left for the term's check, which refuses them
        return False
    try:
        float(v)
    except (TypeError, ValueError):
        return False
    return True


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

    Unit systems: a term built without ``units`` has its numbers read in the
    caller's system: as they are in atomic units, as MeV and fm in the nuclear
    system (through :meth:`in_system`). A term whose numbers carry stated units
    (built with ``units='nuclear'`` or ``units='atomic'``, a table with a units
    line, a model file with ``units = ...``, a term already wrapped) sets
    ``fixed_units = True`` and is never converted again.
    """

    name: ClassVar[str] = "term"
    fixed_units: bool = False
    parameters: ClassVar[tuple[Parameter, ...]] = ()
    formula: ClassVar[str] = ""
    source: ClassVar[str] = ""
    far: ClassVar[str] = "zero"

    def __init__(self, units: str | None = None, **params: float) -> None:
        from ..units import to_atomic, unit_label

        known = {p.name for p in self.parameters}
        unknown = sorted(set(params) - known)
        if unknown:
            raise ValueError(
                f"params: term {self.name!r} has no parameter {unknown[0]!r}; "
                f"its parameters are {', '.join(sorted(known)) or 'none'}"
            )
        values, self.given = {}, {}
        for p in self.parameters:
            if p.name in params:
                value = params[p.name]
                if units not in (None, "atomic") and _is_number(value):
                    shown = "" if p.unit in ("", "1", "e") else " " + unit_label(p.unit, units)
                    self.given[p.name] = f"{float(value):g}{shown}"
                    value = to_atomic(float(value), p.unit, units)
                values[p.name] = check_parameter(f"params[{p.name!r}]", value)
            elif p.default is not None:
                values[p.name] = float(p.default)
            else:
                lead = f"params: term {self.name!r} needs parameter {p.name!r} ({p.doc}, {p.unit}); give it, e.g. "
                raise OptionError(f"{lead}params={{{p.name!r}: 1}} (--param {p.name}=1 on the command line)",
                                  f"{lead}--param {p.name}=1")
        self.values: dict[str, float] = values
        if units is not None:
            # stated units: its values are in atomic units now (converted if they were nuclear), and in_system
            # must not read them again in a caller's system (an explicit 'atomic' was re-read as MeV and fm)
            self.fixed_units = True
        self._validate()

    def _validate(self) -> None:
        """Hook for range checks of parameter values (raise ValueError; quote values with :meth:`quote`)."""

    def quote(self, name: str) -> str:
        """Parameter ``name`` for a message: as the user gave it, with its unit when it was read in
        another unit system than atomic units (the radius -5 fm, not the -9.45e-05 bohr it became)."""
        return self.given.get(name) or f"{self.values[name]:g}"

    def in_system(self, system: str) -> "Term":
        """This term read in the unit system ``system`` (``atomic`` or ``nuclear``).

        In the nuclear system a term written in MeV and fm is wrapped so that it
        reads bohr and returns hartree (:class:`NuclearUnitsTerm`); a term with
        ``fixed_units`` comes back unchanged: its units are stated already, and
        converting it again would convert twice.
        """
        if system == "atomic" or self.fixed_units:
            return self
        return NuclearUnitsTerm(self)

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
    def far_constant(self) -> float:
        """Constant V_inf the term tends to far out (hartree; 0 for the built-in terms)."""
        return 0.0

    def spin_orbit(self, r):
        """Radial factor U(r) of a spin-orbit term V_ls = U(r) <l.s> (hartree), or None."""
        return None

    def continued(self, z: np.ndarray) -> np.ndarray | None:
        """The term at complex radii ``z`` (bohr), continued analytically off the real axis, or None
        when the term does not know its continuation (the default; the library's terms are written for
        real r). Complex scaling with ``analytic=True`` uses it on the rotated segment."""
        return None

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """Radii (bohr) where V or a low derivative jumps, or where V changes
        over a short length; the spectral mesh puts an element boundary there.
        Empty for smooth, featureless terms."""
        return ()

    @property
    def tail_inverse_square(self) -> float:
        """Coefficient B of an inverse-square part of the term far out: V ~ -Z_t/r + B/r^2 (hartree
        bohr^2), which the continuum matches to Coulomb functions of non-integer order. 0.0 for
        terms without one."""
        return 0.0

    @property
    def slow_tail(self) -> float:
        """The power s of an attractive tail V - V_inf ~ -A r^-s (A > 0) that falls off slower than 1/r^2
        and is not a Coulomb one (0 < s < 2, s != 1): such a tail binds infinitely many levels. 0.0 for
        terms without one (every built-in term)."""
        return 0.0

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


def _inverse_square_tail(r: np.ndarray, v: np.ndarray) -> tuple[float, float]:
    """(Z, B) of a tail V = -Z/r + B/r^2 at the radii ``r`` (1e3, 1e4, 1e5 bohr), else (0, 0).

    r V = -Z + B/r is fitted at the last two radii and kept when |B| > 1e-9 max(1, |Z|) (the rounding of a
    pure Coulomb tail gives B ~ 1e-12 |Z|) and the fit holds at the first radius to 1e-6 of its B/r part
    (plus rounding): a check against r V as a whole took the 1e-6 r^-2 of -1/r + 1/r^3 at r = 1e3 for a
    B of 1.1e-4.
    """
    with np.errstate(all="ignore"):
        x = r * v                                         # -Z + B / r
        b = float((x[1] - x[2]) / (1 / r[1] - 1 / r[2]))
    if not (np.all(np.isfinite(x)) and np.isfinite(b)):     # a far value near the largest double: no tail
        return 0.0, 0.0
    z = float(b / r[2] - x[2])
    if abs(b) <= 1e-9 * max(1.0, abs(z)):
        return 0.0, 0.0
    misfit = abs(b / r[0] - z - x[0])
    if misfit > 1e-6 * abs(b) / r[0] + 64 * np.finfo(float).eps * (abs(z) + abs(x[0])):
        return 0.0, 0.0
    return z, b


_ORIGIN_RADII = (1e-12, 1e-11, 1e-10)   # bohr: where the origin is probed (ProbedTerm, Potential.origin_fall)
_STEEP_PER_DECADE = 10**0.02            # growth of r |V|'s rise per decade towards the origin taken as |V| ~ r^-s, s > 1


def _origin_probe(values, test) -> tuple[np.ndarray, np.ndarray] | None:
    """``test(r, values(r))`` at the origin's radii _ORIGIN_RADII (non-finite values and complex parts quiet)."""
    r = np.array(_ORIGIN_RADII)
    with np.errstate(all="ignore"), complex_values():
        y = values(r)
    return test(r, y)


def _steep_core(r: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """(r, y) when y = r |V| at the three ascending radii ``r`` grows towards the origin, beyond rounding, by an
    amount per decade that itself grows by _STEEP_PER_DECADE or more from one decade to the next (|V| ~ A r^-s
    with s >= 1.02 gives 10^(s - 1)), else None. A Coulomb core (r |V| steady), a finite one, and the
    logarithmic growth of a point charge's Uehling correction (the same amount each decade, (2 alpha / 3 pi) Z
    ln 10) pass."""
    if not (np.all(np.isfinite(y)) and y[0] > y[1] > y[2] > 0 and y[0] - y[1] > 1e-6 * y[0]):
        return None
    return (r, y) if (y[0] - y[1]) >= _STEEP_PER_DECADE * (y[1] - y[2]) else None


def _falling_core(r: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """(r, y) when y = r^p V (p = 2 for V, 1 for a relativistic scalar S) at the three ascending radii ``r``
    is negative and grows in magnitude towards the origin beyond a steady core, else None.

    V ~ -B r^-s with s > 2 (or a 1/r^2 core whose coefficient grows, log(r)/r^2) is unbounded below:
    the particle falls to the centre (Landau & Lifshitz, Quantum Mechanics, sec. 35). A steady core
    B0/r^2 - Z0/r has r^2 V = B0 - Z0 r: the line through the outer two radii predicts the inner value
    (with a strong repulsive Z0, 1000/r - 0.01/r^2, r^2 V grows towards the origin too), so a fall is a growth
    beyond that line by more than the 1e-6 that :class:`ProbedTerm` allows a steady core. A finite or
    Coulomb-like origin has r^2 V -> 0, and rounding noise of a sum of such terms shrinks with r too.
    With p = 1 the same test finds a Lorentz scalar S steeper than -1/r (r S = -Zs + S0 r is the steady core
    there): see :meth:`Potential.scalar_origin_fall`.
    """
    if not np.all(np.isfinite(y)) or not np.all(y < 0) or not np.all(y[:-1] < y[1:]):
        return None
    line = y[1] - (y[2] - y[1]) / (r[2] - r[1]) * (r[1] - r[0])
    return (r, y) if y[0] < line - 1e-6 * abs(y[0]) else None


class ProbedTerm(Term):
    """A term whose ends are found by probing it numerically (callables, expressions).

    Notes
    -----
    Z0 = -r V(r) at r = 1e-12..1e-10 bohr when that is steady (to 1e-6) and not
    negligible, else 0; when instead r^2 V(r) is steady there, the term has an
    inverse-square core B0 / r^2 (``origin_inverse_square``, which sets the
    exponent of u at the origin in the Schrodinger equation and is refused by
    the relativistic ones) and Z0 is the slope of r^2 V at 1e-8..1e-6 bohr; far out, V growing beyond 1e3 hartree over
    r = 1e3..1e5 bohr means a confining term, otherwise the tail is read: first as
    V ~ -Z_inf / r + B / r^2 fitted at r = 1e4 and 1e5 bohr and checked at 1e3 bohr
    (:func:`_inverse_square_tail`; B is ``tail_inverse_square``, which the
    continuum matches to Coulomb functions of order L), else as
    V ~ V_inf - Z_inf / r fitted at r = 1e4 and 1e5 bohr: Z_inf is the
    tail charge (0 when below 1e-6), V_inf the far constant (0 when below
    1e-9 hartree; the solver puts the threshold there). A far constant together
    with a 1/r^2 tail is not read as such (Z_inf then carries about -1e-4 B).
    When a probe value is not
    finite (a pole there), the probe is repeated once at radii 4.7 % larger;
    values still not finite count as "no Coulomb behaviour" (origin); far out,
    values that overflow to +inf mean a confining term (an exponential wall),
    other non-finite values V -> 0 (with a warning).
    """

    label: str = "term"

    @functools.cached_property
    def breakpoints(self) -> tuple[float, ...]:
        """Radii where the term jumps or has a kink, found once, on first use (:meth:`_find_breakpoints`)."""
        return self._find_breakpoints()

    def _find_breakpoints(self) -> tuple[float, ...]:
        return ()

    def _finite_probe(self, radii: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """V at ``radii``; if any value is not finite, once more at radii shifted by 4.7 %."""
        for r in (radii, radii * 1.047):
            with np.errstate(all="ignore"), complex_values():
                v = np.real(self._evaluate(r))      # the ends of a complex term are those of its real part
            if np.all(np.isfinite(v)):
                break
        return r, v

    def _probe(self) -> None:
        r_small, v = self._finite_probe(np.array(_ORIGIN_RADII))
        rv = -r_small * v
        r2v = r_small * r_small * v
        self._b0 = 0.0
        if np.all(np.isfinite(rv)) and abs(rv[0] - rv[2]) <= 1e-6 * max(1.0, abs(rv[0])) and abs(rv[0]) > 1e-8:
            self._z0 = float(rv[0])
        elif np.all(np.isfinite(r2v)) and abs(r2v[0] - r2v[2]) <= 1e-6 * max(1.0, abs(r2v[0])) \
                and abs(r2v[0]) > 1e-8:
            # an inverse-square core B0 / r^2 (Kratzer-like): it sets the exponent of u at the origin
            self._b0 = float(r2v[0])
            self._z0 = self._charge_under_inverse_square()
        else:
            self._z0 = 0.0
            if not np.all(np.isfinite(rv)):
                log.info("%s: not finite near r = 0; treated as not Coulomb-like there", self.label)
        r_big, vb = self._finite_probe(np.array([1e3, 1e4, 1e5]))
        self._vinf, self._b_tail, self._slow = 0.0, 0.0, 0.0
        if not np.all(np.isfinite(vb)):
            if np.all(np.isfinite(vb) | np.isposinf(vb)):
                self._far, self._zinf = "confining", 0.0
            else:
                # moot if the solve then refuses the potential nearer in (its one error line names the radius)
                log.warning("%s: not finite at r = 1e3..1e5 bohr; far behaviour taken as V -> 0", self.label,
                            extra={"moot_if_refused": True})
                self._far, self._zinf = "zero", 0.0
        elif vb[2] > 1e3 and vb[2] > vb[1] > vb[0]:
            self._far, self._zinf = "confining", 0.0
        else:
            self._far = "zero"
            z, self._b_tail = _inverse_square_tail(r_big, vb)
            if not self._b_tail:
                r1, r2 = r_big[1], r_big[2]
                z = float(-(vb[1] - vb[2]) * r1 * r2 / (r2 - r1))      # a Coulomb tail and a constant
                v_inf = float(vb[2] + z / r2)
                power = self._power_tail(r_big, vb, z, v_inf)
                if power is not None:
                    z, (v_inf, self._slow) = 0.0, power
                if abs(v_inf) > 1e-9:
                    self._vinf = v_inf
                elif power is None:
                    z = float(-r_big[2] * vb[2])          # no constant: -r V(r) at 1e5 bohr
            self._zinf = z if abs(z) > 1e-6 else 0.0
        for what, z, unit in (("origin charge -r V(r) near r = 0", self._z0, "hartree bohr"),
                              ("tail charge -r V(r) far out", self._zinf, "hartree bohr"),
                              ("inverse-square tail r^2 V(r) far out", self._b_tail, "hartree bohr^2")):
            if abs(z) > MAX_MAGNITUDE:
                raise ValueError(f"potential: {shorten(self.label)}: its {what} is {z:.3g}, beyond {MAX_MAGNITUDE:g} "
                                 f"in magnitude ({unit}); scale the potential down")

    def _power_tail(self, r: np.ndarray, v: np.ndarray, z: float, v_coulomb: float) -> tuple[float, float] | None:
        """(V_inf, s) when V at the radii ``r`` (1e3, 1e4, 1e5 bohr) and at 1e6 bohr falls off towards a
        constant V_inf as C r^-s other than a Coulomb tail, with s reported when the tail is attractive
        (C < 0) and 0 < s < 2 (else 0); None when it is a Coulomb tail, or no single power (the caller then
        keeps its reading of a Coulomb tail, charge ``z``, and a constant ``v_coulomb``).

        That reading, fitted on the outer two radii, is kept when it predicts V at 1e3 bohr to 1e-3 of
        V - V_inf there. Otherwise the falls of V from one decade to the next, d_k, give
        10^s as d_k / d_(k+1): a single power when the two ratios agree to 0.01 in s, and then V_inf =
        V(1e6) - d_3 / (10^s - 1) from the outer three (0 when within 1e-3 of d_3 of it).
        -1/(r + 1)**1.5 was read as a tail charge 0.011 and a constant 7.6e-8 hartree (the two outer radii
        of a Coulomb fit). A tail of several powers (-1/r - 1/r**1.5) is read as one, the slowest nearly."""
        if abs(v_coulomb - z / r[0] - v[0]) <= 1e-3 * abs(v[0] - v_coulomb):
            return None                             # a Coulomb tail (and a constant)
        r_far, v_far = self._finite_probe(np.array([1e6]))
        if r_far[0] != 1e6 or not np.isfinite(v_far[0]):
            return None
        d = -np.diff(np.append(v, v_far))          # V(r_k) - V(r_(k+1)), from 1e3 bohr out
        if not (np.all(d > 0) or np.all(d < 0)) or not np.all(np.abs(d[:-1]) > np.abs(d[1:])):
            return None
        s_in, s_out = math.log10(d[0] / d[1]), math.log10(d[1] / d[2])
        if abs(s_in - s_out) > 0.01:
            return None
        v_inf = float(v_far[0] - d[2] / (10**s_out - 1))
        if abs(v_inf) <= 1e-3 * abs(d[2]):
            v_inf = 0.0             # within what the fit tells (-1/sqrt(r + 1): 8.7e-8 off 0)
        attractive = d[2] < 0       # V rises towards V_inf far out
        return v_inf, (s_out if attractive and 0 < s_out < 2 else 0.0)

    def _charge_under_inverse_square(self) -> float:
        """Z0 of V = B0 / r^2 - Z0 / r + O(1) near the origin, from r^2 V = B0 - Z0 r + O(r^2) at
        r = 1e-8, 1e-7 and 1e-6 bohr: the slope of the first two, when the third agrees to 1e-6 (else 0)."""
        r, v = self._finite_probe(np.array([1e-8, 1e-7, 1e-6]))
        y = r * r * v
        if not np.all(np.isfinite(y)):
            return 0.0
        z = -(y[1] - y[0]) / (r[1] - r[0])
        z_check = -(y[2] - y[1]) / (r[2] - r[1])
        return float(z) if abs(z - z_check) <= 1e-6 * max(1.0, abs(z)) and abs(z) > 1e-8 else 0.0

    @property
    def origin_charge(self) -> float:
        return self._z0

    @property
    def origin_inverse_square(self) -> float:
        """B0 of V ~ B0 / r^2 at the origin, read from r^2 V(r) at r = 1e-12..1e-10 bohr when that is
        steady (to 1e-6) and not negligible (0 otherwise, and for a Coulomb-like or finite origin)."""
        return self._b0

    @property
    def tail_charge(self) -> float:
        return self._zinf

    @property
    def tail_inverse_square(self) -> float:
        """B of V ~ -Z_inf/r + B/r^2 far out (hartree bohr^2), read with the tail charge (0 when none)."""
        return self._b_tail

    @property
    def far_constant(self) -> float:
        return self._vinf

    @property
    def slow_tail(self) -> float:
        return self._slow

    @property
    def far(self) -> str:  # type: ignore[override]
        return self._far


class CallableTerm(ProbedTerm):
    """A term from a user's Python callable ``V(r)`` (r in bohr, V in hartree),
    its ends probed numerically (see :class:`ProbedTerm`)."""

    name = "callable"
    formula = "user function V(r)"
    source = "user"

    def __init__(self, func: Callable, label: str | None = None) -> None:
        if not callable(func):
            raise ValueError("potential: expected a built-in name or a callable V(r)")
        self.func = func
        self.label = label or getattr(func, "__name__", "callable")
        self.values = {}
        self._probe()

    def _find_breakpoints(self) -> tuple[float, ...]:
        """Radii where the callable's values, slope or curvature jump
        (:func:`boundkit.potentials.switches.breaks`)."""
        from .switches import breaks, reported

        with complex_values():
            return reported(breaks(self._evaluate), f"callable {shorten(self.label)}")

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        out = refuse_complex(self.func(r), shorten(self.label), r)
        if out.shape != np.shape(r):
            out = np.broadcast_to(out, np.shape(r)).astype(out.dtype)
        return out

    def __repr__(self) -> str:
        return f"CallableTerm({self.label})"


def _summed(terms, r: np.ndarray) -> np.ndarray:
    """The sum of the terms at r, on r's shape, in double (complex when a term is): 0 + t_1(r) + t_2(r) ...;
    one term's own array is taken as it is when it already has that shape and type (0.0 + v is v, -0.0 aside)."""
    if len(terms) == 1:
        v = np.asarray(terms[0](r))
        if v.shape == r.shape and v.dtype in (np.float64, np.complex128):
            return v + 0.0
    out = np.zeros_like(r, dtype=float)
    for t in terms:
        out = out + t(r)
    return out


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
        return _summed(self.vector, np.asarray(r))

    def S(self, r) -> np.ndarray:
        return _summed(self.scalar, np.asarray(r))

    def continued(self, z) -> np.ndarray:
        """V at complex radii ``z`` (bohr): the sum of the vector terms' analytic continuations
        (:meth:`Term.continued`).

        Raises
        ------
        ValueError
            When a term has none, or the potential has scalar terms (complex scaling continues V only).
        """
        z = np.asarray(z, dtype=complex)
        if self.scalar:
            raise ValueError("analytic: analytic=True (--analytic) continues the vector potential only; this "
                             "potential has scalar terms: give analytic= a function of complex r, or solve without them")
        total = np.zeros_like(z)
        for t in self.vector:
            w = t.continued(z)
            if w is None:
                raise ValueError(f"analytic: the term {getattr(t, 'label', t.name)!r} has no analytic continuation "
                                 "to complex r here (analytic=True, --analytic, continues expressions and coulomb "
                                 "terms); write it as an expression (--expr), or give analytic= a function of "
                                 "complex r")
            total = total + w
        return total

    @property
    def z_vector(self) -> float:
        return float(sum(t.origin_charge for t in self.vector))

    @property
    def z_scalar(self) -> float:
        return float(sum(t.origin_charge for t in self.scalar))

    def spin_orbit(self, r):
        """Sum of the terms' spin-orbit radial factors, or None when no term has one."""
        parts = [u for u in (t.spin_orbit(r) for t in self.vector + self.scalar) if u is not None]
        return sum(parts) if parts else None

    @property
    def has_spin_orbit(self) -> bool:
        """Whether some term carries a spin-orbit factor (:meth:`spin_orbit` is not None)."""
        return self.spin_orbit(np.array([1.0])) is not None

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """Sorted radii where some term is not smooth."""
        return tuple(sorted({float(b) for t in self.vector + self.scalar for b in t.breakpoints}))

    @property
    def confining(self) -> bool:
        return any(t.far == "confining" for t in self.vector + self.scalar)

    @property
    def tail_charge(self) -> float:
        """Z_inf of the far tail -Z_inf/r, vector and scalar terms together (what the Schrodinger
        equation sees): the sum of :attr:`vector_tail_charge` and :attr:`scalar_tail_charge`, added
        term by term in one pass."""
        return float(sum(t.tail_charge for t in self.vector + self.scalar))

    @property
    def vector_tail_charge(self) -> float:
        """Z_inf of the vector terms' far tail -Z_inf/r."""
        return float(sum(t.tail_charge for t in self.vector))

    @property
    def scalar_tail_charge(self) -> float:
        """Z_inf of the scalar terms' far tail -Z_inf/r (0 for every built-in scalar well but a
        Coulomb-like one)."""
        return float(sum(t.tail_charge for t in self.scalar))

    @property
    def far_constant(self) -> float:
        """V_inf of the vector terms (a scalar constant is a mass shift, not a threshold)."""
        return float(sum(t.far_constant for t in self.vector))

    @property
    def scalar_far_constant(self) -> float:
        """S_inf: the constant the scalar terms tend to far out (hartree)."""
        return float(sum(t.far_constant for t in self.scalar))

    @property
    def origin_inverse_square(self) -> float:
        """Sum of the terms' 1/r^2 coefficients at the origin (vector and scalar terms)."""
        return float(sum(t.origin_inverse_square for t in self.vector + self.scalar))

    def origin_fall(self, scalar: bool = True) -> tuple[np.ndarray, np.ndarray] | None:
        """(r, r^2 V) at r = 1e-12, 1e-11, 1e-10 bohr when V (+ S with ``scalar``) falls faster than
        -1/r^2 at the origin, else None (see :func:`_falling_core`)."""
        return _origin_probe(lambda r: r * r * (np.real(self.V(r)) + (np.real(self.S(r)) if scalar else 0.0)),
                             _falling_core)

    def scalar_origin_fall(self) -> tuple[np.ndarray, np.ndarray] | None:
        """(r, r S) at r = 1e-12, 1e-11, 1e-10 bohr when the scalar S falls faster than -1/r at the
        origin, else None (see :func:`_falling_core`). The relativistic equations take S squared, as
        (m c^2 + S)^2: such a scalar is a core steeper than 1/r^2 behind a zero of m c^2 + S."""
        return _origin_probe(lambda r: r * np.real(self.S(r)), _falling_core)

    def vector_origin_steep(self) -> tuple[np.ndarray, np.ndarray] | None:
        """(r, r |V|) at r = 1e-12, 1e-11, 1e-10 bohr when |V| grows faster than 1/r towards the origin, of
        either sign, else None (see :func:`_steep_core`). The relativistic equations take V squared, so such
        a V is a core steeper than 1/r^2 there."""
        return _origin_probe(lambda r: r * np.abs(np.real(self.V(r))), _steep_core)

    @property
    def tail_inverse_square(self) -> float:
        """Sum of the terms' 1/r^2 coefficients far out, B of V + S ~ -Z_inf/r + B/r^2 (vector and scalar
        terms; hartree bohr^2)."""
        return float(sum(t.tail_inverse_square for t in self.vector + self.scalar))

    @property
    def slow_tail(self) -> float:
        """The smallest power s of the terms' attractive tails falling off slower than 1/r^2 (not Coulomb;
        :attr:`Term.slow_tail`), else 0."""
        return min((t.slow_tail for t in self.vector + self.scalar if t.slow_tail), default=0.0)

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
    (V ~ -Z/r) in MeV fm becomes Z * MEV_IN_HARTREE * FM_IN_BOHR in hartree bohr,
    an inverse-square one (V ~ B/r^2, at the origin or far out) in MeV fm^2
    B * MEV_IN_HARTREE * FM_IN_BOHR^2 in hartree bohr^2. Every property a
    :class:`Term` declares is forwarded so converted (a property left out reads
    the base class's 0: tests/test_potential_properties.py checks the list).
    The wrapped term is in atomic units: it is never wrapped again.
    """

    fixed_units = True

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
    def far_constant(self) -> float:
        return self.inner.far_constant * self._v

    @property
    def origin_inverse_square(self) -> float:
        return self.inner.origin_inverse_square * self._v * self._r**2

    @property
    def tail_inverse_square(self) -> float:
        return self.inner.tail_inverse_square * self._v * self._r**2

    @property
    def slow_tail(self) -> float:
        return self.inner.slow_tail        # a power: no unit

    @property
    def breakpoints(self) -> tuple[float, ...]:
        return tuple(b * self._r for b in self.inner.breakpoints)

    def spin_orbit(self, r):
        u = self.inner.spin_orbit(np.asarray(r) / self._r)
        return None if u is None else u * self._v

    def continued(self, z):
        w = self.inner.continued(np.asarray(z) / self._r)
        return None if w is None else w * self._v

    @property
    def far(self) -> str:  # type: ignore[override]
        return self.inner.far

    def __repr__(self) -> str:
        return f"{self.inner!r} [MeV, fm]"

TABLE_ERROR_NOTE = ("the estimates include the tables' interpolation error (to first order, from splines of two "
                    "degrees and from the table continued linearly below its first point)")
"""How a result says that its estimates hold its tables' error (solves, phase shifts, lengths)."""
TABLE_FIX = ("give the table more points where the potential bends, or start it nearer r = 0 (below its first "
             "point the potential is modelled)")
"""The fix a result names when a table's interpolation error lies above tol."""


def table_terms(pot) -> list[tuple[object, bool]]:
    """(table, scalar?) for every term of ``pot`` with an interpolation error (:class:`TabulatedTerm` and its
    kin: what :meth:`~TabulatedTerm.interpolation_difference` identifies), vector terms then scalar ones."""
    return ([(t, False) for t in pot.vector if hasattr(t, "interpolation_difference")]
            + [(t, True) for t in pot.scalar if hasattr(t, "interpolation_difference")])
