"""Figures of the studies (matplotlib, no screen needed). Each function writes one file
atomically through :func:`boundkit.plots.save_figure`; the format follows the
suffix (.png, .svg or .pdf)."""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np

from ..plots import plt, save_figure
from ..units import energy_unit

__all__ = ["scan_figure"]

_STYLES = ("-", "--", ":", "-.")


def _axis_label(name: str, unit: str) -> str:
    return f"{name} ({unit})" if unit else name


def scan_figure(result, path, unit: str = "hartree", title: str | None = None, logx: bool | None = None) -> Path:
    """Plot each followed level's binding energy against the first varied parameter.

    Parameters
    ----------
    result : ScanResult
    path : path
        Output file (.png, .svg or .pdf).
    unit : str
        Energy unit of the vertical axis.
    title : str, optional
        Figure title (default: equations and potential).
    logx : bool, optional
        Logarithmic parameter axis (default: when the values span more than a
        factor 20 and are all positive).

    Notes
    -----
    One curve per (equation, channel, label); for a two-parameter scan one
    curve per value of the second parameter as well (line style). Points
    where a level is absent are gaps in its curve, so a level that unbinds
    simply ends. The dotted line is the threshold E = 0.
    """
    unit = energy_unit(unit)
    p0 = result.parameters[0]
    second = result.parameters[1] if len(result.parameters) > 1 else None
    fig, ax = plt.subplots(figsize=(7.0, 4.8))
    keys = result.series_keys
    colors = plt.rcParams["axes.prop_cycle"].by_key()["color"]
    others = result.values[second] if second else (None,)
    for (i, (eq, ch, lab)), (jdx, v) in itertools.product(enumerate(keys), enumerate(others)):
        where = {second: v} if second else None
        x, E = result.series(lab, equation=eq, channel=ch, where=where, unit=unit)
        if np.all(np.isnan(E)):
            continue
        order = np.argsort(x)
        name = lab if len({k[0] for k in keys}) == 1 else f"{lab} {eq}"
        if second:
            name += f", {second} = {v:g}"
        ax.plot(x[order], E[order], _STYLES[jdx % len(_STYLES)], marker="o", ms=3,
                color=colors[i % len(colors)], label=name)
    xs = np.asarray(result.values[p0], float)
    if logx is None:
        logx = bool(np.all(xs > 0) and xs.max() / xs.min() > 20)
    if logx:
        from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

        ax.set_xscale("log")
        ax.xaxis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
        ax.xaxis.set_minor_formatter(NullFormatter())
    ax.axhline(0.0, color="0.5", lw=0.8, ls=":")
    ax.set_xlabel(_axis_label(p0, result.parameter_units.get(p0, "")))
    ax.set_ylabel(f"binding energy ({unit})")
    if title is None:
        eqs = ", ".join(result.settings.get("equations", []))
        pot = result.settings.get("potential")
        title = f"{eqs}: {pot if isinstance(pot, str) else 'potential'}"
    ax.set_title(title)
    ax.grid(True, alpha=0.3)
    if ax.lines:
        ax.legend(fontsize=8, ncol=2 if len(ax.lines) > 8 else 1)
    return save_figure(fig, path)
