"""Model potential files: one TOML file per named model.

The library's own files live in ``potentials/`` at the repository root
(installed as the package ``boundkit.catalog``); a user's file is read the
same way with ``--potential-file my.toml``. The format is ours:

.. code-block:: toml

    name = "screened-hydrogen"
    description = "Hydrogen-like ion with Debye screening"
    source = "Debye and Hueckel, Phys. Z. 24, 185 (1923)"
    expression = "-Z*exp(-r/D)/r"        # or: term = "yukawa" (a built-in term)
    units = "atomic"                     # optional: "atomic" (hartree, bohr) or "nuclear" (MeV, fm)
    role = "vector"                      # optional: "vector" or "scalar"

    [parameters.Z]
    default = 1.0                        # optional
    unit = "e"
    description = "nuclear charge number"

A parameter's ``unit`` is the unit of its value (the default, and a value given
with ``params`` or ``--param``). It is written from the energy units (hartree,
eV, meV, keV, MeV, cm^-1, MHz, GHz, THz) and length units (bohr, fm, pm,
angstrom, nm) with integer powers: ``MeV``, ``1/fm``, ``eV/angstrom^2``,
``hartree*bohr^2``; a number is ``"1"`` (or ``"e"`` for a charge). A value in
another unit than the file's system reads (hartree and bohr, or MeV and fm with
``units = "nuclear"``) is converted to it: ``R`` in ``"bohr"`` in a nuclear
file is R bohr, not R fm. A unit boundkit does not know, or one of another
dimension than a built-in term's parameter (a radius in MeV), is refused.

TOML has no complex numbers: a complex default is a string in Python's
notation, ``default = "-50 - 5j"`` (spaces allowed), and only a model with an
``expression`` takes one (the expression may also contain imaginary numbers
such as ``0.1j``). Such a model is complex: :func:`boundkit.resonances` solves
with it, the real bound-state solver refuses it.

A file with an unknown key, a value of the wrong type or a missing field is
refused with the file, the key and its line.
"""
from __future__ import annotations

import math
import numbers
import re
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, Mapping

__all__ = ["ModelSpec", "read_model_file", "library_models", "library_model"]

_TOP = {"name": str, "description": str, "source": str, "expression": str, "term": str,
        "formula": str, "units": str, "role": str, "parameters": dict}
_PARAM = {"default": (int, float, str), "unit": str, "description": str}
_REQUIRED = ("name", "description", "source")


@dataclass(frozen=True)
class ModelSpec:
    """A named model potential read from a TOML file."""

    name: str
    description: str
    source: str
    path: str
    term: str | None = None
    expression: str | None = None
    formula: str = ""
    units: str = "atomic"
    role: str = "vector"
    parameters: Mapping[str, dict] = field(default_factory=dict)
    factors: Mapping[str, float] = field(default_factory=dict)
    """Per parameter: its value in the declared ``unit`` times this is its value in the unit it is read
    in (the file's system, or the built-in term's unit); 1 when they are the same unit."""

    @property
    def defaults(self) -> dict[str, float | complex]:
        """Default values; a string default (checked when the file is read) is a complex number."""
        return {k: _complex_default(v["default"]) if isinstance(v["default"], str) else float(v["default"])
                for k, v in self.parameters.items() if "default" in v}

    def build(self, params: Mapping[str, float]):
        """The term this model describes, with the file's defaults under ``params``.

        Returns (term, names of the parameters it took). Parameters are in the
        units the file declares for them (converted here to the file's unit
        system, :attr:`factors`); the term comes back in atomic units with
        ``fixed_units`` set, so a caller's ``units=`` does not convert it again.
        """
        from . import TERMS, _make_term
        from .expression import ExpressionTerm

        values = {**self.defaults, **{k: v for k, v in params.items() if k in self.parameters}}
        values = {k: v * self.factors[k] if k in self.factors and _is_number(v) else v for k, v in values.items()}
        if self.expression is not None:
            term = ExpressionTerm(self.expression, values)
            term.label = self.name
            used = set(term.parameter_names)
            term = term.in_system(self.units)
            term.fixed_units = True
            return term, used
        if self.term not in TERMS:
            raise ValueError(f"potential file {self.path}: key 'term': unknown built-in {self.term!r}; "
                             f"built-ins are {', '.join(sorted(TERMS))}")
        used: set = set()
        term = _make_term(self.term, values, used, self.units)       # stated units: fixed_units is set
        return term, used | (set(self.parameters) & set(params))


