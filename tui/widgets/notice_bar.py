"""The notice bar: warnings and safety cautions of the current result, always in view."""

from __future__ import annotations

from textual.content import Content
from textual.reactive import var
from textual.widgets import Static

import chem
from tui.text import printable


class NoticeBar(Static):
    """One line: how many cautions and warnings there are, the key for details, and the most serious one."""

    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved mixture whose notices are shown."""

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self._shown: tuple = ()

    def watch_result(self, eq: chem.Equilibrium | None) -> None:
        notices = [] if eq is None else [*eq.cautions, *eq.warnings]
        shown = (eq is None, tuple(notices))
        if shown == self._shown:                        # unchanged: spare the repaint
            return
        self._shown = shown
        self.set_class(bool(eq and eq.cautions), "-caution")
        self.set_class(bool(eq and not eq.cautions and eq.warnings), "-warning")
        if eq is None:
            self.update("", layout=False)
            return
        if not notices:
            self.update(Content("✓ no warnings or cautions for this mixture"), layout=False)
            return
        counts = []
        if eq.cautions:
            counts.append(f"{len(eq.cautions)} CAUTION{'S' * (len(eq.cautions) > 1)}")
        if eq.warnings:
            counts.append(f"{len(eq.warnings)} warning{'s' * (len(eq.warnings) > 1)}")
        self.update(Content.assemble((f"⚠ {', '.join(counts)} ", "bold"), ("(w: details) ", "italic"),
                                     printable(notices[0].message)), layout=False)
