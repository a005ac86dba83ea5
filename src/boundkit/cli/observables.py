"""Command line for what the levels mean: ``boundkit transitions``, ``boundkit
hyperfine`` and the ``--observables`` / ``--states`` extras of ``boundkit solve``.
Parses, calls the public API, prints; no numerics here."""
from __future__ import annotations

import math
import sys

import click

from .._checks import MAX_N
from .common import EXIT_NOT_CONVERGED, api_message, check_particle, fail, json_text
from .options import (build_potential, energy_unit_option, equation_option, json_option, labels_option,
                      levels_option, method_option, particle_options, potential_options, tol_option)

__all__ = ["transitions_cmd", "hyperfine_cmd", "observables_table", "add_observables", "write_states_file"]


def _observables(res, length_unit: str):
    from ..observables import masses_of, observables

    mass, _ = masses_of(res)
    return [observables(lv, length_unit=length_unit, mass=mass) for lv in res.levels]


def observables_table(res, length_unit: str) -> str:
    """Rows of <r>, r_rms, <1/r> (and g for Dirac) with their error estimates."""
    obs = _observables(res, length_unit)
    dirac = any(o.g_factor is not None for o in obs)
    head = [f"expectation values (<r>, r_rms in {length_unit}, <1/r> in 1/{length_unit}; +- the change from the "
            "previous resolution)"]
    if any(o.note for o in obs):
        head.append(f"density: {obs[0].note}")
    cols = f"{'level':<8} {'<r>':>22} {'r_rms':>22} {'<1/r>':>22}" + (f" {'g':>22}" if dirac else "")
    rows = [cols]
    for o in obs:
        cells = [o.r_mean, o.r_rms, o.r_inverse] + ([o.g_factor] if dirac else [])
        rows.append(f"{o.label:<8} " + " ".join(f"{q.value:>13.10g} +-{q.error:>7.1g}" for q in cells))
    return "\n".join(["", *head, *rows])


def add_observables(record: dict, res, length_unit: str) -> dict:
    """Give each level of a JSON record its ``observables`` (<r>, r_rms in ``units.length``, <1/r> in
    ``units.inverse_length``)."""
    record.setdefault("units", {})["length"] = length_unit
    record["units"]["inverse_length"] = f"1/{length_unit}"
    for entry, o in zip(record["levels"], _observables(res, length_unit)):
        entry["observables"] = o.to_dict()
    return record


def write_states_file(res, path: str, length_unit: str, energy_unit: str = "hartree") -> None:
    from ..io_states import write_states

    write_states(res, path, length_unit=length_unit, energy_unit=energy_unit)
    click.echo(f"wrote radial functions of {len(res.levels)} level(s) to {path} (r in {length_unit}, energies in "
               f"{energy_unit})", err=True)


def _format_lines(tr) -> str:
    from ..transitions import LINE_STRENGTH_UNIT

    u = tr.energy_unit
    out = [f"{tr.equation} equation, potential {tr.potential}: {tr.message}",
           f"line energies in {u}; S in {LINE_STRENGTH_UNIT}; f absorption oscillator strength; A in 1/s", "",
           f"{'upper':<8} {'lower':<8} {'mult':<4} {'energy':>16} {'lambda (nm)':>14} {'S':>13} {'f':>12} "
           f"{'A (1/s)':>12} {'dA/A':>8} {'check':>10}"]
    for ln in tr.lines:
        if ln.gauge_agreement is not None:
            check = f"{ln.gauge_agreement:.1e}"
        elif ln.long_wavelength_a is not None and ln.einstein_a:
            check = f"lw {ln.long_wavelength_a / ln.einstein_a - 1:+.1e}"
        else:
            check = "-"
        out.append(f"{ln.upper:<8} {ln.lower:<8} {ln.multipole:<4} {ln.energy:>16.10g} {ln.wavelength_nm:>14.8g} "
                   f"{ln.line_strength:>13.6g} {ln.oscillator_strength:>12.6g} {ln.einstein_a:>12.6g} "
                   f"{ln.einstein_a_error / ln.einstein_a if ln.einstein_a else math.inf:>8.1e} {check:>10}")
    out += ["", "dA/A: estimated relative error of A, from S's and from omega's (the difference of two levels' energies)",
            "check: |S_length / S_velocity - 1| (the two gauges; it loses digits when omega is tiny), or",
            "       'lw': long-wavelength A / A - 1 (large for M1 between s levels: that rate comes from retardation)",
            "",
            f"{'level':<8} {'lifetime (s)':>14}  branching ratios"]
    mults = "/".join(tr.settings.get("multipoles", ["E1"]))
    for lv in tr.levels:
        br = ", ".join(f"{k} {v:.4g}" for k, v in sorted(lv.branching.items(), key=lambda kv: -kv[1]))
        if not br:
            br = ("(stable: no lower level)" if lv.lower_levels == 0 else
                  f"(no {mults} line to the {lv.lower_levels} lower level{'s' if lv.lower_levels > 1 else ''})")
        out.append(f"{lv.label:<8} {lv.lifetime_s:>14.6g}  {br}")
    return "\n".join(out)


