"""The readout panel: pH in large digits, with the conditions and the state of the solve."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.content import Content
from textual.reactive import var
from textual.widgets import Digits, Label, Static

import chem


def signed(value: float, digits: int) -> str:
    """``+0.123`` / ``-0.123`` / ``±0.000``: a change with its sign always written."""
    text = f"{value:+.{digits}f}"
    return "±" + text[1:] if float(text) == 0.0 else text


class Readout(Vertical):
    """pH (large), pOH, temperature, ionic strength, buffer capacity, activity model, convergence and notices.

    While a state is pinned, the change of pH against it is shown too. Where there is
    room, pKw, the remaining charge-balance error and each system's total follow.
    """

    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved mixture on display."""
    pinned: var[chem.Equilibrium | None] = var(None, init=False)
    """The state changes are measured against, or None."""
    capacity: var[float | None] = var(None, init=False)
    """Buffer capacity β at the current pH, mol/(L·pH), or None."""

    def compose(self) -> ComposeResult:
        with Horizontal(id="ph-line"):
            yield Label("pH", id="ph-label")
            yield Digits("-.--", id="ph-digits")
            yield Static("", id="ph-side")
        yield Static("solving…", id="conditions")
        yield Static("", id="solve-state")
        yield Static("", id="readout-more")

    def watch_result(self) -> None:
        self._redraw()

    def watch_pinned(self) -> None:
        self._redraw()

    def watch_capacity(self) -> None:
        self._redraw()

    def _show(self, selector: str, content: Content) -> None:
        """Update one line of the readout, unless it reads the same (saves a repaint)."""
        widget = self.query_one(selector, Static)
        if widget.visual != content:
            widget.update(content, layout=False)

    def _redraw(self) -> None:
        eq = self.result
        if eq is None:
            return
        digits = self.query_one("#ph-digits", Digits)
        if digits.value != f"{eq.pH:.2f}":
            digits.update(f"{eq.pH:.2f}")
        parts: list[str | tuple[str, str]] = [(f"pH  {eq.pH:.3f}", "bold"), f"\npOH {eq.pOH:.3f}"]
        if self.pinned is not None:
            parts.append((f"\nΔpH {signed(eq.pH - self.pinned.pH, 3)}", "bold $accent"))
        self._show("#ph-side", Content.assemble(*parts))
        mix = eq.mixture
        beta = "" if self.capacity is None else f"  β {chem.format_molar(self.capacity, 3)}/pH"
        self._show("#conditions", Content(f"{mix.temperature_c:.1f} °C  I {eq.ionic_strength:.3g} M{beta}"))
        state: list[str | tuple[str, str]] = [
            ("✓ converged", "$success") if eq.converged else ("✗ NOT converged", "bold $error"),
            f"  {mix.activity}"]
        if eq.cautions:
            n = len(eq.cautions)
            state += ["  ", (f"{n} caution{'s' * (n > 1)}", "bold $error")]
        n = len(eq.warnings)
        state += ["  ", (f"{n} warning{'s' * (n != 1)}", "$warning" if n else "dim")]
        self._show("#solve-state", Content.assemble(*state))
        totals = ", ".join(f"{name} {chem.format_molar(total)}" for name, total in eq.systems) or "none"
        self._show("#readout-more", Content.assemble(
            ("pKw ", "dim"), f"{eq.pKw:.3f}", ("   balance error ", "dim"), f"{abs(eq.balance_error):.1e} M",
            ("\nsystems ", "dim"), totals))
