"""Pieces shared by the studies: channels, state labels, parameters at a
point, atomic file writes, a progress bar and the seeded level solve.

Nothing here is public API; :mod:`boundkit.studies` re-exports what users need.
"""
from __future__ import annotations

import functools
import hashlib
import logging
import math
import os
import sys
import tempfile
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from .. import _signals
from ..equations.dirac import dirac_kappa, kappa_to_lj
from ..potentials import TERMS, Term
from ..solver import make_equation
from ..states import level_j, parse_label, principal_n, splits_by_j

__all__ = ["StudyError", "canonical_equation", "channel_for", "channel_name", "parse_state",
           "state_channel", "resolve_params", "rebuild_potential", "describe", "write_atomic",
           "write_json_atomic", "umask_mode", "identity", "code_version", "ProgressBar", "seeded_level", "expected_labels", "NuclearRadius",
           "parameter_units", "term_parameters", "check_varied"]

log = logging.getLogger(__name__)



class StudyError(RuntimeError):
    """A study could not produce its result (numerical trouble, not bad input)."""


# --- equations and channels ----------------------------------------------------------------
def canonical_equation(name: str) -> str:
    """Canonical name of an equation (``schrodinger``, ``klein-gordon``, ``dirac``)."""
    return make_equation(name).name


def channel_for(equation: str, channel: Mapping[str, int]) -> dict[str, int]:
    """The channel of ``equation`` described by ``channel`` ({"l": ..} or {"kappa": ..}; Schrodinger
    also {"l": .., "j": ..} for a potential with a spin-orbit term, Dirac for the kappa they name).

    Schrodinger and Klein-Gordon take l; a kappa alone is mapped to the l of
    its large component (kappa = -(l+1) or kappa = l). Dirac needs kappa, or l
    with j (j = l + 1/2 is kappa = -(l+1), j = l - 1/2 is kappa = l).
    Raises ValueError for anything else.
    """
    if not isinstance(channel, Mapping):
        raise ValueError(f"channels: each channel is a dict such as {{'l': 0}} or {{'kappa': -1}}, "
                         f"got {channel!r}")
    extra = sorted(set(channel) - {"l", "kappa", "j"})
    if extra:
        raise ValueError(f"channels: unknown key {extra[0]!r} in {dict(channel)!r}; use 'l' or 'kappa' (and 'j' "
                         "with 'l' for a Schrodinger spin-orbit term)")
    l, kappa = channel.get("l"), channel.get("kappa")
    eq = canonical_equation(equation)
    if eq == "dirac":       # kappa, or l with j; one beside kappa must be its own (the solver's messages)
        if l is None and kappa is None and channel.get("j") is None:
            raise ValueError("channels: a channel needs 'l' (Schrodinger, Klein-Gordon) or 'kappa' (Dirac)")
        return {"kappa": make_equation("dirac", l=l, kappa=kappa, j=channel.get("j")).kappa}
    if "j" in channel:
        if eq != "schrodinger" or "l" not in channel or "kappa" in channel:
            raise ValueError(f"channels: {dict(channel)!r}: 'j' goes with 'l' in a Schrodinger channel (for a "
                             "spin-orbit term) or a Dirac one (naming its kappa); a spin-0 particle has j = l")
        made = make_equation(eq, l=channel["l"], j=channel["j"])       # checks j = l +- 1/2
        return {"l": made.l, "j": made.j}
    if l is None and kappa is None:
        raise ValueError("channels: a channel needs 'l' (Schrodinger, Klein-Gordon) or 'kappa' (Dirac)")
    if kappa is not None:
        lk, _ = kappa_to_lj(int(kappa))
        if l is not None and int(l) != lk:
            raise ValueError(f"channels: l = {l} does not fit kappa = {kappa} (its l is {lk})")
        l = lk
    make_equation(eq, l=l)
    return {"l": int(l)}


