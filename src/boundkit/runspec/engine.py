"""Running a run spec and writing its output folder (see :mod:`boundkit.runspec`).

:func:`run` builds the output in a temporary folder and moves it into place;
:class:`_Engine` runs the sections of the spec in order. The engine is put
together from one mixin per responsibility:

- :mod:`.solve_runner` ([solve]), :mod:`.scan_runner` ([scan]) and :mod:`.study_runners`
  ([converge], [critical], [compare]): call the public API, gather tables, headline numbers
  and report text;
- :mod:`.figures`: draws figures into the folder (a failed figure is a problem,
  not a failure);
- :mod:`.report`: writes ``results.json`` and ``report.md``;
- :mod:`.files`: atomic writes, CSV/JSON values, the output folder and its marker.
"""
from __future__ import annotations

import json
import logging
import os
import shutil
import tempfile
import time
import uuid
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Callable

from .. import __version__
from ..observables import bohr_to
from ..studies._common import umask_mode as _umask_mode
from ..units import get_particle, hartree_to
from .figures import FigureWriter
from .files import MARKER, _atomic_write, _check_target, _move_into_place
from .report import ReportWriter
from .solve_runner import SolveRunner
from .keylines import _dotted
from .objects import RunSpec
from .spec import load_spec
from .scan_runner import ScanRunner
from .study_runners import StudyRunners

__all__ = ["run", "RunReport", "MARKER"]

log = logging.getLogger(__name__)


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
    kept_earlier : bool
        The run computed nothing (every solve was refused or found no level, and every study
        failed or failed at each of its states or points) and ``out_dir`` held an earlier run
        (``force=True``): that run was kept as it was, and nothing was written (``files`` is
        empty; ``problems`` say why).
    """

    out_dir: Path
    files: tuple[str, ...]
    seconds: float
    problems: tuple[str, ...]
    headline: tuple[str, ...]
    kept_earlier: bool = False

    @property
    def success(self) -> bool:
        return not self.problems


PROGRESS_DELAY = 2.0
"""Seconds before a run's progress bar appears (a quick run prints none)."""


def run(spec: RunSpec | str | os.PathLike, out_dir: str | os.PathLike, force: bool = False,
        progress: bool | None | Callable[[int, int], None] = None) -> RunReport:
    """Run every study of a spec and write the results into ``out_dir``.

    Parameters
    ----------
    spec : RunSpec or path
        A checked spec, or the path of a spec file (read with :func:`load_spec`).
    out_dir : path
        Output folder; it must not exist unless ``force`` is true.
    force : bool
        Replace an existing output folder of an earlier run: only an empty
        folder, or one holding the run marker ``.boundkit-run.json`` whose run
        id matches its ``results.json`` (both written by boundkit), is ever
        removed, and only by a run that computed something: when every solve
        of the new run is refused or finds no level and every study fails, or
        fails at each of its states or points, the earlier run stays
        (``RunReport.kept_earlier``).
    progress : bool, None or callable
        A progress bar on stderr (tqdm), counting the solves of
        :func:`~boundkit.runspec.plan.plan`: True shows it, False hides it,
        None (default) shows it when stderr is a terminal; it appears only
        after 2 s, so a quick run prints nothing. A callable is called as
        ``progress(done, total)`` instead.

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
    leaves ``out_dir`` as it was and no temporary folder behind, and so does
    a run that computed nothing when ``out_dir`` holds an earlier run.
    """
    if not isinstance(spec, RunSpec):
        spec = load_spec(spec)
    out = Path(out_dir)
    _check_target(out, force)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        os.chmod(tmp, _umask_mode(0o777))
        engine = _Engine(spec, tmp, progress)
        report = engine.run()
        _check_target(out, force)
        if not engine.computed and os.path.lexists(out) and any(out.iterdir()):
            shutil.rmtree(tmp, ignore_errors=True)      # a run of errors does not replace a run of results
            return replace(report, out_dir=out, files=(), kept_earlier=True)
        _move_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return replace(report, out_dir=out)


