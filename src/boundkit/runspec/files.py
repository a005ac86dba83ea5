"""Files of a run: atomic writes, CSV and JSON values, and the output folder with its run marker.

Every file of a run is written through a temporary name and :func:`os.replace`
(:func:`_atomic_write`); a whole run is built in a temporary sibling folder and
moved into place at the end (:func:`_move_into_place`), which replaces only a
folder that boundkit wrote (:func:`_check_target`, the run marker :data:`MARKER`).
"""
from __future__ import annotations

import csv
import io
import json
import math
import os
import re
import shutil
import tempfile
from pathlib import Path

import numpy as np

from .._jsonsafe import json_safe as _clean
from ..studies._common import umask_mode as _umask_mode

def _slug(text: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", str(text)).strip("-").lower()
    return s or "x"


def _atomic_write(path: Path, data: str | bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and os.replace."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data.encode("utf-8") if isinstance(data, str) else data)
        os.chmod(tmp, _umask_mode(0o666))
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def _csv_text(rows: list[dict], columns: list[str] | None = None) -> str:
    if columns is None:
        columns = []
        for r in rows:
            for k in r:
                if k not in columns:
                    columns.append(k)
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=columns, extrasaction="ignore", lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({k: _csv_value(r.get(k)) for k in columns})
    return buf.getvalue()


def _csv_value(v):
    if v is None:
        return ""
    if isinstance(v, (float, np.floating)):
        return repr(float(v))
    if isinstance(v, (list, tuple, dict)):
        return json.dumps(_clean(v))
    return v


_HARTREE_COPIES = {"energy_hartree": "energy", "error_hartree": "error_estimate",
                   "difference_hartree": "difference", "shift_hartree": "shift"}
"""Columns that repeat a reported column in hartree (copy -> reported column)."""


def _csv_with_units(rows: list[dict], columns: list[str] | None, units: dict[str, str]) -> str:
    """CSV text whose column names carry their units (``energy`` -> ``energy_MeV``); ``units`` maps
    column -> unit, columns not in it keep their name (their unit is in the name already, or they
    have none). A hartree copy (:data:`_HARTREE_COPIES`) of a column reported in hartree is left out:
    it would repeat that column under the same name (``energy_hartree`` twice)."""
    from ..units import column

    if columns is None:
        columns = list(dict.fromkeys(k for r in rows for k in r))
    columns = [c for c in columns if not (c in _HARTREE_COPIES and _HARTREE_COPIES[c] in columns
                                          and units.get(_HARTREE_COPIES[c]) == "hartree")]
    named = {c: column(c, units[c]) if c in units else c for c in columns}
    renamed = [{named[k]: v for k, v in r.items() if k in named} for r in rows]
    return _csv_text(renamed, [named[c] for c in columns])


def _fmt(x: float | None, digits: int = 10) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x:.{digits}g}"


MARKER = ".boundkit-run.json"
"""Name of the marker file a run writes into its output folder (its run identity)."""


def _run_identity(path: Path) -> str | None:
    """The run id of a folder boundkit wrote (marker and results.json agree), else None."""
    try:
        marker = json.loads((path / MARKER).read_text(encoding="utf-8"))
        results = json.loads((path / "results.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    rid = marker.get("run_id") if isinstance(marker, dict) else None
    if not isinstance(rid, str) or not isinstance(results, dict) or results.get("run_id") != rid:
        return None
    return rid


def _check_target(out: Path, force: bool) -> None:
    if not os.path.lexists(out):
        return
    if not force:
        raise FileExistsError(f"output folder {out} exists; choose another with --out or replace it with --force")
    if out.is_symlink() or not out.is_dir():
        raise FileExistsError(f"output path {out} is not a folder boundkit wrote; refusing to replace it even "
                              "with --force: choose another --out")
    if not any(out.iterdir()):
        return
    if not (out / MARKER).is_file():
        raise FileExistsError(f"output folder {out} has no boundkit run marker ({MARKER}); refusing to replace "
                              "it even with --force: remove it yourself or choose another --out")
    if _run_identity(out) is None:
        raise FileExistsError(f"output folder {out}: its run marker does not match its results.json; refusing "
                              "to replace it even with --force: remove it yourself or choose another --out")


def _move_into_place(tmp: Path, out: Path) -> None:
    if not os.path.lexists(out):
        os.rename(tmp, out)
        return
    backup = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
    os.rmdir(backup)
    os.rename(out, backup)
    try:
        os.rename(tmp, out)
    except BaseException:
        os.rename(backup, out)
        raise
    if backup.is_dir():
        shutil.rmtree(backup, ignore_errors=True)
    else:
        backup.unlink(missing_ok=True)
