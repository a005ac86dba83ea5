"""Reading and checking run specs (the format is described in :mod:`boundkit.runspec`).

:func:`load_spec` reads the top level, the particle and the study sections here;
:mod:`.reader` holds the typed access with file/key/line errors, :mod:`.models` the
potential models (built-in terms, expressions, the user's tables and model files)."""
from __future__ import annotations

import importlib
import logging
import os
import re
import tomllib

import numpy as np
from pathlib import Path
from typing import Any

from .._checks import MAX_GRID_POINTS, MAX_L, MAX_LEVELS, MAX_SPEC_BYTES, check_int
from ..observables import length_unit as canonical_length_unit
from ..states import LABEL_CONVENTIONS, level_j, parse_label, splits_by_j
from ..units import energy_unit as canonical_energy_unit
from ..units import get_particle
from .models import _read_model
from .reader import SpecErrors, _describe, _Errors, _Reader, _skip_bad_model  # noqa: F401 (SpecErrors)
from .objects import (_EQUATIONS, _FIGURES, _FORMATS, _LETTERS, STUDY_SECTIONS, ChannelSpec, CompareSection,
                      ConvergeSection, CriticalSection, ModelDef, ParticleSpec, RunSpec, ScanSection, SolveSection,
                      _channels_for)

__all__ = ["load_spec", "SpecErrors", "RunSpec", "ChannelSpec", "ModelDef", "STUDY_SECTIONS"]

log = logging.getLogger(__name__)


_TOP = ("title", "description", "units", "energy_unit", "length_unit", "labels", "figure_format", "equations",
        "channels", "levels", "tol", "tolerance", "method", "order", "particle", "models") + STUDY_SECTIONS
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
        if levels is not None:
            _level_count(rd, key, levels)
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
    out = tuple(_channel(rd, v, key + ("channels", i)) for i, v in enumerate(value))
    _once(rd, key + ("channels",), out, lambda c: (c.l, c.two_j), "channel")
    return out


def _levels(rd: _Reader, data: dict, key: tuple, default: int) -> int:
    return _level_count(rd, key, rd.get(data, key, "levels", "int", default))


def _level_count(rd: _Reader, key: tuple, n: int) -> int:
    """``levels = n`` under ``key``: from 1 to :data:`boundkit._checks.MAX_LEVELS` (checked at load, so that a
    dry run refuses what the run could never finish)."""
    if n < 1:
        raise rd.error(key + ("levels",), f"must be >= 1, got {n}")
    if n > MAX_LEVELS:
        raise rd.error(key + ("levels",), f"{n} is more than the limit of {MAX_LEVELS} levels per channel; use "
                                          "fewer (1000 hydrogen levels already take 40 s and 1.2 GB)")
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
    _once(rd, key + ("differences",), [f'["{a}", "{b}"]' for a, b in out])
    return tuple(out)


def _once(rd: _Reader, key: tuple, items, same=lambda x: x, what: str = "entry", note: str = "") -> None:
    """Refuse an entry of the array ``key`` listed twice (by ``same``): it would be solved twice."""
    seen: dict = {}
    for i, item in enumerate(items):
        k = same(item)
        if k in seen:
            j = seen[k]
            first = rd.lines.find(key + (j,))
            text = getattr(item, "text", item)
            other = getattr(items[j], "text", items[j])
            if text == other:
                raise rd.error(key + (i,), f"{text!r} is listed twice (first at line {first}); list it once")
            raise rd.error(key + (i,), f"{text!r} is the same {what} as {other!r} (line {first}{note}); "
                                       "list it once")
        seen[k] = i


def _model_name(rd: _Reader, data: dict, key: tuple, models: dict) -> str:
    name = rd.get(data, key, "model", "str")
    _skip_bad_model(rd, name)
    if name not in models:
        raise rd.error(key + ("model",), f"no model {name!r}; the spec defines {', '.join(models)}")
    return name


def _check_channels(rd: _Reader, section: str, models: dict, mdata: dict, names, equations, channels,
                    particle: ParticleSpec, units: str) -> None:
    """Refuse now what :func:`boundkit.solve` refuses before it solves: the equation's exponent at the
    origin (a point charge beyond Z alpha < |kappa| in the Dirac equation, < l + 1/2 in Klein-Gordon; a
    term the equation does not take), for every model x equation x channel of a section."""
    from ..solver import setup

    for name in names:
        pot = models[name].potential(units)
        for eq in equations:
            for kw, cname, _n in _channels_for(channels, eq, 1, pot.has_spin_orbit):
                try:
                    equation, potential, _settings = setup(eq, pot, None, **kw, **particle.kwargs())
                    equation.gamma(potential)
                except ValueError as exc:
                    key = ("models", name, "params") if "params" in (mdata.get(name) or {}) else ("models", name)
                    raise rd.error(key, f"[{section}] {eq} {cname}: {exc}") from None


