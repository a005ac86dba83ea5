"""Reading and checking run specs (the format is described in :mod:`boundkit.runspec`)."""
from __future__ import annotations

import importlib
import logging
from contextlib import contextmanager
import math
import os
import re
import tomllib

import numpy as np
from pathlib import Path
from typing import Any, Iterable

from .._checks import MAX_GRID_POINTS, MAX_L
from ..observables import length_unit as canonical_length_unit
from ..states import LABEL_CONVENTIONS
from ..units import energy_unit as canonical_energy_unit
from ..units import get_particle
from .keylines import _KeyLines, _dotted
from .objects import (_EQUATIONS, _FIGURES, _FORMATS, _LETTERS, STUDY_SECTIONS, ChannelSpec, CompareSection,
                      ConvergeSection, CriticalSection, ModelDef, ParticleSpec, RunSpec, ScanSection, SolveSection,
                      TermEntry)

__all__ = ["load_spec", "SpecErrors", "RunSpec", "ChannelSpec", "ModelDef", "STUDY_SECTIONS"]

log = logging.getLogger(__name__)


_MISSING = object()


class SpecErrors(ValueError):
    """Every error :func:`load_spec` found (``all_errors=True``); ``errors`` lists them, the
    message has one per line, each naming file, key and line."""

    def __init__(self, errors: list[ValueError]) -> None:
        self.errors = list(errors)
        super().__init__("\n".join(str(e) for e in self.errors))


class _Skipped(Exception):
    """A part that names a model whose own error is already recorded: nothing more to say."""


class _Errors:
    """Collects the errors of independent parts of a spec (``all_errors=True``) or raises the first."""

    def __init__(self, collect: bool) -> None:
        self.collect = collect
        self.found: list[ValueError] = []

    @contextmanager
    def attempt(self, on_error=None):
        try:
            yield
        except _Skipped:
            pass
        except ValueError as exc:
            if not self.collect:
                raise
            self.found.append(exc)
            if on_error is not None:
                on_error()


def _skip_bad_model(rd: "_Reader", name: str) -> None:
    if name in rd.bad_models:
        raise _Skipped(name)


class _Reader:
    """Typed access to the parsed TOML with file/key/line errors."""

    def __init__(self, path: Path, text: str) -> None:
        self.path = path
        self.lines = _KeyLines(text)
        self.bad_models: set[str] = set()      # models whose error is recorded (all_errors=True)

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


_TOP = ("title", "description", "units", "energy_unit", "length_unit", "labels", "figure_format", "equations",
        "channels", "levels", "tol", "tolerance", "method", "order", "particle", "models") + STUDY_SECTIONS
_MODEL = ("label", "terms", "scalar_terms", "expressions", "scalar_expressions", "files", "params", "term")
_TABLE_OPTIONS = ("tail", "tail_charge", "origin", "r_unit", "v_unit", "degree")
_ENTRY = ("name", "expression", "table", "model_file", "role", "params") + _TABLE_OPTIONS
_KINDS = ("name", "expression", "table", "model_file")
_SOLVE = ("models", "equations", "channels", "levels", "tol", "tolerance", "method", "order", "figures", "radii",
          "differences", "reference", "states")
_CONVERGE = ("model", "equation", "channel", "levels", "methods", "order", "tol", "tolerance")
_SCAN = ("model", "parameter", "values", "range", "equation", "channels", "levels", "tol", "tolerance", "method", "workers",
         "differences", "max_points", "second")
_RANGE = ("start", "stop", "num", "spacing")
_SECOND = ("parameter", "values", "range")
_CRITICAL = ("model", "parameter", "states", "equation", "bracket", "tol", "tolerance", "energy_tol", "energy_tolerance", "kind",
             "workers")
_COMPARE = ("model", "l_max", "levels", "tol", "tolerance")


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


