"""The explorer's pH-held speciation plots, kept out of ``tui/app.py`` (a mixin of ExplorerApp).

* Three more kinds in the chart's cycle (``g``), after the curves: every form of one system
  ("forms": species, complexes and solids holding a metal or ligand, as shares of its total),
  the solubility of a solid, and the saturation index of every candidate solid, each vs pH
  with the pH held at each point (:mod:`tui.widgets.speciation_kinds`). ``g`` skips those
  that have nothing to show for the mixture (no solid can form, say).
* ``v`` on one of them opens :class:`tui.screens.held_setup.HeldSetup`: which system or
  solid, and the pH range (default 2–12, chem's :data:`chem.HELD_PH_RANGE`).
* Palette commands (``ctrl+p``: "forms", "solubility", "saturation") go straight to a plot.
* The sweep form (``v`` on the sweep) also offers the gases over the flask (their partial
  pressure varies) and, when solids can form, their saturation indices instead of the pH.

The plots are built in the app's worker thread like every other kind; this module only
chooses them and wires the form.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from tui.widgets.plot_kinds import PlotKind
    from tui.widgets.speciation_kinds import HeldSettings


class PlotActions:
    """Mixed into :class:`tui.app.ExplorerApp` (which provides ``result``, ``plot_kind``, ``kinds`` ...)."""

    _held: HeldSettings | None = None
    """The pH-held plots' settings from the form (None: chosen for the mixture on display)."""

    def _selected_system(self) -> str | None:
        selected = self.selected
        if selected is None or selected.reagent.system is None:
            return None
        return selected.reagent.system.name

    def speciation_kinds(self) -> tuple[PlotKind, ...]:
        """The pH-held kinds with the current settings, titled for the result on display."""
        from tui.widgets.speciation_kinds import speciation_kinds

        return speciation_kinds(self._held, self.result, self._selected_system())

    def plot_applies(self, kind_id: str) -> bool:
        """Whether the plot ``kind_id`` has anything to show for the mixture on display."""
        from tui.widgets.speciation_kinds import applies

        return applies(kind_id, self.result)

    def next_plot_id(self) -> str:
        """The plot after the one on display, skipping those with nothing to show."""
        ids = [k.id for k in self.kinds]
        at = ids.index(self.plot_kind) if self.plot_kind in ids else -1
        for step in range(1, len(ids) + 1):
            candidate = ids[(at + step) % len(ids)]
            if self.plot_applies(candidate):
                return candidate
        return ids[0]

    def action_show_plot(self, kind_id: str) -> None:
        """Show the plot ``kind_id`` (from the command palette)."""
        if kind_id in {k.id for k in self.kinds}:
            self.plot_kind = kind_id                    # its watcher recomputes

    def sweep_choices(self) -> dict[str, list[str]]:
        """What else a sweep can vary and show: the gases over the flask, its candidate solids (for ``v``)."""
        result = self.result
        if result is None:
            return {"gases": [], "solids": []}
        return {"gases": [g.name for g in result.gases], "solids": [s.name for s in result.solids]}

    def held_setup(self) -> bool:
        """Open the setup form if a pH-held plot is on display; False when another plot is."""
        from tui.widgets.speciation_kinds import SPECIATION_KIND_IDS, held_solid, held_system

        if self.plot_kind not in SPECIATION_KIND_IDS or self.result is None:
            return False
        from tui.screens.held_setup import HeldSetup

        result = self.result

        def use(settings: HeldSettings | None) -> None:
            if settings is not None:
                self._held = settings
                self._recompute()

        self.push_screen(HeldSetup(self.plot_kind, self._held,
                                   systems=[st.name for st in result.systems if st.total > 0],
                                   solids=[s.name for s in result.solids],
                                   system=held_system(result, self._held, self._selected_system()),
                                   solid=held_solid(result, self._held)), use)
        return True
