"""Where a key stands in the TOML text of a run spec (tomllib gives values, not lines).

:class:`_KeyLines` maps every key path -- tables, arrays of tables, dotted and
inline keys -- to its line number, so that an error can name the line.
"""
from __future__ import annotations

import re
from typing import Iterable


_BARE = r"[A-Za-z0-9_\-]+"
_QUOTED = r"\"(?:[^\"\\]|\\.)*\"|'[^']*'"
_KEYPART = rf"(?:{_BARE}|{_QUOTED})"
_KEY_RE = re.compile(rf"^\s*({_KEYPART}(?:\s*\.\s*{_KEYPART})*)\s*=")
_HEADER_RE = re.compile(rf"^\s*(\[\[|\[)\s*({_KEYPART}(?:\s*\.\s*{_KEYPART})*)\s*(\]\]|\])\s*(#.*)?$")
_INLINE_KEY_RE = re.compile(rf"[{{,]\s*({_KEYPART})\s*=")


def _split_key(text: str) -> tuple[str, ...]:
    parts = re.findall(_KEYPART, text)
    return tuple(p[1:-1] if p[:1] in "\"'" else p for p in parts)


def _strip_strings(line: str) -> str:
    """The line without string literals and comments (for bracket counting)."""
    line = re.sub(_QUOTED, '""', line)
    return line.split("#", 1)[0]


class _KeyLines:
    """Map key paths of a TOML document to the 1-based line where they are set.

    A path is a tuple of keys with integer indices for arrays of tables,
    e.g. ``("models", "fermi", "term", 0, "params")``. Keys inside an inline
    table on one line are found too. :meth:`find` falls back to the nearest
    enclosing key, then to line 1.
    """

    def __init__(self, text: str) -> None:
        self.where: dict[tuple, int] = {}
        counts: dict[tuple, int] = {}
        table: tuple = ()
        depth = 0                 # open brackets of a multi-line value
        in_string = False         # inside a multi-line string
        for number, line in enumerate(text.splitlines(), start=1):
            if in_string:
                if line.count('"""') % 2 == 1 or line.count("'''") % 2 == 1:
                    in_string = False
                continue
            if depth > 0:
                bare = _strip_strings(line)
                depth += bare.count("[") + bare.count("{") - bare.count("]") - bare.count("}")
                continue
            header = _HEADER_RE.match(line)
            if header:
                raw = _split_key(header.group(2))
                table = self._indexed(raw, counts, is_array=header.group(1) == "[[")
                self.where.setdefault(table, number)
                continue
            key = _KEY_RE.match(line)
            if not key:
                continue
            path = table + _split_key(key.group(1))
            self.where.setdefault(path, number)
            rest = line[key.end():]
            for inner in _INLINE_KEY_RE.finditer(_strip_strings_keep_keys(rest)):
                self.where.setdefault(path + _split_key(inner.group(1)), number)
            if rest.count('"""') % 2 == 1 or rest.count("'''") % 2 == 1:
                in_string = True
                continue
            bare = _strip_strings(rest)
            depth = max(0, bare.count("[") + bare.count("{") - bare.count("]") - bare.count("}"))

    @staticmethod
    def _indexed(raw: tuple, counts: dict, is_array: bool) -> tuple:
        out: list = []
        for i, part in enumerate(raw):
            out.append(part)
            prefix = tuple(raw[: i + 1])
            last = i == len(raw) - 1
            if last and is_array:
                counts[prefix] = counts.get(prefix, 0) + 1
                out.append(counts[prefix] - 1)
            elif prefix in counts:
                out.append(counts[prefix] - 1)
        return tuple(out)

    def find(self, path: tuple) -> int:
        path = tuple(path)
        while path:
            if path in self.where:
                return self.where[path]
            path = path[:-1]
        return 1


def _strip_strings_keep_keys(rest: str) -> str:
    """Blank out string values but keep quoted keys that are followed by '='."""
    return re.sub(rf"({_QUOTED})(?!\s*=)", '""', rest)


def _dotted(path: Iterable) -> str:
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + str(part)
    return out