def _tolerance(rd: _Reader, data: dict, key: tuple, default: float, name: str = "tol") -> float:
    """``tol`` (the API's and the CLI's name), or its older spelling ``tolerance``; one of them."""
    old = {"tol": "tolerance", "energy_tol": "energy_tolerance"}[name]
    if name in data and old in data:
        raise rd.error(key + (old,), f"give {name} (or its older name {old}), not both")
    used = old if old in data else name
    tol = rd.get(data, key, used, "number", default)
    if not 0 < tol < 1:
        raise rd.error(key + (used,), f"must lie between 0 and 1, got {tol:g}")
    return tol


def _method(rd: _Reader, data: dict, key: tuple, default: str, order_default: int | None):
    from ..discretize import get_method

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
    _skip_bad_model(rd, name)
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
    from ..potentials import TERMS
    from ..potentials.expression import parse_expression

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
    for i, text in enumerate(rd.get(data, key, "files", "list:str", [])):
        entries.append(_file_entry(rd, key + ("files", i), text, params, units))
    raw_entries = data.get("term", [])
    if not isinstance(raw_entries, list) or not all(isinstance(e, dict) for e in raw_entries):
        raise rd.error(key + ("term",), "write each term with its own parameters as [[models.NAME.term]]")
    for i, e in enumerate(raw_entries):
        ekey = key + ("term", i)
        rd.keys(e, ekey, _ENTRY)
        if sum(k in e for k in _KINDS) != 1:
            raise rd.error(ekey, "give exactly one of name = \"<built-in>\", expression = \"...\", "
                                 "table = \"FILE\" or model_file = \"FILE.toml\"")
        for k in _TABLE_OPTIONS:
            if k in e and "table" not in e:
                raise rd.error(ekey + (k,), "only a table = \"FILE\" term takes this key")
        tname = rd.get(e, ekey, "name", "str", None)
        if tname is not None and tname.strip().lower() not in TERMS:
            raise rd.error(ekey + ("name",), f"unknown built-in term {tname!r}; built-ins are {', '.join(sorted(TERMS))}")
        expr = rd.get(e, ekey, "expression", "str", None)
        role = rd.get(e, ekey, "role", "str", None)
        if role not in (None, "vector", "scalar"):
            raise rd.error(ekey + ("role",), f"must be \"vector\" or \"scalar\", got {role!r}")
        eparams = {p: rd.convert(v, ekey + ("params", p), "number")
                   for p, v in rd.get(e, ekey, "params", "table", {}).items()}
        if "table" in e:
            options = _table_options(rd, e, ekey)
            entries.append(_table_entry(rd, ekey + ("table",), rd.get(e, ekey, "table", "str"), role or "vector",
                                        options, units, eparams))
            continue
        if "model_file" in e:
            entries.append(_model_file_entry(rd, ekey + ("model_file",), rd.get(e, ekey, "model_file", "str"),
                                             role, eparams, own=True))
            continue
        entry = TermEntry(ekey, tname.strip().lower() if tname else None, expr, role or "vector", eparams)
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
    known = model.builtin_parameters() | expr_params | model.file_parameters()
    for p in params:
        if p not in known:
            raise rd.error(key + ("params", p), f"no term of model {name!r} takes this parameter; its terms take "
                                                f"{', '.join(sorted(known)) or 'none'}")
    try:
        pot = model.potential(units)
        probe = np.geomspace(1e-3, 1e2, 11)       # a complex term (a model file's complex default) is
        pot.V(probe)                              # refused here, not at the first solve
        pot.S(probe)
    except ValueError as exc:
        raise _param_error(rd, exc, key, params) from None
    return model


