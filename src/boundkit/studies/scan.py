"""Parameter scans: bound levels over a grid of one or two potential parameters.

Every point of the grid (parameter values x equation x channel) is an
independent solve, run in parallel on local cores (processes) or on a Dask
cluster. Each level is followed by its *label*: the solver labels a level
by the node count of its (large-component) radial function, so a label
names the same physical level at every point, and a level that is not found
at a point is recorded as absent (the solve certified that it found every
level there is) or missing (it could not: status partial), never replaced by
another level.

With an ``out`` directory every finished point is written at once, as its
own small JSON file (temporary file + rename, so a file is either whole or
absent), in the scan's energy unit and the length unit of its unit system,
named in the file's ``units``; a rerun with the same directory reuses the
points already there.
At the end the whole table is written as ``scan.csv`` and ``scan.json``.
"""
from __future__ import annotations

import asyncio
import csv
import hashlib
import io
import itertools
import json
import logging
import math
import os
import pickle
import re
import socket
import threading
import time
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from .._checks import MAX_GRID_POINTS, MAX_LEVELS, check_count, check_int, check_positive, check_workers
from .._checks import OptionError, shorten
from .._threads import usable_cores
from ..states import check_convention, convert_label
from ..solver import check_levels, solve
from ..units import ENERGY_UNITS, LENGTH_UNITS, call_energy_unit, column, constants_record, hartree_to, system_units
from ..units import energy_unit as _energy_unit
from . import _common
from ._common import (ProgressBar, call_units, canonical_equation, channel_for, channel_name, check_varied, describe,
                      expected_labels, parameter_units, rebuild_potential, resolve_params,
                      write_atomic, write_json_atomic)

__all__ = ["scan", "ScanResult", "linspace", "logspace", "parse_vary"]

log = logging.getLogger(__name__)

_POINTS_DIR = "points"
_FORMAT = 2   # version of the point files; part of the key (2: levels in the units the file names)


def linspace(start: float, stop: float, num: int, max_points: int = MAX_GRID_POINTS) -> list[float]:
    """``num`` evenly spaced values from ``start`` to ``stop`` (both included); at most ``max_points``."""
    num = check_count("num", check_int("num", num, minimum=1), max_points, "max_points=")
    return [float(x) for x in np.linspace(float(start), float(stop), num)]


def logspace(start: float, stop: float, num: int, max_points: int = MAX_GRID_POINTS) -> list[float]:
    """``num`` values from ``start`` to ``stop`` (both included, both > 0), evenly
    spaced in their logarithm (at most ``max_points``). Unlike :func:`numpy.logspace`,
    the ends are the values themselves, not exponents."""
    num = check_count("num", check_int("num", num, minimum=1), max_points, "max_points=")
    a, b = float(start), float(stop)
    if not (a > 0 and b > 0):
        raise ValueError(f"vary: a logarithmic range needs positive ends, got {a:g} and {b:g}")
    return [float(x) for x in np.geomspace(a, b, num)]


def parse_vary(text: str, max_points: int = MAX_GRID_POINTS) -> tuple[str, list[float]]:
    """Read ``NAME=START:STOP:N``, ``NAME=START:STOP:N:log`` or ``NAME=v1,v2,...`` (at most ``max_points`` values)."""
    name, eq, rhs = str(text).partition("=")
    name, rhs = name.strip(), rhs.strip()
    hint = "write NAME=START:STOP:N, NAME=START:STOP:N:log or NAME=v1,v2,v3"
    if not eq or not name or not rhs:
        raise ValueError(f"vary: {text!r} is malformed; {hint}")
    if "_" in rhs:      # Python reads 1_0 as 10: a typo would pass unseen
        raise ValueError(f"vary: {text!r} has an underscore in a number; write the digits without it")
    try:
        if ":" in rhs:
            parts = [p.strip() for p in rhs.split(":")]
            if len(parts) not in (3, 4) or (len(parts) == 4 and parts[3].lower() != "log"):
                raise ValueError
            a, b = float(parts[0]), float(parts[1])
            n = int(parts[2])
            if n < 1 or str(n) != parts[2]:
                raise ValueError
            check_count("vary", n, max_points, "--max-points (API: max_points=)")
            values = logspace(a, b, n, max_points) if len(parts) == 4 else linspace(a, b, n, max_points)
        else:
            if rhs.count(",") >= max_points:
                check_count("vary", rhs.count(",") + 1, max_points, "--max-points (API: max_points=)", "values")
            values = [float(v) for v in rhs.split(",") if v.strip()]
    except ValueError as exc:
        if "positive ends" in str(exc) or "the limit" in str(exc):
            raise
        raise ValueError(f"vary: cannot read {text!r}; {hint} (N a whole number >= 1)") from None
    if not values or not all(math.isfinite(v) for v in values):
        raise ValueError(f"vary: {text!r} needs finite values; {hint}")
    return name, values


