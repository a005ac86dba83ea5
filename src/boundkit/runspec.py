"""Run specs: a whole study described in one TOML file, and the engine that runs it.

A run spec names a physical model (the particle, one or more potential
*models*), the equations and channels to solve, and the studies to do. The
engine (:func:`run`) solves everything, then writes into one output folder
``results.json`` (all numbers, with units, constants, settings and the
boundkit version), CSV tables, figures and a short ``report.md``.

Format
------
Top-level keys (all optional unless marked)::

    title = "..."                      # required, one line
    description = "..."                # required, what the study is about
    units = "atomic"                   # parameters in hartree and bohr ("atomic")
                                       # or in MeV and fm ("nuclear")
    energy_unit = "keV"                # unit of reported energies (default hartree;
                                       # MeV for units = "nuclear")
    length_unit = "fm"                 # unit of reported lengths: bohr, fm, pm,
                                       # angstrom, nm (default bohr; fm for nuclear)
    figure_format = "png"              # png, svg or pdf
    equations = ["dirac"]              # schrodinger, klein-gordon, dirac
    channels = ["s1/2", "p"]           # see Channels below; default ["s"]
    levels = 3                         # lowest levels per channel
    tolerance = 1e-10                  # relative tolerance on binding energies
    method = "auto"                    # auto, spectral, finite-difference
    order = 8                          # finite-difference order (finite-difference only)

    [particle]                         # default: an electron
    name = "muon"                      # electron, muon, pion, kaon, proton, antiproton
    mass_mev = 1500.0                  # or a mass in MeV/c^2 (name is then a label)
    nucleus_mass_mev = 938.272         # optional: use the reduced mass

    [models.NAME]                      # required: one or more potential models
    label = "point nucleus"            # optional, for reports
    terms = ["coulomb", "uehling"]     # built-in vector terms (they add)
    scalar_terms = []                  # built-in Lorentz-scalar terms
    expressions = ["-Z*exp(-r/D)/r"]   # vector terms as expressions in r
    scalar_expressions = []
    params = { Z = 92 }                # parameters shared by the terms above,
                                       # in the unit system of `units`

    [[models.NAME.term]]               # a term with parameters of its own (e.g.
    name = "woods-saxon"               # the same built-in as vector and scalar)
    # expression = "..."               # instead of name
    role = "scalar"                    # vector (default) or scalar
    params = { depth = 420.0, radius = 6.0, diffuseness = 0.6 }

Studies (at least one). ``[solve]`` once; the others as ``[x]`` or as an
array ``[[x]]`` of several::

    [solve]                            # levels of every model x equation x channel
    models = ["point", "fermi"]        # default: every model
    equations = [...]                  # default: the top-level ones; likewise
    channels = [...]                   # channels, levels, tolerance, method
    figures = ["radial", "density", "levels"]   # default: all three
    radii = true                       # <r> and rms radius of every level
    differences = [["2p1/2", "2s1/2"]] # E(a) - E(b) in every model and equation
    reference = "point"                # E(model) - E(reference) for every level

    [converge]                         # energies against resolution (boundkit.accuracy)
    model = "point"                    # required
    equation = "dirac"                 # default: the first equation
    channel = "s1/2"                   # default: the first channel
    levels = 1
    methods = ["spectral", "finite-difference"]

    [scan]                             # levels against one parameter (boundkit.studies)
    model = "screened"                 # required
    parameter = "screening_length"     # required, a shared parameter of a built-in term
    values = [100.0, 30.0, 10.0]       # or: range = { start = 1, stop = 100, num = 12,
                                       #               spacing = "log" }
    equation, channels, levels, tolerance, method as above
    workers = 2                        # worker processes (default: all cores)
    differences = [["2p1/2", "2s1/2"]] # per parameter value, with the slope d/dparameter

    [critical]                         # where a level stops being bound (boundkit.studies)
    model = "screened"                 # required
    states = ["1s", "2s", "2p"]        # required
    parameter = "screening_length"     # default screening_length
    equation = "schrodinger"           # default: the first equation
    bracket = [0.5, 20.0]              # optional: bound at one end, unbound at the other
    tolerance = 1e-8                   # relative tolerance of the critical value
    energy_tolerance = 1e-10           # relative tolerance of each energy on the way
    kind = "unbind"                    # optional: unbind or dive (default from the potential)
    workers = 2                        # states searched in parallel (default: all cores)

    [compare]                          # Schrodinger, Klein-Gordon and Dirac side by side
    model = "point"                    # required (boundkit.studies)
    l_max = 1
    levels = 2
    tolerance = 1e-10

``differences`` entries may name the equation of each level, ``"dirac:1s1/2"``,
to compare equations within one model.

Channels
--------
A channel is a string ``"s"``, ``"p"``, ``"d"``, ... (orbital l) with an
optional total j, ``"p1/2"``, ``"p3/2"``; or a table ``{ l = 1 }`` or
``{ kappa = -2 }``, which may carry its own ``levels = 2``. For the
Schrodinger and Klein-Gordon equations a channel is its l (j is ignored); for
the Dirac equation ``"p1/2"`` is kappa = 1, ``"p3/2"`` kappa = -2, and a
channel without j means both kappas of that l.

Checks
------
:func:`load_spec` refuses an unknown key, a value of the wrong type, a missing
field or a value it cannot use with one :class:`ValueError` naming the file,
the key and the line where it stands (or the table it is missing from). It
also builds every potential model once, so that a bad parameter is caught
before anything is solved.

Output
------
:func:`run` refuses an existing output folder unless ``force=True`` (and even
then only one that holds a previous run's ``results.json``, or is empty). It
builds everything in a temporary sibling folder, writing each file through a
temporary name and :func:`os.replace`, and renames the folder into place at
the end: a run that fails leaves no partial output and leaves existing output
as it was.
"""
from __future__ import annotations

import csv
import datetime as _dt
import hashlib
import importlib
import inspect
import io
import json
import logging
import math
import os
import re
import shutil
import tempfile
import time
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from . import __version__
from .observables import LENGTH_UNITS, bohr_to, length_unit as canonical_length_unit, mean_radius, rms_radius
from .potentials.base import Term
from .units import ENERGY_UNITS, FM_IN_BOHR, MEV_IN_HARTREE, constants_record, energy_unit as canonical_energy_unit
from .units import get_particle, hartree_to

__all__ = ["load_spec", "run", "RunSpec", "RunReport", "ChannelSpec", "ModelDef", "STUDY_SECTIONS"]

log = logging.getLogger(__name__)

STUDY_SECTIONS = ("solve", "converge", "scan", "critical", "compare")
"""Sections that ask for a study; a spec needs at least one."""
_NEEDS_STUDIES = ("scan", "critical", "compare")
_EQUATIONS = {"schrodinger": "schrodinger", "schroedinger": "schrodinger", "klein-gordon": "klein-gordon",
              "kg": "klein-gordon", "dirac": "dirac"}
_LETTERS = "spdfghiklmnoqrtuv"
_FIGURES = ("radial", "density", "levels")
_FORMATS = ("png", "svg", "pdf")


# ---------------------------------------------------------------------------------------------
# where a key stands in the TOML text
# ---------------------------------------------------------------------------------------------
_BARE = r"[A-Za-z0-9_\-]+"
_QUOTED = r"\"(?:[^\"\\]|\\.)*\"|'[^']*'"
_KEYPART = rf"(?:{_BARE}|{_QUOTED})"
_KEY_RE = re.compile(rf"^\s*({_KEYPART}(?:\s*\.\s*{_KEYPART})*)\s*=")
_HEADER_RE = re.compile(rf"^\s*(\[\[|\[)\s*({_KEYPART}(?:\s*\.\s*{_KEYPART})*)\s*(\]\]|\])\s*(#.*)?$")
_INLINE_KEY_RE = re.compile(rf"[{{,]\s*({_KEYPART})\s*=")


def _split_key(text: str) -> tuple[str, ...]:
    parts = re.findall(_KEYPART, text)
    return tuple(p[1:-1] if p[:1] in "\"'" else p for p in parts)


def _strip_strings(line: str) -> str:
    """The line without string literals and comments (for bracket counting)."""
    line = re.sub(_QUOTED, '""', line)
    return line.split("#", 1)[0]


class _KeyLines:
    """Map key paths of a TOML document to the 1-based line where they are set.

    A path is a tuple of keys with integer indices for arrays of tables,
    e.g. ``("models", "fermi", "term", 0, "params")``. Keys inside an inline
    table on one line are found too. :meth:`find` falls back to the nearest
    enclosing key, then to line 1.
    """

    def __init__(self, text: str) -> None:
        self.where: dict[tuple, int] = {}
        counts: dict[tuple, int] = {}
        table: tuple = ()
        depth = 0                 # open brackets of a multi-line value
        in_string = False         # inside a multi-line string
        for number, line in enumerate(text.splitlines(), start=1):
            if in_string:
                if line.count('"""') % 2 == 1 or line.count("'''") % 2 == 1:
                    in_string = False
                continue
            if depth > 0:
                bare = _strip_strings(line)
                depth += bare.count("[") + bare.count("{") - bare.count("]") - bare.count("}")
                continue
            header = _HEADER_RE.match(line)
            if header:
                raw = _split_key(header.group(2))
                table = self._indexed(raw, counts, is_array=header.group(1) == "[[")
                self.where.setdefault(table, number)
                continue
            key = _KEY_RE.match(line)
            if not key:
                continue
            path = table + _split_key(key.group(1))
            self.where.setdefault(path, number)
            rest = line[key.end():]
            for inner in _INLINE_KEY_RE.finditer(_strip_strings_keep_keys(rest)):
                self.where.setdefault(path + _split_key(inner.group(1)), number)
            if rest.count('"""') % 2 == 1 or rest.count("'''") % 2 == 1:
                in_string = True
                continue
            bare = _strip_strings(rest)
            depth = max(0, bare.count("[") + bare.count("{") - bare.count("]") - bare.count("}"))

    @staticmethod
    def _indexed(raw: tuple, counts: dict, is_array: bool) -> tuple:
        out: list = []
        for i, part in enumerate(raw):
            out.append(part)
            prefix = tuple(raw[: i + 1])
            last = i == len(raw) - 1
            if last and is_array:
                counts[prefix] = counts.get(prefix, 0) + 1
                out.append(counts[prefix] - 1)
            elif prefix in counts:
                out.append(counts[prefix] - 1)
        return tuple(out)

    def find(self, path: tuple) -> int:
        path = tuple(path)
        while path:
            if path in self.where:
                return self.where[path]
            path = path[:-1]
        return 1


