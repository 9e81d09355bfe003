"""The explorer's fit and uncertainty actions, kept out of ``tui/app.py`` (a mixin of ExplorerApp).

* ``d`` / ``f``: the fit form (:class:`tui.screens.fit_form.FitForm`): load a measured titration
  onto the titration plot, fit it, load the fitted sample into the flask as one undoable edit.
* ``i``: show or hide the uncertainty: a ± beside the pH in the readout (first order, from the
  constants' uncertainties) and a 95 % band on the titration plot.

Numbers come from chem (:func:`chem.fit_titration`, :func:`chem.propagate`); this module only wires them.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import chem

if TYPE_CHECKING:
    from tui.screens.fit_form import FitOutcome, FitRequest
    from tui.widgets.fit_plot import Overlay


class FitActions:
    """Mixed into :class:`tui.app.ExplorerApp` (which provides ``mixture``, ``result``, ``commit`` ...)."""

    _fit_request: FitRequest | None = None
    _overlay_data: Overlay | None = None
    show_uncertainty: bool = False
    _sd_shown: bool = False

    def _on_mount(self) -> None:
        self.watch(self, "result", self._result_for_uncertainty, init=False)

    # -- the titration plot ----------------------------------------------------------------
    def with_overlay(self, kinds: tuple) -> tuple:
        """``kinds`` with the titration plot replaced by the one showing measured points or the band."""
        if self._overlay_data is None and not self.show_uncertainty:
            return kinds
        if self._titration is not None and self._titration.track.strip():
            return kinds                                # a followed pX: measured pH points and band stay off
        from dataclasses import replace

        from tui.widgets.fit_plot import Overlay, overlay_kind

        overlay = self._overlay_data or Overlay(self._titration)
        overlay = replace(overlay, settings=self._titration, band=self.show_uncertainty)
        return tuple(overlay_kind(overlay) if k.id == "titration" else k for k in kinds)

    # -- fit -------------------------------------------------------------------------------
    def action_fit(self) -> None:
        from tui.screens.fit_form import FitForm

        self.push_screen(FitForm(self.mixture, self._fit_request, self.library, self._titration), self._fit_closed)

    def _fit_closed(self, outcome: FitOutcome | None) -> None:
        if outcome is None:
            return
        from tui.widgets.fit_plot import Overlay

        self._fit_request = outcome.request
        result = outcome.result
        offset = result.offset if result is not None and outcome.action == "load" else 0.0
        self._overlay_data = Overlay(outcome.settings, outcome.data, offset, outcome.data.label,
                                     rms=result.rms_pH if result is not None else None)
        self._titration = outcome.settings
        if outcome.action == "load" and result is not None and result.mixture is not None:
            self._source = "fitted sample"
            self.commit(result.mixture, "load the fitted sample")      # one undoable edit
        if self.plot_kind != "titration":
            self.plot_kind = "titration"                                # its watcher recomputes
        else:
            self._recompute()

    # -- uncertainty -----------------------------------------------------------------------
    def action_uncertainty(self) -> None:
        self.show_uncertainty = not self.show_uncertainty
        self._result_for_uncertainty(self.result)
        if self.plot_kind == "titration":
            self._recompute()
        self.notify("uncertainty shown: ± from the constants' uncertainties (first order)"
                    if self.show_uncertainty else "uncertainty hidden", timeout=3)

    def _result_for_uncertainty(self, result) -> None:
        if not self.show_uncertainty and not self._sd_shown:
            return                                      # the usual edit: nothing to do
        from tui.widgets.readout import Readout

        readout = self.query_one(Readout)
        self._sd_shown = self.show_uncertainty
        if not self.show_uncertainty or result is None or not result.converged:
            readout.ph_sd = None
            return
        try:
            readout.ph_sd = chem.propagate(result).pH_sd
        except chem.ChemError:
            readout.ph_sd = None