# --- one point -----------------------------------------------------------------------------
def solve_point(task: Mapping[str, Any]) -> dict:
    """Solve one point of a scan (run in a worker; must stay importable at top level).

    Returns a JSON-ready record: key, status, message and the found levels.
    """
    t0 = time.perf_counter()
    varied = set(task["varied"])
    params = task["params"]
    try:
        units = task["solve_kwargs"].get("units", "atomic")
        res = solve(task["equation"], rebuild_potential(task["potential"], params, varied, units=units), params,
                    levels=task["levels"], max_levels=task.get("max_levels", MAX_LEVELS), tol=task["tol"],
                    method=task["method"],
                    scalar=rebuild_potential(task["scalar"], params, varied, units=units), **task["channel"],
                    **task["solve_kwargs"])
    except ValueError as exc:
        return {"key": task["key"], "status": "error", "message": str(exc), "levels": [],
                "seconds": time.perf_counter() - t0}
    levels = [{"label": lv.label, "n": lv.n, "l": lv.l, "j": lv.j, "kappa": lv.kappa, "energy": lv.energy,
               "error_estimate": lv.error_estimate, "resolution": lv.resolution,
               "r_max": float(lv.state.r[-1])} for lv in res.levels]
    return {"key": task["key"], "status": res.status, "message": res.message, "levels": levels,
            "seconds": time.perf_counter() - t0}


def _record_in(record: dict, energy: str, length: str, inverse: bool = False) -> dict:
    """A point's record with its levels' energies in ``energy`` and r_max in ``length`` (from hartree and
    bohr; ``inverse``: back to them)."""
    fe, fl = ENERGY_UNITS[energy], LENGTH_UNITS[length]
    if inverse:
        fe, fl = 1 / fe, 1 / fl
    levels = [{**lv, "energy": lv["energy"] * fe, "error_estimate": lv["error_estimate"] * fe,
               "r_max": lv["r_max"] * fl} for lv in record["levels"]]
    return {**record, "levels": levels}


def _stored_record(rec: dict) -> dict | None:
    """The record of a point file in hartree and bohr, or None when its units are not ones boundkit writes."""
    units = rec.get("units")
    if not isinstance(units, dict) or units.get("energy") not in ENERGY_UNITS or \
            units.get("length") not in LENGTH_UNITS or not isinstance(rec.get("result"), dict):
        return None
    return _record_in(rec["result"], units["energy"], units["length"], inverse=True)


def _point_key(task: Mapping[str, Any], potential_id: Any) -> str:
    """SHA-256 of everything that determines a point's result (see :func:`scan`, Notes)."""
    ident = {k: task[k] for k in ("params", "equation", "channel", "levels", "tol", "method", "solve_kwargs")}
    ident["potential"] = potential_id
    ident["format"] = _FORMAT
    ident["code"] = _common.code_version()
    text = json.dumps(ident, sort_keys=True, default=repr)
    return hashlib.sha256(text.encode()).hexdigest()[:24]


def _resume_policy(potential, scalar, resume_key: str | None) -> tuple[Any, bool, str]:
    """(fingerprint of the potential, may points be reused, what was decided and why)."""
    unstable: list[str] = []
    ident = {"potential": _common.identity(potential, unstable), "scalar": _common.identity(scalar, unstable)}
    if resume_key is not None:
        if not isinstance(resume_key, str) or not resume_key.strip():
            raise ValueError(f"resume_key: expected a non-empty string naming this version of the potential, "
                             f"got {resume_key!r}")
        ident["resume_key"] = resume_key
        why = f"on: by resume_key {resume_key!r}" if unstable else "on: by content"
        return ident, True, why
    if unstable:
        return ident, False, (f"off: {', '.join(unstable[:3])} has no content boundkit can fingerprint; "
                              "pass resume_key to reuse its points")
    return ident, True, "on: by content"


