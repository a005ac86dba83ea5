"""What a run spec would compute, without solving anything (``boundkit run SPEC --dry-run``).

:func:`plan` reads the checked :class:`~boundkit.runspec.objects.RunSpec` and
lists, per study section, the models, equations, channels and the number of
solves (or scan points, critical searches) the run would do. It solves
nothing; every check of :func:`~boundkit.runspec.load_spec` (which builds each
potential model once) has already passed when a plan exists.
"""
from __future__ import annotations

from dataclasses import dataclass

from .keylines import _dotted
from .objects import RunSpec, _channels_for

__all__ = ["RunPlan", "PlannedStudy", "plan"]


@dataclass(frozen=True)
class PlannedStudy:
    """One study section of a spec as the run would do it.

    Attributes
    ----------
    section : str
        The section's key, e.g. ``solve`` or ``scan[1]``.
    line : int
        Its line in the spec file.
    summary : str
        One line: what is computed.
    details : tuple of str
        Models, equations, channels with their levels, grid sizes.
    solves : int
        Independent solves (a scan point per equation and channel counts one;
        a critical search counts one per state; a convergence study one per
        method plus the reference).
    """

    section: str
    line: int
    summary: str
    details: tuple[str, ...]
    solves: int


@dataclass(frozen=True)
class RunPlan:
    """What :func:`boundkit.runspec.run` would compute for a spec (see :func:`plan`)."""

    spec: RunSpec
    studies: tuple[PlannedStudy, ...]

    @property
    def solves(self) -> int:
        """Total independent solves of the run."""
        return sum(s.solves for s in self.studies)

    def text(self) -> str:
        """The plan as readable lines (what ``--dry-run`` prints)."""
        spec = self.spec
        part = spec.particle
        who = part.name or ("particle of mass %g MeV" % part.mass_mev if part.mass_mev else "electron")
        lines = [f"run spec {spec.path}: valid", f"  title: {spec.title}",
                 f"  particle: {who}" + (f", reduced mass with a nucleus of {part.nucleus_mass_mev:g} MeV"
                                         if part.nucleus_mass_mev else ""),
                 f"  units: parameters {spec.units}, energies in {spec.energy_unit}, lengths in {spec.length_unit}, "
                 f"labels {spec.labels}",
                 f"  models: {len(spec.models)}"]
        for name, model in spec.models.items():
            lines.append(f"    {name}: {model.summary()}")
        for st in self.studies:
            lines.append(f"  [{st.section}] (line {st.line}): {st.summary}")
            lines += [f"    {d}" for d in st.details]
        lines.append(f"would run {len(self.studies)} stud{'y' if len(self.studies) == 1 else 'ies'} with "
                     f"{self.solves} solve(s) in all; nothing was solved or written")
        return "\n".join(lines)


def _channel_text(entries) -> str:
    return ", ".join(f"{name} ({n} level{'s' if n > 1 else ''})" for _kw, name, n in entries)


def plan(spec: RunSpec) -> RunPlan:
    """List what :func:`boundkit.runspec.run` would compute for ``spec``, solving nothing.

    Parameters
    ----------
    spec : RunSpec
        A spec checked by :func:`boundkit.runspec.load_spec`.

    Returns
    -------
    RunPlan
        One :class:`PlannedStudy` per section, in the order the run takes them.
    """
    out: list[PlannedStudy] = []
    if spec.solve is not None:
        sec = spec.solve
        details, n = [], 0
        for eq in sec.equations:
            per_model = [_channels_for(sec.channels, eq, sec.levels, spec.models[m].spin_orbit(spec.units))
                         for m in sec.models]
            n += sum(len(chans) for chans in per_model)
            # each model's channels (they differ only where one model has a spin-orbit term and j splits them)
            texts = list(dict.fromkeys(_channel_text(chans) for chans in per_model))
            details.append(f"{eq}: {' / '.join(texts)}")
        extra = []
        if sec.differences:
            extra.append("differences " + ", ".join(f"E({a}) - E({b})" for a, b in sec.differences))
        if sec.reference:
            extra.append(f"shifts against model {sec.reference}")
        if sec.figures:
            extra.append("figures " + ", ".join(sec.figures))
        details += extra
        out.append(PlannedStudy(_dotted(sec.key), spec.line_of(sec.key),
                                f"levels of models {', '.join(sec.models)} x equations {', '.join(sec.equations)}: "
                                f"{n} solve(s), tol {sec.tolerance:g}, method {sec.method}", tuple(details), n))
    for sec in spec.converge:
        (kw, cname), = sec.channel.expand(sec.equation, spec.models[sec.model].spin_orbit(spec.units))[:1]
        n = len(sec.methods) + 1
        out.append(PlannedStudy(_dotted(sec.key), spec.line_of(sec.key),
                                f"convergence of model {sec.model}, {sec.equation} {cname}, {sec.levels} level(s)",
                                (f"methods {', '.join(sec.methods)} (a resolution ladder each), reference solve at "
                                 f"tol {sec.tolerance:g}",), n))
    for sec in spec.scan:
        chans = _channels_for(sec.channels, sec.equation, sec.levels, spec.models[sec.model].spin_orbit(spec.units))
        grid = [f"{sec.parameter}: {len(sec.values)} value(s) from {min(sec.values):g} to {max(sec.values):g}"]
        points = len(sec.values)
        if sec.second is not None:
            p2, v2 = sec.second
            grid.append(f"{p2}: {len(v2)} value(s) from {min(v2):g} to {max(v2):g}")
            points *= len(v2)
        n = points * len(chans)
        what = " x ".join([sec.parameter] + ([sec.second[0]] if sec.second else []))
        details = grid + [f"{sec.equation}: {_channel_text(chans)}"]
        if sec.differences:
            details.append("differences " + ", ".join(f"E({a}) - E({b})" for a, b in sec.differences))
        out.append(PlannedStudy(_dotted(sec.key), spec.line_of(sec.key),
                                f"scan of model {sec.model} over {what}: {points} grid point(s) x {len(chans)} "
                                f"channel(s) = {n} solve(s)", tuple(details), n))
    for sec in spec.critical:
        out.append(PlannedStudy(_dotted(sec.key), spec.line_of(sec.key),
                                f"critical {sec.parameter} of model {sec.model}, {sec.equation}: "
                                f"{len(sec.states)} search(es)",
                                (f"states {', '.join(sec.states)}" + (f", bracket {sec.bracket[0]:g} to "
                                                                       f"{sec.bracket[1]:g}" if sec.bracket else ""),),
                                len(sec.states)))
    for sec in spec.compare:
        n = 2 * (sec.l_max + 1) + (2 * sec.l_max + 1)
        out.append(PlannedStudy(_dotted(sec.key), spec.line_of(sec.key),
                                f"Schrodinger, Klein-Gordon and Dirac compared for model {sec.model}: l <= "
                                f"{sec.l_max}, {sec.levels} level(s) per channel, {n} solve(s)", (), n))
    return RunPlan(spec, tuple(out))