def _strip_strings_keep_keys(rest: str) -> str:
    """Blank out string values but keep quoted keys that are followed by '='."""
    return re.sub(rf"({_QUOTED})(?!\s*=)", '""', rest)


def _dotted(path: Iterable) -> str:
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + str(part)
    return out


# ---------------------------------------------------------------------------------------------
# spec objects
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ChannelSpec:
    """One channel entry of a spec: l with an optional j (as 2j), or a Dirac kappa.

    ``levels`` overrides the section's number of levels for this channel.
    """

    l: int
    two_j: int | None = None
    kappa: int | None = None
    levels: int | None = None
    text: str = ""

    def expand(self, equation: str) -> list[tuple[dict, str]]:
        """(solve keywords, channel name) for ``equation``."""
        if equation == "dirac":
            if self.kappa is not None:
                kappas = [self.kappa]
            elif self.two_j is not None:
                kappas = [-(self.l + 1) if self.two_j == 2 * self.l + 1 else self.l]
            else:
                kappas = [-(self.l + 1)] + ([self.l] if self.l > 0 else [])
            out = []
            for k in kappas:
                l = k if k > 0 else -k - 1
                out.append(({"kappa": k}, f"{_LETTERS[l]}{2 * abs(k) - 1}/2"))
            return out
        return [({"l": self.l}, _LETTERS[self.l] if self.l < len(_LETTERS) else f"l={self.l}")]


def _channels_for(channels: Iterable[ChannelSpec], equation: str, levels: int) -> list[tuple[dict, str, int]]:
    """Unique (solve keywords, name, levels) of a channel list for one equation."""
    seen: dict[str, list] = {}
    for ch in channels:
        for kw, name in ch.expand(equation):
            n = ch.levels or levels
            if name in seen:
                seen[name][2] = max(seen[name][2], n)
            else:
                seen[name] = [kw, name, n]
    return [tuple(v) for v in seen.values()]


class _AtomicAsNuclear(Term):
    """A term in atomic units presented in MeV and fm.

    ``make_potential(..., units="nuclear")`` reads a term *instance* as a
    function of r in fm giving MeV and wraps it accordingly; this wrapper is
    its inverse, so a term built with its own parameters (already converted to
    atomic units) comes back unchanged.
    """

    def __init__(self, inner: Term, label: str) -> None:
        self.inner = inner
        self.values = {}
        self.name = inner.name
        self.label = label

    def _evaluate(self, r):
        return self.inner(np.asarray(r) * FM_IN_BOHR) / MEV_IN_HARTREE

    @property
    def origin_charge(self) -> float:
        return self.inner.origin_charge / (MEV_IN_HARTREE * FM_IN_BOHR)

    @property
    def tail_charge(self) -> float:
        return self.inner.tail_charge / (MEV_IN_HARTREE * FM_IN_BOHR)

    @property
    def origin_inverse_square(self) -> float:
        return self.inner.origin_inverse_square / (MEV_IN_HARTREE * FM_IN_BOHR**2)

    @property
    def far(self) -> str:  # type: ignore[override]
        return self.inner.far

    def __repr__(self) -> str:
        return repr(self.inner)


@dataclass(frozen=True)
class TermEntry:
    """A ``[[models.NAME.term]]`` entry: one term with its own parameters."""

    key: tuple
    name: str | None
    expression: str | None
    role: str
    params: dict

    def build(self, units: str):
        """The term as :func:`~boundkit.potentials.make_potential` should receive it."""
        from .potentials import _make_term
        from .potentials.expression import ExpressionTerm

        if self.expression is not None:
            term = ExpressionTerm(self.expression, self.params)
            unused = sorted(set(self.params) - set(term.parameter_names))
            if unused:
                raise ValueError(f"params: the expression takes no parameter {unused[0]!r}")
            return term                      # make_potential reads it in the spec's unit system
        term = _make_term(self.name, self.params, set(), units)   # atomic units from here on
        if units == "nuclear":
            return _AtomicAsNuclear(term, self.name)
        return term


@dataclass(frozen=True)
class ModelDef:
    """A named potential model of a spec (``[models.NAME]``)."""

    name: str
    key: tuple
    label: str
    terms: tuple[str, ...] = ()
    scalar_terms: tuple[str, ...] = ()
    expressions: tuple[str, ...] = ()
    scalar_expressions: tuple[str, ...] = ()
    params: dict = field(default_factory=dict)
    entries: tuple[TermEntry, ...] = ()

    def builtin_parameters(self) -> set[str]:
        """Parameter names of the built-in terms listed in ``terms`` and ``scalar_terms``."""
        from .potentials import TERMS

        return {p.name for t in self.terms + self.scalar_terms for p in TERMS[t].parameters}

    def arguments(self, units: str, overrides: dict | None = None) -> tuple[list, list, dict]:
        """(vector terms, scalar terms, shared parameters) for ``solve``-like calls with ``units``."""
        from .potentials.expression import ExpressionTerm, parse_expression

        params = {**self.params, **(overrides or {})}
        vector: list = list(self.terms)
        scalar: list = list(self.scalar_terms)
        for text, into in [(t, vector) for t in self.expressions] + [(t, scalar) for t in self.scalar_expressions]:
            names = parse_expression(text).parameter_names
            into.append(ExpressionTerm(text, {k: v for k, v in params.items() if k in names}))
        for entry in self.entries:
            (scalar if entry.role == "scalar" else vector).append(entry.build(units))
        named = {k: v for k, v in params.items() if k in self.builtin_parameters()}
        return vector, scalar, named

    def potential(self, units: str, overrides: dict | None = None):
        """The model as a :class:`~boundkit.potentials.Potential` (atomic units inside)."""
        from .potentials import make_potential

        vector, scalar, params = self.arguments(units, overrides)
        pot = make_potential(vector or [], params, scalar=scalar or None, units=units)
        return pot


@dataclass(frozen=True)
class ParticleSpec:
    name: str | None = None
    mass_mev: float | None = None
    nucleus_mass_mev: float | None = None

    def kwargs(self) -> dict:
        return {"particle": self.name, "mass_mev": self.mass_mev, "nucleus_mass_mev": self.nucleus_mass_mev}


@dataclass(frozen=True)
class SolveSection:
    key: tuple
    models: tuple[str, ...]
    equations: tuple[str, ...]
    channels: tuple[ChannelSpec, ...]
    levels: int
    tolerance: float
    method: str
    order: int | None
    figures: tuple[str, ...]
    radii: bool
    differences: tuple[tuple[str, str], ...]
    reference: str | None


@dataclass(frozen=True)
class ConvergeSection:
    key: tuple
    model: str
    equation: str
    channel: ChannelSpec
    levels: int
    methods: tuple[str, ...]
    order: int


@dataclass(frozen=True)
class ScanSection:
    key: tuple
    model: str
    parameter: str
    values: tuple[float, ...]
    equation: str
    channels: tuple[ChannelSpec, ...]
    levels: int
    tolerance: float
    method: str
    workers: int | None
    differences: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class CriticalSection:
    key: tuple
    model: str
    parameter: str
    states: tuple[str, ...]
    equation: str
    bracket: tuple[float, float] | None
    tolerance: float
    energy_tolerance: float
    kind: str | None
    workers: int | None


@dataclass(frozen=True)
class CompareSection:
    key: tuple
    model: str
    l_max: int
    levels: int
    tolerance: float


@dataclass(frozen=True)
class RunSpec:
    """A checked run spec (see the module docstring for the format)."""

    path: Path
    text: str
    title: str
    description: str
    units: str
    energy_unit: str
    length_unit: str
    figure_format: str
    particle: ParticleSpec
    equations: tuple[str, ...]
    channels: tuple[ChannelSpec, ...]
    levels: int
    tolerance: float
    method: str
    order: int | None
    models: dict
    solve: SolveSection | None = None
    converge: tuple[ConvergeSection, ...] = ()
    scan: tuple[ScanSection, ...] = ()
    critical: tuple[CriticalSection, ...] = ()
    compare: tuple[CompareSection, ...] = ()

    @property
    def name(self) -> str:
        """Short name of the spec: the file name without suffix."""
        return self.path.stem

    def line_of(self, key: tuple) -> int:
        return _KeyLines(self.text).find(key)

    def where(self, key: tuple) -> str:
        """``run spec FILE, line N, key 'K'`` for messages."""
        return f"run spec {self.path}, line {self.line_of(key)}, key {_dotted(key)!r}"


# ---------------------------------------------------------------------------------------------
# reading and checking
# ---------------------------------------------------------------------------------------------
_MISSING = object()


class _Reader:
    """Typed access to the parsed TOML with file/key/line errors."""

    def __init__(self, path: Path, text: str) -> None:
        self.path = path
        self.lines = _KeyLines(text)

    def error(self, key: tuple, msg: str, at: tuple | None = None) -> ValueError:
        line = self.lines.find(key if at is None else at)
        return ValueError(f"run spec {self.path}, line {line}, key {_dotted(key)!r}: {msg}")

    def keys(self, data: dict, key: tuple, allowed: Iterable[str], required: Iterable[str] = ()) -> None:
        allowed = list(allowed)
        for k in data:
            if k not in allowed:
                raise self.error(key + (k,), f"unknown key; allowed here: {', '.join(allowed)}")
        for k in required:
            if k not in data:
                where = f"[{_dotted(key)}]" if key else "the top level"
                raise self.error(key + (k,), f"missing; add it to {where}", at=key)

    def get(self, data: dict, key: tuple, name: str, kind: str, default: Any = _MISSING) -> Any:
        if name not in data:
            if default is _MISSING:
                raise self.error(key + (name,), "missing", at=key)
            return default
        return self.convert(data[name], key + (name,), kind)

    def convert(self, value: Any, key: tuple, kind: str) -> Any:
        def want(what: str) -> ValueError:
            return self.error(key, f"expected {what}, got {_describe(value)}")

        if kind == "str":
            if not isinstance(value, str):
                raise want("a string")
            if not value.strip():
                raise self.error(key, "must not be empty")
            return value
        if kind == "int":
            if isinstance(value, bool) or not isinstance(value, int):
                raise want("an integer")
            return value
        if kind == "number":
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise want("a number")
            if not math.isfinite(value):
                raise self.error(key, "must be finite")
            return float(value)
        if kind == "bool":
            if not isinstance(value, bool):
                raise want("true or false")
            return value
        if kind == "table":
            if not isinstance(value, dict):
                raise want("a table")
            return value
        if kind.startswith("list:"):
            if not isinstance(value, list):
                raise want(f"an array ({kind[5:]} items)")
            return [self.convert(v, key + (i,), kind[5:]) for i, v in enumerate(value)]
        raise AssertionError(kind)  # pragma: no cover

    def positive(self, value: float, key: tuple) -> float:
        if not value > 0:
            raise self.error(key, f"must be positive, got {value:g}")
        return value