def _scan_parameter(rd: _Reader, s: dict, key: tuple, model: ModelDef) -> str:
    """The ``parameter`` of a [scan] table (or of its ``second``): a shared parameter of a built-in term."""
    param = rd.get(s, key, "parameter", "str")
    if param not in model.builtin_parameters():
        raise rd.error(key + ("parameter",),
                       f"a scan varies a parameter of a built-in term of model {model.name!r} "
                       f"({', '.join(sorted(model.builtin_parameters())) or 'none'}); {param!r} is not one")
    for entry in model.entries:
        if entry.model_file and param in entry.params:
            raise rd.error(key + ("parameter",), f"the model file {entry.model_file} of model {model.name!r} takes "
                                                 f"{param!r} too and would keep its value; scan a model whose "
                                                 "files do not take it")
    return param


def _scan_values(rd: _Reader, s: dict, key: tuple, max_points: int, model: ModelDef, units: str,
                 param: str) -> tuple[float, ...]:
    """The values of one scanned parameter: ``values = [...]`` or ``range = {...}`` of a [scan] table
    (or of its ``second`` table), each checked by building the model with it."""
    too_many = (f"is more than the limit of {max_points}; use fewer, or raise it with max_points = N in this "
                "[scan] section")
    if ("values" in s) == ("range" in s):
        raise rd.error(key + ("values",), "give exactly one of values = [...] or range = {...}", at=key)
    if "values" in s:
        values = tuple(rd.get(s, key, "values", "list:number"))
        if not values:
            raise rd.error(key + ("values",), "give at least one value")
        if len(values) > max_points:
            raise rd.error(key + ("values",), f"{len(values)} values {too_many}")
    else:
        r = rd.get(s, key, "range", "table")
        rk = key + ("range",)
        rd.keys(r, rk, _RANGE, required=("start", "stop", "num"))
        start, stop = rd.get(r, rk, "start", "number"), rd.get(r, rk, "stop", "number")
        num = rd.get(r, rk, "num", "int")
        if num < 2:
            raise rd.error(rk + ("num",), f"must be >= 2, got {num}")
        if num > max_points:
            raise rd.error(rk + ("num",), f"{num} points {too_many}")
        spacing = rd.get(r, rk, "spacing", "str", "linear")
        if spacing not in ("linear", "log"):
            raise rd.error(rk + ("spacing",), f"must be \"linear\" or \"log\", got {spacing!r}")
        if spacing == "log" and not (start > 0 and stop > 0):
            raise rd.error(rk + ("start",), "a log range needs start > 0 and stop > 0")
        grid = np.geomspace(start, stop, num) if spacing == "log" else np.linspace(start, stop, num)
        values = tuple(float(v) for v in grid)
    for v in values:
        try:
            model.potential(units, {param: v})
        except ValueError as exc:
            raise rd.error(key + ("values" if "values" in s else "range",), f"value {v:g}: {exc}") from None
    return values


def _user_path(rd: _Reader, text: str) -> Path:
    """A file named in the spec: relative paths are relative to the spec's folder."""
    p = Path(text).expanduser()
    return p if p.is_absolute() else rd.path.parent / p


def _file_error(rd: _Reader, key: tuple, path: Path, exc: Exception) -> ValueError:
    msg = str(exc)
    if "cannot read it" in msg and not path.exists():
        msg += f"; a relative path is relative to the spec's folder ({rd.path.parent})"
    return rd.error(key, msg)


def _table_options(rd: _Reader, e: dict, key: tuple) -> dict:
    from ..potentials.tabulated import DEGREES, ORIGINS, TAILS

    out: dict = {}
    for k, choices in (("tail", TAILS), ("origin", ORIGINS)):
        if k in e:
            v = rd.get(e, key, k, "str")
            if v not in choices:
                raise rd.error(key + (k,), f"must be one of {', '.join(choices)}, got {v!r}")
            out[k] = v
    if "tail_charge" in e:
        out["tail_charge"] = rd.get(e, key, "tail_charge", "number")
    for k in ("r_unit", "v_unit"):
        if k in e:
            out[k] = rd.get(e, key, k, "str")
    if "degree" in e:
        d = rd.get(e, key, "degree", "int")
        if d not in DEGREES:
            raise rd.error(key + ("degree",), f"must be one of {', '.join(map(str, DEGREES))}, got {d}")
        out["degree"] = d
    return out


