"""A potential term from a table of (r, V) points.

File format
-----------
Plain text, one point per line: two numbers, separated by a comma or by
white space. ``#`` starts a comment, on a line of its own or after the
numbers. Units are declared, if at all, by one comment line before the first
point::

    # units: r=fm V=MeV

(``r=`` and ``V=`` may come in either order, separated by spaces or a comma;
either may be left out). Length units: bohr, angstrom, fm, nm; energy units:
hartree, eV, keV, MeV (case matters for the energy units: meV is not MeV).
Without that line the units are the arguments of :func:`read_table`
(default bohr and hartree); a units line wins over the default arguments, and
one that contradicts an argument other than the default is refused.

Unit systems: a unit stated in the file or by an argument is kept whatever
unit system the rest of the problem uses. A column whose unit is stated
nowhere is read in the caller's system: bohr and hartree by default, fm and
MeV when the term is used with ``units="nuclear"`` (``--units nuclear``).
The conversion happens once, when the table is read.

Conversion uses :mod:`scipy.constants` only (the Hartree energy in eV,
CODATA, and the Bohr radius alpha hbar c / E_h of :data:`boundkit.units.BOHR_M`).

Interpolation
-------------
Between the first and the last point the term interpolates y = r V(r) with an
interpolating spline in x = ln r (scipy's ``make_interp_spline``, not-a-knot
ends) of odd degree 3, 5 (default) or 7, and returns V = y / r. A Coulomb
table has a constant y, which the spline reproduces exactly, and screened or
finite potentials have a y that is smooth in ln r.

The default degree is 5 (a C4 interpolant) because a spectral solver sees the
jumps of a cubic spline's third derivative: on a table of a Yukawa potential
-exp(-r/10)/r with 400 points from 1e-4 to 400 bohr, the two s levels came
out with relative errors of 2e-10 and 3e-9 (cubic, and the spectral ladder
did not reach tol 1e-10) against 1e-13 and 4e-13 (quintic, converged).
Data that are not smooth (steps, kinks) ring more with a higher degree; use
``degree=3`` for them.

The interpolant is itself uncertain between the points: a spline of degree + 2
is built on the same points and the largest difference of the two at the
midpoints, over max |r V|, is kept as ``interpolation_spread``; above
SPREAD_WARN (1e-8) a warning names it and the radius. A level's error
estimate takes the interpolant's error in to first order, from the
difference of the two splines over r
(:meth:`TabulatedTerm.interpolation_difference`) weighted by the level's
density (twice its signed integral for a table within SPREAD_WARN, the
integral of its absolute value for a coarser one; see
``boundkit.solver.table_error``), added to the solver's own estimate; a note
says so. A critical value adds it too, converted to the parameter (see
:func:`boundkit.studies.critical`). For a level much shallower than its well that is far more,
relative to its energy, than the spread.

Below the first point r_0 (``origin``):

- ``"coulomb"``: y stays y(r_0), so V = r_0 V(r_0) / r and the charge at the
  origin is Z0 = -r_0 V(r_0);
- ``"finite"``: V stays V(r_0), and Z0 = 0.

What lies below r_0 is a model, and a level's error estimate takes its
uncertainty in too, to first order: the difference between the held value
and the table continued linearly from its first two points
(:meth:`TabulatedTerm.origin_difference`; y for ``"coulomb"``, V for
``"finite"``), weighted by the level's density, twice its signed integral. A
table of -exp(-r/2)/r from r_0 = 0.01 bohr put the 1s 2.5e-7 hartree off with
an estimate of 9e-15 before; the error goes as r_0^3 for an s level, so a
table that starts nearer the origin has less of it.

Beyond the last point r_N (``tail``):

- ``"coulomb"``: V = -Z_inf / r with Z_inf = ``tail_charge``, by default
  -r_N V(r_N);
- ``"zero"``: V = 0 (a warning is logged when |V(r_N)| exceeds 1e-6 of the
  largest |V| of the table);
- ``"exponential"``: V = V(r_N) exp(-(r - r_N)/b), with the decay length b
  from a least-squares fit of ln|V| against r over the last five points
  (A e^(-r/b) with A fixed by continuity at r_N).
"""
from __future__ import annotations