class _Engine(SolveRunner, ScanRunner, StudyRunners, FigureWriter, ReportWriter):
    """Runs the sections of one spec into one (temporary) folder."""

    def __init__(self, spec: RunSpec, folder: Path, progress: bool | None | Callable = False) -> None:
        self.spec = spec
        self.progress_mode = progress
        self.done = 0
        self.shown = 0
        self.bar = None
        self.folder = folder
        self.files: list[str] = []
        self.problems: list[str] = []
        self.headline: list[str] = []
        self.md: list[str] = []
        self.figures: list[tuple[str, str]] = []
        self.taken: set[str] = set()
        self.results: dict[str, Any] = {}
        self.planned: dict[str, int] = {}
        self.e_unit = spec.energy_unit
        self.l_unit = spec.length_unit
        self.run_id = uuid.uuid4().hex
        self.computed = 0       # solves that found levels and studies with a result (0: nothing to show)

    # -- helpers ---------------------------------------------------------------------------
    def write(self, name: str, data: str | bytes) -> None:
        _atomic_write(self.folder / name, data)
        if name not in self.files:
            self.files.append(name)


    def E(self, hartree: float | None) -> float | None:
        return None if hartree is None else float(hartree_to(hartree, self.e_unit))

    def L(self, bohr: float | None) -> float | None:
        return None if bohr is None else float(bohr_to(bohr, self.l_unit))

    def particle_kwargs(self) -> dict:
        return self.spec.particle.kwargs()

    def tick(self, n: int = 1) -> None:
        """``n`` more solves of the plan are finished."""
        self.done += n
        self._show(self.done)

    def _show(self, done: int) -> None:
        if self.bar is not None and done != self.shown:
            self.shown = done
            self.bar.update(done)

    def progress_hook(self):
        """A ``progress(done, total)`` hook for a study that counts its own points from here."""
        base = self.done

        def hook(done: int, _total: int) -> None:
            self._show(base + done)

        return hook

    # -- the run ---------------------------------------------------------------------------
    def run(self) -> RunReport:
        from ..studies._common import ProgressBar
        from .plan import plan

        planned = plan(self.spec)
        self.planned = {st.section: st.solves for st in planned.studies}
        self.bar = ProgressBar(planned.solves, self.progress_mode, label=self.spec.name,
                               delay=PROGRESS_DELAY, unit="solve")
        try:
            if self.bar.bar is not None:      # log lines (-v) above the bar, not through it
                from tqdm.contrib.logging import logging_redirect_tqdm

                with logging_redirect_tqdm():
                    return self._run()
            return self._run()
        finally:
            self.bar.close()

    def _run(self) -> RunReport:
        t0 = time.perf_counter()
        spec = self.spec
        self.write(MARKER, json.dumps({"written_by": "boundkit", "run_id": self.run_id,
                                       "boundkit_version": __version__, "spec": str(spec.path)}) + "\n")
        self.write("spec.toml", spec.text)
        if spec.solve is not None:
            self._guard_solve(spec.solve)
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

    def _guard_solve(self, sec) -> None:
        base = self.done
        self._solve(sec)        # its failures are per channel, recorded as problems there
        self.done = base
        self.tick(self.planned.get(_dotted(sec.key), 0))

    def _guard(self, key: tuple, job) -> None:
        """Run one study; a ValueError from the numerics is recorded as a problem, not raised.

        ``job()`` returns whether the study computed anything: a study whose every state or point
        failed (each recorded as a problem where it failed) computed nothing, as one that raised."""
        t0 = time.perf_counter()
        base = self.done
        try:
            if job():
                self.computed += 1
                log.info("[%s] done in %.1f s", _dotted(key), time.perf_counter() - t0)
            else:
                log.info("[%s] computed nothing: every state or point failed (%.1f s)", _dotted(key),
                         time.perf_counter() - t0)
        except (ValueError, RuntimeError) as exc:   # bad values met on the way; StudyError is a RuntimeError
            msg = f"[{_dotted(key)}] (line {self.spec.line_of(key)}) failed: {exc}"
            log.warning("%s", msg)
            self.problems.append(msg)
            self.results.setdefault("failed", []).append({"section": _dotted(key), "error": str(exc)})
        finally:
            self.done = base
            self.tick(self.planned.get(_dotted(key), 0))

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
