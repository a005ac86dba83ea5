"""Figures of the studies (matplotlib, no screen needed). Each function writes one file
atomically through :func:`boundkit.plots.save_figure`; the format follows the
suffix (.png, .svg or .pdf)."""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np

from .. import palette
from ..plots import plt, save_figure, say_empty
from ..units import energy_unit

__all__ = ["scan_figure", "difference_figure", "family_figure", "log_spaced", "potential_title"]

_STYLES = ("-", "--", ":", "-.")


def _axis_label(name: str, unit: str) -> str:
    return f"{name} ({unit})" if unit else name


def log_spaced(values) -> bool:
    """Whether parameter values call for a logarithmic axis.

    True when they are all positive and either geometric (constant ratio,
    at least 3 values spanning more than a factor 3, as ``START:STOP:N:log``
    makes them) or spread over more than a factor 20.
    """
    xs = np.unique(np.asarray(values, float))
    if xs.size < 2 or np.any(xs <= 0):
        return False
    span = xs[-1] / xs[0]
    if span > 20:
        return True
    ratios = xs[1:] / xs[:-1]
    return bool(xs.size >= 3 and span > 3 and np.ptp(np.log(ratios)) < 1e-6 * abs(np.log(span)) + 1e-9)


def _log_axis(ax) -> None:
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

    ax.set_xscale("log")
    ax.xaxis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
    ax.xaxis.set_minor_formatter(NullFormatter())


def _pot_name(pot) -> str:
    if isinstance(pot, str):
        return pot
    if isinstance(pot, dict):
        return str(pot.get("term") or pot.get("callable") or "user potential")
    if isinstance(pot, (list, tuple)):
        return " + ".join(_pot_name(p) for p in pot)
    return "user potential"


def potential_title(settings: dict) -> str:
    """A readable name of a study's potential and equations, e.g. ``yukawa (Schrodinger equation)``."""
    eqs = [e.replace("schrodinger", "Schrodinger").replace("klein-gordon", "Klein-Gordon").replace("dirac", "Dirac")
           for e in settings.get("equations", [])]
    pot = _pot_name(settings.get("potential"))
    if settings.get("scalar"):
        pot += " + scalar " + _pot_name(settings.get("scalar"))
    return f"{pot} ({', '.join(eqs)} equation{'s' if len(eqs) > 1 else ''})" if eqs else pot


