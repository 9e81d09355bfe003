"""The notice bar: warnings and safety cautions of the current result, always in view."""

from __future__ import annotations

from textual.content import Content
from textual.reactive import reactive
from textual.widgets import Static

import chem


class NoticeBar(Static):
    """One line: the most serious notice, how many more there are, and the key for details."""

    result: reactive[chem.Equilibrium | None] = reactive(None, init=False)
    """The solved mixture whose notices are shown."""

    def watch_result(self, eq: chem.Equilibrium | None) -> None:
        notices = [] if eq is None else [*eq.cautions, *eq.warnings]
        self.set_class(bool(eq and eq.cautions), "-caution")
        self.set_class(bool(eq and not eq.cautions and eq.warnings), "-warning")
        if eq is None:
            self.update("")
            return
        if not notices:
            self.update(Content("✓ no warnings or cautions for this mixture"))
            return
        first = notices[0]
        head = "CAUTION" if eq.cautions else "warning"
        more = f"  (+{len(notices) - 1} more)" if len(notices) > 1 else ""
        self.update(Content.assemble((f"⚠ {head}: ", "bold"), first.message, (more, "bold"),
                                     ("  · w: details", "italic")))