def _sections(rd: _Reader, data: dict, name: str) -> list[tuple[tuple, dict]]:
    value = data.get(name)
    if value is None:
        return []
    if isinstance(value, dict):
        return [((name,), value)]
    if isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
        return [((name, i), v) for i, v in enumerate(value)]
    raise rd.error((name,), f"expected a table [{name}] or an array of tables [[{name}]], got {_describe(value)}")


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
        _once(rd, key + ("values",), values)
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


def _check_studies_available(rd: _Reader, key: tuple, section: str, function: str) -> None:
    try:
        mod = importlib.import_module("boundkit.studies")
    except ImportError as exc:
        raise rd.error(key, f"the [{section}] study needs boundkit.studies, which is not available in this "
                            f"installation ({exc}); remove the section or install a boundkit that has it") from None
    if not hasattr(mod, function):
        raise rd.error(key, f"the [{section}] study needs boundkit.studies.{function}, which this installation "
                            "does not provide; remove the section")


def load_spec(path: str | os.PathLike, text: str | None = None, all_errors: bool = False,
              max_bytes: int = MAX_SPEC_BYTES) -> RunSpec:
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
    max_bytes : int
        Largest file (or ``text``) accepted, in bytes (:data:`boundkit._checks.MAX_SPEC_BYTES`).

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
    max_bytes = check_int("max_bytes", max_bytes, minimum=1)
    try:
        size = path.stat().st_size if text is None else len(text.encode("utf-8"))
    except OSError as exc:
        raise ValueError(f"run spec {path}: cannot read it ({exc.strerror or exc})") from None
    if size > max_bytes:
        raise ValueError(f"run spec {path}: {size} bytes, more than the limit of {max_bytes} for a spec (a few kB of "
                         "settings in practice); keep long notes in a file of their own, or raise the limit with "
                         "max_bytes= (API)")
    if text is None:
        try:
            # utf-8-sig: a leading byte-order mark (written by some Windows editors) is dropped
            text = path.read_text(encoding="utf-8-sig")
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
    _once(rd, ("equations",), equations)
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
            _once(rd, key + ("models",), names)
            eqs = tuple(_equation(rd, e, key + ("equations", i))
                        for i, e in enumerate(rd.get(s, key, "equations", "list:str", list(equations))))
            if "equations" in s:
                _once(rd, key + ("equations",), eqs)
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
            _check_channels(rd, "solve", models, mdata, names, eqs, solve_sec.channels, particle, units)

    converge_secs = []
    for key, s in _sections(rd, data, "converge"):
        with errs.attempt():
            rd.keys(s, key, _CONVERGE, required=("model",))
            ch = (_channel(rd, s["channel"], key + ("channel",)),) if "channel" in s else channels[:1]
            meths = tuple(rd.get(s, key, "methods", "list:str", ["spectral", "finite-difference"]))
            for i, mth in enumerate(meths):
                if mth not in ("spectral", "finite-difference"):
                    raise rd.error(key + ("methods", i), f"must be spectral or finite-difference, got {mth!r}")
            _once(rd, key + ("methods",), meths)
            model = _model_name(rd, s, key, models)
            eq = _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",))
            _check_channels(rd, "converge", models, mdata, (model,), (eq,), ch[:1], particle, units)
            order = rd.get(s, key, "order", "int", None)
            if order is not None and "finite-difference" not in meths:
                raise rd.error(key + ("order",), "only the finite-difference method takes an order; drop it, or add "
                                                 "\"finite-difference\" to methods")
            converge_secs.append(ConvergeSection(key, model, eq, ch[0], _levels(rd, s, key, 1), meths, order,
                                                 _tolerance(rd, s, key, 1e-13)))

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
            eq = _equation(rd, rd.get(s, key, "equation", "str", equations[0]), key + ("equation",))
            split = splits_by_j(eq, models[model].spin_orbit(units))
            named = {}      # state -> (nodes, l, j): the level it names (j only where j splits levels)
            for i, st in enumerate(states):
                try:     # what the run would refuse: a label of no level, or without the j that names one
                    nodes, l, j = parse_label(st, labels)
                    named[st] = (nodes, l, level_j(eq, st, l, j, split))
                except ValueError as exc:
                    raise rd.error(key + ("states", i), str(exc).removeprefix("state: ")) from None
            _once(rd, key + ("states",), states, named.__getitem__, f"{eq} level",
                  "" if split else f"; the {eq} equation has no j")
            bracket = rd.get(s, key, "bracket", "list:number", None)
            if bracket is not None and (len(bracket) != 2 or bracket[0] == bracket[1]):
                raise rd.error(key + ("bracket",), "write two different numbers, e.g. [0.5, 20.0] (either order)")
            kind = rd.get(s, key, "kind", "str", None)
            if kind is not None and kind not in ("unbind", "dive", "merge"):
                raise rd.error(key + ("kind",), f"must be \"unbind\", \"dive\" or \"merge\", got {kind!r}")
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