# --- the result ----------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class ScanResult:
    """Levels over a parameter grid.

    Attributes
    ----------
    parameters : tuple of str
        The varied parameters (one or two), outermost first.
    values : dict
        The grid: parameter name -> tuple of values.
    rows : tuple of dict
        One row per point and level label, with keys: each varied parameter,
        ``equation``, ``channel`` (``'l=0'`` or ``'kappa=-1'``), ``label``,
        ``energy`` (binding energy, hartree; None when absent),
        ``error_estimate`` (hartree), ``status`` (``ok``,
        ``tolerance-not-met``, ``absent`` (the solve found every level there
        is, and not this one), ``missing`` (not found, but the solve could not
        certify its count: status partial, its message kept) or ``error``)
        and ``message``.
    settings : dict
        Everything that produced the numbers (potential, fixed parameters,
        levels, tol, method, channels, equations, particle).
    parameter_units : dict
        Unit of each varied parameter ('' for a charge or when unknown).
    solved, reused : int
        Points solved in this run, and points read back from ``out``.
    out : str or None
        Directory of the point files and of scan.csv / scan.json.
    seconds : float
        Wall time of the run.
    problems : tuple of str
        Output files that could not be written (the rows are complete all
        the same); empty when everything was written.
    """

    parameters: tuple
    values: dict
    rows: tuple
    settings: dict
    parameter_units: dict = field(default_factory=dict)
    solved: int = 0
    reused: int = 0
    out: str | None = None
    seconds: float = 0.0
    problems: tuple = ()

    @property
    def series_keys(self) -> list[tuple[str, str, str]]:
        """(equation, channel, label) of every followed level, in table order."""
        seen: dict = {}
        for r in self.rows:
            seen.setdefault((r["equation"], r["channel"], r["label"]), None)
        return list(seen)

    def series(self, label: str, equation: str | None = None, channel: str | None = None,
               where: Mapping[str, float] | None = None, unit: str = "hartree"):
        """(x, E) of one level along the first parameter; E is NaN where absent.

        ``where`` fixes the other parameter of a two-parameter scan.
        """
        rows = [r for r in self.rows if r["label"] == label
                and (equation is None or r["equation"] == canonical_equation(equation))
                and (channel is None or r["channel"] == channel)
                and all(r[k] == v for k, v in (where or {}).items())]
        if not rows:
            raise KeyError(f"no level {label!r} in this scan; have "
                           f"{', '.join(sorted({k[2] for k in self.series_keys}))}")
        combos = {(r["equation"], r["channel"]) for r in rows}
        if len(combos) > 1:
            raise KeyError(f"level {label!r} appears in {len(combos)} (equation, channel) pairs; "
                           "give equation= and channel=")
        if len(self.parameters) > 1 and not where:
            raise KeyError(f"two-parameter scan: fix {self.parameters[1]!r} with where={{...}}")
        x = np.array([r[self.parameters[0]] for r in rows], float)
        E = np.array([np.nan if r["energy"] is None else hartree_to(r["energy"], unit) for r in rows])
        return x, E

    def _energy_unit(self, unit: str | None) -> str:
        """``unit``, or the scan's system's when None."""
        return _energy_unit(unit) if unit is not None else call_units(self.settings)[0]

    def to_dict(self, unit: str | None = None) -> dict[str, Any]:
        """A JSON-ready record (energies in ``unit``, default the call's: hartree, or MeV with
        units='nuclear'; absent levels as null)."""
        unit = self._energy_unit(unit)
        rows = []
        for r in self.rows:
            r = dict(r)
            for k in ("energy", "error_estimate"):
                if r[k] is not None:
                    r[k] = float(hartree_to(r[k], unit))
            rows.append(r)
        return {"parameters": list(self.parameters), "values": {k: list(v) for k, v in self.values.items()},
                "parameter_units": self.parameter_units,
                "units": {"energy": unit, "length": call_units(self.settings)[1], "time": "s",
                          "parameters": self.parameter_units},
                "settings": self.settings, "constants": constants_record(), "rows": rows,
                "solved": self.solved, "reused": self.reused, "seconds": self.seconds}

    def to_csv(self, unit: str | None = None) -> str:
        """The rows as CSV text (energies in ``unit``, default the call's, empty when absent)."""
        unit = self._energy_unit(unit)
        buf = io.StringIO()
        u = "hartree" if unit == "hartree" else unit
        cols = [*(column(p, self.parameter_units.get(p, "")) for p in self.parameters), "equation", "channel",
                "label", column("energy", u), column("error_estimate", u), "status", "message"]
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(cols)
        for r in self.rows:
            e = "" if r["energy"] is None else repr(float(hartree_to(r["energy"], unit)))
            de = "" if r["error_estimate"] is None else repr(float(hartree_to(r["error_estimate"], unit)))
            w.writerow([*(repr(float(r[p])) for p in self.parameters), r["equation"], r["channel"], r["label"],
                        e, de, r["status"], r["message"]])
        return buf.getvalue()

    def table(self, unit: str | None = None) -> str:
        """A plain-text table (energies in ``unit``, default the call's)."""
        unit = self._energy_unit(unit)
        def named(p: str) -> str:
            u = self.parameter_units.get(p, "")
            return f"{p} ({u})" if u else p

        width = {p: max(16, len(named(p))) for p in self.parameters}
        head = [f"{named(p):>{width[p]}}" for p in self.parameters]
        lines = [" ".join(head + [f"{'equation':<13} {'channel':<9} {'level':<8} {'energy (' + unit + ')':>24} "
                                  f"{'error (' + unit + ')':>13} status"])]
        for r in self.rows:
            vals = [f"{r[p]:>{width[p]}.10g}" for p in self.parameters]
            if r["energy"] is None:
                e, de = "-", "-"
            else:
                e = f"{hartree_to(r['energy'], unit):.15g}"
                de = f"{hartree_to(r['error_estimate'], unit):.2g}"
            lines.append(" ".join(vals + [f"{r['equation']:<13} {r['channel']:<9} {r['label']:<8} {e:>24} "
                                          f"{de:>13} {r['status']}"]))
        return "\n".join(lines)

    def __repr__(self) -> str:
        grid = " x ".join(f"{p}[{len(self.values[p])}]" for p in self.parameters)
        return (f"ScanResult({grid}, {len(self.series_keys)} level(s), {len(self.rows)} rows, "
                f"solved {self.solved}, reused {self.reused})")


