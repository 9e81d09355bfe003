"""Text from files and from users, made safe to show: the one helper every front end uses.

Preset files are shared on lab servers, so every text that comes from one
(a title, notes, reagent and species names, and error messages quoting
them) is untrusted. Before it reaches a terminal, :func:`printable` writes
each control character as a visible escape (``\\x1b``, ``\\u202e``): an escape
sequence in a name cannot retitle the window, clear the screen, hide lines
or reorder text. :func:`one_line` also keeps a message to one readable line
of bounded length, however long the input it quotes.

This module imports nothing, so the line commands can use it without
loading the explorer or the numerics.
"""

from __future__ import annotations

import unicodedata

#: Unicode categories written as escapes: controls, format characters (bidirectional
#: overrides, zero-width characters), surrogates, and the line and paragraph separators.
_UNSAFE = frozenset({"Cc", "Cf", "Cs", "Zl", "Zp"})

#: A run of characters without a space longer than this is shortened in :func:`one_line`.
LONG_RUN = 120
#: Longest message :func:`one_line` returns, in characters.
MESSAGE_LIMIT = 600


def _escape(ch: str) -> str:
    code = ord(ch)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}"


def printable(text: object, *, newlines: bool = False) -> str:
    """``text`` with every control or format character written as a visible escape.

    Args:
        text: Anything; it is converted with ``str`` first.
        newlines: Keep line feeds (for multi-line output); otherwise they are escaped too.

    Returns:
        Text that moves no cursor and sends no command to the terminal. Printable text,
        spaces and non-ASCII letters and symbols are left as they are.
    """
    text = text if isinstance(text, str) else str(text)
    if text.isprintable():
        return text
    out = []
    for ch in text:
        if ch == "\n" and newlines:
            out.append(ch)
        elif ch.isprintable() or ch == " " or unicodedata.category(ch) not in _UNSAFE:
            out.append(ch)
        else:
            out.append(_escape(ch))
    return "".join(out)


def clip(text: str, limit: int, tail: int = 12) -> str:
    """``text`` cut to at most ``limit`` characters, the middle replaced by an ellipsis."""
    if len(text) <= limit:
        return text
    tail = min(tail, max(limit // 3, 0))
    return text[: max(limit - tail - 1, 0)] + "…" + (text[-tail:] if tail else "")


def one_line(message: object, limit: int = MESSAGE_LIMIT) -> str:
    """``message`` as one safe, readable line: :func:`printable`, long runs and the whole cut short.

    A message that quotes a 100,000-character name keeps its start (which file, which
    entry) and its end (what is wrong), with the quoted name shortened in place.
    """
    text = printable(message)
    if len(text) <= LONG_RUN:
        return text
    words = text.split(" ")
    text = " ".join(clip(w, LONG_RUN, 24) if len(w) > LONG_RUN else w for w in words)
    return clip(text, limit, limit // 3)


def safe_json(text: str) -> str:
    """JSON text with every unsafe character that JSON leaves as it is written as a ``\\uXXXX`` escape.

    ``json.dumps`` escapes only U+0000-U+001F; C1 controls (U+0080-U+009F), bidirectional
    overrides and the like would still reach the terminal. The escapes keep the JSON valid
    and its values unchanged.
    """
    if text.isprintable():
        return text
    out = []
    for ch in text:
        if ch == "\n" or ch.isprintable() or ch == " " or unicodedata.category(ch) not in _UNSAFE:
            out.append(ch)
        elif ord(ch) > 0xFFFF:
            code = ord(ch) - 0x10000
            out.append(f"\\u{0xD800 + (code >> 10):04x}\\u{0xDC00 + (code & 0x3FF):04x}")
        else:
            out.append(f"\\u{ord(ch):04x}")
    return "".join(out)
