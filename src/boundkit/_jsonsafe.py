"""JSON text of results: numpy values as Python ones, non-finite numbers as null.

One place for what every JSON boundkit writes needs (a run's results.json, a study's files, the
command line's ``--json``): strict parsers reject NaN and Infinity, so they become null.
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

__all__ = ["json_safe", "json_default", "json_text"]


def json_safe(x):
    """JSON-safe copy: non-finite floats become None, tuple keys become strings, numpy values Python ones."""
    if isinstance(x, dict):
        return {(k if isinstance(k, str) else ":".join(map(str, k)) if isinstance(k, tuple) else str(k)): json_safe(v)
                for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [json_safe(v) for v in x]
    if isinstance(x, (float, np.floating)):
        x = float(x)
        return x if math.isfinite(x) else None
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, np.ndarray):
        return json_safe(x.tolist())
    return x


def json_default(x):
    """Fallback of json.dumps for what it does not know: numpy values, arrays, paths, tuples, else a
    number when the value converts to one, else its text."""
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    if isinstance(x, np.ndarray):
        return x.tolist()
    if isinstance(x, Path):
        return str(x)
    if isinstance(x, tuple):
        return list(x)
    try:
        return float(x)
    except (TypeError, ValueError):
        return str(x)


def json_text(doc, indent: int = 2) -> str:
    """``doc`` as strict JSON text: :func:`json_safe`, then json.dumps refusing NaN and inf."""
    return json.dumps(json_safe(doc), default=json_default, indent=indent, allow_nan=False)
