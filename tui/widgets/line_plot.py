"""Several named curves over one x axis, with marks, horizontal guides and notes under the legend.

The drawing behind the speciation plots with the pH held (every form of a system, a solid's
solubility, saturation indices) and the sweep's saturation-index view. Like every plot of the
chart it is built as plotext text in a worker thread; this module only draws numbers that
chem computed.

API:
    ``draw_lines(x, curves, request, *, xlabel, xlim, xticks, xtick_label, ylabel, ylim, yticks,
    marks=(), hlines=(), notes=())`` -> :class:`~tui.widgets.plot_kinds.Drawing`.
    ``log_axis(arrays, most, span)`` / ``index_axis(arrays, most, span)``: y ranges for log
    concentrations and saturation indices (round ticks, at most ``span`` wide, from the top).
"""

from __future__ import annotations

import math
from typing import Callable, Protocol, Sequence

import numpy as np

from tui.widgets.plot_kinds import (_BOX_TO_ASCII, Drawing, LegendLine, PlotRequest, _legend, _step,
                                    figure_text, simplify, visible_runs)


class Marked(Protocol):
    """A vertical line at ``x``, labelled at the top (:class:`tui.widgets.curve_kinds.Mark`)."""

    x: float
    label: str


def _whole_ticks(lo: float, hi: float, most: int) -> tuple[tuple[float, float], list[float]]:
    """[lo, hi] widened to whole-number ticks (steps of 1, 2, 5, 10 ...), about ``most`` intervals."""
    step = max(1.0, _step(max(hi - lo, 1.0), most))
    bottom, top = step * math.floor(lo / step), step * math.ceil(hi / step)
    if top <= bottom:
        top = bottom + step
    ticks = [float(f"{v:.10g}") for v in np.arange(bottom, top + step / 2, step)]
    return (bottom, top), ticks


def _finite(arrays: Sequence[np.ndarray]) -> np.ndarray:
    values = np.concatenate([np.asarray(a, dtype=float).ravel() for a in arrays]) if arrays else np.zeros(0)
    return values[np.isfinite(values)]


def log_axis(arrays: Sequence[np.ndarray], most: int, span: float) -> tuple[tuple[float, float], list[float]]:
    """A y range for log10 values: whole-number ticks, the top of the data in view, at most ``span`` tall."""
    values = _finite(arrays)
    if not values.size:
        return (-1.0, 0.0), [-1.0, 0.0]
    hi = float(values.max())
    lo = max(float(values.min()), hi - span)
    return _whole_ticks(lo, hi, most)


def index_axis(arrays: Sequence[np.ndarray], most: int, span: float) -> tuple[tuple[float, float], list[float]]:
    """A y range for indices around 0 (saturation): the top of the data kept, about ``span`` tall below it,
    and never less than -1 to 1 (0, the saturated state, is always in view)."""
    values = _finite(arrays)
    hi = max(float(values.max()) if values.size else 1.0, 1.0)
    lo = min(float(values.min()) if values.size else -1.0, -1.0)
    lo = min(max(lo, hi - span), -1.0)
    return _whole_ticks(lo, hi, most)


def _cut(text: str, width: int, ellipsis: str = "…") -> str:
    return text if len(text) <= width else text[: max(width - len(ellipsis), 0)] + ellipsis


def _fit(line: LegendLine, width: int, ellipsis: str = "…") -> LegendLine:
    """One legend line cut to ``width`` cells (an ellipsis marks the cut)."""
    out, used = [], 0
    for text, rgb in line:
        if used + len(text) > width:
            out.append((_cut(text, width - used, ellipsis), rgb))
            break
        out.append((text, rgb))
        used += len(text)
    return tuple(out)