def scan_figure(result, path, unit: str = "hartree", title: str | None = None, logx: bool | None = None,
                relative: bool | None = None, subject: str | None = None) -> Path:
    """Plot each followed level's binding energy against the first varied parameter.

    Parameters
    ----------
    result : ScanResult
    path : path
        Output file (.png, .svg or .pdf).
    unit : str
        Energy unit of the vertical axis.
    title : str, optional
        Figure title (default: the levels, the parameter and the potential).
    logx : bool, optional
        Logarithmic parameter axis (default: :func:`log_spaced`).
    relative : bool, optional
        Plot each level's change E(p) - E(p_0) from its value at the first
        parameter value p_0 instead of E itself. Default: when no level moves
        by more than 1 % of its energy over the scan, where the absolute
        levels would be flat lines far apart.
    subject : str, optional
        What the default title names after the parameter (default: the
        potential and the equations).

    Notes
    -----
    One curve per (equation, channel, label); an equation keeps its colour
    and marker (:mod:`boundkit.palette`) when several are scanned, else each
    level has its own colour. For a two-parameter scan one curve per value of
    the second parameter as well (line style). Points where a level is absent
    are gaps in its curve, so a level that unbinds simply ends. The dotted
    line is the threshold E = 0.
    """
    unit = energy_unit(unit)
    p0 = result.parameters[0]
    second = result.parameters[1] if len(result.parameters) > 1 else None
    fig, ax = plt.subplots(figsize=(7.0, 4.8))
    keys = result.series_keys
    several = len({k[0] for k in keys}) > 1
    # one level per equation: the equation's own colour; several levels: a colour per level, marker per equation
    by_equation = several and len(keys) == len({k[0] for k in keys})
    others = result.values[second] if second else (None,)
    curves = []
    for (i, (eq, ch, lab)), (jdx, v) in itertools.product(enumerate(keys), enumerate(others)):
        where = {second: v} if second else None
        x, E = result.series(lab, equation=eq, channel=ch, where=where, unit=unit)
        if not np.all(np.isnan(E)):
            curves.append((i, eq, ch, lab, jdx, v, x, E))
    if relative is None:
        moves = [np.nanmax(E) - np.nanmin(E) for *_, E in curves]
        sizes = [np.nanmax(np.abs(E)) for *_, E in curves]
        relative = bool(curves) and all(m <= 1e-2 * s_ for m, s_ in zip(moves, sizes))
    starts = set()
    for i, eq, ch, lab, jdx, v, x, E in curves:
        order = np.argsort(x)
        if relative:
            first = order[np.nonzero(~np.isnan(E[order]))[0][0]]
            starts.add(float(x[first]))
            E = E - E[first]
        name = f"{lab} {eq}" if several else lab
        if second:
            name += f", {second} = {v:g}"
        colour = palette.equation_colour(eq) if by_equation else palette.colour(i)
        ax.plot(x[order], E[order], _STYLES[jdx % len(_STYLES)], marker=palette.equation_marker(eq, i), ms=3.5,
                color=colour, label=name)
    xs = np.asarray(result.values[p0], float)
    if logx if logx is not None else log_spaced(xs):
        _log_axis(ax)
    ax.axhline(0.0, color="0.5", lw=0.8, ls=":")
    p_unit = result.parameter_units.get(p0, "")
    ax.set_xlabel(_axis_label(p0, p_unit))
    if relative:
        at = (f"{p0} = {starts.pop():g}" + (f" {p_unit}" if p_unit else "")) if len(starts) == 1 \
            else "each level's first value"
        ax.set_ylabel(f"change of binding energy from {at} ({unit})", fontsize=9)
    else:
        ax.set_ylabel(f"binding energy ({unit})")
    what = "change of the bound levels" if relative else "bound levels"
    ax.set_title(title or f"{what} against {p0}: {subject or potential_title(result.settings)}", fontsize=10)
    ax.grid(True, alpha=0.3)
    if curves:
        ax.legend(fontsize=8, ncol=2 if len(curves) > 8 else 1)
    else:       # the zero line alone
        say_empty(ax, "no bound level at any point (see the table's status column)")
    return save_figure(fig, path)