import logging
import math
import os
import re
from typing import Sequence

import numpy as np
import scipy.constants as sc
from scipy.interpolate import make_interp_spline

from .._checks import MAX_MAGNITUDE, MAX_TABLE_POINTS, check_choice, check_parameter, shorten
from ..units import BOHR_M, HARTREE_EV
from .base import Term

__all__ = ["LENGTH_UNITS", "ENERGY_UNITS", "MIN_POINTS", "TAILS", "ORIGINS", "DEGREES", "read_table",
           "TabulatedTerm"]

log = logging.getLogger(__name__)


LENGTH_UNITS: dict[str, float] = {
    "bohr": 1.0,
    "angstrom": sc.angstrom / BOHR_M,
    "nm": sc.nano / BOHR_M,
    "fm": sc.femto / BOHR_M,
}
"""Length unit -> bohr per unit (the Bohr radius of :data:`boundkit.units.BOHR_M`, alpha hbar c / E_h)."""

ENERGY_UNITS: dict[str, float] = {
    "hartree": 1.0,
    "eV": 1.0 / HARTREE_EV,
    "keV": sc.kilo / HARTREE_EV,
    "MeV": sc.mega / HARTREE_EV,
}
"""Energy unit -> hartree per unit (CODATA via scipy.constants)."""

MIN_POINTS = 8
"""Fewest points a table may have."""

TAILS = ("coulomb", "zero", "exponential")
ORIGINS = ("coulomb", "finite")
DEGREES = (3, 5, 7)
_EXP_FIT_POINTS = 5
SPREAD_WARN = 1e-8
"""Interpolation spread (:attr:`TabulatedTerm.interpolation_spread`) above which a table is said to be too
coarse. On tables of a Hulthen potential (Z = 1, delta = 0.2, log-spaced from 1e-5 to 150 bohr, tail
'exponential'), spreads of 1.2e-11 / 3.8e-3 / 5.6e-2 (400 / 30 / 12 points) went with worst level
errors of 4.6e-14 / 4.3e-6 / 2.0e-3 hartree against the exact 1s-3s (measured by a tester), within
spread x max |r V| <1/r>; 1e-8 flags tables whose levels may be off by more than the default tol 1e-10."""

_UNITS_LINE = re.compile(r"^\s*#\s*units\s*:(.*)$", re.IGNORECASE)
_UNITS_SYNTAX = "write it as '# units: r=fm V=MeV'"


def _length_unit(name: str, where: str) -> str:
    key = str(name).strip().lower()
    if key not in LENGTH_UNITS:
        raise ValueError(f"{where}: unknown length unit {name!r}; choose one of {', '.join(LENGTH_UNITS)}")
    return key


def _energy_unit(name: str, where: str) -> str:
    key = str(name).strip()
    if key.lower() == "hartree":
        key = "hartree"
    if key not in ENERGY_UNITS:
        raise ValueError(f"{where}: unknown energy unit {name!r}; choose one of {', '.join(ENERGY_UNITS)} "
                         "(case matters: MeV, keV, eV)")
    return key


def _parse_units(body: str, where: str) -> dict[str, str]:
    found: dict[str, str] = {}
    for item in [x for x in re.split(r"[,\s]+", body.strip()) if x]:
        key, eq, value = item.partition("=")
        if not eq or not value:
            raise ValueError(f"{where}: cannot read {item!r} in the units line; {_UNITS_SYNTAX}")
        k = key.strip().lower()
        if k == "r":
            found["r"] = _length_unit(value, where)
        elif k == "v":
            found["V"] = _energy_unit(value, where)
        else:
            raise ValueError(f"{where}: unknown quantity {key!r} in the units line (only r and V); "
                             f"{_UNITS_SYNTAX}")
    if not found:
        raise ValueError(f"{where}: the units line names no unit; {_UNITS_SYNTAX}")
    return found


