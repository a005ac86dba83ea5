"""Figure of phase shifts against energy (matplotlib Agg, written through
:func:`boundkit.plots.save_figure`; the format follows the suffix)."""
from __future__ import annotations

from pathlib import Path

import numpy as np

from ..plots import plt, save_figure
from ..units import energy_unit

__all__ = ["phase_figure"]


def phase_figure(result, path, unit: str = "hartree", title: str | None = None) -> Path:
    """Plot delta/pi against the kinetic energy.

    Parameters
    ----------
    result : PhaseShifts
    path : path
        Output file (.png, .svg or .pdf).
    unit : str
        Energy unit of the horizontal axis (logarithmic when the energies span
        more than a factor 20).
    """
    unit = energy_unit(unit)
    E = result.energies_in(unit)
    fig, ax = plt.subplots(figsize=(7.0, 4.4))
    ax.plot(E, result.delta / np.pi, "o-", ms=3, lw=1.2)
    if E.size and E[0] > 0 and E[-1] / E[0] > 20:
        ax.set_xscale("log")
    rel = " - Coulomb phase" if result.coulomb_phase.any() else ""
    ax.set_xlabel(f"kinetic energy E ({unit})")
    ax.set_ylabel(f"phase shift{rel} / pi")
    ax.axhline(0.0, color="0.6", lw=0.6)
    ax.set_title(title or f"{result.equation}, {result._channel_text()}: {result.potential}")
    ax.grid(alpha=0.3)
    return save_figure(fig, path)