def _table_entry(rd: _Reader, key: tuple, text: str, role: str, options: dict, units: str,
                 params: dict | None = None) -> TermEntry:
    from ..potentials.tabulated import TabulatedTerm

    if params:
        raise rd.error(key[:-1] + ("params",), "a table takes no parameters; remove params")
    path = _user_path(rd, text)
    try:
        term = TabulatedTerm(path, label=Path(text).name, **options)
        term.in_system(units)            # a table read in nuclear units is read (and checked) now
    except ValueError as exc:
        raise _file_error(rd, key, path, exc) from None
    return TermEntry(key[:-1] if isinstance(key[-1], str) and key[-1] == "table" else key, None, None, role, {},
                     table=text, path=str(path), options=options, built=term)


def _model_file_entry(rd: _Reader, key: tuple, text: str, role: str | None, params: dict,
                      own: bool) -> TermEntry:
    from ..potentials.catalog import read_model_file

    path = _user_path(rd, text)
    try:
        mf = read_model_file(path)
    except ValueError as exc:
        raise _file_error(rd, key, path, exc) from None
    if own:
        unknown = sorted(set(params) - set(mf.parameters))
        if unknown:
            raise rd.error(key[:-1] + ("params", unknown[0]), f"the model file {text} has no parameter "
                                                             f"{unknown[0]!r}; it has "
                                                             f"{', '.join(mf.parameters) or 'none'}")
    taken = {k: v for k, v in params.items() if k in mf.parameters}
    missing = sorted(set(mf.parameters) - set(mf.defaults) - set(taken))
    if missing:
        raise rd.error(key, f"the model file {text} needs a value for its parameter {missing[0]!r} (it has no "
                            "default); add it to params")
    try:
        term, _used = mf.build(taken)
    except ValueError as exc:
        raise _file_error(rd, key, path, exc) from None
    entry_key = key[:-1] if own else key
    return TermEntry(entry_key, None, None, role or mf.role, taken, model_file=text, path=str(path), built=term)


def _file_entry(rd: _Reader, key: tuple, text: str, shared: dict, units: str) -> TermEntry:
    """An item of ``files = [...]``: a model file (.toml, takes the shared parameters it declares) or a table."""
    if text.strip().lower().endswith(".toml"):
        return _model_file_entry(rd, key, text, None, shared, own=False)
    return _table_entry(rd, key, text, "vector", {}, units)


def _check_studies_available(rd: _Reader, key: tuple, section: str, function: str) -> None:
    try:
        mod = importlib.import_module("boundkit.studies")
    except ImportError as exc:
        raise rd.error(key, f"the [{section}] study needs boundkit.studies, which is not available in this "
                            f"installation ({exc}); remove the section or install a boundkit that has it") from None
    if not hasattr(mod, function):
        raise rd.error(key, f"the [{section}] study needs boundkit.studies.{function}, which this installation "
                            "does not provide; remove the section")


