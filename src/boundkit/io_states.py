"""Writing and reading radial wave functions (CSV or NPZ).

Each level is written on its own nodes (where the solver computed it) plus,
optionally, on a common grid, as columns

    level, r, P, Q, density

r in the chosen length unit; P and Q (r times the radial components) in
length^(-1/2), so that integral density dr = 1 in that unit; the density is
P^2 (Schrodinger), P^2 + Q^2 (Dirac) or the Klein-Gordon charge density
(E + mc^2 - V)/(mc^2) P^2. Q is 0 for one-component equations. The CSV starts
with ``#`` header lines giving the equation, units, energies (in the energy
unit asked for, hartree by default, and in hartree) and the density used; the NPZ holds one array set per level (``<label>/r`` ...)
and a JSON ``meta`` string with the same information.

A file written on the nodes also carries the quadrature weights for dr
(column ``weight``), so that integrals re-read from it keep the solver's
accuracy: integral g dr = sum(weight * g).
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .observables import LENGTH_UNITS, KG_NOTE, length_unit as canonical_length_unit
from .states import level_n
from .units import energy_unit as energy_unit_name, hartree_to
from .wavefunctions import regular_values

__all__ = ["write_states", "read_states", "states_csv_text", "STATE_FORMATS"]

STATE_FORMATS = (".csv", ".npz")


def _density_note(equation: str) -> str:
    return {"schrodinger": "P^2", "dirac": "P^2 + Q^2", "klein-gordon": KG_NOTE}.get(equation, "P^2 + Q^2")


def _columns(level, unit: str):
    st = level.state
    scale = LENGTH_UNITS[unit]
    r = st.r * scale
    P, Q = regular_values(st)       # what every observable reads (the nodal values, less a finite nucleus' admixture)
    P = P / np.sqrt(scale)
    Q = (np.zeros_like(st.P) if Q is None else Q) / np.sqrt(scale)
    dens = st.density(st.r) / scale
    return r, P, Q, dens, st.weights * scale


def write_states(result, path, length_unit: str = "bohr", energy_unit: str = "hartree") -> Path:
    """Write every level of ``result`` (a SolveResult) to ``path`` (.csv or .npz).

    Lengths are in ``length_unit``; the levels' energies in ``energy_unit`` (and in hartree, ``energy_hartree``).
    Raises ValueError for an unknown suffix or unit, or a result without levels.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in STATE_FORMATS:
        raise ValueError(f"states: file {path.name!r} must end in .csv or .npz")
    unit = canonical_length_unit(length_unit)
    e_unit = energy_unit_name(energy_unit)
    if not result.levels:
        raise ValueError("states: the result has no levels to write")
    meta = _meta(result, unit, e_unit)
    path.parent.mkdir(parents=True, exist_ok=True)       # as figures are written
    if suffix == ".npz":
        arrays = {}
        for lv in result.levels:
            for name, col in zip(("r", "P", "Q", "density", "weight"), _columns(lv, unit)):
                arrays[f"{lv.label}/{name}"] = col
        with open(path, "wb") as fh:     # a file object: np.savez would append .npz to a name ending in .NPZ
            np.savez(fh, meta=np.array(json.dumps(meta)), **arrays)
        return path
    path.write_text(states_csv_text(result, unit, meta, e_unit))
    return path


def _meta(result, unit: str, energy_unit: str = "hartree") -> dict:
    return {
        "equation": result.equation, "potential": result.potential,
        "units": {"r": unit, "P": f"{unit}^-1/2", "Q": f"{unit}^-1/2", "density": f"1/{unit}",
                  "weight": unit, "energy": energy_unit, "energy_hartree": "hartree"},
        "density": _density_note(result.equation),
        "levels": [{"label": lv.label, "n": level_n(lv.nodes, lv.l, result.settings.get("labels", "atomic")),
                    "l": lv.l, "kappa": lv.kappa, "energy": float(hartree_to(lv.energy, energy_unit)),
                    "energy_hartree": lv.energy,
                    "gamma": lv.state.gamma} for lv in result.levels],
        "note": "P = r x (large radial component), Q = r x (small component, Dirac); values on the solver's "
                "nodes; weight integrates over r",
    }


def states_csv_text(result, length_unit: str = "bohr", meta: dict | None = None,
                    energy_unit: str = "hartree") -> str:
    """The CSV text :func:`write_states` writes (for callers that write files themselves)."""
    unit = canonical_length_unit(length_unit)
    e_unit = energy_unit_name(energy_unit)
    if meta is None:
        meta = _meta(result, unit, e_unit)
    lines = [f"# boundkit radial functions: {result.equation} equation, potential {result.potential}",
             f"# units: r in {unit}; P, Q in {unit}^-1/2; density in 1/{unit}; weight in {unit}; level energies "
             f"(below) in {e_unit}",
             f"# density: {meta['density']}",
             "# " + json.dumps(meta),
             "level,r,P,Q,density,weight"]
    for lv in result.levels:
        r, P, Q, d, w = _columns(lv, unit)
        lines.extend(f"{lv.label},{a!r},{b!r},{c!r},{e!r},{f!r}" for a, b, c, e, f in
                     zip(r.tolist(), P.tolist(), Q.tolist(), d.tolist(), w.tolist()))
    return "\n".join(lines) + "\n"


def read_states(path) -> tuple[dict, dict]:
    """Read a file written by :func:`write_states`: (meta, {label: {column: array}})."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".npz":
        with np.load(path) as data:
            meta = json.loads(str(data["meta"]))
            out: dict = {}
            for key in data.files:
                if key == "meta":
                    continue
                label, _, name = key.rpartition("/")
                out.setdefault(label, {})[name] = np.array(data[key])
        return meta, out
    if suffix != ".csv":
        raise ValueError(f"states: file {path.name!r} must end in .csv or .npz")
    meta = {}
    rows: dict = {}
    with path.open() as fh:
        for line in fh:
            if line.startswith("# {"):
                meta = json.loads(line[2:])
            elif line.startswith("#") or line.startswith("level,"):
                continue
            else:
                label, *vals = line.rstrip("\n").split(",")
                rows.setdefault(label, []).append([float(v) for v in vals])
    out = {label: dict(zip(("r", "P", "Q", "density", "weight"), np.array(v).T)) for label, v in rows.items()}
    return meta, out
