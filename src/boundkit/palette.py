"""Colours and marker shapes of every boundkit figure, in one place.

Each equation keeps one colour and one marker in every figure (level schemes,
radial functions, scans, comparisons), so a reader learns them once:

========================  =========  ========
equation                  colour     marker
========================  =========  ========
Schrodinger               teal       circle
Klein-Gordon              ochre      diamond
Dirac                     plum       square
========================  =========  ========

Several levels of one equation in one figure take :func:`shades` of its
colour, darkest for the lowest level. Other groups (models, parameter values) take colours from
:data:`SEQUENCE` in a fixed order, so the i-th group has the same colour in
every run. The hues are our own choice: dark enough to read on white, apart
in lightness as well as hue, so they survive a grey-scale printout.
"""
from __future__ import annotations

__all__ = ["EQUATION_COLOURS", "EQUATION_MARKERS", "SEQUENCE", "colour", "equation_colour", "equation_marker",
           "equation_key", "shades"]

EQUATION_COLOURS: dict[str, str] = {
    "schrodinger": "#0b6e69",     # teal
    "klein-gordon": "#b7791f",    # ochre
    "dirac": "#6b2d6b",           # plum
}
"""Colour of each equation (keys as in :data:`boundkit.equations.EQUATIONS`)."""

EQUATION_MARKERS: dict[str, str] = {"schrodinger": "o", "klein-gordon": "D", "dirac": "s"}
"""Marker shape of each equation."""

SEQUENCE: tuple[str, ...] = ("#24408e", "#c4432b", "#3f8f3a", "#d08c00", "#7a3e9d", "#2b8c9e",
                             "#8c564b", "#c2185b", "#5b6770", "#6d8b00")
"""Colours of other groups, in order (blue, brick, green, amber, violet, cyan, brown, rose, slate, olive)."""

_ALIASES = {"kg": "klein-gordon", "klein_gordon": "klein-gordon", "kleingordon": "klein-gordon",
            "schroedinger": "schrodinger", "schrödinger": "schrodinger"}


def equation_key(name: str) -> str | None:
    """The canonical equation name in ``name`` (``"dirac"`` from ``"Dirac"`` or ``"dirac: 1s"``), or None."""
    key = str(name).strip().lower().split(":")[0].strip()
    key = _ALIASES.get(key, key)
    return key if key in EQUATION_COLOURS else None


def colour(i: int) -> str:
    """The i-th colour of :data:`SEQUENCE` (cycling)."""
    return SEQUENCE[i % len(SEQUENCE)]


def equation_colour(name: str, fallback: int = 0) -> str:
    """The colour of an equation; a group that is not an equation takes ``colour(fallback)``."""
    key = equation_key(name)
    return EQUATION_COLOURS[key] if key else colour(fallback)


def equation_marker(name: str, fallback: int = 0) -> str:
    """The marker of an equation; other groups cycle through circle, triangle, plus, cross."""
    key = equation_key(name)
    return EQUATION_MARKERS[key] if key else ("o", "^", "P", "X", "v")[fallback % 5]


def shades(base: str, count: int) -> list[str]:
    """``count`` colours from ``base`` towards white (at most 65 % white), darkest first."""
    r, g, b = (int(base[i:i + 2], 16) for i in (1, 3, 5))
    out = []
    for k in range(count):
        t = 0.65 * k / max(count - 1, 1) if count > 1 else 0.0
        out.append("#" + "".join(f"{round(c + (255 - c) * t):02x}" for c in (r, g, b)))
    return out