def channel_name(channel: Mapping[str, int]) -> str:
    """``'l=0'`` or ``'kappa=-1'``."""
    return ", ".join(f"{k}={v}" for k, v in channel.items())


def expected_labels(equation: str, channel: Mapping[str, int], levels: int) -> list[str]:
    """Labels of the ``levels`` lowest levels of a channel (k nodes -> k-th label)."""
    eq = make_equation(equation, **channel)
    return [eq.label(principal_n(k, eq.l)) for k in range(levels)]


def parse_state(label: str, labels: str = "atomic") -> tuple[int, int, float | None]:
    """(n, l, j) of a state label such as ``1s``, ``2p``, ``2p1/2``, ``3d5/2``.

    ``n`` is the atomic principal number (nodes + l + 1) whatever convention
    ``labels`` the label is written in (``0p3/2`` nuclear, ``1P`` quarkonium:
    see :mod:`boundkit.states`). j is None when the label has no j. Raises
    ValueError for a malformed label, an n below the convention's first value,
    or j other than l +- 1/2.
    """
    nodes, l, j = parse_label(label, labels)
    return principal_n(nodes, l), l, j


def state_channel(equation: str, label: str, spin_orbit: bool = False) -> tuple[dict[str, int], int, str]:
    """(channel, node count k, canonical label) of a state in ``equation``.

    Dirac: j = l + 1/2 -> kappa = -(l + 1), j = l - 1/2 -> kappa = l; an s
    label needs no j; other labels without j are refused (two kappas fit).
    Schrodinger and Klein-Gordon take l; a j in the label is ignored, except
    for Schrodinger with ``spin_orbit`` (a potential with a spin-orbit term),
    which takes l and j as Dirac takes kappa.
    """
    n, l, j = parse_state(label)
    eq = canonical_equation(equation)
    split = splits_by_j(eq, spin_orbit)
    if split:
        j = level_j(eq, label, l, j, split)
    if eq == "dirac":
        channel = {"kappa": dirac_kappa(l=l, j=j)}
    elif split:
        channel = {"l": l, "j": j}
    else:
        if j is not None:
            log.info("state %s: %s has no spin-orbit splitting; j is ignored", label, eq)
        channel = {"l": l}
    k = n - l - 1
    return channel, k, expected_labels(eq, channel, k + 1)[k]


# --- parameters at a point -----------------------------------------------------------------
def resolve_params(params: Mapping[str, Any] | None, point: Mapping[str, float]) -> dict[str, Any]:
    """Parameters at one point: ``params`` updated by ``point``; callable values
    are then called with the dict of the other (resolved) values."""
    merged = {**dict(params or {}), **dict(point)}
    out = {k: v for k, v in merged.items() if not callable(v)}
    for k, v in merged.items():
        if callable(v):
            out[k] = float(v(dict(out)))
    return out


def _rebuild_term(term: Term, values: Mapping[str, Any], names: set, units: str = "atomic") -> Term:
    """``term`` with the parameters ``names`` set to the point's ``values`` (read in the call's ``units``). A term
    with stated units (``fixed_units``) holds its other values in atomic units already: it is rebuilt in atomic
    units, the point's values converted, and keeps them stated."""
    from ..potentials.expression import ExpressionTerm
    from ..potentials.base import _is_number
    from ..units import to_atomic

    point = {n: values[n] for n in names}
    if isinstance(term, ExpressionTerm):
        if term.fixed_units:
            # its values are in atomic units already and an expression declares no units for its parameters: a
            # point's value could not be converted, and the term rebuilt without units was converted twice (a review)
            raise ValueError(f"vary: parameter {sorted(names)[0]!r} is inside an expression with units of its own "
                             "(a model file's); vary it through the model file in a run spec, or pass the expression "
                             "as text so that it is read in the call's units")
        out = ExpressionTerm(term.formula, {**term.values, **point})
        out.label = term.label
        return out
    if type(term) in TERMS.values():
        if not term.fixed_units:
            return type(term)(**{**term.values, **point})
        unit = {p.name: p.unit for p in term.parameters}
        point = {n: to_atomic(float(v), unit[n], units) if _is_number(v) else v for n, v in point.items()}
        return type(term)(units="atomic", **{**term.values, **point})
    raise ValueError(f"vary: parameter {sorted(names)[0]!r} is fixed inside the prebuilt term {term!r}; "
                     "pass the term by name (or as an expression) so that it can be rebuilt at each point")