def load_spec(path: str | os.PathLike, text: str | None = None, all_errors: bool = False) -> RunSpec:
    """Read and check a run spec.

    Parameters
    ----------
    path : str or path-like
        The TOML file (see the module docstring for the format).
    text : str, optional
        The file's contents, when already read.
    all_errors : bool
        Go on after an error in the particle, a model or a study section and
        report every such error (:class:`SpecErrors`, one per line) instead
        of the first; errors in the top-level settings still stop at once
        (the rest depends on them). ``boundkit run --dry-run`` uses this.

    Returns
    -------
    RunSpec

    Raises
    ------
    ValueError
        For an unreadable file, invalid TOML, an unknown key, a wrong type, a
        missing field or an unusable value; the message names the file, the
        key and its line (:class:`SpecErrors`, a ValueError, with ``all_errors``).
    """
    path = Path(path)
    errs = _Errors(all_errors)
    if text is None:
        try:
            text = path.read_text(encoding="utf-8")
        except UnicodeDecodeError as exc:
            raise ValueError(f"run spec {path}: not UTF-8 text (byte 0x{exc.object[exc.start]:02x} at position "
                             f"{exc.start}); save it as UTF-8") from None
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
    labels = rd.get(data, (), "labels", "str", "atomic")
    if labels not in LABEL_CONVENTIONS:
        raise rd.error(("labels",), f"must be one of {', '.join(LABEL_CONVENTIONS)} (atomic 2p1/2, nuclear 0p1/2, "
                                    f"quarkonium 1P), got {labels!r}")
    fmt = rd.get(data, (), "figure_format", "str", "png").lower().lstrip(".")
    if fmt not in _FORMATS:
        raise rd.error(("figure_format",), f"must be one of {', '.join(_FORMATS)}, got {fmt!r}")

    # particle
    particle = ParticleSpec()
    with errs.attempt():
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
                      for i, e in enumerate(rd.get(data, (), "equations", "list:str", ["schrodinger"])))
    if not equations:
        raise rd.error(("equations",), "give at least one equation")
    channels = _channels(rd, data, (), (ChannelSpec(l=0, text="s"),))
    # None: each study takes the default of its API function (solve 1, scan 3, compare 2)
    levels = _levels(rd, data, (), 1) if "levels" in data else None
    tolerance = _tolerance(rd, data, (), 1e-10)
    method, order = _method(rd, data, (), "auto", None)

    # models
    mdata = rd.get(data, (), "models", "table")
    if not mdata:
        raise rd.error(("models",), "define at least one model, e.g. [models.point] with terms = [\"coulomb\"]")
    models = {}
    for name, m in mdata.items():
        with errs.attempt(lambda name=name: rd.bad_models.add(name)):
            models[name] = _read_model(rd, name, m, ("models", name), units)

    if not any(s in data for s in STUDY_SECTIONS):
        errs.found.append(rd.error(("solve",), "the spec asks for no study; add at least one of "
                                               + ", ".join(f"[{s}]" for s in STUDY_SECTIONS), at=()))

    solve_sec = None
    if "solve" in data:
        with errs.attempt():
            key = ("solve",)
            s = rd.convert(data["solve"], key, "table")
            rd.keys(s, key, _SOLVE)
            names = tuple(rd.get(s, key, "models", "list:str", list(models)))
            for i, n in enumerate(names):
                if n not in models:
                    _skip_bad_model(rd, n)
                    raise rd.error(key + ("models", i), f"no model {n!r}; the spec defines {', '.join(models)}")
            eqs = tuple(_equation(rd, e, key + ("equations", i))
                        for i, e in enumerate(rd.get(s, key, "equations", "list:str", list(equations))))
            figs = tuple(rd.get(s, key, "figures", "list:str", list(_FIGURES)))
            for i, f in enumerate(figs):
                if f not in _FIGURES:
                    raise rd.error(key + ("figures", i), f"unknown figure {f!r}; choose from {', '.join(_FIGURES)}")
            ref = rd.get(s, key, "reference", "str", None)
            if ref is not None and ref not in names:
                raise rd.error(key + ("reference",),
                               f"the reference must be one of the solved models: {', '.join(names)}")
            m, o = _method(rd, s, key, method, order)
            solve_sec = SolveSection(key, names, eqs, _channels(rd, s, key, channels), _levels(rd, s, key, levels or 1),
                                     _tolerance(rd, s, key, tolerance), m, o, figs,
                                     rd.get(s, key, "radii", "bool", True), _pairs(rd, s, key), ref,
                                     rd.get(s, key, "states", "bool", False))

    converge_secs = []
    for key, s in _sections(rd, data, "converge"):
        with errs.attempt():
            rd.keys(s, key, _CONVERGE, required=("model",))
            ch = (_channel(rd, s["channel"], key + ("channel",)),) if "channel" in s else channels[:1]
            meths = tuple(rd.get(s, key, "methods", "list:str", ["spectral", "finite-difference"]))
            for i, mth in enumerate(meths):
                if mth not in ("spectral", "finite-difference"):
                    raise rd.error(key + ("methods", i), f"must be spectral or finite-difference, got {mth!r}")
            converge_secs.append(ConvergeSection(
                key, _model_name(rd, s, key, models),
                _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",)),
                ch[0], _levels(rd, s, key, 1), meths, rd.get(s, key, "order", "int", 8), _tolerance(rd, s, key, 1e-13)))

    scan_secs = []
    for key, s in _sections(rd, data, "scan"):
        with errs.attempt():
            rd.keys(s, key, _SCAN, required=("model", "parameter"))
            _check_studies_available(rd, key, "scan", "scan")
            model = _model_name(rd, s, key, models)
            param = _scan_parameter(rd, s, key, models[model])
            max_points = rd.get(s, key, "max_points", "int", MAX_GRID_POINTS)
            if max_points < 1:
                raise rd.error(key + ("max_points",), f"must be >= 1, got {max_points}")
            values = _scan_values(rd, s, key, max_points, models[model], units, param)
            second = None
            if "second" in s:
                skey = key + ("second",)
                s2 = rd.get(s, key, "second", "table")
                rd.keys(s2, skey, _SECOND, required=("parameter",))
                p2 = _scan_parameter(rd, s2, skey, models[model])
                if p2 == param:
                    raise rd.error(skey + ("parameter",), f"{p2!r} is the first parameter already; name another")
                values2 = _scan_values(rd, s2, skey, max_points, models[model], units, p2)
                if len(values) * len(values2) > max_points:
                    raise rd.error(skey, f"{len(values)} x {len(values2)} = {len(values) * len(values2)} grid points "
                                         f"is more than the limit of {max_points}; use fewer, or raise it with "
                                         "max_points = N in this [scan] section")
                second = (p2, values2)
            m, _o = _method(rd, s, key, method, None)
            workers = _workers(rd, s, key)
            scan_secs.append(ScanSection(
                key, model, param, values,
                _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",)),
                _channels(rd, s, key, channels), _levels(rd, s, key, levels or 3),
                _tolerance(rd, s, key, tolerance), m, workers, _pairs(rd, s, key), max_points, second))

    critical_secs = []
    for key, s in _sections(rd, data, "critical"):
        with errs.attempt():
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
            etol = _tolerance(rd, s, key, 1e-10, "energy_tol")
            critical_secs.append(CriticalSection(
                key, model, param, states, eq, tuple(bracket) if bracket else None, _tolerance(rd, s, key, 1e-8),
                etol, kind, _workers(rd, s, key)))

    compare_secs = []
    for key, s in _sections(rd, data, "compare"):
        with errs.attempt():
            rd.keys(s, key, _COMPARE, required=("model",))
            _check_studies_available(rd, key, "compare", "compare")
            l_max = rd.get(s, key, "l_max", "int", 1)
            if not 0 <= l_max <= MAX_L:
                raise rd.error(key + ("l_max",), f"must lie between 0 and {MAX_L}, got {l_max}")
            compare_secs.append(CompareSection(key, _model_name(rd, s, key, models), l_max,
                                               _levels(rd, s, key, levels or 2),
                                               _tolerance(rd, s, key, tolerance)))

    if errs.found:
        raise SpecErrors(errs.found)
    return RunSpec(path=path, text=text, title=title.strip(), description=description.strip(), units=units,
                   energy_unit=e_unit, length_unit=l_unit, labels=labels, figure_format=fmt, particle=particle,
                   equations=equations, channels=channels, levels=levels, tolerance=tolerance, method=method,
                   order=order, models=models, solve=solve_sec, converge=tuple(converge_secs),
                   scan=tuple(scan_secs), critical=tuple(critical_secs), compare=tuple(compare_secs))