def _number(token: str, what: str, where: str) -> float:
    try:
        x = float(token)
    except ValueError:
        hint = " (write exponents with E, not D)" if re.fullmatch(r"[-+]?[\d.]+[dD][-+]?\d+", token) else ""
        raise ValueError(f"{where}: {what} {shorten(token, 40)!r} is not a number{hint}; each data line holds two "
                         "numbers, r and V; start text lines with #") from None
    if not math.isfinite(x):
        raise ValueError(f"{where}: {what} is {shorten(token, 40)!r}; values must be finite numbers; remove or fix the line")
    return x


MAX_LINE = 1000
"""Longest line of a table file, in characters (a line is read at most this far)."""


def _lines(fh, name: str):
    """Lines of an open table file, streamed; a line longer than MAX_LINE is refused unread."""
    lineno = 0
    while True:
        raw = fh.readline(MAX_LINE + 1)
        if not raw:
            return
        lineno += 1
        if len(raw) > MAX_LINE and not raw.endswith("\n"):
            raise ValueError(f"potential file {name!r}, line {lineno} is longer than {MAX_LINE} characters; a data "
                             "line holds two numbers, r and V")
        if "\ufffd" in raw or "\x00" in raw:      # bytes that are not UTF-8 (read with errors='replace'), or NUL
            raise ValueError(f"potential file {name!r}, line {lineno}: not UTF-8 text (a binary file, or another "
                             "encoding: save it as UTF-8); a table is plain text, one point 'r V' per line")
        yield lineno, raw.rstrip("\r\n")