# --- running -------------------------------------------------------------------------------
def _run_local(tasks, workers, on_done) -> None:
    if workers <= 1 or len(tasks) <= 1:
        for t in tasks:
            on_done(solve_point(t))
        return
    try:
        pickle.dumps(tasks)
    except Exception as exc:  # lambdas and local functions cannot go to another process
        log.warning("scan: the potential or parameters cannot be sent to worker processes (%s); "
                    "solving the points one after another here", exc)
        for t in tasks:
            on_done(solve_point(t))
        return
    pool = ProcessPoolExecutor(max_workers=min(workers, len(tasks)))
    # neighbouring points go to one worker in a chunk (about four chunks per worker: fewer round
    # trips to the pool, and progress still moves); results are handed over as chunks finish
    size = max(1, math.ceil(len(tasks) / (4 * workers)))
    try:
        pending = {pool.submit(_solve_chunk, tasks[i:i + size]) for i in range(0, len(tasks), size)}
        while pending:
            done, pending = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                for record in fut.result():
                    on_done(record)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)


def _solve_chunk(tasks) -> list:
    """Solve a run of points in one worker (top level: it must pickle)."""
    return [solve_point(t) for t in tasks]


DASK_TIMEOUT = 10.0
"""Seconds to connect to a Dask scheduler, and the longest a scan waits while
the cluster has no worker (at the start, or after workers were lost)."""

_ADDRESS = re.compile(r"^(tcp|tls|ws|wss|inproc)://[^\s/:]+(:\d{1,5})?/?$|^[A-Za-z0-9.\-]+:\d{1,5}$")


def _dask_address(scheduler: str) -> str:
    text = str(scheduler).strip()
    if not _ADDRESS.match(text):
        raise ValueError(f"scheduler: {shorten(text)!r} is not a Dask scheduler address; write e.g. "
                         "tcp://127.0.0.1:8786")
    return text


def _run_dask(tasks, scheduler, on_done, timeout: float = DASK_TIMEOUT) -> None:
    """Solve the points on a Dask cluster; every failure mode ends within a bounded time.

    Connecting (address, handshake) takes at most ``timeout`` seconds; a
    cluster without workers is waited for at most ``timeout`` seconds, at the
    start and whenever all workers are gone (a lost worker's points go to the
    others first). A point whose worker died (KilledWorker) or that failed
    inside Dask is recorded as a transient error (not written to ``out``, so a
    rerun solves it again). Finished points are handed to ``on_done`` (which
    writes them) as they arrive, so nothing finished is lost.
    """
    try:
        from dask.distributed import Client
    except ImportError:
        raise ValueError("scheduler: Dask is not installed; install it with pip install 'boundkit[dask]'") from None
    own = isinstance(scheduler, str)
    if own:
        client = _connect(Client, _dask_address(scheduler), timeout)
    else:
        client = scheduler
    futures = []
    try:
        _wait_for_workers(client, timeout, done=0, total=len(tasks))
        futures = client.map(solve_point, tasks, pure=False)
        key_of = {f.key: t["key"] for f, t in zip(futures, tasks)}
        pending = list(futures)
        quiet_since = time.monotonic()
        while pending:
            done = [f for f in pending if f.done()]
            if not done:
                time.sleep(0.05)
                if time.monotonic() - quiet_since > 1.0:    # nothing for a second: are there workers?
                    _wait_for_workers(client, timeout, done=len(futures) - len(pending), total=len(futures))
                    quiet_since = time.monotonic()
                continue
            quiet_since = time.monotonic()
            finished = {id(f) for f in done}
            pending = [f for f in pending if id(f) not in finished]
            for fut in done:
                try:
                    # bounded: a finished future whose worker has just gone loses its result and
                    # turns pending again, and a bare result() would wait for a worker forever
                    record = fut.result(timeout=timeout)
                except Exception as exc:  # noqa: BLE001 - KilledWorker, lost data, timeout: transient
                    record = {"key": key_of[fut.key], "status": "error", "levels": [], "seconds": 0.0,
                              "transient": True,
                              "message": f"Dask: {type(exc).__name__}: {shorten(str(exc), 120)}; rerun to solve it again"}
                on_done(record)
    finally:
        for fut in futures:
            fut.cancel()
        if own:
            client.close(timeout=timeout)


