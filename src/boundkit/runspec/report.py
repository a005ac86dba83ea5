"""The two summary files of a run: ``results.json`` (every number, with units, constants and
settings) and ``report.md`` (headline numbers, status, the studies' tables and the figures).

:class:`ReportWriter` is a mixin of the run engine: the study runners append
to ``md``, ``headline``, ``problems``, ``results`` and ``figures``; these
methods write what has gathered.
"""
from __future__ import annotations

import datetime as _dt
import hashlib

from .. import __version__
from ..observables import LENGTH_UNITS
from ..units import ENERGY_UNITS, constants_record
from .._jsonsafe import json_text


class ReportWriter:
    """Writes results.json and report.md from what the study runners gathered."""

    def _write_results(self, seconds: float) -> None:
        spec = self.spec
        doc = {
            "boundkit_version": __version__,
            "run_id": self.run_id,
            "spec": {"file": str(spec.path), "name": spec.name, "title": spec.title, "description": spec.description,
                     "sha256": hashlib.sha256(spec.text.encode("utf-8")).hexdigest()},
            "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
            "seconds": seconds,
            "units": {"energy": self.e_unit, "length": self.l_unit, "parameters": spec.units,
                      "energy_convention": "binding energy = total energy minus rest energy",
                      "energy_hartree_columns": "hartree", "energy_unit_factor_per_hartree": ENERGY_UNITS[self.e_unit],
                      "length_unit_factor_per_bohr": LENGTH_UNITS[self.l_unit]},
            "constants": constants_record(),
            "settings": self._settings(),
            **self.results,
            "problems": list(self.problems),
            "success": not self.problems,
            "headline": list(self.headline),
            "files": sorted(set(self.files) | {"results.json", "report.md"}),
        }
        self.write("results.json", json_text(doc) + "\n")

    def _write_report(self, seconds: float) -> None:
        spec = self.spec
        s = self._settings()
        mass = f"{s['particle_mass_MeV']:.9g} MeV"
        nucleus = (f", reduced mass with a nucleus of {s['nucleus_mass_MeV']:.9g} MeV"
                   if s["nucleus_mass_MeV"] else "")
        lines = [f"# {spec.title}", "", spec.description, "",
                 f"Computed by boundkit {__version__} in {seconds:.1f} s from `spec.toml` (a copy of "
                 f"`{spec.path.name}`). Particle: {s['particle']} ({mass}){nucleus}. Potential parameters in "
                 f"{spec.units} units ({'MeV and fm' if spec.units == 'nuclear' else 'hartree and bohr'}). "
                 f"Energies in {self.e_unit} (binding energy: total minus rest energy), lengths in {self.l_unit}. "
                 f"Constants: CODATA via scipy.constants (alpha = {constants_record()['alpha']:.12g}). "
                 "All numbers are in `results.json`; tables are CSV files.", ""]
        lines += ["## Headline numbers", ""]
        lines += [f"- {h}" for h in self.headline] or ["- (none)"]
        lines.append("")
        lines += ["## Status", ""]
        if self.problems:
            lines.append("Some things did not go as asked:")
            lines += [f"- {p}" for p in self.problems]
        else:
            lines.append("Every requested level was found and met its tolerance.")
        lines.append("")
        lines += self.md
        if self.figures:
            lines += ["## Figures", ""]
            for name, caption in self.figures:
                lines += [f"![{caption}]({name})", "", f"*{caption}* (`{name}`)", ""]
        self.write("report.md", "\n".join(lines).rstrip() + "\n")


# ---------------------------------------------------------------------------------------------
# reading study results whose exact layout belongs to boundkit.studies
