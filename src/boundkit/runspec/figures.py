"""Figures of a run: the engine's figure writer and the [solve] figures.

:class:`FigureWriter` is a mixin of the run engine (:class:`boundkit.runspec.engine._Engine`):
it uses the engine's ``spec``, ``folder``, ``files``, ``taken``, ``figures``,
``problems``, ``e_unit`` and ``l_unit``. A figure that cannot be drawn is a
problem of the run, never a failure: the numbers are written regardless.
"""
from __future__ import annotations

import logging
import os

import numpy as np

from ..units import hartree_to
from ..studies._common import umask_mode as _umask_mode
from ..states import label_sort_key
from .files import _slug

log = logging.getLogger("boundkit.runspec.engine")


class FigureWriter:
    """Draws figures into the run folder and lists them for the report."""

    def figure(self, stem: str, caption: str, draw) -> None:
        name = f"{stem}.{self.spec.figure_format}"
        k = 1
        while name in self.files or name in self.taken:   # model names h, H and h/ share a slug
            k += 1
            name = f"{stem}-{k}.{self.spec.figure_format}"
        self.taken.add(name)
        try:
            draw(self.folder / name)
            os.chmod(self.folder / name, _umask_mode(0o666))   # save_figure writes through mkstemp
        except Exception as exc:   # a figure must not sink the numbers
            log.warning("figure %s failed: %s", name, exc)
            self.problems.append(f"figure {name} could not be drawn: {exc}")
            return
        self.files.append(name)
        self.figures.append((name, caption))

    def _solve_figures(self, sec, by_model) -> None:
        """The figures [solve] asks for; matplotlib is imported only when there is one to draw."""
        spec = self.spec
        if not sec.figures or not any(lvs for per_eq in by_model.values() for lvs in per_eq.values()):
            return
        from ..plots import density_figure, level_diagram, level_scheme, radial_figure

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
        if "levels" in sec.figures and len(by_model) > 1:
            for eq in sec.equations:
                groups = {spec.models[m].label: per_eq[eq] for m, per_eq in by_model.items() if per_eq.get(eq)}
                if len(groups) > 1:
                    self.figure(f"scheme-{_slug(eq)}", f"Level scheme, {eq} equation, one column per model",
                                lambda p, groups=groups, eq=eq: level_scheme(
                                    groups, p, energy_unit=self.e_unit, title=f"{eq} equation: levels by model"))

    def _shift_figure(self, reference: str, shifts: list) -> None:
        """Shifts of every level against the reference model (only when the spec asks for them)."""
        from ..plots import shift_figure

        self.figure("shifts", f"Level shifts against model {reference}",
                    lambda p: shift_figure(shifts, p, unit=self.e_unit, reference=reference))


def _scan_figure(table: dict, parameter: str, unit: str, path, title: str = "", x_unit: str = ""):
    """Levels against the scanned parameter (used when boundkit.studies.figures is not there)."""
    from ..plots import _colour, plt, save_figure

    fig, ax = plt.subplots(figsize=(6.8, 4.6))
    labels = sorted({lab for per in table.values() for lab in per}, key=label_sort_key)
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