def _connect(Client, address: str, timeout: float):
    """A Client for ``address`` after a bounded check that a Dask scheduler answers there.

    The library's own connect timeout does not cover a port that accepts the
    connection and then says nothing a scheduler would (an HTTP server: the
    client waited forever), and garbage on the port fails in odd ways (huge
    allocations). So the scheduler is first asked for its identity over one
    comm, in a private event loop where every step is bounded by ``timeout``
    (see :func:`_probe`); only a scheduler that answers gets a Client.
    """
    box: dict = {}
    host_port = re.match(r"^(?:tcp://)?\[?([^\]/]+?)\]?:(\d+)/?$", address)
    if host_port:                     # a plain TCP address: is anything listening?
        try:
            socket.create_connection((host_port.group(1), int(host_port.group(2))), timeout=timeout).close()
        except OSError as exc:
            raise ValueError(f"scheduler: cannot reach the Dask scheduler at {shorten(address)!r} within "
                             f"{timeout:g} s ({exc.strerror or type(exc).__name__}); check the address and that "
                             "the scheduler runs") from None

    def target() -> None:       # a thread of its own: the caller may already run an event loop
        try:
            box["info"] = asyncio.run(_probe(address, timeout))
        except Exception as exc:  # noqa: BLE001 - handed to the caller
            box["error"] = exc

    thread = threading.Thread(target=target, name="boundkit-dask-probe", daemon=True)
    thread.start()
    thread.join(3 * timeout + 2.0)     # every step inside is bounded; this is a last guard
    exc = box.get("error")
    if isinstance(exc, (OSError, TimeoutError, asyncio.TimeoutError)) and not host_port:
        raise ValueError(f"scheduler: cannot reach the Dask scheduler at {shorten(address)!r} within {timeout:g} s "
                         f"({type(exc).__name__}); check the address and that the scheduler runs") from None
    info = box.get("info")
    if exc is not None or thread.is_alive() or not isinstance(info, dict) or info.get("type") != "Scheduler":
        what = type(exc).__name__ if exc is not None else "no scheduler identity"
        raise ValueError(f"scheduler: {shorten(address)!r} does not answer as a Dask scheduler within "
                         f"{timeout:g} s ({what}); check the address and port") from None
    try:
        return Client(address, timeout=timeout, set_as_default=False)
    except Exception as exc:  # noqa: BLE001 - it answered a moment ago; say so plainly
        raise ValueError(f"scheduler: connecting a client to {shorten(address)!r} failed ({type(exc).__name__}); "
                         "try again") from None


async def _probe(address: str, timeout: float) -> dict:
    """The scheduler's identity record, each step (connect, write, read) within ``timeout`` s."""
    from distributed.comm import connect

    comm = await asyncio.wait_for(connect(address, timeout=timeout), timeout + 1.0)
    try:
        await asyncio.wait_for(comm.write({"op": "identity", "reply": True}), timeout)
        return await asyncio.wait_for(comm.read(), timeout)
    except (OSError, asyncio.TimeoutError, TimeoutError) as exc:
        raise _NotAScheduler(type(exc).__name__) from None
    finally:
        comm.abort()


class _NotAScheduler(Exception):
    """Something accepted the connection but did not answer as a Dask scheduler."""


def _wait_for_workers(client, timeout: float, done: int, total: int) -> None:
    """Return when the cluster has a worker; StudyError after ``timeout`` seconds without one."""
    try:
        n = len(client.scheduler_info().get("workers", {}))
    except Exception:  # noqa: BLE001 - the scheduler itself is gone
        n = 0
    if n:
        return
    try:
        client.wait_for_workers(1, timeout=timeout)
    except Exception as exc:  # noqa: BLE001 - TimeoutError, or the scheduler closed
        from ._common import StudyError

        raise StudyError(f"scheduler: the Dask cluster has had no worker for {timeout:g} s "
                         f"({type(exc).__name__}); {done} of {total} points finished and kept; start workers "
                         "and rerun (with --out the finished points are reused)") from None


def _rows_for(task, record) -> list[dict]:
    found = {lv["label"]: lv for lv in record["levels"]}
    rows = []
    labels = list(task["labels"]) + [lab for lab in found if lab not in task["labels"]]
    for lab in labels:
        row = {p: task["point"][p] for p in task["vary_order"]}
        row.update({"equation": task["equation"], "channel": channel_name(task["channel"]), "label": lab})
        lv = found.get(lab)
        if lv is None:
            # absent: the solve found every level there is (fewer than asked); missing: it could not
            # tell (status partial, a count certificate that failed), so the level may well be bound
            status = {"error": "error", "partial": "missing"}.get(record["status"], "absent")
            msg = "not found at this point" if status == "absent" else record["message"]
            row.update({"energy": None, "error_estimate": None, "status": status, "message": msg})
        else:
            ok = lv["error_estimate"] <= task["tol"] * abs(lv["energy"])
            row.update({"energy": lv["energy"], "error_estimate": lv["error_estimate"],
                        "status": "ok" if ok else "tolerance-not-met", "message": ""})
        rows.append(row)
    return rows