def _describe(value: Any) -> str:
    if isinstance(value, bool):
        return f"a boolean ({str(value).lower()})"
    if isinstance(value, str):
        return f"a string ({value!r})"
    if isinstance(value, int):
        return f"an integer ({value})"
    if isinstance(value, float):
        return f"a number ({value:g})"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__


_TOP = ("title", "description", "units", "energy_unit", "length_unit", "figure_format", "equations", "channels",
        "levels", "tolerance", "method", "order", "particle", "models") + STUDY_SECTIONS
_MODEL = ("label", "terms", "scalar_terms", "expressions", "scalar_expressions", "params", "term")
_ENTRY = ("name", "expression", "role", "params")
_SOLVE = ("models", "equations", "channels", "levels", "tolerance", "method", "order", "figures", "radii",
          "differences", "reference")
_CONVERGE = ("model", "equation", "channel", "levels", "methods", "order")
_SCAN = ("model", "parameter", "values", "range", "equation", "channels", "levels", "tolerance", "method", "workers",
         "differences")
_RANGE = ("start", "stop", "num", "spacing")
_CRITICAL = ("model", "parameter", "states", "equation", "bracket", "tolerance", "energy_tolerance", "kind",
             "workers")
_COMPARE = ("model", "l_max", "levels", "tolerance")


def _equation(rd: _Reader, value: str, key: tuple) -> str:
    name = _EQUATIONS.get(value.strip().lower().replace("_", "-"))
    if name is None:
        raise rd.error(key, f"unknown equation {value!r}; choose schrodinger, klein-gordon or dirac")
    return name


def _channel(rd: _Reader, value: Any, key: tuple) -> ChannelSpec:
    if isinstance(value, str):
        m = re.fullmatch(r"\s*([a-z])\s*(?:(\d+)\s*/\s*2)?\s*", value)
        if not m or m.group(1) not in _LETTERS:
            raise rd.error(key, f"channel {value!r} not understood; write a letter with an optional j, "
                                "e.g. \"s\", \"p3/2\", or a table { l = 1 } or { kappa = -2 }")
        l = _LETTERS.index(m.group(1))
        two_j = int(m.group(2)) if m.group(2) else None
        if two_j is not None and two_j not in (2 * l - 1, 2 * l + 1) or two_j == -1:
            raise rd.error(key, f"channel {value!r}: j must be l - 1/2 or l + 1/2 (and positive)")
        return ChannelSpec(l=l, two_j=two_j, text=value.strip())
    if isinstance(value, dict):
        rd.keys(value, key, ("l", "kappa", "levels"))
        if ("l" in value) == ("kappa" in value):
            raise rd.error(key, "a channel table needs exactly one of l = ... or kappa = ...")
        levels = rd.get(value, key, "levels", "int", None)
        if levels is not None and levels < 1:
            raise rd.error(key + ("levels",), f"must be >= 1, got {levels}")
        if "l" in value:
            l = rd.get(value, key, "l", "int")
            if l < 0:
                raise rd.error(key + ("l",), f"must be >= 0, got {l}")
            return ChannelSpec(l=l, levels=levels, text=f"l={l}")
        kappa = rd.get(value, key, "kappa", "int")
        if kappa == 0:
            raise rd.error(key + ("kappa",), "must be a non-zero integer (-1 is s1/2, 1 is p1/2, -2 is p3/2)")
        l = kappa if kappa > 0 else -kappa - 1
        return ChannelSpec(l=l, two_j=2 * abs(kappa) - 1, kappa=kappa, levels=levels, text=f"kappa={kappa}")
    raise rd.error(key, f"expected a channel string or table, got {_describe(value)}")


def _channels(rd: _Reader, data: dict, key: tuple, default) -> tuple[ChannelSpec, ...]:
    if "channels" not in data:
        return default
    value = data["channels"]
    if not isinstance(value, list) or not value:
        raise rd.error(key + ("channels",), f"expected a non-empty array of channels, got {_describe(value)}")
    return tuple(_channel(rd, v, key + ("channels", i)) for i, v in enumerate(value))


def _levels(rd: _Reader, data: dict, key: tuple, default: int) -> int:
    n = rd.get(data, key, "levels", "int", default)
    if n < 1:
        raise rd.error(key + ("levels",), f"must be >= 1, got {n}")
    return n


def _tolerance(rd: _Reader, data: dict, key: tuple, default: float) -> float:
    tol = rd.get(data, key, "tolerance", "number", default)
    if not 0 < tol < 1:
        raise rd.error(key + ("tolerance",), f"must lie between 0 and 1, got {tol:g}")
    return tol


def _method(rd: _Reader, data: dict, key: tuple, default: str, order_default: int | None):
    from .discretize import get_method

    method = rd.get(data, key, "method", "str", default)
    order = rd.get(data, key, "order", "int", order_default)
    try:
        get_method(method, order)
    except ValueError as exc:
        raise rd.error(key + ("order" if "order" in str(exc).split(":")[0] else "method",),
                       str(exc).split(": ", 1)[-1]) from None
    return method, order


def _workers(rd: _Reader, data: dict, key: tuple) -> int | None:
    workers = rd.get(data, key, "workers", "int", None)
    if workers is not None and workers < 1:
        raise rd.error(key + ("workers",), f"must be >= 1, got {workers}")
    return workers


def _pairs(rd: _Reader, data: dict, key: tuple) -> tuple[tuple[str, str], ...]:
    if "differences" not in data:
        return ()
    value = data["differences"]
    out = []
    if not isinstance(value, list):
        raise rd.error(key + ("differences",), f"expected an array of [\"a\", \"b\"] pairs, got {_describe(value)}")
    for i, pair in enumerate(value):
        if not (isinstance(pair, list) and len(pair) == 2 and all(isinstance(x, str) for x in pair)):
            raise rd.error(key + ("differences", i), "each difference is a pair of level labels, "
                                                      "e.g. [\"2p1/2\", \"2s1/2\"] for E(2p1/2) - E(2s1/2)")
        for j, text in enumerate(pair):
            eq, sep, _label = text.partition(":")
            if sep and eq.strip().lower() not in _EQUATIONS:
                raise rd.error(key + ("differences", i), f"{text!r}: unknown equation {eq.strip()!r} before ':'; "
                                                          "write e.g. \"dirac:1s1/2\"")
        out.append((pair[0].strip(), pair[1].strip()))
    return tuple(out)


def _model_name(rd: _Reader, data: dict, key: tuple, models: dict) -> str:
    name = rd.get(data, key, "model", "str")
    if name not in models:
        raise rd.error(key + ("model",), f"no model {name!r}; the spec defines {', '.join(models)}")
    return name


def _sections(rd: _Reader, data: dict, name: str) -> list[tuple[tuple, dict]]:
    value = data.get(name)
    if value is None:
        return []
    if isinstance(value, dict):
        return [((name,), value)]
    if isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
        return [((name, i), v) for i, v in enumerate(value)]
    raise rd.error((name,), f"expected a table [{name}] or an array of tables [[{name}]], got {_describe(value)}")


def _param_error(rd: _Reader, exc: Exception, key: tuple, params: dict) -> ValueError:
    """Point a potential-building error at the parameter it names, when it names one."""
    msg = str(exc)
    for name in re.findall(r"['\"]([A-Za-z_][A-Za-z0-9_]*)['\"]", msg):
        if name in params:
            return rd.error(key + ("params", name), msg)
    return rd.error(key, msg)


def _read_model(rd: _Reader, name: str, data: Any, key: tuple, units: str) -> ModelDef:
    from .potentials import TERMS
    from .potentials.expression import parse_expression

    rd.convert(data, key, "table")
    rd.keys(data, key, _MODEL)
    lists = {}
    for k in ("terms", "scalar_terms", "expressions", "scalar_expressions"):
        lists[k] = tuple(rd.get(data, key, k, "list:str", []))
    for k in ("terms", "scalar_terms"):
        for i, t in enumerate(lists[k]):
            if t.strip().lower() not in TERMS:
                raise rd.error(key + (k, i), f"unknown built-in term {t!r}; built-ins are {', '.join(sorted(TERMS))}")
        lists[k] = tuple(t.strip().lower() for t in lists[k])
    expr_params: set = set()
    for k in ("expressions", "scalar_expressions"):
        for i, text in enumerate(lists[k]):
            try:
                expr_params |= set(parse_expression(text).parameter_names)
            except ValueError as exc:
                raise rd.error(key + (k, i), str(exc)) from None
    params_raw = rd.get(data, key, "params", "table", {})
    params = {p: rd.convert(v, key + ("params", p), "number") for p, v in params_raw.items()}
    entries = []
    raw_entries = data.get("term", [])
    if not isinstance(raw_entries, list) or not all(isinstance(e, dict) for e in raw_entries):
        raise rd.error(key + ("term",), "write each term with its own parameters as [[models.NAME.term]]")
    for i, e in enumerate(raw_entries):
        ekey = key + ("term", i)
        rd.keys(e, ekey, _ENTRY)
        if ("name" in e) == ("expression" in e):
            raise rd.error(ekey, "give exactly one of name = \"<built-in>\" or expression = \"...\"")
        tname = rd.get(e, ekey, "name", "str", None)
        if tname is not None and tname.strip().lower() not in TERMS:
            raise rd.error(ekey + ("name",), f"unknown built-in term {tname!r}; built-ins are {', '.join(sorted(TERMS))}")
        expr = rd.get(e, ekey, "expression", "str", None)
        role = rd.get(e, ekey, "role", "str", "vector")
        if role not in ("vector", "scalar"):
            raise rd.error(ekey + ("role",), f"must be \"vector\" or \"scalar\", got {role!r}")
        eparams = {p: rd.convert(v, ekey + ("params", p), "number")
                   for p, v in rd.get(e, ekey, "params", "table", {}).items()}
        entry = TermEntry(ekey, tname.strip().lower() if tname else None, expr, role, eparams)
        try:
            entry.build(units)
        except ValueError as exc:
            raise _param_error(rd, exc, ekey, eparams) from None
        entries.append(entry)
    model = ModelDef(name=name, key=key, label=rd.get(data, key, "label", "str", name), params=params,
                     entries=tuple(entries), **lists)
    if not (model.terms or model.scalar_terms or model.expressions or model.scalar_expressions or model.entries):
        raise rd.error(key, "the model has no terms; add terms = [\"coulomb\"], expressions = [...] or a "
                            f"[[models.{name}.term]]")
    known = model.builtin_parameters() | expr_params
    for p in params:
        if p not in known:
            raise rd.error(key + ("params", p), f"no term of model {name!r} takes this parameter; its terms take "
                                                f"{', '.join(sorted(known)) or 'none'}")
    try:
        model.potential(units)
    except ValueError as exc:
        raise _param_error(rd, exc, key, params) from None
    return model


