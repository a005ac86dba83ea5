"""The potential models of a run spec (``[models.NAME]``): built-in terms, expressions, terms
with their own parameters, and the user's own files -- tables of r and V and model files (TOML),
their paths relative to the spec's folder. Every model is built once while the spec is read, so a
bad parameter or a missing or malformed file stops the spec with its file, key and line."""
from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import numpy as np

from .objects import ModelDef, TermEntry
from .reader import _Reader

_MODEL = ("label", "terms", "scalar_terms", "expressions", "scalar_expressions", "files", "params", "term")
_TABLE_OPTIONS = ("tail", "tail_charge", "origin", "r_unit", "v_unit", "degree")
_ENTRY = ("name", "expression", "table", "model_file", "role", "params") + _TABLE_OPTIONS
_KINDS = ("name", "expression", "table", "model_file")


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
