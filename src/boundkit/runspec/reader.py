"""Typed access to a parsed run spec with errors that name the file, the key and its line
(:class:`_Reader`), and the collection of several errors for ``--dry-run`` (:class:`SpecErrors`)."""
from __future__ import annotations

import math
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Iterable

from .keylines import _KeyLines, _dotted

__all__ = ["SpecErrors"]

_MISSING = object()


class SpecErrors(ValueError):
    """Every error :func:`load_spec` found (``all_errors=True``); ``errors`` lists them, the
    message has one per line, each naming file, key and line."""

    def __init__(self, errors: list[ValueError]) -> None:
        self.errors = list(errors)
        super().__init__("\n".join(str(e) for e in self.errors))


class _Skipped(Exception):
    """A part that names a model whose own error is already recorded: nothing more to say."""


class _Errors:
    """Collects the errors of independent parts of a spec (``all_errors=True``) or raises the first."""

    def __init__(self, collect: bool) -> None:
        self.collect = collect
        self.found: list[ValueError] = []

    @contextmanager
    def attempt(self, on_error=None):
        try:
            yield
        except _Skipped:
            pass
        except ValueError as exc:
            if not self.collect:
                raise
            self.found.append(exc)
            if on_error is not None:
                on_error()


def _skip_bad_model(rd: "_Reader", name: str) -> None:
    if name in rd.bad_models:
        raise _Skipped(name)


class _Reader:
    """Typed access to the parsed TOML with file/key/line errors."""

    def __init__(self, path: Path, text: str) -> None:
        self.path = path
        self.lines = _KeyLines(text)
        self.bad_models: set[str] = set()      # models whose error is recorded (all_errors=True)

    def error(self, key: tuple, msg: str, at: tuple | None = None) -> ValueError:
        line = self.lines.find(key if at is None else at)
        return ValueError(f"run spec {self.path}, line {line}, key {_dotted(key)!r}: {msg}")

    def keys(self, data: dict, key: tuple, allowed: Iterable[str], required: Iterable[str] = ()) -> None:
        allowed = list(allowed)
        for k in data:
            if k not in allowed:
                raise self.error(key + (k,), f"unknown key; allowed here: {', '.join(allowed)}")
        for k in required:
            if k not in data:
                where = f"[{_dotted(key)}]" if key else "the top level"
                raise self.error(key + (k,), f"missing; add it to {where}", at=key)

    def get(self, data: dict, key: tuple, name: str, kind: str, default: Any = _MISSING) -> Any:
        if name not in data:
            if default is _MISSING:
                raise self.error(key + (name,), "missing", at=key)
            return default
        return self.convert(data[name], key + (name,), kind)

    def convert(self, value: Any, key: tuple, kind: str) -> Any:
        def want(what: str) -> ValueError:
            return self.error(key, f"expected {what}, got {_describe(value)}")

        if kind == "str":
            if not isinstance(value, str):
                raise want("a string")
            if not value.strip():
                raise self.error(key, "must not be empty")
            return value
        if kind == "int":
            if isinstance(value, bool) or not isinstance(value, int):
                raise want("an integer")
            return value
        if kind == "number":
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise want("a number")
            if not math.isfinite(value):
                raise self.error(key, "must be finite")
            return float(value)
        if kind == "bool":
            if not isinstance(value, bool):
                raise want("true or false")
            return value
        if kind == "table":
            if not isinstance(value, dict):
                raise want("a table")
            return value
        if kind.startswith("list:"):
            if not isinstance(value, list):
                raise want(f"an array ({kind[5:]} items)")
            return [self.convert(v, key + (i,), kind[5:]) for i, v in enumerate(value)]
        raise AssertionError(kind)  # pragma: no cover

    def positive(self, value: float, key: tuple) -> float:
        if not value > 0:
            raise self.error(key, f"must be positive, got {value:g}")
        return value


def _describe(value: Any) -> str:
    if isinstance(value, bool):
        return f"a boolean ({str(value).lower()})"
    if isinstance(value, str):
        return f"a string ({value!r})"
    if isinstance(value, int):
        return f"an integer ({value})"
    if isinstance(value, float):
        return f"a number ({value:g})"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__