@click.command("transitions")
@equation_option()
@potential_options
@click.option("--max-n", type=int, default=2, show_default=True, help="Highest principal quantum number.")
@click.option("--max-n-limit", type=int, default=None,
              help=f"Largest --max-n accepted (default {MAX_N}; every channel l < max_n is solved and the lines "
                   "grow as max_n^4).")
@click.option("--level", "levels", multiple=True, metavar="LABEL",
              help="Keep only these levels (repeatable), e.g. --level 1s --level 2p.")
@click.option("--multipole", "multipoles", multiple=True, metavar="E1|M1|E2|M2",
              help="Multipoles (repeatable; default E1; M1, E2 and M2 for Dirac only).")
@energy_unit_option("eV", "Unit of line energies")
@tol_option(1e-14)
@method_option()
@particle_options()
@labels_option
@json_option()
def transitions_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                    table_origin, table_r_unit, table_v_unit, params, unit_system, max_n, max_n_limit, levels,
                    multipoles, energy_unit, tol, method, particle, mass_mev, nucleus_mass_mev, labels, as_json):
    """Radiative lines among the levels up to --max-n: energies, line strengths, oscillator
    strengths, Einstein A, lifetimes and branching ratios.

    With --nucleus-mass-mev M the levels use the reduced mass and the E1 dipole is
    that of particle (charge q, mass m) and nucleus (charge Z) about their centre of
    mass, e r (q M - Z m)/(M + m): for q = -1 the particle's own dipole times
    (M + Z m)/(M + m), 1 for hydrogen, 1.055 for muonic calcium. Z comes from the
    potential's Coulomb tail (Z = 0, said in the header, when it has none); M1, E2
    and M2 lines carry no recoil terms; a neutral particle is refused."""
    from ..transitions import transitions

    try:
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        limit = {} if max_n_limit is None else {"max_n_limit": max_n_limit}
        tr = transitions(equation, vector, values, max_n=max_n, levels=list(levels) or None,
                         multipoles=list(multipoles) or ["E1"], energy_unit=energy_unit, tol=tol, method=method,
                         particle=particle, mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev,
                         scalar=scalar or None, units=unit_system, labels=labels, **limit)
    except ValueError as exc:
        fail(api_message(exc, {"max_n_limit": "--max-n-limit"}))
    if as_json:
        click.echo(json_text(tr.to_dict()))
    else:
        click.echo(_format_lines(tr))
    if tr.status != "ok":
        click.echo(f"boundkit: {tr.status}: {tr.message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)


def _magnetic_rows(res, moment: float, spin: float, radius_fm: float | None, unit: str) -> list[dict]:
    """g and A of every level of a Dirac result (public API calls only)."""
    from ..observables import g_factor, hyperfine_a, masses_of

    from ..states import level_n

    mass, particle_mass = masses_of(res)
    rows = []
    for lv in res.levels:
        g = g_factor(lv, mass)
        a = hyperfine_a(lv, moment, spin, mass=mass, particle_mass=particle_mass,
                        magnetization_radius=radius_fm, radius_unit="fm", energy_unit=unit)
        top = spin + lv.j          # E(F) - E(F - 1) = A F (the interval rule) at the uppermost F = I + j
        rows.append({"label": lv.label, "n": level_n(lv.nodes, lv.l, res.settings.get("labels", "atomic")),
                     "kappa": lv.kappa, "j": lv.j, "energy_hartree": lv.energy,
                     "g_factor": g.value, "hyperfine_a": a.value, "hyperfine_splitting": a.value * top,
                     "errors": {"g_factor": g.error, "hyperfine_a": a.error,
                                "hyperfine_splitting": a.error * top}})
    return rows


@click.command("hyperfine")
@potential_options
@click.option("--kappa", type=int, default=-1, show_default=True, help="Dirac kappa (-1 = s1/2, 1 = p1/2, ...).")
@levels_option(1, what="Number of lowest levels")
@click.option("--nuclear-moment", type=float, required=True, metavar="MU",
              help="Nuclear magnetic moment in nuclear magnetons (proton: 2.79284734).")
@click.option("--nuclear-spin", type=float, required=True, metavar="I", help="Nuclear spin I (0.5, 1, 1.5, ...).")
@click.option("--magnetized-sphere-fm", "radius_fm", type=float, default=None, metavar="R",
              help="Spread the moment over a uniformly magnetized sphere of radius R fm (Bohr-Weisskopf); "
                   "default a point dipole.")
@energy_unit_option("MHz", "Unit of A")
@tol_option(1e-12, "Tolerance of the level solves.")
@method_option()
@particle_options()
@json_option()
def hyperfine_cmd(potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge, table_origin,
                  table_r_unit, table_v_unit, params, unit_system, kappa, levels, max_levels, nuclear_moment,
                  nuclear_spin, radius_fm, energy_unit, tol, method, particle, mass_mev, nucleus_mass_mev, as_json):
    """Bound g-factor, magnetic dipole hyperfine constant A and the splitting A (I + j) of the two
    uppermost hyperfine sublevels of Dirac levels (Dirac values: no QED corrections, no anomalous
    moment of the particle)."""
    from ..solver import solve
    from ..units import energy_unit as canonical_energy_unit

    check_particle(particle, mass_mev)
    try:
        unit = canonical_energy_unit(energy_unit)
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        res = solve("dirac", vector, values, kappa=kappa, levels=levels, max_levels=max_levels, tol=tol, method=method,
                    particle=particle, mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev,
                    scalar=scalar or None, units=unit_system)
        rows = _magnetic_rows(res, nuclear_moment, nuclear_spin, radius_fm, unit)
    except ValueError as exc:
        fail(api_message(exc, {"max_levels": "--max-levels", "nuclear_spin": "--nuclear-spin",
                               "nuclear_moment": "--nuclear-moment", "magnetization_radius": "--magnetized-sphere-fm"}))
    dipole = "point dipole" if radius_fm is None else f"uniformly magnetized sphere, R = {radius_fm:g} fm"
    if as_json:
        click.echo(json_text({"equation": res.equation, "potential": res.potential,
                              "nucleus": {"moment_nuclear_magnetons": nuclear_moment, "spin": nuclear_spin,
                                          "magnetization": dipole},
                              "units": {"hyperfine_a": unit, "hyperfine_splitting": unit, "g_factor": "1",
                                        "energy": "hartree"},
                              "status": res.status, "message": res.message, "levels": rows}))
    else:
        out = [f"dirac equation, potential {res.potential}; nucleus mu = {nuclear_moment:g} mu_N, I = "
               f"{nuclear_spin:g}, {dipole}",
               f"A in {unit}: a level F lies at A [F(F+1) - I(I+1) - j(j+1)] / 2; Dirac values (no QED, "
               "no anomalous moment); +- the change from the previous resolution",
               f"splitting in {unit}: E(F) - E(F-1) = A F at F = I + j (the whole doublet when j = 1/2 or "
               "I = 1/2)", "",
               f"{'level':<8} {'g':>24} {'A':>28} {'splitting':>28}"]
        for row in rows:
            err = row["errors"]
            out.append(f"{row['label']:<8} {row['g_factor']:>15.12g} +-{err['g_factor']:>7.1g} "
                       f"{row['hyperfine_a']:>19.12g} +-{err['hyperfine_a']:>7.1g} "
                       f"{row['hyperfine_splitting']:>19.12g} +-{err['hyperfine_splitting']:>7.1g}")
        click.echo("\n".join(out))
    if res.status != "ok":
        click.echo(f"boundkit: {res.status}: {res.message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