def read_table(path: str | os.PathLike, r_unit: str = "bohr", v_unit: str = "hartree",
               max_points: int = MAX_TABLE_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Read a two-column table r, V and convert it to bohr and hartree.

    Parameters
    ----------
    path : str or path-like
        The text file (format in :mod:`boundkit.potentials.tabulated`).
    r_unit : {'bohr', 'angstrom', 'fm', 'nm'}
        Unit of r when the file declares none.
    v_unit : {'hartree', 'eV', 'keV', 'MeV'}
        Unit of V when the file declares none.
    max_points : int
        Most data points accepted (default 200000,
        :data:`boundkit._checks.MAX_TABLE_POINTS`). The file is streamed
        line by line, and lines longer than 1000 characters are refused, so
        memory stays bounded whatever the file.

    Returns
    -------
    r, V : numpy.ndarray
        Radii in bohr (positive, strictly increasing) and V in hartree.

    Raises
    ------
    ValueError
        The file cannot be read, or a line breaks a rule: exactly two
        numeric columns, finite values, r > 0, r strictly increasing, at
        least 8 points, known units. The message names the file, the
        1-based line number and the fix.
    """
    return _read_table(path, r_unit, v_unit, max_points)[:2]


def _read_table(path, r_unit: str, v_unit: str, max_points: int):
    """:func:`read_table` that also returns the set of columns the file's units line states, and the
    (length, energy) units the table was read in."""
    name = os.fspath(path)
    r_default = _length_unit(r_unit, "r_unit")
    v_default = _energy_unit(v_unit, "v_unit")
    from .._checks import check_int

    max_points = check_int("max_points", max_points, minimum=MIN_POINTS)
    try:
        # utf-8-sig: a leading byte-order mark (spreadsheet exports write one) is dropped
        with open(name, encoding="utf-8-sig", errors="replace") as fh:
            return _read_lines(_lines(fh, shorten(name, 160)), shorten(name, 160), r_default, v_default, max_points)
    except OSError as exc:
        raise ValueError(f"potential file {shorten(name, 160)!r}: cannot read it ({exc.strerror or exc})") from None


def _read_lines(lines, name: str, r_default: str, v_default: str, max_points: int):
    """The body of :func:`read_table`: parse streamed (line number, text) pairs."""
    units: dict[str, str] = {}
    units_line = 0
    rs: list[float] = []
    vs: list[float] = []
    last_line = 0
    lineno = 0
    for lineno, raw in lines:
        where = f"potential file {name!r}, line {lineno}"
        m = _UNITS_LINE.match(raw)
        if m:
            if units_line:
                raise ValueError(f"{where}: a second units line (the first is line {units_line}); keep one")
            if rs:
                raise ValueError(f"{where}: the units line must come before the first data line "
                                 f"(line {last_line}); move it to the top")
            units = _parse_units(m.group(1), where)
            units_line = lineno
            continue
        data = raw.split("#", 1)[0].strip()
        if not data:
            continue
        fields = [f.strip() for f in data.split(",")] if "," in data else data.split()
        if len(fields) != 2:
            raise ValueError(f"{where}: expected 2 columns (r and V), found {len(fields)}; "
                             "write one point per line as 'r V' or 'r, V'")
        r = _number(fields[0], "r", where)
        v = _number(fields[1], "V", where)
        if r <= 0:
            raise ValueError(f"{where}: r = {fields[0]} but r must be > 0; drop the point at r <= 0 "
                             "(the behaviour at the origin is set by origin=, --table-origin on the command line)")
        if rs and r <= rs[-1]:
            raise ValueError(f"{where}: r = {fields[0]} is not larger than r on line {last_line}; "
                             "r must be strictly increasing: sort the points and remove duplicates")
        if len(rs) >= max_points:
            raise ValueError(f"potential file {name!r}: more than {max_points} points (the limit); thin the table "
                             "or pass max_points= to read_table or TabulatedTerm")
        rs.append(r)
        vs.append(v)
        last_line = lineno
    if len(rs) < MIN_POINTS:
        at = f"line {last_line or lineno or 1}"
        raise ValueError(f"potential file {name!r}, {at}: only {len(rs)} data point(s); at least "
                         f"{MIN_POINTS} are needed for the interpolation; add points")
    ru = units.get("r", r_default)
    vu = units.get("V", v_default)
    for key, default, given, arg in (("r", "bohr", r_default, "r_unit"), ("V", "hartree", v_default, "v_unit")):
        if key in units and given != default and units[key] != given:
            raise ValueError(f"potential file {name!r}, line {units_line}: the file says {key} is in "
                             f"{units[key]} but {arg}={given!r} was given; drop one of them")
    r_arr = np.asarray(rs) * LENGTH_UNITS[ru]
    v_arr = np.asarray(vs) * ENERGY_UNITS[vu]
    return r_arr, v_arr, set(units), (ru, vu)


def _check_arrays(r, V) -> tuple[np.ndarray, np.ndarray]:
    try:
        r = np.asarray(r, dtype=float)
        V = np.asarray(V, dtype=float)
    except (TypeError, ValueError):
        raise ValueError("table: r and V must be arrays of numbers") from None
    if r.ndim != 1 or V.shape != r.shape:
        raise ValueError(f"table: r and V must be 1-d arrays of one length, got shapes {r.shape} and {V.shape}")
    if r.size < MIN_POINTS:
        raise ValueError(f"table: only {r.size} points; at least {MIN_POINTS} are needed; add points")
    bad = np.nonzero(~(np.isfinite(r) & np.isfinite(V)))[0]
    if bad.size:
        raise ValueError(f"table: point {bad[0] + 1} is not finite (r = {r[bad[0]]!r}, V = {V[bad[0]]!r}); fix it")
    if r[0] <= 0:
        raise ValueError(f"table: point 1 has r = {r[0]!r} but r must be > 0; drop it")
    dec = np.nonzero(np.diff(r) <= 0)[0]
    if dec.size:
        raise ValueError(f"table: r must be strictly increasing, but point {dec[0] + 2} has r = {r[dec[0] + 1]!r} "
                         f"after {r[dec[0]]!r}; sort the points and remove duplicates")
    return r, V


class TabulatedTerm(Term):
    """A potential term interpolated from a table of (r, V) points.

    Parameters
    ----------
    table : str, path-like or array_like
        A file to read with :func:`read_table`, or the radii when ``V`` is
        given.
    V : array_like, optional
        Potential values at the radii ``table``.
    tail : {'coulomb', 'zero', 'exponential'}
        Behaviour beyond the last point (see the module docstring).
    tail_charge : float, optional
        Z_inf of the Coulomb tail (``tail='coulomb'`` only); default
        -r_N V(r_N) from the last point.
    origin : {'coulomb', 'finite'}
        Behaviour below the first point.
    degree : {3, 5, 7}
        Degree of the interpolating spline of r V in ln r (default 5).
    r_unit, v_unit : str, optional
        Units of the table (a file's own units line takes precedence). A unit
        stated nowhere follows the unit system the term is used in (bohr and
        hartree, or fm and MeV with ``units="nuclear"``; see
        :meth:`in_system`).
    label : str, optional
        Name in reports; default the file name, or "table".
    max_points : int
        Most points of a table file (default 200000); see :func:`read_table`.

    Notes
    -----
    Interpolation of r V against ln r with a spline, extended by the
    declared origin and tail behaviour; see :mod:`boundkit.potentials.tabulated`.
    """

    name = "table"
    formula = "V(r) from a table: spline of r V(r) in ln r, declared origin and tail"
    source = "user table"

    def __init__(self, table, V: Sequence[float] | None = None, *, tail: str = "coulomb",
                 tail_charge: float | None = None, origin: str = "coulomb", r_unit: str | None = None,
                 v_unit: str | None = None, degree: int = 5, label: str | None = None,
                 max_points: int = MAX_TABLE_POINTS) -> None:
        self._args = dict(table=table, V=V, tail=tail, tail_charge=tail_charge, origin=origin,
                          r_unit=r_unit, v_unit=v_unit, degree=degree, label=label, max_points=max_points)
        stated = {k for k, u in (("r", r_unit), ("V", v_unit)) if u is not None}
        r_unit = "bohr" if r_unit is None else r_unit
        v_unit = "hartree" if v_unit is None else v_unit
        if isinstance(degree, bool) or degree not in DEGREES:
            raise ValueError(f"degree: the spline degree must be one of 3, 5, 7, got {degree!r}")
        self.degree = int(degree)
        self.tail = check_choice("tail", str(tail).lower(), TAILS)
        self.origin = check_choice("origin", str(origin).lower(), ORIGINS)
        if V is None:
            if not isinstance(table, (str, os.PathLike)):
                raise ValueError("table: give a file path, or the arrays r and V")
            r, v, in_file, self.table_units = _read_table(table, r_unit, v_unit, max_points)
            stated |= in_file
            self.path: str | None = os.fspath(table)
            self.label = label or os.path.basename(self.path)
            self.source = f"table file {self.path}"  # type: ignore[misc]
        else:
            r, v = _check_arrays(table, V)
            self.table_units = (_length_unit(r_unit, "r_unit"), _energy_unit(v_unit, "v_unit"))
            r = r * LENGTH_UNITS[self.table_units[0]]
            v = v * ENERGY_UNITS[self.table_units[1]]
            self.path = None
            self.label = label or "table"
        big = np.nonzero((np.abs(v) > MAX_MAGNITUDE) | (np.abs(r * v) > MAX_MAGNITUDE))[0]
        if big.size:
            raise ValueError(f"table {shorten(self.label)}: point {big[0] + 1} has V = {self._in_v(v[big[0]]):.3g} "
                             f"{self.table_units[1]} ({v[big[0]]:.3g} hartree), beyond {MAX_MAGNITUDE:g} hartree in "
                             "magnitude (or r V is, in hartree bohr); check the units of the table")
        self.r, self.V = r, v
        self.values = {}
        self.stated_units = frozenset(stated)
        self.fixed_units = stated == {"r", "V"}
        self._nuclear: TabulatedTerm | None = None
        self._spline = make_interp_spline(np.log(r), r * v, k=self.degree)
        self.interpolation_spread, where = self._spread(r, r * v)
        if self.interpolation_spread > SPREAD_WARN:
            log.warning("%s: the interpolant of r V is uncertain by %.2g of max |r V| (splines of degree %d and %d "
                        "differ by that at r = %.4g %s); a level can be off by up to about that fraction of max |r V| <1/r>, "
                        "far more than that fraction of a shallow level's energy (its error estimate includes it, "
                        "to first order): give the table more points there",
                        self.label, self.interpolation_spread, self.degree, self._other_degree(len(r)),
                        self._in_r(where), self.table_units[0])
        self._y0 = float(r[0] * v[0])
        if tail_charge is not None and self.tail != "coulomb":
            raise ValueError(f"tail_charge: only used with tail='coulomb', not tail={self.tail!r}; drop it")
        y_last = float(r[-1] * v[-1])
        self._zinf = 0.0
        self._decay = math.inf
        if self.tail == "coulomb":
            self._zinf = -y_last if tail_charge is None else check_parameter("tail_charge", tail_charge)
            if tail_charge is not None and abs(-y_last - self._zinf) > 1e-6 * max(1.0, abs(self._zinf)):
                log.warning("%s: the Coulomb tail charge %g differs from -r V = %g (in hartree bohr) at the last "
                            "point (r = %g %s); V jumps there", self.label, self._zinf, -y_last, self._in_r(r[-1]),
                            self.table_units[0])
            self._warn_unsteady(r[-3:], r[-3:] * v[-3:], "last", "tail='coulomb'")
        elif self.tail == "zero":
            if abs(v[-1]) > 1e-6 * float(np.max(np.abs(v))):
                log.warning("%s: V = %g %s at the last point (r = %g %s) is far from 0 but "
                            "tail='zero' sets V = 0 beyond it; extend the table or choose another tail",
                            self.label, self._in_v(v[-1]), self.table_units[1], self._in_r(r[-1]), self.table_units[0])
        else:
            self._decay = self._fit_decay(r, v)
        if self.origin == "coulomb":
            self._warn_unsteady(r[:3], r[:3] * v[:3], "first", "origin='coulomb'")

    def in_system(self, system: str) -> "TabulatedTerm":
        """This table read in the unit system ``system``.

        Columns whose unit the file or the arguments state keep it; the others
        are read in fm and MeV for ``"nuclear"`` (the table is read again with
        those units, so nothing is converted twice).
        """
        if system == "atomic" or self.fixed_units:
            return self
        if self._nuclear is None:        # read once, however often the term is used (a scan's points)
            args = dict(self._args)
            args["r_unit"] = args["r_unit"] or ("fm" if "r" not in self.stated_units else None)
            args["v_unit"] = args["v_unit"] or ("MeV" if "V" not in self.stated_units else None)
            self._nuclear = TabulatedTerm(args.pop("table"), **args)
        return self._nuclear

    def _other_degree(self, n: int) -> int:
        return self.degree + 2 if n >= self.degree + 3 else self.degree - 2

    def _spread(self, r: np.ndarray, y: np.ndarray) -> tuple[float, float]:
        """(largest |difference| of this spline and one of degree + 2 (degree - 2 for a table too short for
        it) at the midpoints of the table's intervals in ln r, over max |r V|; the radius where it is)."""
        x = np.log(r)
        mid = 0.5 * (x[1:] + x[:-1])
        self._other = other = make_interp_spline(x, y, k=self._other_degree(len(r)))
        d = np.abs(self._spline(mid) - other(mid))
        top = float(np.max(np.abs(y)))
        if top == 0.0 or not d.size:
            return 0.0, float(r[0])
        i = int(np.argmax(d))
        return float(d[i]) / top, float(np.exp(mid[i]))

    def interpolation_difference(self, r) -> np.ndarray:
        """(spline of the other degree - this spline) / r at radii ``r`` (bohr) between the first and the
        last point, 0 elsewhere (hartree): the estimate of the interpolant's error that a level's error
        estimate takes in, to first order (see the module docstring)."""
        r = np.asarray(r, dtype=float)
        out = np.zeros(r.shape)
        inside = (r >= self.r[0]) & (r <= self.r[-1])
        x = np.log(r[inside])
        out[inside] = (self._other(x) - self._spline(x)) / r[inside]
        return out

    def origin_difference(self, r) -> np.ndarray:
        """The uncertainty of the declared origin below the first point r_0, at radii ``r`` (bohr; 0 from
        r_0 on; hartree): the table continued linearly from its first two points instead, minus as the
        origin continues it. ``'coulomb'`` holds y = r V at y_0, against y_0 + s (r - r_0) with s the slope of
        y between the first two points: s (r - r_0) / r; ``'finite'`` holds V at V_0, against V continued
        with its own slope: s_V (r - r_0). A level's error estimate takes it in to first order, beside
        :meth:`interpolation_difference` (see ``boundkit.solver.table_error``).

        Notes
        -----
        A table of -exp(-r/2)/r from r_0 = 0.01 bohr (400 log-spaced points to 40 bohr, origin 'coulomb')
        put the 1s 2.5e-7 hartree off the closed form, 2.5e-10 from r_0 = 1e-3 (as r_0^3: y is linear at
        the origin and the s density goes as r^2), and no estimate saw it; the linear continuation is
        right to first order for a smooth y, so the first-order shift by this difference is close to the
        error there. A Coulomb table (y constant) has s = 0 and no origin uncertainty.
        """
        r = np.asarray(r, dtype=float)
        out = np.zeros(r.shape)
        below = r < self.r[0]
        r0, r1 = float(self.r[0]), float(self.r[1])
        if self.origin == "coulomb":
            slope = (float(self.r[1] * self.V[1]) - self._y0) / (r1 - r0)
            out[below] = slope * (r[below] - r0) / r[below]
        else:
            slope = float(self.V[1] - self.V[0]) / (r1 - r0)
            out[below] = slope * (r[below] - r0)
        return out

    def _in_r(self, r):
        """Radii in bohr in the table's own length unit."""
        return r / LENGTH_UNITS[self.table_units[0]]

    def _in_v(self, v):
        """Energies in hartree in the table's own energy unit."""
        return v / ENERGY_UNITS[self.table_units[1]]

    def _warn_unsteady(self, r, y, which: str, option: str) -> None:
        if abs(y[0] - y[-1]) > 1e-3 * max(float(np.max(np.abs(y))), 1e-300):
            ru, vu = self.table_units
            log.warning("%s: r V is not steady over the %s three points (%s %s %s); %s assumes it is",
                        self.label, which, ", ".join(f"{x:.6g}" for x in self._in_v(self._in_r(y))), vu, ru, option)

    def _fit_decay(self, r: np.ndarray, v: np.ndarray) -> float:
        rr, vv = r[-_EXP_FIT_POINTS:], v[-_EXP_FIT_POINTS:]
        if np.any(vv == 0) or not (np.all(vv > 0) or np.all(vv < 0)):
            raise ValueError(f"tail='exponential': the last {_EXP_FIT_POINTS} values of V must be non-zero and "
                             "of one sign to fit A exp(-r/b); use tail='zero' or tail='coulomb'")
        slope = float(np.polyfit(rr, np.log(np.abs(vv)), 1)[0])
        if not slope < 0:
            raise ValueError(f"tail='exponential': |V| does not decrease over the last {_EXP_FIT_POINTS} points "
                             f"(fitted slope of ln|V| = {slope * LENGTH_UNITS[self.table_units[0]]:.3g} per "
                             f"{self.table_units[0]}); use tail='zero' or tail='coulomb'")
        return -1.0 / slope

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        r = np.asarray(r, dtype=float)
        flat = np.atleast_1d(r).ravel()
        out = np.full(flat.shape, np.nan)
        r0, rn = self.r[0], self.r[-1]
        inside = (flat >= r0) & (flat <= rn)
        out[inside] = self._spline(np.log(flat[inside])) / flat[inside]
        below = flat < r0
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.origin == "coulomb":
                out[below] = self._y0 / flat[below]
            else:
                out[below] = self.V[0]
            above = flat > rn
            if self.tail == "coulomb":
                out[above] = -self._zinf / flat[above]
            elif self.tail == "zero":
                out[above] = 0.0
            else:
                out[above] = self.V[-1] * np.exp(-(flat[above] - rn) / self._decay)
        return out.reshape(r.shape)

    @property
    def origin_charge(self) -> float:
        return -self._y0 if self.origin == "coulomb" else 0.0

    @property
    def tail_charge(self) -> float:
        return self._zinf

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """The first and the last point: there the spline meets the declared origin and tail
        behaviour, and V or its slope jumps."""
        return (float(self.r[0]), float(self.r[-1]))

    @property
    def decay_length(self) -> float:
        """Decay length b of the exponential tail in bohr (inf for other tails)."""
        return self._decay

    def __repr__(self) -> str:
        return (f"TabulatedTerm({self.label!r}, {self.r.size} points, r = {self.r[0]:.3g}..{self.r[-1]:.3g} bohr, "
                f"origin={self.origin!r}, tail={self.tail!r})")
