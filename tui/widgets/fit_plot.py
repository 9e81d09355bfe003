"""The titration plot with measured points over the model curve, and the uncertainty band.

A :class:`~tui.widgets.plot_kinds.PlotKind` with the id "titration": the app shows it in
place of the plain titration plot when a measured titration is loaded (``d``/``f``) or the
uncertainty is shown (``i``). The model curve comes from :func:`chem.titration`, the band
from :func:`chem.curve_band`; this module only draws.

API:
    ``Overlay(settings, data=None, offset=0.0, label="", band=False)`` what to draw over the curve.
    ``overlay_kind(overlay)`` -> :class:`PlotKind`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

import chem
from tui.widgets.curve_kinds import (_BOX_TO_ASCII, Mark, TitrationSettings, _guarded, _notes, _say, _series_line,
                                     _still_wanted, _unconverged, _x_ticks, _y_most, default_titration,
                                     figure_text, grid_points, ph_axis, simplify, MAX_TITRATION_POINTS)
from tui.widgets.plot_kinds import Drawing, PlotKind, PlotRequest

#: Marker of a measured point (colour on) and of the band's edges.
POINT_MARKER = "dot"


@dataclass(frozen=True, eq=False)
class Overlay:
    """What the titration plot shows besides the model curve."""

    settings: TitrationSettings | None
    """The titration (None: the default for the mixture on display)."""
    data: "chem.TitrationData | None" = None
    """Measured points, drawn as they were read (minus ``offset``)."""
    offset: float = 0.0
    """A fitted electrode offset, taken off the measured pH so points and model share a scale."""
    label: str = ""
    """Where the points came from, for the legend."""
    band: bool = False
    """Draw the 95 % band from the constants' uncertainties."""
    rms: float | None = None
    """rms residual of a fit to these points, for the legend."""


def build_overlay(result: chem.Equilibrium, request: PlotRequest, overlay: Overlay) -> Drawing:
    """The model's titration curve, the measured points over it, and the band when asked for."""
    from plotext._figure import _figure_class  # noqa: PLC0415 - deferred: only needed in the worker

    settings = overlay.settings or default_titration(result)
    mixture = result.mixture
    titrant, conc, sample, to = settings.resolve(mixture)
    data = overlay.data
    if data is not None:
        to = max(to, data.last_volume_L)
    n = grid_points(request.width)
    curve = chem.titration(mixture, titrant, conc, sample, to, points=n,
                           max_points=max(n, MAX_TITRATION_POINTS), progress=_still_wanted)
    x = np.asarray(curve.x)
    ys = [curve.pH]
    lo = hi = None
    if overlay.band:
        lo, hi = chem.curve_band(curve).pH_limits(curve.pH)
        ys += [lo, hi]
    px = py = None
    if data is not None:
        px = np.asarray(data.volume_mL, dtype=float)
        py = np.asarray(data.pH, dtype=float) - overlay.offset
        ys.append(py)
    notes = []
    eqp = curve.equivalence_points
    notes += [f"EP {e.volume_mL:.3f} mL, pH {e.pH:.2f}" for e in eqp] or ["no clear equivalence point"]
    if data is not None:
        what = f"{len(data)} measured points" + (f" ({overlay.label})" if overlay.label else "")
        if overlay.offset:
            what += f", less the electrode offset {overlay.offset:+.3f}"
        notes.append(what)
        if overlay.rms is not None:
            notes.append(f"fit rms {overlay.rms:.4f} pH")
    if overlay.band:
        notes.append("band: 95 % from the constants' uncertainties")
    notes += _unconverged(curve.converged)
    style = request.style
    first = _series_line(request, f"pH · {settings.titrant_conc_text.strip()} {titrant.name} into "
                                  f"{settings.sample_text.strip()}")
    legend = _notes(first, notes, request)
    height = request.height - len(legend)
    ylim, yticks = ph_axis(np.concatenate([np.asarray(y)[np.isfinite(y)] for y in ys]), _y_most(height))
    x_lo, x_hi = float(x[0]), float(x[-1])
    fig = _figure_class()
    fig.plotsize(request.width, height)
    fig._set_size(request.width, height)
    fig.theme("clear")
    x_step, y_step = (x_hi - x_lo) / (2 * request.width), (ylim[1] - ylim[0]) / (4 * height)
    if lo is not None:
        for edge in (lo, hi):
            fig.plot(*simplify(x, np.clip(edge, *ylim), x_step, y_step), marker=style.marker(2),
                     color=style.color(2))
    fig.plot(*simplify(x, np.clip(curve.pH, *ylim), x_step, y_step), marker=style.marker(0), color=style.color(0))
    if px is not None:
        keep = (px >= x_lo) & (px <= x_hi)
        marker = "o" if style.ascii or style.colors is None else POINT_MARKER
        fig.scatter(list(px[keep]), list(np.clip(py[keep], *ylim)), marker=marker, color=style.color(1))
    fig.xlim(x_lo, x_hi)
    fig.ylim(*ylim)
    ticks = _x_ticks(request, x_lo, x_hi, 5)
    fig.xticks(ticks, [f"{t:g}" for t in ticks])
    fig.yticks(list(yticks), [f"{t:g}" for t in yticks])
    fig.xlabel(_say("titrant added (mL)", request))
    fig.ylabel("pH")
    many = len(eqp) > 1
    for i, mark in enumerate(Mark(e.volume_mL, f"EP{i + 1}" if many else "EP") for i, e in enumerate(eqp)):
        if x_lo <= mark.x <= x_hi:
            fig.vline(mark.x, style.guide)
    out = figure_text(fig).rstrip("\n")
    if style.ascii:
        out = out.translate(_BOX_TO_ASCII)
    return Drawing(out, legend)


def overlay_kind(overlay: Overlay) -> PlotKind:
    """The titration plot with ``overlay`` (id "titration", so it takes the plain one's place)."""
    title = "titration" if overlay.settings is None else f"titration with {overlay.settings.titrant_name.strip()}"
    if overlay.data is not None:
        title += " · measured"
    if overlay.band:
        title += " · ±95 %"
    return PlotKind("titration", title, _guarded(lambda r, q: build_overlay(r, q, overlay)))
