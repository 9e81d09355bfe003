"""Species names as chemists write them: HPO₄²⁻, CaHCO₃⁺, Cu(NH₃)₄²⁺.

Text formatting only. The library and preset files write names in ASCII with a
charge suffix (``HPO4^2-``, ``CaHCO3+``, ``Cu(NH3)4^2+``); on a terminal that can
draw them, the explorer shows the counts as subscripts and the charge as a
superscript. Files, JSON and the line commands keep the ASCII names.

A name is rewritten only when it looks like a formula: letters, digits and
brackets, then an optional charge. Anything else (``compound 7 base (s)``, a
mineral name) is shown as written, so a custom name is never mangled. Every name
goes through :func:`tui.text.printable` first (names come from shared presets).
"""

from __future__ import annotations

import re
from functools import lru_cache

from tui.text import printable

_SUB = str.maketrans("0123456789", "₀₁₂₃₄₅₆₇₈₉")
_SUP = str.maketrans("0123456789+-", "⁰¹²³⁴⁵⁶⁷⁸⁹⁺⁻")

#: A formula body (letters, digits, brackets) and an optional charge: ``^2-``, ``^+``, ``+``, ``-``.
_FORMULA = re.compile(r"^(?P<body>[A-Za-z(\[][A-Za-z0-9()\[\]]*)(?P<charge>\^[0-9]*[+-]|[+-])?$")
#: Digits that count atoms or groups: right after a letter or a closing bracket.
_COUNT = re.compile(r"(?<=[A-Za-z)\]])[0-9]+")


@lru_cache(maxsize=4096)
def pretty(name: str) -> str:
    """``name`` with subscript counts and a superscript charge, when it looks like a formula.

    >>> pretty("HPO4^2-"), pretty("CaHCO3+"), pretty("Cu(NH3)4^2+"), pretty("compound 7 base")
    ('HPO₄²⁻', 'CaHCO₃⁺', 'Cu(NH₃)₄²⁺', 'compound 7 base')
    """
    safe = printable(name)
    found = _FORMULA.match(safe)
    if found is None:
        return safe
    body = _COUNT.sub(lambda m: m.group(0).translate(_SUB), found.group("body"))
    charge = (found.group("charge") or "").lstrip("^")
    return body + charge.translate(_SUP)


def shown_name(name: str, utf8: bool) -> str:
    """How the explorer shows a species, solid formula or gas: :func:`pretty` where the terminal can draw it.

    Args:
        name: The ASCII name from the library or a preset.
        utf8: Whether the terminal's locale is UTF-8; otherwise the ASCII name is kept.
    """
    return pretty(name) if utf8 else printable(name)


def shown_unit(text: str, utf8: bool) -> str:
    """A unit typed in ASCII (``uatm``, ``uM``) with µ where the terminal can draw it."""
    return re.sub(r"(?<![A-Za-z])u(?=(?:atm|M|mol|g|L)\b)", "µ", printable(text)) if utf8 else printable(text)
