"""Schrodinger, Klein-Gordon and Dirac levels of one potential side by side.

For each orbital l and principal number n the comparison lists the
Schrodinger level, the Klein-Gordon (spin-0) level and the two Dirac
(spin-1/2) levels j = l + 1/2 (kappa = -(l+1)) and j = l - 1/2 (kappa = l,
l > 0), with the relativistic shifts from Schrodinger, the fine-structure
splitting E(j = l + 1/2) - E(j = l - 1/2) and the spin-0 / spin-1/2
differences.
"""
from __future__ import annotations

import logging
from dataclasses import dataclass, field
from typing import Any, Mapping

from .._checks import MAX_L, check_count, check_int, check_positive
from ..equations.base import letter
from ..solver import solve
from ..reporting import channel_summary, difference_error, format_difference
from ..states import check_convention, convert_label
from ..units import constants_record, energy_unit, hartree_to
from ._common import call_units, describe

__all__ = ["compare", "CompareResult"]

log = logging.getLogger(__name__)

_ENERGY_KEYS = ("schrodinger", "klein_gordon", "dirac_plus", "dirac_minus")
_DIFF_KEYS = {
    "shift_klein_gordon": ("klein_gordon", "schrodinger"),
    "shift_dirac_plus": ("dirac_plus", "schrodinger"),
    "shift_dirac_minus": ("dirac_minus", "schrodinger"),
    "fine_structure": ("dirac_plus", "dirac_minus"),
    "spin_plus": ("dirac_plus", "klein_gordon"),
    "spin_minus": ("dirac_minus", "klein_gordon"),
    "spin_centroid": ("dirac_centroid", "klein_gordon"),
}


def _pair(row, a, b):
    ea, eb = row.get(a), row.get(b)
    if ea is None or eb is None:
        return None, None
    return ea - eb, difference_error(ea, eb, row[a + "_error"], row[b + "_error"])


@dataclass(frozen=True, repr=False)
class CompareResult:
    """Levels of the three equations side by side.

    Attributes
    ----------
    rows : tuple of dict
        One row per (n, l), energies in hartree (None when a level was not
        found): ``schrodinger``, ``klein_gordon``, ``dirac_plus``
        (j = l + 1/2), ``dirac_minus`` (j = l - 1/2; None for l = 0),
        ``dirac_centroid`` ((2j+1)-weighted mean of the two Dirac levels),
        each with an ``_error`` estimate, and the differences
        ``shift_klein_gordon``, ``shift_dirac_plus``, ``shift_dirac_minus``
        (from Schrodinger), ``fine_structure`` (dirac_plus - dirac_minus),
        ``spin_plus``, ``spin_minus``, ``spin_centroid`` (Dirac minus
        Klein-Gordon), each with an ``_error`` (sum of the two estimates).
    statuses : dict
        Solver status of each channel (``'schrodinger l=1'``, ``'dirac kappa=-2'``...), ``'error'``
        for a channel its equation refuses (a Klein-Gordon s channel of a point charge with
        Z alpha >= 1/2): its levels are None, the other channels are still compared.
    messages : dict
        The solver's message of each channel ('' when none), the refusal for an ``'error'``.
    settings : dict
        Potential, parameters, particle, l_max, levels, tol, method.
    """

    rows: tuple
    statuses: dict
    settings: dict = field(default_factory=dict)
    messages: dict = field(default_factory=dict)

    @property
    def success(self) -> bool:
        return all(s == "ok" for s in self.statuses.values())

    def row(self, label: str) -> dict:
        """The row of a level label such as ``'2p'``."""
        for r in self.rows:
            if r["label"] == label:
                return r
        raise KeyError(f"no level {label!r}; have {', '.join(r['label'] for r in self.rows)}")

    def splitting(self, label: str, unit: str = "hartree") -> float:
        """Fine-structure splitting E(j = l + 1/2) - E(j = l - 1/2) of level ``label`` in ``unit``."""
        v = self.row(label)["fine_structure"]
        if v is None:
            raise KeyError(f"level {label!r} has no fine-structure splitting (l = 0, or a level missing)")
        return float(hartree_to(v, unit))

    def to_dict(self, unit: str | None = None, splitting_unit: str | None = None) -> dict[str, Any]:
        """JSON-ready record: energies in ``unit`` (default the call's: hartree, or MeV with units='nuclear'),
        differences in ``splitting_unit`` (default ``unit``)."""
        unit = energy_unit(unit or call_units(self.settings)[0])
        sunit = energy_unit(splitting_unit or unit)
        rows = []
        for r in self.rows:
            out = {"n": r["n"], "l": r["l"], "label": r["label"], "j_plus": r["j_plus"], "j_minus": r["j_minus"]}
            for key in (*_ENERGY_KEYS, "dirac_centroid"):
                for k in (key, key + "_error"):
                    out[k] = None if r[k] is None else float(hartree_to(r[k], unit))
            for key in _DIFF_KEYS:
                for k in (key, key + "_error"):
                    out[k] = None if r[k] is None else float(hartree_to(r[k], sunit))
            rows.append(out)
        return {"units": {"energy": unit, "differences": sunit, "length": call_units(self.settings)[1]}, "rows": rows,
                "statuses": self.statuses, "messages": self.messages, "success": self.success,
                "settings": self.settings,
                "constants": constants_record()}

    def table(self, unit: str | None = None, splitting_unit: str | None = None) -> str:
        """Two plain-text tables: levels in ``unit`` (default the call's); shifts and splittings in
        ``splitting_unit``."""
        unit = energy_unit(unit or call_units(self.settings)[0])
        sunit = energy_unit(splitting_unit or unit)

        def fmt(x, u, w=22):
            return f"{'-':>{w}}" if x is None else f"{hartree_to(x, u):>{w}.15g}"

        lines = [f"binding energies in {unit}",
                 f"{'level':<6} {'Schrodinger':>22} {'Klein-Gordon':>22} {'Dirac j=l+1/2':>22} {'Dirac j=l-1/2':>22}"]
        for r in self.rows:
            lines.append(f"{r['label']:<6} " + " ".join(fmt(r[k], unit) for k in _ENERGY_KEYS))
        lines += ["", f"differences in {sunit} (relativistic shifts from Schrodinger; fine structure "
                      "E(j=l+1/2) - E(j=l-1/2); spin-1/2 minus spin-0; 0 = within the error estimate, "
                      "digits as the estimate supports)",
                  f"{'level':<6} {'KG - S':>18} {'D(l+1/2) - S':>18} {'D(l-1/2) - S':>18} {'fine structure':>18} "
                  f"{'D(l+1/2) - KG':>18} {'D(l-1/2) - KG':>18} {'centroid - KG':>18}"]
        def fmt_diff(r, k, w=18):
            if r[k] is None:
                return f"{'-':>{w}}"
            text = format_difference(hartree_to(r[k], sunit), hartree_to(r[k + "_error"] or 0.0, sunit))
            return f"{text:>{w}}"

        for r in self.rows:
            lines.append(f"{r['label']:<6} " + " ".join(fmt_diff(r, k) for k in _DIFF_KEYS))
        lines += ["", "status: " + (self.problems() or "ok")]
        return "\n".join(lines)

    def problems(self, width: int = 280) -> str:
        """The channels whose status is not 'ok' on one line of at most ``width`` characters ('' when there
        are none): channels with the same status and reason together, the reason once
        (:func:`boundkit.reporting.channel_summary`); :attr:`messages` keeps each channel's own."""
        return channel_summary(((k, v, self.messages.get(k, "")) for k, v in self.statuses.items() if v != "ok"),
                               width)

    def __repr__(self) -> str:
        return f"CompareResult({len(self.rows)} levels, success={self.success})"