def scan(equation: str | Sequence[str], potential, params: Mapping[str, Any] | None,
         vary: Mapping[str, Sequence[float]], *, channels: Sequence[Mapping[str, int]] | None = None,
         l: int | None = None, kappa: int | None = None, levels: int = 3, tol: float = 1e-10, method: str = "auto", workers: int | None = None,
         scheduler=None, out: str | os.PathLike | None = None,
         progress: bool | None | Callable[[int, int], None] = None, scalar=None, resume_key: str | None = None,
         max_points: int = MAX_GRID_POINTS, scheduler_timeout: float = DASK_TIMEOUT,
         labels: str = "atomic", energy_unit: str | None = None, max_levels: int = MAX_LEVELS,
         **solve_kwargs) -> ScanResult:
    """Bound levels over a grid of one or two potential parameters.

    Parameters
    ----------
    equation : str or sequence of str
        ``'schrodinger'``, ``'klein-gordon'``, ``'dirac'``, or several of them.
    potential : str, callable, Term or sequence
        As for :func:`boundkit.solve`.
    params : dict
        Fixed parameters. A callable value is evaluated at every point with
        the dict of that point's other parameters, e.g. a nuclear radius that
        follows the charge (:class:`boundkit.studies.NuclearRadius`).
    vary : dict
        One or two parameter names -> sequences of values (see
        :func:`linspace`, :func:`logspace`). The first is the outer loop.
    channels : sequence of dict
        E.g. ``[{"l": 0}, {"l": 1}]`` or ``[{"kappa": -1}, {"kappa": 1}]``.
        Dirac needs kappa; for Schrodinger and Klein-Gordon a kappa alone
        stands for the l of its large component (in a scan that also solves
        the Dirac equation; without one, kappa is refused as in
        :func:`boundkit.solve`). A Schrodinger channel of a potential with a
        spin-orbit term also takes j: ``{"l": 1, "j": 1.5}``. Default: the
        lowest channel.
    l, kappa : int, optional
        One channel, as for :func:`boundkit.solve`: ``l=1`` is
        ``channels=[{"l": 1}]``, ``kappa=-2`` is ``channels=[{"kappa": -2}]``.
    levels : int
        Number of lowest levels followed in each channel, at most ``max_levels``.
    max_levels : int
        Limit on ``levels`` (default 1000, :data:`boundkit._checks.MAX_LEVELS`, as for
        :func:`boundkit.solve`); raise it deliberately: every point solves that many.
    tol : float
        Relative tolerance of each binding energy.
    method : str
        Discretization (``'auto'``, ``'spectral'``, ``'finite-difference'``).
    workers : int, optional
        Local worker processes, at most the number of cores (default: the
        cores, or fewer when there are fewer points; 1 = in this process).
    scheduler : str or dask.distributed.Client, optional
        A Dask scheduler address such as ``'tcp://127.0.0.1:8786'`` (or a
        client): the points are then solved on that cluster.
    scheduler_timeout : float
        Seconds (default 10) to connect to the scheduler, and the longest the
        scan waits while the cluster has no worker; then it stops with
        :class:`~boundkit.studies.StudyError`, keeping the finished points
        (written to ``out`` as they arrive). A point whose worker died is an
        ``error`` row that a rerun solves again.
    out : path, optional
        Directory for the point files (``points/<key>.json``, each naming its
        units) and for ``scan.csv`` and ``scan.json``. Points already there are
        reused.
    progress : bool, None or callable
        Progress bar on stderr: None shows it when stderr is a terminal and
        the scan runs for more than two seconds. A callable is called as
        ``progress(done, total)`` after each finished point instead.
    scalar : optional
        Lorentz-scalar terms, as for :func:`boundkit.solve`.
    resume_key : str, optional
        A name for this version of a potential that holds a Python callable
        (or a Term class of your own). boundkit cannot fingerprint such code,
        so without a key its points in ``out`` are never reused (a warning
        says so); with a key they are reused whenever the key, the settings
        and the point agree -- change the key when you change the function.
    max_points : int
        Most points (values x values x equations x channels) the scan may
        have, default 10000 (:data:`boundkit._checks.MAX_GRID_POINTS`); raise
        it for a larger grid.
    labels : {'atomic', 'nuclear', 'quarkonium'}
        Labelling convention of the rows (``2p1/2``, ``0p1/2`` or ``1P1/2``;
        :mod:`boundkit.states`).
    energy_unit : str, optional
        Unit of the energies in ``scan.csv``, ``scan.json`` and the point files
        under ``out`` (default hartree; MeV with ``units='nuclear'``; lengths
        there are in bohr, or fm with ``units='nuclear'``); the result itself
        keeps hartree (convert with ``series(..., unit=)``, ``to_csv(unit)``).
    **solve_kwargs
        Passed to :func:`boundkit.solve` (``particle``, ``mass_mev``,
        ``nucleus_mass_mev``, ``units``, ``order``).

    Returns
    -------
    ScanResult

    Notes
    -----
    A level is identified by the node count k of its radial function,
    label n = k + l + 1 (Sturm-Liouville ordering, see
    :mod:`boundkit.equations`), so the curve E_label(p) can only be broken
    by the level's absence, never by a jump to another level. The key of a
    point file is a SHA-256 hash of the point's resolved parameters,
    equation, channel, potential description and solve settings; a change
    to any of them makes a new point. The mesh of each level follows its
    energy (WKB, see :mod:`boundkit.solver`), so levels that spread out
    towards threshold get a wider mesh automatically; very weakly bound
    levels may still be missed by the solver's seeding and then show as
    absent (see :func:`boundkit.studies.critical`, which follows a level by
    continuation).
    """
    t0 = time.perf_counter()
    equations = [equation] if isinstance(equation, str) else list(equation)
    if not equations:
        raise ValueError("equation: give at least one equation")
    equations = list(dict.fromkeys(canonical_equation(e) for e in equations))
    levels = check_levels(check_int("levels", levels, minimum=1), max_levels)   # an int: no 'all' here
    tol = check_positive("tol", tol)
    labels = check_convention(labels)
    file_unit = call_energy_unit(energy_unit, solve_kwargs.get("units") or "atomic")
    scheduler_timeout = check_positive("scheduler_timeout", scheduler_timeout)
    workers = check_workers(workers)
    max_points = check_int("max_points", max_points, minimum=1)
    if not isinstance(vary, Mapping) or not 1 <= len(vary) <= 2:
        raise ValueError("vary: give a dict of one or two parameter names -> sequences of values")
    grid: dict[str, tuple] = {}
    for name, vals in vary.items():
        try:
            vals = tuple(float(v) for v in itertools.islice(vals, max_points + 1))   # no endless iterators
        except (TypeError, ValueError):
            raise ValueError(f"vary[{name!r}]: expected a sequence of numbers") from None
        if not vals or not all(math.isfinite(v) for v in vals):
            raise ValueError(f"vary[{name!r}]: expected a non-empty sequence of finite numbers")
        check_count(f"vary[{name!r}]", len(vals), max_points, "max_points=", "values or more")
        seen: set[float] = set()
        twice = next((v for v in vals if v in seen or seen.add(v)), None)
        if twice is not None:
            raise ValueError(f"vary[{name!r}]: the value {twice:g} is listed twice (it would be solved twice); "
                             "list each value once")
        grid[str(name)] = vals
    check_varied(potential, scalar, list(grid))
    params = dict(params or {})
    derived = {k for k, v in params.items() if callable(v)}
    clash = derived & set(grid)
    if clash:
        raise ValueError(f"vary: {sorted(clash)[0]!r} is both varied and given as a rule in params")
    varied = sorted(set(grid) | derived)
    if l is not None or kappa is not None:
        if channels is not None:
            raise ValueError("channels: give either channels= or l=/kappa= (one channel), not both")
        channels = [{k: v for k, v in (("l", l), ("kappa", kappa)) if v is not None}]
    if channels is None:
        channels = [{"kappa": -1}]
    elif "dirac" not in equations and any(isinstance(c, Mapping) and "kappa" in c for c in channels):
        raise ValueError(f"kappa: only the Dirac equation takes kappa; give l for {' and '.join(equations)} "
                         "(l=0 or channels=[{'l': 0}]; CLI --l 0)")
    pairs = []
    for eq in equations:
        for ch in channels:
            c = channel_for(eq, ch)
            if (eq, c) not in pairs:
                pairs.append((eq, c))
    names = list(grid)
    total = math.prod(len(v) for v in grid.values()) * len(pairs)
    if total > max_points:
        raise ValueError(f"scan: {total} points (values x equations x channels) is more than the limit of "
                         f"{max_points}; use fewer, or raise it with max_points= (CLI: --max-points)")
    potential_id, reusable, resume = _resume_policy(potential, scalar, resume_key)
    tasks = []
    for combo in itertools.product(*(grid[n] for n in names)):
        point = dict(zip(names, combo))
        resolved = resolve_params(params, point)
        for eq, c in pairs:
            task = {"params": resolved, "point": point, "vary_order": names, "varied": varied,
                    "equation": eq, "channel": c, "levels": levels, "tol": tol, "method": method,
                    "solve_kwargs": dict(solve_kwargs), "potential": potential, "scalar": scalar,
                    "labels": expected_labels(eq, c, levels), "max_levels": max_levels}   # not in the key
            task["key"] = _point_key(task, potential_id)
            tasks.append(task)
    units = solve_kwargs.get("units", "atomic")
    length_unit = system_units(units)[1]
    fixed_names = sorted({k for t in tasks[:1] for k in t["params"]} - set(names))
    point_units = {"energy": file_unit, "length": length_unit,
                   "parameters": parameter_units(potential, scalar, names + fixed_names, units),
                   "note": f"energy and error_estimate in {file_unit}, r_max in {length_unit}; parameters in "
                           "their units ('' for a charge or a number, or when not known)"}
    records: dict[str, dict] = {}
    outdir = Path(out) if out is not None else None
    problems: list[str] = []
    if outdir is not None:
        try:
            (outdir / _POINTS_DIR).mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise ValueError(f"out: cannot create the folder {str(outdir / _POINTS_DIR)!r} "
                             f"({exc.strerror or exc}); choose a writable folder") from None
        if not reusable:
            log.warning("scan: finished points in %s are not reused: resume %s", outdir, resume)
        for t in tasks if reusable else ():
            f = outdir / _POINTS_DIR / f"{t['key']}.json"
            if f.exists():
                try:
                    rec = json.loads(f.read_text(encoding="utf-8"))
                except (OSError, ValueError):
                    log.warning("scan: unreadable point file %s is solved again", f)
                    continue
                stored = _stored_record(rec) if rec.get("key") == t["key"] else None
                if stored is not None:
                    records[t["key"]] = stored
    reused = len(records)
    todo = [t for t in tasks if t["key"] not in records]
    _check_input(todo)
    by_key = {t["key"]: t for t in tasks}
    bar = ProgressBar(len(todo), progress, label="scan")
    solved = 0

    def on_done(record: dict) -> None:
        nonlocal solved
        key = record["key"]
        records[key] = record
        solved += 1
        if outdir is not None and not problems and not record.get("transient"):
            t = by_key[key]
            _write_or_note(problems, outdir / _POINTS_DIR / f"{key}.json", write_json_atomic, {
                "key": key, "units": point_units, "point": t["point"], "params": t["params"],
                "equation": t["equation"], "channel": t["channel"], "levels": t["levels"], "tol": t["tol"],
                "method": t["method"], "potential": describe(t["potential"]),
                "result": _record_in(record, file_unit, length_unit)})
        bar.update(solved)

    try:
        if scheduler is not None:
            _run_dask(todo, scheduler, on_done, scheduler_timeout)
        else:
            _run_local(todo, workers or usable_cores(), on_done)
    finally:
        bar.close()
    rows = []
    for t in tasks:
        rows.extend(_rows_for(t, records[t["key"]]))
    if labels != "atomic":
        rows = [{**r, "label": convert_label(r["label"], labels)} for r in rows]
    settings = {"equations": equations, "channels": [c for _, c in pairs], "potential": describe(potential),
                "scalar": describe(scalar), "params": {k: (repr(v) if callable(v) else v) for k, v in params.items()},
                "levels": levels, "tol": tol, "method": method, "labels": labels,
                "solve_kwargs": {k: v for k, v in solve_kwargs.items()},
                "backend": "dask" if scheduler is not None else "local",
                "resume": resume if outdir is not None else "off: no out folder", "code": _common.code_version()}
    result = ScanResult(parameters=tuple(names), values=grid, rows=tuple(rows), settings=settings,
                        parameter_units=parameter_units(potential, scalar, names, units), solved=solved,
                        reused=reused, out=None if outdir is None else str(outdir),
                        seconds=time.perf_counter() - t0)
    if outdir is not None:
        _write_or_note(problems, outdir / "scan.csv", write_atomic, result.to_csv(file_unit))
        _write_or_note(problems, outdir / "scan.json", write_json_atomic, result.to_dict(file_unit))
        result = replace(result, problems=tuple(problems))
    log.info("scan: %d point(s) solved, %d reused, %.1f s", solved, reused, result.seconds)
    return result