def rebuild_potential(spec, values: Mapping[str, Any], varied: set, *, units: str):
    """``spec`` with every prebuilt :class:`Term` that holds a varied parameter
    rebuilt with the point's values, read in the call's ``units`` (names and callables pass through; no default:
    a caller that left it out read a term with stated units in the wrong system)."""
    if spec is None:
        return None
    single = isinstance(spec, (str, Term)) or callable(spec)
    items = [spec] if single else list(spec)
    out = []
    for item in items:
        if isinstance(item, Term):
            names = set(getattr(item, "values", {})) & set(varied)
            if names:
                item = _rebuild_term(item, values, names, units)
        out.append(item)
    return out[0] if single else out


def describe(spec) -> Any:
    """A stable, JSON-ready description of a potential spec (for keys and reports)."""
    if spec is None:
        return None
    if isinstance(spec, str):
        return spec
    if isinstance(spec, Term):
        return {"term": getattr(spec, "label", spec.name), "formula": str(spec.formula),
                "values": dict(getattr(spec, "values", {}))}
    if callable(spec):
        return {"callable": f"{getattr(spec, '__module__', '?')}.{getattr(spec, '__qualname__', repr(spec))}",
                "repr": repr(spec) if not hasattr(spec, "__code__") else None}
    if isinstance(spec, Sequence):
        return [describe(x) for x in spec]
    return repr(spec)


def identity(spec, unstable: list[str]) -> Any:
    """A JSON-ready fingerprint of a potential spec for resume keys: everything that
    determines its values.

    Names and built-in terms give their name and parameter values; an
    expression its text and values; a table a SHA-256 hash of its (r, V)
    points and its origin/tail settings (so an edited file with the same name
    is a new potential); unit wrappers their inner term. A Python callable or
    a user's own Term class has no content boundkit can fingerprint: its
    name is appended to ``unstable`` (the caller then does not resume).
    """
    from ..potentials.expression import ExpressionTerm

    # a table term exists only once its module is loaded (it imports scipy.interpolate, ~0.1 s)
    tabulated = sys.modules.get("boundkit.potentials.tabulated")
    if spec is None:
        return None
    if isinstance(spec, str):
        return spec.strip().lower()
    if isinstance(spec, Term):
        inner = getattr(spec, "inner", None)
        if isinstance(inner, Term):
            return {"wrapper": type(spec).__qualname__, "inner": identity(inner, unstable)}
        # stated units (values in atomic units already) and none (read in the call's system) are two potentials
        # under units='nuclear': a resumed scan reused one's points for the other (a tester)
        stated = {"fixed_units": True} if spec.fixed_units else {}
        if tabulated is not None and isinstance(spec, tabulated.TabulatedTerm):
            digest = hashlib.sha256(np.ascontiguousarray(spec.r, float).tobytes()
                                    + np.ascontiguousarray(spec.V, float).tobytes()).hexdigest()
            return {"table_sha256": digest, "origin": spec.origin, "tail": spec.tail, "degree": spec.degree,
                    "tail_charge": spec.tail_charge, **stated}
        if isinstance(spec, ExpressionTerm):
            return {"expression": spec.formula, "values": dict(spec.values), **stated}
        if type(spec) in TERMS.values():
            return {"term": spec.name, "values": dict(spec.values), **stated}
        name = getattr(spec, "label", type(spec).__qualname__)
        unstable.append(str(name))
        return {"term": type(spec).__qualname__, "label": str(name)}
    if isinstance(spec, type) and issubclass(spec, Term) and spec in TERMS.values():
        return spec.name
    if callable(spec):
        module = getattr(spec, "__module__", "") or ""
        if module.startswith("boundkit.") and not hasattr(spec, "__code__"):
            return repr(spec)        # boundkit's own rule objects print all their settings
        name = f"{module}.{getattr(spec, '__qualname__', type(spec).__qualname__)}"
        unstable.append(name)
        return {"callable": name}
    if isinstance(spec, Sequence):
        return [identity(x, unstable) for x in spec]
    unstable.append(repr(spec)[:60])
    return repr(spec)