def _check_studies_available(rd: _Reader, key: tuple, section: str, function: str) -> None:
    try:
        mod = importlib.import_module("boundkit.studies")
    except ImportError as exc:
        raise rd.error(key, f"the [{section}] study needs boundkit.studies, which is not available in this "
                            f"installation ({exc}); remove the section or install a boundkit that has it") from None
    if not hasattr(mod, function):
        raise rd.error(key, f"the [{section}] study needs boundkit.studies.{function}, which this installation "
                            "does not provide; remove the section")


def load_spec(path: str | os.PathLike, text: str | None = None) -> RunSpec:
    """Read and check a run spec.

    Parameters
    ----------
    path : str or path-like
        The TOML file (see the module docstring for the format).
    text : str, optional
        The file's contents, when already read.

    Returns
    -------
    RunSpec

    Raises
    ------
    ValueError
        For an unreadable file, invalid TOML, an unknown key, a wrong type, a
        missing field or an unusable value; the message names the file, the
        key and its line.
    """
    path = Path(path)
    if text is None:
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise ValueError(f"run spec {path}: cannot read it ({exc.strerror or exc})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        where = f", line {m.group(1)}" if m else ""
        raise ValueError(f"run spec {path}{where}: not valid TOML ({exc})") from None
    rd = _Reader(path, text)
    rd.keys(data, (), _TOP, required=("title", "description", "models"))
    title = rd.get(data, (), "title", "str")
    description = rd.get(data, (), "description", "str")
    units = rd.get(data, (), "units", "str", "atomic")
    if units not in ("atomic", "nuclear"):
        raise rd.error(("units",), f"must be \"atomic\" (hartree, bohr) or \"nuclear\" (MeV, fm), got {units!r}")
    nuclear = units == "nuclear"
    try:
        e_unit = canonical_energy_unit(rd.get(data, (), "energy_unit", "str", "MeV" if nuclear else "hartree"))
    except ValueError as exc:
        raise rd.error(("energy_unit",), str(exc).split(": ", 1)[-1]) from None
    try:
        l_unit = canonical_length_unit(rd.get(data, (), "length_unit", "str", "fm" if nuclear else "bohr"))
    except ValueError as exc:
        raise rd.error(("length_unit",), str(exc).split(": ", 1)[-1]) from None
    fmt = rd.get(data, (), "figure_format", "str", "png").lower().lstrip(".")
    if fmt not in _FORMATS:
        raise rd.error(("figure_format",), f"must be one of {', '.join(_FORMATS)}, got {fmt!r}")

    # particle
    pdata = rd.get(data, (), "particle", "table", {})
    rd.keys(pdata, ("particle",), ("name", "mass_mev", "nucleus_mass_mev"))
    pname = rd.get(pdata, ("particle",), "name", "str", None)
    pmass = rd.get(pdata, ("particle",), "mass_mev", "number", None)
    nmass = rd.get(pdata, ("particle",), "nucleus_mass_mev", "number", None)
    if pmass is not None:
        rd.positive(pmass, ("particle", "mass_mev"))
    if nmass is not None:
        rd.positive(nmass, ("particle", "nucleus_mass_mev"))
    if pmass is None and pname is not None:
        try:
            get_particle(pname.strip().lower())
        except ValueError as exc:
            raise rd.error(("particle", "name"), str(exc).split(": ", 1)[-1] +
                           "; or give mass_mev = ... for another particle") from None
        pname = pname.strip().lower()
    particle = ParticleSpec(pname, pmass, nmass)

    # defaults for the studies
    equations = tuple(_equation(rd, e, ("equations", i))
                      for i, e in enumerate(rd.get(data, (), "equations", "list:str", ["dirac"])))
    if not equations:
        raise rd.error(("equations",), "give at least one equation")
    channels = _channels(rd, data, (), (ChannelSpec(l=0, text="s"),))
    levels = _levels(rd, data, (), 3)
    tolerance = _tolerance(rd, data, (), 1e-10)
    method, order = _method(rd, data, (), "auto", None)

    # models
    mdata = rd.get(data, (), "models", "table")
    if not mdata:
        raise rd.error(("models",), "define at least one model, e.g. [models.point] with terms = [\"coulomb\"]")
    models = {name: _read_model(rd, name, m, ("models", name), units) for name, m in mdata.items()}

    if not any(s in data for s in STUDY_SECTIONS):
        raise rd.error(("solve",), "the spec asks for no study; add at least one of "
                                   + ", ".join(f"[{s}]" for s in STUDY_SECTIONS), at=())

    solve_sec = None
    if "solve" in data:
        key = ("solve",)
        s = rd.convert(data["solve"], key, "table")
        rd.keys(s, key, _SOLVE)
        names = tuple(rd.get(s, key, "models", "list:str", list(models)))
        for i, n in enumerate(names):
            if n not in models:
                raise rd.error(key + ("models", i), f"no model {n!r}; the spec defines {', '.join(models)}")
        eqs = tuple(_equation(rd, e, key + ("equations", i))
                    for i, e in enumerate(rd.get(s, key, "equations", "list:str", list(equations))))
        figs = tuple(rd.get(s, key, "figures", "list:str", list(_FIGURES)))
        for i, f in enumerate(figs):
            if f not in _FIGURES:
                raise rd.error(key + ("figures", i), f"unknown figure {f!r}; choose from {', '.join(_FIGURES)}")
        ref = rd.get(s, key, "reference", "str", None)
        if ref is not None and ref not in names:
            raise rd.error(key + ("reference",), f"the reference must be one of the solved models: {', '.join(names)}")
        m, o = _method(rd, s, key, method, order)
        solve_sec = SolveSection(key, names, eqs, _channels(rd, s, key, channels), _levels(rd, s, key, levels),
                                 _tolerance(rd, s, key, tolerance), m, o, figs,
                                 rd.get(s, key, "radii", "bool", True), _pairs(rd, s, key), ref)

    converge_secs = []
    for key, s in _sections(rd, data, "converge"):
        rd.keys(s, key, _CONVERGE, required=("model",))
        ch = (_channel(rd, s["channel"], key + ("channel",)),) if "channel" in s else channels[:1]
        meths = tuple(rd.get(s, key, "methods", "list:str", ["spectral", "finite-difference"]))
        for i, mth in enumerate(meths):
            if mth not in ("spectral", "finite-difference"):
                raise rd.error(key + ("methods", i), f"must be spectral or finite-difference, got {mth!r}")
        converge_secs.append(ConvergeSection(
            key, _model_name(rd, s, key, models),
            _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",)),
            ch[0], _levels(rd, s, key, 1), meths, rd.get(s, key, "order", "int", 8)))

    scan_secs = []
    for key, s in _sections(rd, data, "scan"):
        rd.keys(s, key, _SCAN, required=("model", "parameter"))
        _check_studies_available(rd, key, "scan", "scan")
        model = _model_name(rd, s, key, models)
        param = rd.get(s, key, "parameter", "str")
        if param not in models[model].builtin_parameters():
            raise rd.error(key + ("parameter",),
                           f"a scan varies a parameter of a built-in term of model {model!r} "
                           f"({', '.join(sorted(models[model].builtin_parameters())) or 'none'}); "
                           f"{param!r} is not one")
        if ("values" in s) == ("range" in s):
            raise rd.error(key + ("values",), "give exactly one of values = [...] or range = {...}", at=key)
        if "values" in s:
            values = tuple(rd.get(s, key, "values", "list:number"))
            if not values:
                raise rd.error(key + ("values",), "give at least one value")
        else:
            r = rd.get(s, key, "range", "table")
            rk = key + ("range",)
            rd.keys(r, rk, _RANGE, required=("start", "stop", "num"))
            start, stop = rd.get(r, rk, "start", "number"), rd.get(r, rk, "stop", "number")
            num = rd.get(r, rk, "num", "int")
            if num < 2:
                raise rd.error(rk + ("num",), f"must be >= 2, got {num}")
            spacing = rd.get(r, rk, "spacing", "str", "linear")
            if spacing not in ("linear", "log"):
                raise rd.error(rk + ("spacing",), f"must be \"linear\" or \"log\", got {spacing!r}")
            if spacing == "log" and not (start > 0 and stop > 0):
                raise rd.error(rk + ("start",), "a log range needs start > 0 and stop > 0")
            grid = np.geomspace(start, stop, num) if spacing == "log" else np.linspace(start, stop, num)
            values = tuple(float(v) for v in grid)
        for i, v in enumerate(values):
            try:
                models[model].potential(units, {param: v})
            except ValueError as exc:
                raise rd.error(key + ("values" if "values" in s else "range",), f"value {v:g}: {exc}") from None
        m, _o = _method(rd, s, key, method, None)
        workers = _workers(rd, s, key)
        scan_secs.append(ScanSection(
            key, model, param, values,
            _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",)),
            _channels(rd, s, key, channels), _levels(rd, s, key, levels), _tolerance(rd, s, key, tolerance), m,
            workers, _pairs(rd, s, key)))

    critical_secs = []
    for key, s in _sections(rd, data, "critical"):
        rd.keys(s, key, _CRITICAL, required=("model", "states"))
        _check_studies_available(rd, key, "critical", "critical")
        model = _model_name(rd, s, key, models)
        param = rd.get(s, key, "parameter", "str", "screening_length")
        if param not in models[model].builtin_parameters():
            raise rd.error(key + ("parameter",),
                           f"must be a parameter of a built-in term of model {model!r} "
                           f"({', '.join(sorted(models[model].builtin_parameters())) or 'none'}); got {param!r}")
        states = tuple(x.strip() for x in rd.get(s, key, "states", "list:str"))
        if not states:
            raise rd.error(key + ("states",), "name at least one state, e.g. [\"1s\"]")
        for i, st in enumerate(states):
            if not re.fullmatch(r"\d+[a-z](\d+/2)?", st):
                raise rd.error(key + ("states", i), f"state {st!r} not understood; write e.g. \"1s\", \"2p\" or "
                                                    "\"2p3/2\"")
        eq = _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",))
        for i, st in enumerate(states):
            if eq == "dirac" and not st.endswith("/2") and not st.endswith("s"):
                raise rd.error(key + ("states", i), f"the Dirac equation needs j in {st!r}, e.g. \"{st}1/2\" "
                                                    f"or \"{st}3/2\"")
        bracket = rd.get(s, key, "bracket", "list:number", None)
        if bracket is not None and (len(bracket) != 2 or not bracket[0] < bracket[1]):
            raise rd.error(key + ("bracket",), "write two increasing numbers, e.g. [0.5, 20.0]")
        kind = rd.get(s, key, "kind", "str", None)
        if kind is not None and kind not in ("unbind", "dive"):
            raise rd.error(key + ("kind",), f"must be \"unbind\" or \"dive\", got {kind!r}")
        etol = rd.get(s, key, "energy_tolerance", "number", 1e-10)
        if not 0 < etol < 1:
            raise rd.error(key + ("energy_tolerance",), f"must lie between 0 and 1, got {etol:g}")
        critical_secs.append(CriticalSection(
            key, model, param, states, eq, tuple(bracket) if bracket else None, _tolerance(rd, s, key, 1e-8),
            etol, kind, _workers(rd, s, key)))

    compare_secs = []
    for key, s in _sections(rd, data, "compare"):
        rd.keys(s, key, _COMPARE, required=("model",))
        _check_studies_available(rd, key, "compare", "compare")
        l_max = rd.get(s, key, "l_max", "int", 1)
        if l_max < 0:
            raise rd.error(key + ("l_max",), f"must be >= 0, got {l_max}")
        compare_secs.append(CompareSection(key, _model_name(rd, s, key, models), l_max, _levels(rd, s, key, levels),
                                           _tolerance(rd, s, key, tolerance)))

    return RunSpec(path=path, text=text, title=title.strip(), description=description.strip(), units=units,
                   energy_unit=e_unit, length_unit=l_unit, figure_format=fmt, particle=particle,
                   equations=equations, channels=channels, levels=levels, tolerance=tolerance, method=method,
                   order=order, models=models, solve=solve_sec, converge=tuple(converge_secs),
                   scan=tuple(scan_secs), critical=tuple(critical_secs), compare=tuple(compare_secs))


# ---------------------------------------------------------------------------------------------
# running
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class RunReport:
    """What :func:`run` did.

    Attributes
    ----------
    out_dir : Path
        The output folder.
    files : tuple of str
        Files written, relative to ``out_dir``.
    seconds : float
        Wall time of the run.
    problems : tuple of str
        Levels not found, tolerances not met, studies that failed (empty when
        everything went as asked).
    headline : tuple of str
        The headline numbers of ``report.md``, one line each.
    """

    out_dir: Path
    files: tuple[str, ...]
    seconds: float
    problems: tuple[str, ...]
    headline: tuple[str, ...]

    @property
    def success(self) -> bool:
        return not self.problems


def _slug(text: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", str(text)).strip("-").lower()
    return s or "x"


def _json_default(x):
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    if isinstance(x, np.ndarray):
        return x.tolist()
    if isinstance(x, Path):
        return str(x)
    if isinstance(x, tuple):
        return list(x)
    try:
        return float(x)
    except (TypeError, ValueError):
        return str(x)


def _clean(x):
    """JSON-safe copy: non-finite floats become None, tuple keys become strings."""
    if isinstance(x, dict):
        return {(k if isinstance(k, str) else ":".join(map(str, k)) if isinstance(k, tuple) else str(k)): _clean(v)
                for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_clean(v) for v in x]
    if isinstance(x, (float, np.floating)):
        x = float(x)
        return x if math.isfinite(x) else None
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, np.ndarray):
        return _clean(x.tolist())
    return x


def _umask_mode(mode: int) -> int:
    """``mode`` less the process umask (mkstemp and mkdtemp create private files)."""
    mask = os.umask(0)
    os.umask(mask)
    return mode & ~mask


def _atomic_write(path: Path, data: str | bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and os.replace."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data.encode("utf-8") if isinstance(data, str) else data)
        os.chmod(tmp, _umask_mode(0o666))
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def _csv_text(rows: list[dict], columns: list[str] | None = None) -> str:
    if columns is None:
        columns = []
        for r in rows:
            for k in r:
                if k not in columns:
                    columns.append(k)
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=columns, extrasaction="ignore", lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({k: _csv_value(r.get(k)) for k in columns})
    return buf.getvalue()


def _csv_value(v):
    if v is None:
        return ""
    if isinstance(v, (float, np.floating)):
        return repr(float(v))
    if isinstance(v, (list, tuple, dict)):
        return json.dumps(_clean(v))
    return v


def _fmt(x: float | None, digits: int = 10) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x:.{digits}g}"


def _looks_like_output(path: Path) -> bool:
    return path.is_dir() and ((path / "results.json").is_file() or not any(path.iterdir()))


def _check_target(out: Path, force: bool) -> None:
    if not os.path.lexists(out):
        return
    if not force:
        raise FileExistsError(f"output folder {out} exists; choose another with --out or replace it with --force")
    if not _looks_like_output(out):
        raise FileExistsError(f"output folder {out} exists and does not hold a boundkit run (no results.json); "
                              "refusing to replace it even with --force: remove it yourself or choose another")


def run(spec: RunSpec | str | os.PathLike, out_dir: str | os.PathLike, force: bool = False) -> RunReport:
    """Run every study of a spec and write the results into ``out_dir``.

    Parameters
    ----------
    spec : RunSpec or path
        A checked spec, or the path of a spec file (read with :func:`load_spec`).
    out_dir : path
        Output folder; it must not exist unless ``force`` is true.
    force : bool
        Replace an existing output folder of an earlier run (a folder holding
        ``results.json``, or an empty one).

    Returns
    -------
    RunReport

    Raises
    ------
    ValueError
        A bad spec (file, key and line in the message).
    FileExistsError
        ``out_dir`` exists and ``force`` is false, or it does not look like
        boundkit output.

    Notes
    -----
    Everything is built in a temporary sibling folder (each file written
    through a temporary name and :func:`os.replace`); only when the run has
    finished is that folder renamed to ``out_dir`` (an existing one is moved
    aside first and deleted after the rename). A run that fails on the way
    leaves ``out_dir`` as it was and no temporary folder behind.
    """
    if not isinstance(spec, RunSpec):
        spec = load_spec(spec)
    out = Path(out_dir)
    _check_target(out, force)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        os.chmod(tmp, _umask_mode(0o777))
        report = _Engine(spec, tmp).run()
        _check_target(out, force)
        _move_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return replace(report, out_dir=out)


def _move_into_place(tmp: Path, out: Path) -> None:
    if not os.path.lexists(out):
        os.rename(tmp, out)
        return
    backup = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
    os.rmdir(backup)
    os.rename(out, backup)
    try:
        os.rename(tmp, out)
    except BaseException:
        os.rename(backup, out)
        raise
    if backup.is_dir():
        shutil.rmtree(backup, ignore_errors=True)
    else:
        backup.unlink(missing_ok=True)


def _call(func, **kwargs):
    """Call ``func`` with the keywords it accepts; refuse loudly when one it lacks carries information."""
    sig = inspect.signature(func)
    accepts_any = any(p.kind is inspect.Parameter.VAR_KEYWORD for p in sig.parameters.values())
    if accepts_any:
        return func(**kwargs)
    given = {k: v for k, v in kwargs.items() if k in sig.parameters}
    lost = [k for k, v in kwargs.items() if k not in sig.parameters and v not in (None, "atomic", [], ())]
    if lost:
        raise ValueError(f"boundkit.studies.{func.__name__} does not take {', '.join(lost)}, which this spec needs")
    return func(**given)


class _Engine:
    """Runs the sections of one spec into one (temporary) folder."""

    def __init__(self, spec: RunSpec, folder: Path) -> None:
        self.spec = spec
        self.folder = folder
        self.files: list[str] = []
        self.problems: list[str] = []
        self.headline: list[str] = []
        self.md: list[str] = []
        self.figures: list[tuple[str, str]] = []
        self.results: dict[str, Any] = {}
        self.e_unit = spec.energy_unit
        self.l_unit = spec.length_unit

    # -- helpers ---------------------------------------------------------------------------
    def write(self, name: str, data: str | bytes) -> None:
        _atomic_write(self.folder / name, data)
        self.files.append(name)

    def figure(self, stem: str, caption: str, draw) -> None:
        name = f"{stem}.{self.spec.figure_format}"
        try:
            draw(self.folder / name)
            os.chmod(self.folder / name, _umask_mode(0o666))   # save_figure writes through mkstemp
        except Exception as exc:   # a figure must not sink the numbers
            log.warning("figure %s failed: %s", name, exc)
            self.problems.append(f"figure {name} could not be drawn: {exc}")
            return
        self.files.append(name)
        self.figures.append((name, caption))

    def E(self, hartree: float | None) -> float | None:
        return None if hartree is None else float(hartree_to(hartree, self.e_unit))

    def L(self, bohr: float | None) -> float | None:
        return None if bohr is None else float(bohr_to(bohr, self.l_unit))

    def particle_kwargs(self) -> dict:
        return self.spec.particle.kwargs()

    # -- the run ---------------------------------------------------------------------------
    def run(self) -> RunReport:
        t0 = time.perf_counter()
        spec = self.spec
        self.write("spec.toml", spec.text)
        if spec.solve is not None:
            self._solve(spec.solve)
            log.info("[solve] done in %.1f s", time.perf_counter() - t0)
        for i, sec in enumerate(spec.converge):
            self._guard(sec.key, lambda: self._converge(sec, self._suffix(spec.converge, i)))
        for i, sec in enumerate(spec.scan):
            self._guard(sec.key, lambda: self._scan(sec, self._suffix(spec.scan, i)))
        for i, sec in enumerate(spec.critical):
            self._guard(sec.key, lambda: self._critical(sec, self._suffix(spec.critical, i)))
        for i, sec in enumerate(spec.compare):
            self._guard(sec.key, lambda: self._compare(sec, self._suffix(spec.compare, i)))
        seconds = time.perf_counter() - t0
        self._write_results(seconds)
        self._write_report(seconds)
        return RunReport(out_dir=self.folder, files=tuple(self.files), seconds=seconds,
                         problems=tuple(self.problems), headline=tuple(self.headline))

    @staticmethod
    def _suffix(secs, i: int) -> str:
        return "" if len(secs) == 1 else f"-{i + 1}"

    def _guard(self, key: tuple, job) -> None:
        """Run one study; a ValueError from the numerics is recorded as a problem, not raised."""
        t0 = time.perf_counter()
        try:
            job()
            log.info("[%s] done in %.1f s", _dotted(key), time.perf_counter() - t0)
        except (ValueError, RuntimeError) as exc:   # bad values met on the way; StudyError is a RuntimeError
            msg = f"[{_dotted(key)}] (line {self.spec.line_of(key)}) failed: {exc}"
            log.warning("%s", msg)
            self.problems.append(msg)
            self.results.setdefault("failed", []).append({"section": _dotted(key), "error": str(exc)})

    def _settings(self) -> dict:
        spec = self.spec
        part = get_particle(spec.particle.name, spec.particle.mass_mev)
        return {
            "units": spec.units, "energy_unit": self.e_unit, "length_unit": self.l_unit,
            "particle": part.name, "particle_mass_MeV": part.mass_mev, "particle_mass_source": part.source,
            "nucleus_mass_MeV": spec.particle.nucleus_mass_mev, "equations": list(spec.equations),
            "levels": spec.levels, "tolerance": spec.tolerance, "method": spec.method, "order": spec.order,
            "figure_format": spec.figure_format,
        }

    # -- [solve] ---------------------------------------------------------------------------
    def _solve(self, sec: SolveSection) -> None:
        from .plots import density_figure, level_diagram, radial_figure
        from .solver import solve

        spec = self.spec
        rows: list[dict] = []
        runs: list[dict] = []
        by_model: dict[str, dict[str, list]] = {}
        for mname in sec.models:
            model = spec.models[mname]
            pot = model.potential(spec.units)
            by_model[mname] = {}
            for eq in sec.equations:
                found = []
                for kw, cname, nlev in _channels_for(sec.channels, eq, sec.levels):
                    tag = f"model {mname}, {eq}, channel {cname}"
                    log.info("solve: %s (%d levels)", tag, nlev)
                    try:
                        res = solve(eq, pot, None, levels=nlev, tol=sec.tolerance, method=sec.method,
                                    order=sec.order, **kw, **self.particle_kwargs())
                    except ValueError as exc:
                        self.problems.append(f"solve {tag}: {exc}")
                        runs.append({"model": mname, "equation": eq, "channel": cname, "status": "error",
                                     "message": str(exc), "levels": []})
                        continue
                    if not res.success:
                        self.problems.append(f"solve {tag}: {res.status}: {res.message}")
                    runs.append({"model": mname, "equation": eq, "channel": cname, **kw, "requested": nlev,
                                 "status": res.status, "message": res.message,
                                 "diagnostics": {k: v for k, v in res.diagnostics.items() if k != "levels"}})
                    for lv in res.levels:
                        row = {"model": mname, "equation": eq, "channel": cname, "label": lv.label, "n": lv.n,
                               "l": lv.l, "j": lv.j, "kappa": lv.kappa, "nodes": lv.nodes,
                               "energy": self.E(lv.energy), "error_estimate": self.E(lv.error_estimate),
                               "energy_hartree": lv.energy, "error_hartree": lv.error_estimate,
                               "resolution": lv.resolution, "status": res.status}
                        if sec.radii:
                            row["mean_radius"] = self.L(mean_radius(lv))
                            row["rms_radius"] = self.L(rms_radius(lv))
                        rows.append(row)
                        found.append(lv)
                by_model[mname][eq] = sorted(found, key=lambda lv: lv.energy)
        cols = ["model", "equation", "channel", "label", "n", "l", "j", "kappa", "nodes", "energy", "error_estimate",
                "energy_hartree", "error_hartree"] + (["mean_radius", "rms_radius"] if sec.radii else []) + \
               ["resolution", "status"]
        self.write("levels.csv", _csv_text(rows, cols))
        out: dict[str, Any] = {"models": {m: {"label": spec.models[m].label, "potential": self._describe_model(m)}
                                          for m in sec.models},
                               "runs": runs, "levels": rows,
                               "columns": {"energy": self.e_unit, "error_estimate": self.e_unit,
                                           "mean_radius": self.l_unit, "rms_radius": self.l_unit}}
        # differences within one model (and one equation, unless a label names its equation)
        diffs = []
        for (a, b) in sec.differences:
            (ea, la_), (eb, lb_) = _split_label(a), _split_label(b)
            for mname, per_eq in by_model.items():
                for eq in per_eq:
                    if (ea or eb) and eq != (ea or eb):
                        continue
                    la = next((lv for lv in per_eq.get(ea or eq, []) if lv.label == la_), None)
                    lb = next((lv for lv in per_eq.get(eb or eq, []) if lv.label == lb_), None)
                    if la is None or lb is None:
                        continue
                    d = la.energy - lb.energy
                    err = math.hypot(la.error_estimate, lb.error_estimate)
                    shown = eq if not (ea or eb) else " vs ".join(dict.fromkeys([ea or eq, eb or eq]))
                    diffs.append({"model": mname, "equation": shown, "a": a, "b": b, "difference": self.E(d),
                                  "error_estimate": self.E(err), "difference_hartree": d})
            if not any(r["a"] == a and r["b"] == b for r in diffs):
                self.problems.append(f"difference E({a}) - E({b}): no model and equation has both levels")
        if diffs:
            self.write("differences.csv", _csv_text(diffs))
            out["differences"] = diffs
        # shifts against a reference model
        shifts = []
        if sec.reference:
            ref = by_model.get(sec.reference, {})
            for mname, per_eq in by_model.items():
                if mname == sec.reference:
                    continue
                for eq, lvs in per_eq.items():
                    base = {lv.label: lv for lv in ref.get(eq, [])}
                    for lv in lvs:
                        if lv.label in base:
                            d = lv.energy - base[lv.label].energy
                            shifts.append({"model": mname, "reference": sec.reference, "equation": eq,
                                           "label": lv.label, "shift": self.E(d),
                                           "error_estimate": self.E(math.hypot(lv.error_estimate,
                                                                               base[lv.label].error_estimate)),
                                           "shift_hartree": d})
            if shifts:
                self.write("shifts.csv", _csv_text(shifts))
                out["shifts"] = shifts
        self.results["solve"] = out
        self._solve_figures(sec, by_model, radial_figure, density_figure, level_diagram)
        self._solve_report(sec, rows, diffs, shifts)

    def _describe_model(self, mname: str) -> dict:
        m = self.spec.models[mname]
        return {"terms": list(m.terms), "scalar_terms": list(m.scalar_terms), "expressions": list(m.expressions),
                "scalar_expressions": list(m.scalar_expressions), "params": dict(m.params),
                "parameter_units": self.spec.units,
                "own_terms": [{"name": e.name, "expression": e.expression, "role": e.role, "params": e.params}
                              for e in m.entries],
                "built": repr(m.potential(self.spec.units))}

    def _solve_figures(self, sec, by_model, radial_figure, density_figure, level_diagram) -> None:
        spec = self.spec
        for mname, per_eq in by_model.items():
            label = spec.models[mname].label
            for eq, lvs in per_eq.items():
                if not lvs:
                    continue
                stem = f"{_slug(mname)}-{_slug(eq)}"
                if "radial" in sec.figures:
                    self.figure(f"radial-{stem}", f"Radial functions, {label}, {eq} equation",
                                lambda p, lvs=lvs, eq=eq: radial_figure(
                                    lvs, p, length_unit=self.l_unit,
                                    title=f"{label}: {eq} radial functions" + (
                                        " (solid P, dashed Q)" if eq == "dirac" else "")))
                if "density" in sec.figures:
                    self.figure(f"density-{stem}", f"Radial probability densities, {label}, {eq} equation",
                                lambda p, lvs=lvs, eq=eq: density_figure(
                                    lvs, p, length_unit=self.l_unit, title=f"{label}: {eq} radial densities"))
            if "levels" in sec.figures and any(per_eq.values()):
                pot = spec.models[mname].potential(spec.units)
                groups = {eq: lvs for eq, lvs in per_eq.items() if lvs}
                self.figure(f"levels-{_slug(mname)}", f"Potential and levels, {label}",
                            lambda p, pot=pot, groups=groups: level_diagram(
                                pot, groups, p, energy_unit=self.e_unit, length_unit=self.l_unit,
                                title=f"{label}: potential and levels"))

    def _solve_report(self, sec, rows, diffs, shifts) -> None:
        spec = self.spec
        eu, lu = self.e_unit, self.l_unit
        md = ["## Levels", "",
              f"Models {', '.join(sec.models)}; equations {', '.join(sec.equations)}; tolerance {sec.tolerance:g} "
              f"(relative); method {sec.method}. Energies are binding energies (total minus rest energy) in {eu}.",
              ""]
        head = f"| model | equation | level | energy ({eu}) | error estimate ({eu}) |"
        sep = "|---|---|---|---:|---:|"
        if sec.radii:
            head += f" <r> ({lu}) | rms radius ({lu}) |"
            sep += "---:|---:|"
        md += [head, sep]
        for r in rows:
            line = (f"| {r['model']} | {r['equation']} | {r['label']} | {_fmt(r['energy'], 12)} | "
                    f"{_fmt(r['error_estimate'], 2)} |")
            if sec.radii:
                line += f" {_fmt(r['mean_radius'], 6)} | {_fmt(r['rms_radius'], 6)} |"
            md.append(line)
        md.append("")
        # headline: the lowest level of each model and equation
        seen = set()
        for r in rows:
            k = (r["model"], r["equation"])
            if k in seen:
                continue
            lowest = min((x for x in rows if (x["model"], x["equation"]) == k), key=lambda x: x["energy_hartree"])
            seen.add(k)
            extra = f", <r> = {_fmt(lowest['mean_radius'], 5)} {lu}" if sec.radii else ""
            self.headline.append(f"{spec.models[r['model']].label}, {r['equation']}: lowest level "
                                 f"{lowest['label']} at {_fmt(lowest['energy'], 10)} {eu}{extra}")
        if diffs:
            md += ["### Differences", "", f"| model | equation | difference | value ({eu}) | error estimate ({eu}) |",
                   "|---|---|---|---:|---:|"]
            for d in diffs:
                md.append(f"| {d['model']} | {d['equation']} | E({d['a']}) - E({d['b']}) | {_fmt(d['difference'], 10)} |"
                          f" {_fmt(d['error_estimate'], 2)} |")
                self.headline.append(f"{spec.models[d['model']].label}, {d['equation']}: E({d['a']}) - E({d['b']}) = "
                                     f"{_fmt(d['difference'], 8)} {eu}")
            md.append("")
        if shifts:
            md += [f"### Shifts against model {sec.reference}", "",
                   f"| model | equation | level | E(model) - E({sec.reference}) ({eu}) | error estimate ({eu}) |",
                   "|---|---|---|---:|---:|"]
            for s in shifts:
                md.append(f"| {s['model']} | {s['equation']} | {s['label']} | {_fmt(s['shift'], 8)} | "
                          f"{_fmt(s['error_estimate'], 2)} |")
            lowest = {}
            for s in shifts:
                k = (s["model"], s["equation"])
                if k not in lowest:
                    lowest[k] = s
            for s in lowest.values():
                self.headline.append(f"E({s['model']}) - E({sec.reference}), {s['equation']} {s['label']}: "
                                     f"{_fmt(s['shift'], 6)} {eu}")
            md.append("")
        self.md += md

    # -- [converge] ------------------------------------------------------------------------
    def _converge(self, sec: ConvergeSection, suffix: str) -> None:
        from .accuracy import converge
        from .plots import convergence_figure

        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        (kw, cname), = sec.channel.expand(sec.equation)[:1]
        res = converge(sec.equation, pot, None, levels=sec.levels, methods=sec.methods, order=sec.order, **kw,
                       **self.particle_kwargs())
        self.write(f"convergence{suffix}.csv", _csv_text(res.rows, ["method", "size", "label", "energy", "error",
                                                                   "difference"]))
        self.figure(f"convergence{suffix}", f"Convergence, model {sec.model}, {sec.equation} {cname}",
                    lambda p: convergence_figure(res, p))
        self.results.setdefault("converge", []).append({
            "model": sec.model, "equation": sec.equation, "channel": cname, "energy_unit_of_rows": "hartree",
            **_clean(res.to_dict())})
        md = [f"## Convergence{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation, channel {cname}: relative error of the binding energy "
              "against resolution, measured against a spectral solve at tol 1e-13 "
              f"(table `convergence{suffix}.csv`).", "", "| method | level | observed order |", "|---|---|---:|"]
        for (m, lab), v in res.orders.items():
            md.append(f"| {m} | {lab} | {_fmt(v, 3)} |")
            if m != "spectral" and math.isfinite(v):
                self.headline.append(f"observed order of {m} ({sec.model}, {sec.equation} {lab}): {v:.2f} "
                                     f"(nominal {sec.order})")
        md.append("")
        if any(m == "spectral" for m, _ in res.orders):
            md.append("The spectral family converges faster than any power, so its log-log slope is not an "
                      "order; the figure shows the errors themselves.")
            md.append("")
        self.md += md

    # -- [scan] ----------------------------------------------------------------------------
    def _scan(self, sec: ScanSection, suffix: str) -> None:
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        channels = []
        for kw, _name, _n in _channels_for(sec.channels, sec.equation, sec.levels):
            channels.append(dict(kw))
        levels = max(n for _kw, _name, n in _channels_for(sec.channels, sec.equation, sec.levels))
        res = _call(studies.scan, equation=sec.equation, potential=vector, params=params,
                    vary={sec.parameter: list(sec.values)}, channels=channels, levels=levels, tol=sec.tolerance,
                    method=sec.method, workers=sec.workers, scalar=scalar or None, units=spec.units,
                    **self.particle_kwargs())
        rows = [dict(r) for r in _rows_of(res)]
        if hasattr(res, "to_csv"):
            self.write(f"scan{suffix}.csv", res.to_csv(self.e_unit))
        else:
            self.write(f"scan{suffix}.csv", _csv_text(rows))
        table = _scan_table(rows, sec.parameter)
        for status in ("error", "tolerance-not-met"):
            bad = [r for r in rows if r.get("status") == status]
            if bad:
                where = sorted({float(r[sec.parameter]) for r in bad if sec.parameter in r})
                first = next((r.get("message") for r in bad if r.get("message")), "")
                self.problems.append(f"scan{suffix} ({sec.model}): {len(bad)} level(s) with status {status} at "
                                     f"{sec.parameter} = {', '.join(f'{v:g}' for v in where)}"
                                     + (f" ({first})" if first else ""))
        caption = f"Levels against {sec.parameter}, model {sec.model}"
        try:
            figures = importlib.import_module("boundkit.studies.figures")
            title = f"{spec.models[sec.model].label}: levels against {sec.parameter}"
            self.figure(f"scan{suffix}", caption, lambda p: _call(figures.scan_figure, result=res, path=p,
                                                                  unit=self.e_unit, title=title))
        except ImportError:
            log.info("boundkit.studies.figures is not available; drawing the scan with the run engine's own figure")
            self.figure(f"scan{suffix}", caption,
                        lambda p: _scan_figure(table, sec.parameter, self.e_unit, p,
                                               x_unit=getattr(res, "parameter_units", {}).get(sec.parameter, ""),
                                               title=f"{spec.models[sec.model].label}: levels against "
                                                     f"{sec.parameter}"))
        entry = {"model": sec.model, "equation": sec.equation, "parameter": sec.parameter,
                 "values": list(sec.values), "energy_unit_of_rows": "hartree", "rows": rows}
        if hasattr(res, "to_dict"):
            try:
                entry["result"] = _clean(res.to_dict())
            except Exception:  # noqa: BLE001 - a richer record is optional
                pass
        md = [f"## Scan{suffix}: levels against {sec.parameter}", "",
              f"Model {sec.model}, {sec.equation} equation, {len(sec.values)} values of {sec.parameter} from "
              f"{min(sec.values):g} to {max(sec.values):g} (table `scan{suffix}.csv`, energies in {self.e_unit}).", ""]
        if table:
            labels = sorted({lab for per in table.values() for lab in per}, key=_label_order)
            md += [f"| {sec.parameter} | " + " | ".join(f"{lab} ({self.e_unit})" for lab in labels) + " |",
                   "|---:|" + "---:|" * len(labels)]
            for v in sorted(table):
                md.append(f"| {v:g} | " + " | ".join(_fmt(self.E(table[v].get(lab)), 10) for lab in labels) + " |")
            md.append("")
            gone = [lab for lab in labels if any(lab not in table[v] for v in table)]
            if gone:
                md.append("A blank (-) means the level was not found bound at that value.")
                md.append("")
        diffs = []
        p_unit = getattr(res, "parameter_units", {}).get(sec.parameter, "")
        for a, b in sec.differences:
            pts = [(v, table[v][a] - table[v][b]) for v in sorted(table) if a in table[v] and b in table[v]]
            if not pts:
                self.problems.append(f"scan{suffix}: E({a}) - E({b}) not available at any value")
                continue
            item = {"a": a, "b": b, "values": [p[0] for p in pts], "difference": [self.E(p[1]) for p in pts],
                    "difference_hartree": [p[1] for p in pts]}
            if len(pts) >= 2:
                slope = float(np.polyfit([p[0] for p in pts], [p[1] for p in pts], 1)[0])
                item["slope_per_parameter"] = self.E(slope)
            diffs.append(item)
            line = f"E({a}) - E({b}) ({self.e_unit}) at {sec.parameter} = " + ", ".join(
                f"{v:g}: {_fmt(self.E(d), 8)}" for v, d in pts) + "."
            if "slope_per_parameter" in item:
                per = f"{self.e_unit}/{p_unit}" if p_unit else f"{self.e_unit} per unit of {sec.parameter}"
                item["slope_unit"] = per
                line += f" Least-squares slope: {_fmt(item['slope_per_parameter'], 5)} {per}."
                self.headline.append(f"scan of {sec.parameter} ({sec.model}): d[E({a}) - E({b})]/d{sec.parameter} = "
                                     f"{_fmt(item['slope_per_parameter'], 5)} {per}")
            md += [line, ""]
        if diffs:
            entry["differences"] = diffs
        self.results.setdefault("scan", []).append(_clean(entry))
        self.md += md

    # -- [critical] ------------------------------------------------------------------------
    def _critical(self, sec: CriticalSection, suffix: str) -> None:
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        jobs = [dict(equation=sec.equation, potential=vector, params=params, state=state, vary=sec.parameter,
                     bracket=tuple(sec.bracket) if sec.bracket else None, tol=sec.tolerance,
                     energy_tol=sec.energy_tolerance, method=spec.method, kind=sec.kind, scalar=scalar or None,
                     units=spec.units, **self.particle_kwargs()) for state in sec.states]
        rows = []
        for state, (ok, got) in zip(sec.states, _map_jobs(_critical_job, jobs, sec.workers)):
            if not ok:
                self.problems.append(f"critical {sec.parameter} of {state} ({sec.model}): {got}")
                rows.append({"state": state, "error": got})
                continue
            rows.append({"state": state, **got})
            if got.get("status", "ok") != "ok":
                self.problems.append(f"critical {sec.parameter} of {state} ({sec.model}): {got.get('status')}: "
                                     f"{got.get('message', '')}")
        flat = [{k: v for k, v in r.items() if not isinstance(v, (dict, list))} for r in rows]
        self.write(f"critical{suffix}.csv", _csv_text(flat))
        self.results.setdefault("critical", []).append({"model": sec.model, "equation": sec.equation,
                                                         "parameter": sec.parameter, "units": spec.units,
                                                         "states": rows})
        md = [f"## Critical {sec.parameter}{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation: the value of {sec.parameter} at which each level stops "
              f"being bound (table `critical{suffix}.csv`; parameter in {spec.units} units).", "",
              f"| state | critical {sec.parameter} | details |", "|---|---:|---|"]
        for r in rows:
            value = _critical_value(r, sec.parameter)
            if "error" in r:
                details = r["error"]
            else:
                bits = []
                if isinstance(r.get("uncertainty"), float):
                    bits.append(f"+- {r['uncertainty']:.2g}")
                bits += [f"status {r['status']}"] if "status" in r else []
                bits += [f"{r['evaluations']} evaluations"] if "evaluations" in r else []
                details = ", ".join(bits)
            md.append(f"| {r['state']} | {_fmt(value, 8)} | {details} |")
            if value is not None:
                self.headline.append(f"critical {sec.parameter} of {r['state']} ({sec.model}, {sec.equation}): "
                                     f"{_fmt(value, 7)}")
        md.append("")
        self.md += md

    # -- [compare] -------------------------------------------------------------------------
    def _compare(self, sec: CompareSection, suffix: str) -> None:
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        res = _call(studies.compare, potential=pot, params=None, l_max=sec.l_max, levels=sec.levels,
                    particle=spec.particle.name, mass_mev=spec.particle.mass_mev,
                    nucleus_mass_mev=spec.particle.nucleus_mass_mev, tol=sec.tolerance, method=spec.method)
        if not (hasattr(res, "to_dict") and hasattr(res, "table")):
            raise ValueError("boundkit.studies.compare returned no comparison (this installation's studies "
                             "package does not provide it yet)")
        data = _clean(res.to_dict(self.e_unit))
        rows = _rows_of_dict(data)
        self.write(f"compare{suffix}.csv", _csv_text(rows) if rows else json.dumps(data, indent=2))
        self.results.setdefault("compare", []).append({"model": sec.model, "energy_unit": self.e_unit, **data})
        md = [f"## Equations compared{suffix}", "",
              f"Model {sec.model}: the same levels from the Schrodinger, Klein-Gordon and Dirac equations, "
              f"l <= {sec.l_max} (table `compare{suffix}.csv`; energies in {self.e_unit}).", "", "```",
              str(res.table(self.e_unit)).rstrip(), "```", ""]
        self.md += md
        if getattr(res, "success", True) is False:
            bad = {k: v for k, v in getattr(res, "statuses", {}).items() if v != "ok"}
            self.problems.append(f"compare{suffix} ({sec.model}): not every level was found or met its tolerance: "
                                 + "; ".join(f"{k}: {v}" for k, v in bad.items()))
        for row in rows[:1]:
            parts = [f"{name} {_fmt(row.get(key), 6)}" for key, name in
                     (("shift_klein_gordon", "Klein-Gordon"), ("shift_dirac_plus", "Dirac"))
                     if row.get(key) is not None]
            if parts:
                self.headline.append(f"compare ({sec.model}), {row.get('label')}: shift from Schrodinger: "
                                     + ", ".join(parts) + f" {self.e_unit}")

    # -- output ----------------------------------------------------------------------------
    def _write_results(self, seconds: float) -> None:
        spec = self.spec
        doc = {
            "boundkit_version": __version__,
            "spec": {"file": str(spec.path), "name": spec.name, "title": spec.title, "description": spec.description,
                     "sha256": hashlib.sha256(spec.text.encode("utf-8")).hexdigest()},
            "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
            "seconds": seconds,
            "units": {"energy": self.e_unit, "length": self.l_unit, "parameters": spec.units,
                      "energy_convention": "binding energy = total energy minus rest energy",
                      "energy_hartree_columns": "hartree", "energy_unit_factor_per_hartree": ENERGY_UNITS[self.e_unit],
                      "length_unit_factor_per_bohr": LENGTH_UNITS[self.l_unit]},
            "constants": constants_record(),
            "settings": self._settings(),
            **self.results,
            "problems": list(self.problems),
            "success": not self.problems,
            "headline": list(self.headline),
            "files": sorted(set(self.files) | {"results.json", "report.md"}),
        }
        self.write("results.json", json.dumps(_clean(doc), indent=2, default=_json_default) + "\n")

    def _write_report(self, seconds: float) -> None:
        spec = self.spec
        s = self._settings()
        mass = f"{s['particle_mass_MeV']:.9g} MeV"
        nucleus = (f", reduced mass with a nucleus of {s['nucleus_mass_MeV']:.9g} MeV"
                   if s["nucleus_mass_MeV"] else "")
        lines = [f"# {spec.title}", "", spec.description, "",
                 f"Computed by boundkit {__version__} in {seconds:.1f} s from `spec.toml` (a copy of "
                 f"`{spec.path.name}`). Particle: {s['particle']} ({mass}){nucleus}. Potential parameters in "
                 f"{spec.units} units ({'MeV and fm' if spec.units == 'nuclear' else 'hartree and bohr'}). "
                 f"Energies in {self.e_unit} (binding energy: total minus rest energy), lengths in {self.l_unit}. "
                 f"Constants: CODATA via scipy.constants (alpha = {constants_record()['alpha']:.12g}). "
                 "All numbers are in `results.json`; tables are CSV files.", ""]
        lines += ["## Headline numbers", ""]
        lines += [f"- {h}" for h in self.headline] or ["- (none)"]
        lines.append("")
        lines += ["## Status", ""]
        if self.problems:
            lines.append("Some things did not go as asked:")
            lines += [f"- {p}" for p in self.problems]
        else:
            lines.append("Every requested level was found and met its tolerance.")
        lines.append("")
        lines += self.md
        if self.figures:
            lines += ["## Figures", ""]
            for name, caption in self.figures:
                lines += [f"![{caption}]({name})", "", f"*{caption}* (`{name}`)", ""]
        self.write("report.md", "\n".join(lines).rstrip() + "\n")


# ---------------------------------------------------------------------------------------------
# reading study results whose exact layout belongs to boundkit.studies
# ---------------------------------------------------------------------------------------------
def _rows_of(res) -> list[dict]:
    rows = getattr(res, "rows", None)
    if rows is None and hasattr(res, "to_dict"):
        rows = res.to_dict().get("rows", [])
    return [dict(r) if not isinstance(r, dict) else r for r in (rows or [])]


def _rows_of_dict(data: dict) -> list[dict]:
    for key in ("rows", "levels", "table"):
        v = data.get(key)
        if isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            return [{k: x for k, x in r.items() if not isinstance(x, (dict, list))} for r in v]
    return []


def _scan_table(rows: list[dict], parameter: str) -> dict[float, dict[str, float]]:
    """{parameter value: {level label: energy in hartree}} from scan rows."""
    out: dict[float, dict[str, float]] = {}
    for r in rows:
        value = r.get(parameter, r.get("value"))
        label = r.get("label")
        energy = r.get("energy_hartree", r.get("energy"))
        if value is None or label is None or energy is None:
            continue
        try:
            value, energy = float(value), float(energy)
        except (TypeError, ValueError):
            continue
        if math.isfinite(energy):
            out.setdefault(value, {})[str(label)] = energy
    return out


def _critical_job(kwargs: dict) -> tuple[bool, Any]:
    """One critical search (top level, so that worker processes can run it).

    Returns (True, the result as a JSON-ready dict) or (False, the message of
    the ValueError or StudyError that stopped it).
    """
    from threadpoolctl import threadpool_limits

    studies = importlib.import_module("boundkit.studies")
    try:
        with threadpool_limits(limits=1, user_api="blas"):   # small matrices: threads only contend
            res = _call(studies.critical, **kwargs)
    except (ValueError, RuntimeError) as exc:
        return False, str(exc)
    return True, (_clean(res.to_dict()) if hasattr(res, "to_dict") else {"value": _clean(res)})


def _map_jobs(func, jobs: list, workers: int | None) -> list:
    """``[func(job) for job in jobs]``, on up to ``workers`` processes (default: all cores)."""
    workers = min(workers or os.cpu_count() or 1, len(jobs))
    if workers <= 1:
        return [func(j) for j in jobs]
    try:
        import pickle

        pickle.dumps(jobs)
    except Exception as exc:  # noqa: BLE001 - unpicklable terms: run here instead
        log.info("jobs cannot go to worker processes (%s); running them here", exc)
        return [func(j) for j in jobs]
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=workers) as pool:
        return list(pool.map(func, jobs))