def _is_number(value) -> bool:
    """A plain number (a parameter may also be an object that follows another, such as NuclearRadius)."""
    return isinstance(value, numbers.Number) and not isinstance(value, bool)


def _unit_text(energy: int, length: int, system: str) -> str:
    """``MeV*fm^2``, ``1/fm``, ``hartree``: the unit of these powers in a unit system ('1' for a number)."""
    from ..units import system_units

    names = system_units(system)
    up = [n + (f"^{p}" if p != 1 else "") for n, p in zip(names, (energy, length)) if p > 0]
    down = [n + (f"^{-p}" if p != -1 else "") for n, p in zip(names, (energy, length)) if p < 0]
    text = "*".join(up) or "1"
    return text + ("/" + "*".join(down) if down else "")


def _read_in(term: str | None, pname: str, system: str) -> str | None:
    """The unit a parameter is read in: a built-in term's own (in the file's system), or None for an
    expression's parameter (it takes the file's system in the dimension of its declared unit)."""
    from . import TERMS
    from ..units import unit_label

    cls = TERMS.get(term) if term is not None else None
    unit = next((p.unit for p in getattr(cls, "parameters", ()) if p.name == pname), None)
    return None if unit is None else unit_label(unit, system)


_DIMENSION_NAMES = {(1, 0): "an energy", (0, 1): "a length", (0, -1): "an inverse length", (0, 0): "a number"}


def _dimension_name(energy: int, length: int) -> str:
    return _DIMENSION_NAMES.get((energy, length), f"energy^{energy} length^{length}")


def _unit_factor(unit: str, pname: str, term: str | None, system: str) -> float:
    """Factor from the declared ``unit`` to the unit parameter ``pname`` is read in; ValueError (its message
    without the file's prefix) when the unit is unknown or of another dimension than the term reads."""
    from ..units import ENERGY_UNITS, LENGTH_UNITS, unit_in_atomic

    expected = _read_in(term, pname, system)
    given = unit_in_atomic(unit)
    if given is None:
        hint = f" (term {term!r} reads it in {expected})" if expected is not None else ""
        raise ValueError(f"parameter {pname!r}: unknown unit {unit!r}{hint}; write a unit of energy "
                         f"({', '.join(ENERGY_UNITS)}) and/or length ({', '.join(LENGTH_UNITS)}) with integer "
                         "powers, such as fm, 1/fm or MeV*fm^2, or 1 for a number")
    energy, length, value = given
    if expected is None:
        expected = _unit_text(energy, length, system)
    want = unit_in_atomic(expected)              # every built-in term's unit is one of these (a test checks)
    if want[:2] != (energy, length):
        raise ValueError(f"parameter {pname!r}: unit {unit!r} is {_dimension_name(energy, length)}, but term "
                         f"{term!r} reads {pname} as {_dimension_name(*want[:2])} in {expected}; write "
                         f"unit = \"{expected}\" (or another unit of {_dimension_name(*want[:2])}) with the value "
                         "in it")
    return value / want[2]


def _complex_default(text: str) -> complex:
    """``"-50 - 5j"`` -> (-50-5j); ValueError when it is not a finite complex number."""
    try:
        z = complex("".join(text.split()))
    except ValueError:
        raise ValueError(f"{text!r} is not a number; write a number, or a complex one as a string such as "
                         "\"-50 - 5j\"") from None
    if not (math.isfinite(z.real) and math.isfinite(z.imag)):
        raise ValueError(f"{text!r} is not finite")
    return z


def _line_of(text: str, key: str, table: str | None = None) -> int:
    """1-based line where ``key`` is set (or its table starts); 1 if not found."""
    lines = text.splitlines()
    pattern = re.compile(rf"^\s*(\[\s*parameters\.{re.escape(key)}\s*\]|{re.escape(key)}\s*=)")
    start = 0
    if table is not None:
        for i, line in enumerate(lines):
            if re.match(rf"^\s*\[\s*parameters\.{re.escape(table)}\s*\]", line):
                start = i + 1
                break
    for i in range(start, len(lines)):
        if pattern.match(lines[i]):
            return i + 1
    return 1