@functools.lru_cache(maxsize=1)
def code_version() -> str:
    """boundkit's version and a hash of its source files: a changed solver is a new key."""
    from .. import __version__

    root = Path(__file__).resolve().parent.parent
    h = hashlib.sha256()
    for f in sorted(root.rglob("*.py")):
        h.update(str(f.relative_to(root)).encode())
        h.update(f.read_bytes())
    return f"{__version__}+{h.hexdigest()[:16]}"


def term_parameters(potential, scalar=None) -> list[str] | None:
    """Names of the parameters the terms of a potential spec take, sorted; None when that cannot be
    told (a prebuilt :class:`~boundkit.potentials.Potential`). A built-in name takes its declared
    parameters, a prebuilt term (an expression too) the values it holds, a Python callable none."""
    from ..potentials import Potential, _as_list

    names: set = set()
    for spec in _as_list(potential) + _as_list(scalar):
        if isinstance(spec, Potential):
            return None
        if isinstance(spec, Term):
            names.update(getattr(spec, "values", {}) or {})
            continue
        cls = spec if isinstance(spec, type) and issubclass(spec, Term) else (
            TERMS.get(spec.strip().lower()) if isinstance(spec, str) else None)
        if cls is not None:
            names.update(p.name for p in getattr(cls, "parameters", ()))
        elif isinstance(spec, str):
            return None          # an unknown name: the potential's own check says so
    return sorted(names)


def check_varied(potential, scalar, names: Sequence[str]) -> None:
    """ValueError naming ``vary`` when a varied name is a parameter no term of the potential takes (nothing
    is checked when that cannot be told: :func:`term_parameters` gives None)."""
    taken = term_parameters(potential, scalar)
    if taken is None:
        return
    missing = [n for n in names if n not in taken]
    if missing:
        raise ValueError(f"vary: no term of the potential takes {missing[0]!r}; its terms take "
                         f"{', '.join(taken) or 'no parameters'}")


def call_units(settings: Mapping[str, Any]) -> tuple[str, str]:
    """(energy, length) unit of a study's unit system, from its ``settings['solve_kwargs']['units']``:
    hartree and bohr, or MeV and fm with units='nuclear' (the defaults of its records)."""
    from ..units import system_units

    return system_units((settings.get("solve_kwargs") or {}).get("units", "atomic"))


def parameter_units(potential, scalar, names: Sequence[str], units: str = "atomic") -> dict[str, str]:
    """Unit of each named parameter, from the built-in terms' declarations ('' if unknown)."""
    from ..potentials import _as_list
    from ..units import unit_label

    out = {n: "" for n in names}
    for spec in _as_list(potential) + _as_list(scalar):
        cls = TERMS.get(spec.strip().lower()) if isinstance(spec, str) else (
            type(spec) if isinstance(spec, Term) else None)
        if cls is None:
            continue
        for p in getattr(cls, "parameters", ()):
            if p.name in out and not out[p.name]:
                out[p.name] = unit_label(p.unit, units) if p.unit != "e" else ""
    return out