def _label_order(label: str) -> tuple:
    """Sort key of a level label: n, then l, then j (``2s`` < ``2p1/2`` < ``2p3/2`` < ``3s``)."""
    m = re.match(r"(\d+)([a-z])(?:(\d+)/2)?", label)
    if not m:
        return (math.inf, label)
    return (int(m.group(1)), _LETTERS.find(m.group(2)), int(m.group(3) or 0), label)


def _scan_figure(table: dict, parameter: str, unit: str, path, title: str = "", x_unit: str = ""):
    """Levels against the scanned parameter (used when boundkit.studies.figures is not there)."""
    from .plots import _colour, plt, save_figure

    fig, ax = plt.subplots(figsize=(6.8, 4.6))
    labels = sorted({lab for per in table.values() for lab in per}, key=_label_order)
    xs = sorted(table)
    for i, lab in enumerate(labels):
        y = [hartree_to(table[x][lab], unit) if lab in table[x] else np.nan for x in xs]
        ax.plot(xs, y, "o-", ms=3.5, lw=1.4, color=_colour(i), label=lab)
    if xs and min(xs) > 0 and max(xs) / min(xs) > 20:
        ax.set_xscale("log")
    ax.axhline(0.0, color="0.6", lw=0.7)
    ax.set_xlabel(f"{parameter} ({x_unit})" if x_unit else parameter)
    ax.set_ylabel(f"binding energy ({unit})")
    ax.set_title(title or f"levels against {parameter}")
    ax.legend(fontsize=8)
    ax.grid(True, alpha=0.25)
    return save_figure(fig, path)


def _split_label(text: str) -> tuple[str | None, str]:
    """("dirac", "1s1/2") from "dirac:1s1/2"; (None, "1s1/2") from "1s1/2"."""
    eq, sep, label = text.partition(":")
    if not sep:
        return None, text.strip()
    return _EQUATIONS.get(eq.strip().lower(), eq.strip().lower()), label.strip()


def _critical_value(row: dict, parameter: str) -> float | None:
    for key in ("critical", "value", parameter, "critical_value"):
        v = row.get(key)
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            return float(v)
    return None