def difference_figure(x, y, path, *, name: str, unit: str, parameter: str, parameter_unit: str = "",
                      error=None, title: str | None = None, logx: bool | None = None,
                      colour: str | None = None) -> Path:
    """A named difference of levels (a splitting, a shift) against the scanned parameter.

    Parameters
    ----------
    x, y : array_like
        Parameter values and the difference at each, already in ``unit``.
    path : path
        Output file (.png, .svg or .pdf).
    name : str
        What is plotted, e.g. ``E(2p1/2) - E(2s1/2)``; it is the axis label.
    unit : str
        Unit of ``y`` (printed on the axis).
    parameter, parameter_unit : str
        The scanned parameter and its unit.
    error : array_like, optional
        Error estimate of each difference (drawn as error bars when visible).
    title : str, optional
    logx : bool, optional
        Logarithmic parameter axis (default: :func:`log_spaced`).

    Notes
    -----
    The vertical axis spans the difference itself, so an effect of a few meV
    on levels of a few keV is what the reader sees. A dotted line marks zero
    when the difference changes sign.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    order = np.argsort(x)
    fig, ax = plt.subplots(figsize=(6.8, 4.5))
    c = colour or palette.colour(0)
    if error is not None:
        ax.errorbar(x[order], y[order], yerr=np.asarray(error, float)[order], fmt="o-", ms=4, lw=1.5, color=c,
                    capsize=2)
    else:
        ax.plot(x[order], y[order], "o-", ms=4, lw=1.5, color=c)
    if np.nanmin(y) < 0 < np.nanmax(y):
        ax.axhline(0.0, color="0.5", lw=0.8, ls=":")
    if logx if logx is not None else log_spaced(x):
        _log_axis(ax)
    ax.set_xlabel(_axis_label(parameter, parameter_unit))
    ax.set_ylabel(f"{name} ({unit})")
    ax.set_title(title or f"{name} against {parameter}", fontsize=10)
    ax.grid(True, alpha=0.3)
    return save_figure(fig, path)


def family_figure(panels, path, *, parameter: str, parameter_unit: str = "", second: str,
                  second_unit: str = "", ylabel: str, title: str | None = None, logx: bool | None = None,
                  max_panels: int = 6) -> Path:
    """A two-parameter scan as families of curves: one panel per quantity (a level, a difference),
    in each one curve per value of the second parameter against the first, coloured along a
    sequential colour map with a colour bar for the second parameter.

    Parameters
    ----------
    panels : sequence of (str, sequence of (float, array_like, array_like))
        ``(panel title, [(second value, x, y), ...])``; y NaN where the quantity is absent.
    path : path
        Output file (.png, .svg or .pdf).
    parameter, parameter_unit : str
        The first parameter (horizontal axis) and its unit.
    second, second_unit : str
        The second parameter (colour) and its unit.
    ylabel : str
        Vertical axis label, unit included.
    title : str, optional
    logx : bool, optional
        Logarithmic first-parameter axis (default: :func:`log_spaced`).
    max_panels : int
        Most panels drawn (the first ones); the title says how many were left out.

    Notes
    -----
    The colour of a curve is the value of the second parameter (log scale when its values are
    log-spaced), so the reader follows the trend across the family without a legend per curve.
    """
    import matplotlib as mpl

    panels = list(panels)
    shown = panels[:max_panels]
    n = max(1, len(shown))
    ncols = min(3, n)
    nrows = -(-n // ncols)
    fig, axes = plt.subplots(nrows, ncols, figsize=(3.6 * ncols + 1.2, 3.0 * nrows + 0.9), squeeze=False,
                             sharex=True)
    seconds = sorted({float(v) for _name, curves in shown for v, _x, _y in curves})
    log_second = log_spaced(seconds)
    if seconds and len(seconds) > 1:
        norm = (mpl.colors.LogNorm if log_second else mpl.colors.Normalize)(vmin=seconds[0], vmax=seconds[-1])
    else:
        norm = mpl.colors.Normalize(vmin=(seconds or [0.0])[0] - 1, vmax=(seconds or [0.0])[0] + 1)
    cmap = mpl.colormaps["viridis"]
    xs_all = []
    for ax, (name, curves) in zip(axes.flat, shown):
        for v, x, y in curves:
            x, y = np.asarray(x, float), np.asarray(y, float)
            order = np.argsort(x)
            xs_all.extend(x.tolist())
            ax.plot(x[order], y[order], "o-", ms=2.5, lw=1.3, color=cmap(norm(v)))
        ax.set_title(name, fontsize=9)
        ax.grid(True, alpha=0.3)
    for ax in list(axes.flat)[len(shown):]:
        ax.set_visible(False)
    uselog = logx if logx is not None else log_spaced(xs_all)
    for ax in axes.flat:
        if ax.get_visible() and uselog:
            _log_axis(ax)
    for col in range(ncols):           # the lowest panel drawn in each column carries the axis
        lowest = max(r for r in range(nrows) if r * ncols + col < n)
        axes[lowest, col].tick_params(labelbottom=True)
        axes[lowest, col].set_xlabel(_axis_label(parameter, parameter_unit), fontsize=9)
    for ax in axes[:, 0]:
        ax.set_ylabel(ylabel, fontsize=9)
    sm = mpl.cm.ScalarMappable(norm=norm, cmap=cmap)
    bar = fig.colorbar(sm, ax=axes.ravel().tolist(), fraction=0.04, pad=0.03)
    bar.set_label(_axis_label(second, second_unit), fontsize=9)
    more = f" (first {len(shown)} of {len(panels)})" if len(panels) > len(shown) else ""
    fig.suptitle((title or f"against {parameter} and {second}") + more, fontsize=10)
    return save_figure(fig, path)