class NuclearRadius:
    """rms charge radius (fm) of a uniform sphere of radius r0 A^(1/3), A = a Z.

    Use it as a parameter value that follows the charge during a scan or a
    critical-charge search: ``params={"Z": 150, "rms_fm": NuclearRadius()}``.

    Parameters
    ----------
    r0_fm : float
        Radius constant r0 in fm (default 1.2).
    mass_per_charge : float
        A / Z (default 2.5, about right for superheavy nuclei).
    charge : str
        Name of the charge parameter (default ``"Z"``).

    Notes
    -----
    R = r0 (a Z)^(1/3) and, for a uniform sphere, r_rms = sqrt(3/5) R.
    """

    def __init__(self, r0_fm: float = 1.2, mass_per_charge: float = 2.5, charge: str = "Z") -> None:
        if not (r0_fm > 0 and mass_per_charge > 0):
            raise ValueError("rms rule: r0 and A/Z must be > 0, e.g. 1.2,2.5")
        self.r0_fm, self.mass_per_charge, self.charge = float(r0_fm), float(mass_per_charge), charge

    def __call__(self, values: Mapping[str, float]) -> float:
        Z = float(values[self.charge])
        if Z <= 0:
            raise ValueError(f"rms rule: needs {self.charge} > 0, got {Z:g}")
        return math.sqrt(3.0 / 5.0) * self.r0_fm * (self.mass_per_charge * Z) ** (1.0 / 3.0)

    def __repr__(self) -> str:
        return (f"NuclearRadius(r0_fm={self.r0_fm:g}, mass_per_charge={self.mass_per_charge:g}, "
                f"charge={self.charge!r})")


# --- files ---------------------------------------------------------------------------------
def umask_mode(mode: int) -> int:
    """``mode`` less the process umask (mkstemp and mkdtemp create private files)."""
    mask = os.umask(0)
    os.umask(mask)
    return mode & ~mask


