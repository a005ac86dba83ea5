"""JSON text of results: numpy values as Python ones, non-finite numbers as null.

One place for what every JSON boundkit writes needs (a run's results.json, a study's files, the
command line's ``--json``): strict parsers reject NaN and Infinity, so they become null.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

__all__ = ["json_safe", "json_text"]


def json_safe(x):
    """JSON-safe copy: non-finite floats become None, tuple keys become strings, numpy values and arrays
    Python ones, a path its text; anything else a number when it converts to one, else its text."""
    if isinstance(x, dict):
        return {(k if isinstance(k, str) else ":".join(map(str, k)) if isinstance(k, tuple) else str(k)): json_safe(v)
                for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [json_safe(v) for v in x]
    if isinstance(x, np.ndarray):
        return json_safe(x.tolist())
    if x is None or isinstance(x, (str, bool, int, np.integer)):
        return int(x) if isinstance(x, np.integer) else x
    if isinstance(x, Path):
        return str(x)
    try:
        x = float(x)
    except (TypeError, ValueError):
        return str(x)
    return x if math.isfinite(x) else None


def json_text(doc, indent: int = 2) -> str:
    """``doc`` as strict JSON text: :func:`json_safe`, then json.dumps (which then meets no NaN or inf)."""
    return json.dumps(json_safe(doc), indent=indent, allow_nan=False)
