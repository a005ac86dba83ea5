"""Figures (matplotlib, no screen needed). Each function writes one file.

The format follows the file suffix: .png (default), .svg or .pdf.
"""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

__all__ = ["convergence_figure", "save_figure"]

_FORMATS = (".png", ".svg", ".pdf")


def save_figure(fig, path) -> Path:
    """Write ``fig`` atomically (temporary file, then rename) and close it."""
    path = Path(path)
    suffix = path.suffix.lower() or ".png"
    if suffix not in _FORMATS:
        plt.close(fig)
        raise ValueError(f"plot: unsupported figure format {path.suffix!r}; use .png, .svg or .pdf")
    if not path.suffix:
        path = path.with_suffix(".png")
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=suffix)
    os.close(fd)
    try:
        fig.savefig(tmp, format=suffix[1:], dpi=150, bbox_inches="tight")
        os.replace(tmp, path)
    finally:
        plt.close(fig)
        if os.path.exists(tmp):
            os.unlink(tmp)
    return path


def convergence_figure(result, path):
    """Log-log plot of relative error against resolution for each level and family."""
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    keys = sorted({(r["method"], r["label"]) for r in result.rows})
    for method, label in keys:
        rows = [r for r in result.rows if r["method"] == method and r["label"] == label]
        size = np.array([r["size"] for r in rows], float)
        err = np.array([max(r["error"], 1e-17) for r in rows])
        order = result.orders.get((method, label))
        tag = f"{method}, {label}" + (f" (order {order:.1f})" if order == order and method != "spectral" else "")
        ax.loglog(size, err, "o-" if method == "spectral" else "s--", label=tag, ms=4)
    ax.axhline(2.2e-16, color="0.6", lw=0.8, ls=":")
    ax.set_xlabel("resolution (nodes)")
    ax.set_ylabel("relative error of the binding energy")
    ax.set_title(f"{result.equation}: {result.potential}")
    ax.legend(fontsize=8)
    ax.grid(True, which="both", alpha=0.3)
    return save_figure(fig, path)