def note_lines(notes: Sequence[str], width: int, rows: int, ellipsis: str = "…") -> tuple[LegendLine, ...]:
    """``notes`` joined by " · " into at most ``rows`` lines of ``width`` cells (the last cut to fit)."""
    packed: list[str] = []
    for note in notes:
        if packed and (len(packed) == rows or len(packed[-1]) + 3 + len(note) <= width):
            packed[-1] += f" · {note}"
        else:
            packed.append(note)
    return tuple(((_cut(line, width, ellipsis), None),) for line in packed[:rows])


def draw_lines(x: np.ndarray, curves: Sequence[tuple[str, np.ndarray]], request: PlotRequest, *, xlabel: str,
               xlim: tuple[float, float], xticks: Sequence[float], xtick_label: Callable[[float], str],
               ylabel: str, ylim: tuple[float, float], yticks: Sequence[float],
               marks: Sequence[Marked] = (), hlines: Sequence[float] = (), notes: Sequence[str] = ()) -> Drawing:
    """Draw named curves ``y(x)``, each in its own colour (or marker), legend and notes below the axes.

    Args:
        x: Abscissae shared by every curve, increasing.
        curves: (label, values) pairs; values outside ``ylim`` are clipped, NaN is not drawn.
        request: Size and style; the legend and notes come out of its height.
        xlabel: Label of the x axis.
        xlim: x axis range.
        xticks: Tick positions on the x axis.
        xtick_label: Text of each x tick.
        ylabel: Label of the y axis.
        ylim: y axis range.
        yticks: Tick positions on the y axis.
        marks: Vertical lines labelled at the top (the current pH, equivalence points).
        hlines: Horizontal guide lines (SI = 0).
        notes: Short facts shown under the legend, joined by " · ".

    Returns:
        The plot, its legend and notes, together at most ``request`` in size.
    """
    from plotext._figure import _figure_class  # noqa: PLC0415 - deferred: 35 ms, only needed in the worker

    style, width = request.style, request.width
    ellipsis = "..." if style.ascii else "…"
    legend = tuple(_fit(line, width, ellipsis) for line in _legend([label for label, _ in curves], style, width,
                                                                   max(1, request.height // 6))) if curves else ()
    notes_shown = note_lines(notes, width, 1 if request.height < 16 else 2, ellipsis) if notes else ()
    height = request.height - len(legend) - len(notes_shown)
    fig = _figure_class()
    fig.plotsize(width, height)
    fig._set_size(width, height)
    fig.theme("clear")
    lo, hi = float(xlim[0]), float(xlim[1])
    x = np.asarray(x, dtype=float)
    x_step = (hi - lo) / (2 * width)                  # braille: 2 x 4 dots per cell
    y_step = (ylim[1] - ylim[0]) / (4 * height)
    for i, (_, y) in enumerate(curves):
        y = np.asarray(y, dtype=float)
        y = np.where(np.isnan(y), ylim[0], np.clip(y, *ylim))
        for run in visible_runs(y, ylim[0] + y_step / 2):
            fig.plot(*simplify(x[run], y[run], x_step, y_step), marker=style.marker(i), color=style.color(i))
    for level in hlines:
        if ylim[0] < level < ylim[1]:
            fig.hline(level, style.guide)
    fig.xlim(lo, hi)
    fig.ylim(*ylim)
    fig.xticks(list(xticks), [xtick_label(t) for t in xticks])
    fig.yticks(list(yticks), [f"{t:g}" for t in yticks])
    fig.xlabel(xlabel)
    fig.ylabel(ylabel)
    pad = 0.01 * (hi - lo)
    for mark in marks:
        if not lo <= mark.x <= hi:
            continue
        fig.vline(mark.x, style.guide)
        right = mark.x > lo + 0.7 * (hi - lo)
        fig.text(mark.label, x=mark.x - pad if right else mark.x + pad, y=ylim[1], color=style.guide,
                 alignment="right" if right else "left")
    out = figure_text(fig).rstrip("\n")
    if style.ascii:
        out = out.translate(_BOX_TO_ASCII)
    return Drawing(out, tuple(legend) + notes_shown)