def compare(potential, params: Mapping[str, Any] | None = None, *, l_max: int = 1, levels: int = 2,
            particle: str | None = None, mass_mev: float | None = None, tol: float = 1e-10,
            method: str = "auto", scalar=None, max_l_max: int = MAX_L, labels: str = "atomic",
            **solve_kwargs) -> CompareResult:
    """Schrodinger, Klein-Gordon and Dirac levels of one potential side by side.

    Parameters
    ----------
    potential : str, callable, Term or sequence
        As for :func:`boundkit.solve`.
    params : dict
        Potential parameters.
    l_max : int
        Largest orbital l compared (default 1), at most ``max_l_max``.
    levels : int
        Levels per channel (n = l + 1 ... l + levels; default 2).
    max_l_max : int
        Limit on ``l_max`` (default 20, :data:`boundkit._checks.MAX_L`): each l
        costs three solves per level; raise it deliberately.
    particle, mass_mev : optional
        The orbiting particle (default electron); the same mass in all three
        equations.
    tol : float
        Relative tolerance of each binding energy.
    labels : {'atomic', 'nuclear', 'quarkonium'}
        Labelling convention of the rows (``2p``, ``0p`` or ``1P``;
        :mod:`boundkit.states`).
    method, scalar, **solve_kwargs
        As for :func:`boundkit.solve` (``nucleus_mass_mev``, ``units``, ``order``).

    Returns
    -------
    CompareResult

    Notes
    -----
    For orbital l the channels are: Schrodinger and Klein-Gordon with l;
    Dirac with kappa = -(l + 1) (j = l + 1/2) and, for l > 0, kappa = l
    (j = l - 1/2); levels are matched by their label n = k + l + 1 (k nodes
    of the large component). Differences:

        shift = E_eq - E_Schrodinger,
        fine structure = E(j = l + 1/2) - E(j = l - 1/2),
        centroid = [(2l + 2) E(j = l + 1/2) + 2l E(j = l - 1/2)] / (4l + 2),
        spin difference = E_Dirac - E_Klein-Gordon.

    Error estimates of differences are the sums of the two levels' estimates
    plus the rounding of the subtraction (:mod:`boundkit.reporting`).
    Use a frequency unit (``'MHz'``, ``'GHz'``) for small splittings.
    """
    l_max = check_count("l_max", check_int("l_max", l_max, minimum=0), check_int("max_l_max", max_l_max, minimum=0),
                        "max_l_max= (API)", "", keyword="max_l_max")
    levels = check_int("levels", levels, minimum=1)
    tol = check_positive("tol", tol)
    labels = check_convention(labels)
    from ..potentials import make_potential

    if make_potential(potential, params, scalar=scalar, units=solve_kwargs.get("units", "atomic")).has_spin_orbit:
        raise ValueError("potential: compare sets the three equations side by side, and a spin-orbit term "
                         "(woods-saxon spin_orbit) belongs to the Schrodinger equation alone, with j; set spin_orbit "
                         "= 0, or solve the Schrodinger channels one j at a time (solve(..., j=), boundkit solve --j)")
    common = dict(params=params, levels=levels, tol=tol, method=method, particle=particle, mass_mev=mass_mev,
                  scalar=scalar, **solve_kwargs)
    by_label: dict[str, dict] = {}
    statuses: dict[str, str] = {}
    messages: dict[str, str] = {}
    refusals: list[ValueError] = []
    settings: dict = {}

    def run(eq: str, key: str, orbital: int, **channel) -> None:
        name = f"{eq} {', '.join(f'{k}={v}' for k, v in channel.items())}"
        try:
            res = solve(eq, potential, **channel, **common)
        except ValueError as exc:
            # a channel this equation refuses (no Klein-Gordon s levels for a point charge with
            # Z alpha >= 1/2): its column stays empty, as a scan leaves a refused point; input that
            # every channel refuses is raised below
            statuses[name], messages[name] = "error", str(exc)
            refusals.append(exc)
            return
        statuses[name], messages[name] = res.status, "" if res.status == "ok" else res.message
        settings.setdefault("particle", res.settings.get("particle"))
        settings.setdefault("particle_mass_MeV", res.settings.get("particle_mass_MeV"))
        for lv in res.levels:
            lab = f"{lv.n}{letter(orbital)}"
            row = by_label.setdefault(lab, {"n": lv.n, "l": orbital, "label": lab})
            row[key] = lv.energy
            row[key + "_error"] = lv.error_estimate

    for l in range(l_max + 1):
        run("schrodinger", "schrodinger", l, l=l)
        run("klein-gordon", "klein_gordon", l, l=l)
        run("dirac", "dirac_plus", l, kappa=-(l + 1))
        if l > 0:
            run("dirac", "dirac_minus", l, kappa=l)
    if len(refusals) == len(statuses):
        raise refusals[0]
    rows = []
    for l in range(l_max + 1):
        for n in range(l + 1, l + levels + 1):
            lab = f"{n}{letter(l)}"
            row = by_label.get(lab, {"n": n, "l": l, "label": lab})
            for key in _ENERGY_KEYS:
                row.setdefault(key, None)
                row.setdefault(key + "_error", None)
            row["j_plus"] = l + 0.5
            row["j_minus"] = l - 0.5 if l > 0 else None
            ep, em = row["dirac_plus"], row["dirac_minus"]
            if ep is not None and (l == 0 or em is not None):
                wp, wm = 2 * l + 2, 2 * l
                row["dirac_centroid"] = ep if l == 0 else (wp * ep + wm * em) / (wp + wm)
                row["dirac_centroid_error"] = row["dirac_plus_error"] if l == 0 else \
                    (wp * row["dirac_plus_error"] + wm * row["dirac_minus_error"]) / (wp + wm)
            else:
                row["dirac_centroid"] = row["dirac_centroid_error"] = None
            for key, (a, b) in _DIFF_KEYS.items():
                row[key], row[key + "_error"] = _pair(row, a, b)
            rows.append(row)
    missing = [r["label"] for r in rows if any(r[k] is None for k in _ENERGY_KEYS[:3])]
    if missing:   # a channel that was refused or failed says so in statuses and messages already
        refused = any(v != "ok" for v in statuses.values())
        (log.info if refused else log.warning)("compare: levels not found in every equation: %s", ", ".join(missing))
    settings.update({"potential": describe(potential), "scalar": describe(scalar),
                     "params": dict(params or {}), "l_max": l_max, "levels": levels, "tol": tol,
                     "method": method, "mass_mev": mass_mev, "labels": labels,
                     "solve_kwargs": dict(solve_kwargs)})
    for row in rows:
        row["label"] = convert_label(row["label"], labels)
    return CompareResult(rows=tuple(rows), statuses=statuses, settings=settings, messages=messages)