def _write_or_note(problems: list[str], path: Path, writer, data) -> None:
    """Write one output file; an OSError becomes a note in ``problems`` (the scan goes on)."""
    try:
        writer(path, data)
    except OSError as exc:
        msg = f"out: cannot write {str(path)!r} ({exc.strerror or exc}); the results are complete without it"
        log.warning("scan: %s", msg)
        problems.append(msg)


def _check_input(todo: list[dict]) -> None:
    """Refuse bad input (unknown names, bad parameter values at any point) before
    sending work out: builds the equation and potential of every point (no solve),
    so a ValueError here is the user's, not the solver's trouble at one point."""
    if not todo:
        return
    from ..discretize import get_method
    from ..solver import setup

    allowed = {"particle", "mass_mev", "nucleus_mass_mev", "units", "order"}
    bad = set(todo[0]["solve_kwargs"]) - allowed
    if bad:
        raise ValueError(f"scan: unknown option {sorted(bad)[0]!r}; solve options are "
                         f"{', '.join(sorted(allowed))}")
    get_method(todo[0]["method"], todo[0]["solve_kwargs"].get("order"))
    for t in todo:
        varied = set(t["varied"])
        kwargs = {k: v for k, v in t["solve_kwargs"].items() if k != "order"}
        try:
            units = kwargs.get("units", "atomic")
            setup(t["equation"], rebuild_potential(t["potential"], t["params"], varied, units=units), t["params"],
                  scalar=rebuild_potential(t["scalar"], t["params"], varied, units=units), **t["channel"], **kwargs)
        except ValueError as exc:
            where = ", ".join(f"{k} = {v:g}" for k, v in t["point"].items())
            if isinstance(exc, OptionError):
                raise exc.amended(f" (at {where})") from None
            raise ValueError(f"{exc} (at {where})") from None
