"""Every package under src/boundkit is shipped: the install lists packages by name.

An editable install finds any new package on disk, so a package missing from pyproject.toml only
shows on a fresh machine (boundkit.cli once failed there with ModuleNotFoundError).
"""
from __future__ import annotations

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_every_subpackage_is_listed_in_pyproject():
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    src = ROOT / "src"
    found = {".".join(p.parent.relative_to(src).parts) for p in (src / "boundkit").rglob("__init__.py")}
    missing = sorted(found - listed)
    assert not missing, f"packages not in [tool.setuptools] packages of pyproject.toml: {missing}"