def read_model_file(path: str | Path, text: str | None = None) -> ModelSpec:
    """Read and check one model file; ValueError names file, key and line."""
    path = Path(path)
    if text is None:
        try:
            text = path.read_text(encoding="utf-8-sig")     # a leading byte-order mark is dropped
        except UnicodeDecodeError as exc:
            raise ValueError(f"potential file {path}: not UTF-8 text (byte 0x{exc.object[exc.start]:02x} at position "
                             f"{exc.start}); save it as UTF-8") from None
        except OSError as exc:
            raise ValueError(f"potential file {path}: cannot read it ({exc.strerror})") from None
    try:
        data: dict[str, Any] = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ValueError(f"potential file {path}: not valid TOML ({exc})") from None

    def bad(key, msg, table=None):
        return ValueError(f"potential file {path}, line {_line_of(text, key, table)}, key {key!r}: {msg}")

    for key, value in data.items():
        if key not in _TOP:
            raise bad(key, f"unknown key; allowed keys are {', '.join(_TOP)}")
        if not isinstance(value, _TOP[key]):
            raise bad(key, f"expected a {_TOP[key].__name__}, got {type(value).__name__}")
    for key in _REQUIRED:
        if key not in data:
            raise ValueError(f"potential file {path}, line 1, key {key!r}: missing; add {key} = \"...\"")
    if ("term" in data) == ("expression" in data):
        raise ValueError(f"potential file {path}, line 1, key 'expression': give exactly one of "
                         "expression = \"...\" or term = \"<built-in name>\"")
    if data.get("units", "atomic") not in ("atomic", "nuclear"):
        raise bad("units", "must be \"atomic\" or \"nuclear\"")
    if data.get("role", "vector") not in ("vector", "scalar"):
        raise bad("role", "must be \"vector\" or \"scalar\"")
    params, factors = {}, {}
    for pname, spec in data.get("parameters", {}).items():
        if not isinstance(spec, dict):
            raise bad(pname, "each parameter is a table [parameters.NAME] with unit, description, default")
        for k, v in spec.items():
            if k not in _PARAM:
                raise bad(k, f"unknown key in [parameters.{pname}]; allowed: {', '.join(_PARAM)}", pname)
            if isinstance(v, bool) or not isinstance(v, _PARAM[k]):
                want = "number" if k == "default" else "string"
                raise bad(k, f"expected a {want}, got {type(v).__name__}", pname)
            if k == "default" and isinstance(v, str):
                try:
                    _complex_default(v)
                except ValueError as exc:
                    raise bad(k, str(exc), pname) from None
                if "expression" not in data:
                    raise bad(k, "a complex default (a string) needs a model with an expression; a built-in term "
                              "takes real parameters", pname)
        for k in ("unit", "description"):
            if k not in spec:
                raise bad(pname, f"[parameters.{pname}] needs {k} = \"...\"")
        params[pname] = dict(spec)
        try:
            factors[pname] = _unit_factor(spec["unit"], pname, data.get("term"), data.get("units", "atomic"))
        except ValueError as exc:
            raise bad("unit", str(exc), pname) from None
    return ModelSpec(name=data["name"], description=data["description"], source=data["source"],
                     path=str(path), term=data.get("term"), expression=data.get("expression"),
                     formula=data.get("formula", data.get("expression", "")),
                     units=data.get("units", "atomic"), role=data.get("role", "vector"), parameters=params,
                     factors=factors)


def library_models() -> dict[str, ModelSpec]:
    """All model files shipped with boundkit, by name."""
    out = {}
    folder = resources.files("boundkit.catalog")
    for entry in sorted(folder.iterdir(), key=lambda e: e.name):
        if entry.name.endswith(".toml"):
            spec = read_model_file(Path(str(entry)), entry.read_text(encoding="utf-8"))
            out[spec.name] = spec
    return out


def library_model(name: str) -> ModelSpec:
    models = library_models()
    if name not in models:
        raise ValueError(f"potential: no model named {name!r}; `boundkit potentials` lists "
                         f"{', '.join(models)}")
    return models[name]
