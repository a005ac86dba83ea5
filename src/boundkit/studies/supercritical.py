"""Past the diving point: a dived level followed as a resonance in the lower continuum.

When a relativistic level reaches E = -2 m c^2 (binding energy; total
energy -m c^2) at the critical value p_c of a parameter (the nuclear charge
Z, say), it does not vanish: beyond p_c it is a resonance embedded in the
negative-energy continuum, decaying by positron emission. Its complex
energy is found by exterior complex scaling (:func:`boundkit.resonances`):
complex scaling turns that continuum into the upper half plane, and the
resonance appears at

    E = E_R + i Gamma/2,     E_R < -2 m c^2,  Gamma >= 0,

with Gamma the width (hbar/Gamma the lifetime against positron emission).

Method. For each requested distance d past p_c (in the direction in which
the level dived), p = p_c + d sign, the parameters are resolved at p (rules
such as :class:`boundkit.studies.NuclearRadius` follow the charge) and the
depth D(p) = -(E_R + 2 m c^2) is predicted by linear extrapolation through
the points already known: D(p_c) = 0 with the dive rate -ds/dp read from the
last two bound points of the critical search (s = E + 2 m c^2), then the
resonances found at the previous distances. The complex-scaling window is
[-2 m c^2 - 1.6 D, -2 m c^2 - 0.6 D] (once more [-2 m c^2 - 3 D,
-2 m c^2 - 0.25 D] if the level is not in it). The level is the stable
eigenvalue that :func:`boundkit.resonances` labels, by continuity from the
real limit, with the label of the critical search (``1s1/2``).

Near p_c the width is exponentially small (the emitted positron tunnels
through the Coulomb barrier; threshold law of Zeldovich and Popov, Sov. Phys.
Usp. 14, 673 (1972), from memory): a width below its own error estimate is
reported with status ``unresolved`` rather than as a number one can trust.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

from ..units import C_AU, hartree_to, energy_unit as canonical_unit

__all__ = ["DivedResonance", "follow_dived", "check_beyond"]

log = logging.getLogger(__name__)

MAX_BEYOND = 20
"""Most distances past the diving point in one call (each is a dense complex eigen solve)."""


@dataclass(frozen=True, repr=False)
class DivedResonance:
    """A dived level at one parameter value past the diving point.

    Attributes
    ----------
    value : float
        The parameter value (e.g. Z).
    distance : float
        Its distance past the critical value, |value - p_c|.
    label : str
        The level (``1s1/2``), named by continuity from the real limit.
    energy, energy_error : float
        Re E, the binding energy (hartree, below -2 m c^2), and its error
        estimate (largest change over the scaling angles and orders).
    width, width_error : float
        Gamma (hartree) and its error estimate; E = energy + i width/2.
    depth : float
        -(energy + 2 m c^2), how far below the continuum edge (hartree).
    status : str
        ``ok``; ``unresolved`` (width below its error estimate); or
        ``not-found`` (no stable eigenvalue with the label in the windows
        tried; energy and width are nan).
    message : str
    window : tuple
        The last complex-scaling window (hartree).
    """

    value: float
    distance: float
    label: str
    energy: float
    energy_error: float
    width: float
    width_error: float
    depth: float
    status: str
    message: str
    window: tuple

    def to_dict(self, unit: str = "hartree") -> dict[str, Any]:
        conv = (lambda x: float(hartree_to(x, unit)) if math.isfinite(x) else None)   # noqa: E731
        return {"value": self.value, "distance": self.distance, "label": self.label,
                "energy": conv(self.energy), "energy_error": conv(self.energy_error),
                "width": conv(self.width), "width_error": conv(self.width_error), "depth": conv(self.depth),
                "status": self.status, "message": self.message, "window": [conv(w) for w in self.window],
                "units": {"energy": unit, "width": unit, "depth": unit}}

    def __repr__(self) -> str:
        return (f"DivedResonance({self.label} at {self.value:.10g}: E = {self.energy:.12g} +- "
                f"{self.energy_error:.2g}, Gamma = {self.width:.6g} +- {self.width_error:.2g} hartree, "
                f"{self.status})")


def check_beyond(beyond) -> tuple[float, ...]:
    """The distances past the critical value: positive, finite, at most :data:`MAX_BEYOND`, sorted."""
    if isinstance(beyond, (int, float)) and not isinstance(beyond, bool):
        beyond = (beyond,)
    try:
        values = tuple(float(b) for b in beyond)
    except (TypeError, ValueError):
        raise ValueError(f"beyond: give distances past the critical value, e.g. beyond=(2, 5, 10); got "
                         f"{beyond!r}") from None
    if not values or not all(math.isfinite(b) and b > 0 for b in values):
        raise ValueError(f"beyond: distances past the critical value must be finite and > 0, got {values}")
    if len(values) > MAX_BEYOND:
        raise ValueError(f"beyond: {len(values)} distances is more than {MAX_BEYOND}; give fewer")
    return tuple(sorted(set(values)))


def follow_dived(equation: str, potential, params: Mapping[str, Any], *, label: str, channel: Mapping[str, int],
                 vary: str, critical_value: float, direction: float, points: Sequence[Mapping[str, Any]],
                 beyond: Sequence[float], scalar=None, setup_kwargs: Mapping[str, Any] | None = None,
                 angles: Sequence[float] = (0.25, 0.35), order: int = 12,
                 energy_unit: str = "hartree") -> tuple[DivedResonance, ...]:
    """Complex energies of a dived level at distances ``beyond`` past its diving point.

    Parameters
    ----------
    equation, potential, params, scalar, setup_kwargs
        As given to :func:`boundkit.critical` (rules in ``params`` are
        resolved at each point).
    label, channel
        The level and its channel (``kappa`` or ``l``).
    vary, critical_value, direction
        The varied parameter, its diving value p_c, and the sign of the
        direction in which the level dives (+1 when it dives as p grows).
    points
        The critical search's evaluations (value, found, energy) for the
        first dive rate.
    beyond
        Distances past p_c (see :func:`check_beyond`).
    angles, order
        Passed to :func:`boundkit.resonances`.
    energy_unit
        Unit of the energies quoted in the messages (the attributes stay
        in hartree).

    Returns
    -------
    tuple of DivedResonance
        One per distance, in increasing distance.

    Notes
    -----
    See the module docstring: E = E_R + i Gamma/2 from exterior complex
    scaling, window from the extrapolated depth below -2 m c^2.
    """
    from ..resonances import resonances
    from ..solver import setup
    from ._common import rebuild_potential, resolve_params

    setup_kwargs = dict(setup_kwargs or {})
    unit = canonical_unit(energy_unit)
    varied = {vary} | {n for n, v in params.items() if callable(v)}
    values_c = resolve_params(params, {vary: critical_value})
    units = setup_kwargs.get("units", "atomic")
    eq, _, _ = setup(equation, rebuild_potential(potential, values_c, varied, units=units), values_c,
                     scalar=rebuild_potential(scalar, values_c, varied, units=units), **channel, **setup_kwargs)
    mc2 = eq.mass * C_AU**2
    found = sorted((p for p in points if p.get("found") and p.get("energy") is not None),
                   key=lambda p: abs(p["value"] - critical_value))
    known = [(0.0, 0.0)]                       # (distance, depth)
    rate = 0.0                                 # |ds/dp| on the bound side, s = E + 2 m c^2
    if len(found) >= 2 and found[0]["value"] != found[1]["value"]:
        rate = abs((found[0]["energy"] - found[1]["energy"]) / (found[0]["value"] - found[1]["value"]))
    out = []
    for d in check_beyond(beyond):
        p = critical_value + direction * d
        values = resolve_params(params, {vary: p})
        if len(known) >= 2:
            (d1, D1), (d2, D2) = known[-2:]
            D = D2 + (D2 - D1) / (d2 - d1) * (d - d2)
        else:
            D = rate * d
        D = max(D, 1e-3 * mc2 * d / max(abs(critical_value), 1.0), 1e-6 * mc2)
        hit, window, res = None, (math.nan, math.nan), None
        for lo, hi in ((1.6, 0.6), (3.0, 0.25)):
            window = (-2 * mc2 - lo * D, -2 * mc2 - hi * D)
            res = resonances(equation, rebuild_potential(potential, values, varied, units=units), values,
                             scalar=rebuild_potential(scalar, values, varied, units=units), window=window, energy_unit="hartree",
                             angles=angles,
                             order=order, **channel, **setup_kwargs)
            hits = [r for r in res.resonances if r.label == label and r.kind == "supercritical"]
            if hits:
                hit = hits[0]
                break
        if hit is None:
            why = res.message if res is not None else ""
            msg = (f"{label} not found as a stable eigenvalue below -2 m c^2 at {vary} = {p:.10g} in the "
                   f"windows tried ({why})")
            log.warning("critical: %s", msg)
            out.append(DivedResonance(p, d, label, math.nan, math.nan, math.nan, math.nan, math.nan,
                                      "not-found", msg, window))
            continue
        depth = -(hit.energy + 2 * mc2)
        known.append((d, depth))
        if hit.width > hit.width_error:
            status, msg = "ok", (f"E = {hartree_to(hit.energy, unit):.12g} + i Gamma/2, Gamma = "
                                 f"{hartree_to(hit.width, unit):.6g} {unit} "
                                 f"({hartree_to(depth, unit):.6g} {unit} below -2 m c^2)")
        else:
            status, msg = "unresolved", (f"Gamma = {hartree_to(hit.width, unit):.3g} {unit} is below its error "
                                         f"estimate {hartree_to(hit.width_error, unit):.2g}: too close to the "
                                         "diving point to resolve")
        out.append(DivedResonance(p, d, label, hit.energy, hit.energy_error, hit.width, hit.width_error, depth,
                                  status, msg, window))
    return tuple(out)