def write_atomic(path: str | os.PathLike, text: str) -> Path:
    """Write ``text`` to ``path`` through a temporary file and a rename (mode 0666 less the umask)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=".tmp-", suffix=path.suffix)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, umask_mode(0o666))
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return path


def write_json_atomic(path, data) -> Path:
    """``data`` as strict JSON (non-finite numbers as null: a NaN or inf raised here after the study had
    computed everything), written atomically."""
    from .._jsonsafe import json_text

    return write_atomic(path, json_text(data, indent=1))


# --- progress ------------------------------------------------------------------------------
class ProgressBar:
    """Progress of a long study on stderr, drawn by tqdm.

    ``mode`` True shows it, False hides it, None shows it only when stderr is
    a terminal; a callable is not drawn but called as ``mode(done, total)``
    after every finished item (a hook; it may raise to stop the work). The
    bar appears only once ``delay`` seconds have passed, so a quick study
    prints nothing. ``unit`` names what is counted (``point``, ``solve``).
    """

    def __init__(self, total: int, mode: bool | None | Callable = None, label: str = "scan",
                 delay: float = 2.0, stream=None, unit: str = "point") -> None:
        self.total = total
        stream = stream if stream is not None else sys.stderr
        self.hook = mode if callable(mode) else None
        if mode is None:
            isatty = getattr(stream, "isatty", None)
            mode = bool(isatty and isatty())
        self.bar = None
        if bool(mode) and self.hook is None:
            from tqdm import tqdm   # lazy: only a study that shows its progress pays for it

            self.bar = tqdm(total=total, desc=label, unit=unit, file=stream, delay=delay, leave=True,
                            dynamic_ncols=True, ascii=True)

    def update(self, done: int) -> None:
        """``done`` items of ``total`` are finished (a safe point for a SIGTERM that a finalizer
        swallowed: see :mod:`boundkit._signals`)."""
        _signals.check()
        if self.hook is not None:
            self.hook(done, self.total)
        elif self.bar is not None:
            self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


# --- one level from a given seed energy ----------------------------------------------------
def seeded_level(eq, pot, disc, k: int, E_seed: float, tol: float, max_refits: int = 2) -> dict | None:
    """The k-node level of one channel, refined from the seed energy ``E_seed``.

    Uses the solver's per-level machinery (:func:`boundkit.solver.prepare_channel`
    for the exponent, window and inner cut; :meth:`Channel.level` on the mesh
    that the solver's WKB estimate gives for a level's energy) but not its
    seeding, so a level can be followed by continuation where the solver's
    own seeding does not find it (very weakly bound levels; levels near the
    lower continuum).

    The mesh is made for ``E_seed``. The resolution ladder stops when the
    last change is below ``tol`` |E| and the one before below 100 tol |E|
    (spectral), or when the Richardson estimate is below ``tol`` |E| (finite
    differences); it gives up after three sizes in a row without the level.
    The level is accepted only when its last three energies (two for finite
    differences) agree to 1e-6, the solver's guard against unstable states.
    If the converged level needs a mesh more than 1.5 times longer than the
    one used (the seed was too deep, so the mesh too short), the ladder is
    run again on the longer mesh (at most ``max_refits`` times); a longer
    mesh than needed only costs resolution.

    Returns a dict (energy, error_estimate, table_error, resolution, r_max, status) or None.
    ``error_estimate`` holds, as a solve's does, the interpolation error of the potential's tables
    (``table_error``, hartree, 0 without tables; :meth:`boundkit.solver.Channel.table_error`): the
    ladder converges to the level of the interpolant, and a 30-point Hulthen table's 1s came back
    5e-7 hartree off with an estimate of 4e-11 and status ok without it. ``status`` is
    ``'tolerance-not-met'`` when the estimate exceeds ``tol`` |E|.
    """
    from ..solver import prepare_channel

    ch = prepare_channel(eq, pot, 1)
    E = float(E_seed)
    if not ch.lo < E < ch.hi:
        return None
    mesh, _ = ch.mesh(E)
    need = 2 if disc.order is not None else 3
    for _refit in range(max_refits + 1):
        got = _ladder(ch, disc, k, E, mesh, tol)
        if got is None:
            return None
        hist, sizes, est, last = got
        if len(hist) < need or any(abs(hist[-1] - h) > 1e-6 * abs(hist[-1]) for h in hist[-need:]):
            return None
        E = hist[-1]
        fit, _ = ch.mesh(E)
        if fit.r_max <= 1.5 * mesh.r_max:
            table = ch.table_error(*last)
            est += table
            return {"energy": E, "error_estimate": est, "table_error": table, "resolution": sizes[-1],
                    "r_max": mesh.r_max, "status": "ok" if est <= tol * abs(E) else "tolerance-not-met"}
        log.debug("seeded level: mesh %.3g bohr too short for E = %.6g (needs %.3g); refit",
                  mesh.r_max, E, fit.r_max)
        mesh = fit
    return None


def _ladder(ch, disc, k: int, E: float, mesh, tol: float):
    """Climb the method's ladder on one mesh: (energies, sizes, estimate, last (operator, Refined)) or None.

    Gives up after three sizes in a row without a k-node level in the window.
    """
    hist: list[float] = []
    sizes: list[int] = []
    est = math.inf
    misses = 0
    for size in disc.ladder():
        got = ch.level(k, disc, size, E, mesh)
        if got is None:
            misses += 1
            if misses >= 3:      # nothing at three sizes in a row: no such level from this seed
                break
            continue
        misses = 0
        last = got
        E = float(got[1].energy)
        hist.append(E)
        sizes.append(size)
        if len(hist) < 2:
            continue
        d1 = abs(hist[-1] - hist[-2])
        floor = disc.floor * abs(E)
        if disc.order is not None:
            est = max(d1 / (2.0 ** disc.order - 1), floor)
            if est <= tol * abs(E):
                break
        else:
            est = max(d1, floor)
            if len(hist) >= 3 and est <= tol * abs(E) and abs(hist[-2] - hist[-3]) <= 100 * tol * abs(E):
                break
            if len(hist) >= 3 and max(d1, abs(hist[-2] - hist[-3])) <= floor:
                break
    if not hist:
        return None
    return hist, sizes, est, last
