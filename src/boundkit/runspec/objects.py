"""A checked run spec as frozen objects: channels, potential models, particle, the study
sections and the whole :class:`RunSpec` (reading and checking is in :mod:`.spec`)."""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable

from .._checks import MAX_GRID_POINTS
from ..states import splits_by_j
from .keylines import _KeyLines, _dotted

STUDY_SECTIONS = ("solve", "converge", "scan", "critical", "compare")
"""Sections that ask for a study; a spec needs at least one."""
_NEEDS_STUDIES = ("scan", "critical", "compare")
_EQUATIONS = {"schrodinger": "schrodinger", "schroedinger": "schrodinger", "klein-gordon": "klein-gordon",
              "kg": "klein-gordon", "dirac": "dirac"}
_LETTERS = "spdfghiklmnoqrtuv"
_FIGURES = ("radial", "density", "levels")
_FORMATS = ("png", "svg", "pdf")


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

    def expand(self, equation: str, spin_orbit: bool = False) -> list[tuple[dict, str]]:
        """(solve keywords, channel name) for ``equation``.

        Dirac: the kappa of each j the entry names (both j of an l given alone). Schrodinger with
        ``spin_orbit`` (a model with a spin-orbit term, which needs j): likewise each j, as l and j;
        otherwise the channel l, whatever j the entry names (it does not change the solve).
        """
        if self.kappa is not None:
            kappas = [self.kappa]
        elif self.two_j is not None:
            kappas = [-(self.l + 1) if self.two_j == 2 * self.l + 1 else self.l]
        else:
            kappas = [-(self.l + 1)] + ([self.l] if self.l > 0 else [])
        if splits_by_j(equation, spin_orbit):
            out = []
            for k in kappas:
                l = k if k > 0 else -k - 1
                name = f"{_LETTERS[l]}{2 * abs(k) - 1}/2"
                out.append(({"kappa": k} if equation == "dirac" else {"l": l, "j": abs(k) - 0.5}, name))
            return out
        return [({"l": self.l}, _LETTERS[self.l] if self.l < len(_LETTERS) else f"l={self.l}")]


def _channels_for(channels: Iterable[ChannelSpec], equation: str, levels: int,
                  spin_orbit: bool = False) -> list[tuple[dict, str, int]]:
    """Unique (solve keywords, name, levels) of a channel list for one equation (``spin_orbit``: of a
    model with a spin-orbit term, see :meth:`ChannelSpec.expand`)."""
    seen: dict[str, list] = {}
    for ch in channels:
        for kw, name in ch.expand(equation, spin_orbit):
            n = ch.levels or levels
            if name in seen:
                seen[name][2] = max(seen[name][2], n)
            else:
                seen[name] = [kw, name, n]
    return [tuple(v) for v in seen.values()]


@dataclass(frozen=True)
class TermEntry:
    """A ``[[models.NAME.term]]`` entry: one term with its own parameters, or a user's file.

    Exactly one of ``name`` (a built-in), ``expression``, ``table`` (a table of
    r and V) or ``model_file`` (a model file, TOML) is set. A file's path is
    stored as given in the spec and as resolved against the spec's folder
    (``path``); the file is read once, while the spec is read, into ``built``.
    """

    key: tuple
    name: str | None
    expression: str | None
    role: str
    params: dict
    table: str | None = None
    model_file: str | None = None
    path: str | None = None
    options: dict = field(default_factory=dict)
    built: Any = field(default=None, compare=False, repr=False)

    def build(self, units: str):
        """The term as :func:`~boundkit.potentials.make_potential` should receive it."""
        from ..potentials import _make_term
        from ..potentials.expression import ExpressionTerm

        if self.built is not None:
            return self.built                # a table (make_potential reads its unstated units in `units`)
                                             # or a model file's term (its own units, fixed)
        if self.expression is not None:
            term = ExpressionTerm(self.expression, self.params)
            unused = sorted(set(self.params) - set(term.parameter_names))
            if unused:
                raise ValueError(f"params: the expression takes no parameter {unused[0]!r}")
            return term                      # make_potential reads it in the spec's unit system
        return _make_term(self.name, self.params, set(), units)   # stated units: make_potential converts it no more

    def describe(self) -> str:
        """A short readable name of the term, e.g. ``table well.txt`` or ``scalar woods-saxon``."""
        what = (f"table {self.table}" if self.table else f"model file {self.model_file}" if self.model_file
                else self.name or f"expression {self.expression}")
        return ("scalar " if self.role == "scalar" else "") + what


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

    def summary(self) -> str:
        """The model's terms and parameters in one line (for ``--dry-run``)."""
        parts = list(self.terms) + [f"scalar {t}" for t in self.scalar_terms] + list(self.expressions) + \
            [f"scalar {t}" for t in self.scalar_expressions] + [e.describe() for e in self.entries]
        params = ", ".join(f"{k} = {v:g}" for k, v in self.params.items())
        return " + ".join(parts) + (f" ({params})" if params else "")

    def file_parameters(self) -> set[str]:
        """Shared parameters taken by the model files of ``files = [...]``."""
        return {p for e in self.entries if e.model_file and "files" in e.key for p in e.params}

    def builtin_parameters(self) -> set[str]:
        """Parameter names of the built-in terms listed in ``terms`` and ``scalar_terms``."""
        from ..potentials import TERMS

        return {p.name for t in self.terms + self.scalar_terms for p in TERMS[t].parameters}

    def arguments(self, units: str, overrides: dict | None = None) -> tuple[list, list, dict]:
        """(vector terms, scalar terms, shared parameters) for ``solve``-like calls with ``units``."""
        from ..potentials.expression import ExpressionTerm, parse_expression

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
        from ..potentials import make_potential

        vector, scalar, params = self.arguments(units, overrides)
        pot = make_potential(vector or [], params, scalar=scalar or None, units=units)
        return pot

    def spin_orbit(self, units: str) -> bool:
        """Whether the model has a spin-orbit term (its Schrodinger channels then need j)."""
        return self.potential(units).has_spin_orbit


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
    states: bool = False


@dataclass(frozen=True)
class ConvergeSection:
    key: tuple
    model: str
    equation: str
    channel: ChannelSpec
    levels: int
    methods: tuple[str, ...]
    order: int | None           # of the finite differences; None: the default (8)
    tolerance: float = 1e-13


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
    max_points: int = MAX_GRID_POINTS
    second: tuple[str, tuple[float, ...]] | None = None
    """The second parameter of a two-parameter scan and its values (``[scan.second]``)."""


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
    levels: int | None
    tolerance: float
    method: str
    order: int | None
    models: dict
    solve: SolveSection | None = None
    converge: tuple[ConvergeSection, ...] = ()
    scan: tuple[ScanSection, ...] = ()
    critical: tuple[CriticalSection, ...] = ()
    compare: tuple[CompareSection, ...] = ()
    labels: str = "atomic"

    @property
    def name(self) -> str:
        """Short name of the spec: the file name without suffix."""
        return self.path.stem

    def line_of(self, key: tuple) -> int:
        return _KeyLines(self.text).find(key)

    def where(self, key: tuple) -> str:
        """``run spec FILE, line N, key 'K'`` for messages."""
        return f"run spec {self.path}, line {self.line_of(key)}, key {_dotted(key)!r}"
