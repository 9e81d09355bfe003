"""The kinds of plot the chart panel can show, and how their text is drawn.

A :class:`PlotKind` pairs a title with a function that turns a solved
:class:`chem.Equilibrium` and a :class:`PlotRequest` (size, system, style)
into a :class:`Drawing`: plotext's text plus a legend. The functions run in a
worker thread: building plotext text is pure Python and costs tens of ms, so it
must stay off the UI thread. New kinds (titration, buffer capacity, ...) are
added by appending to :data:`PLOT_KINDS`.

All curve data come from chem (:func:`chem.distribution`, :func:`chem.log_concentrations`); this
module only draws them.
"""

from __future__ import annotations

import math
import os
import re
from dataclasses import dataclass
from itertools import groupby
from typing import Callable, Mapping, Sequence

import numpy as np

import chem
from tui.formula import shown_name

RGB = tuple[int, int, int]

#: Series colours for dark backgrounds: light, saturated hues.
DARK_SERIES: tuple[RGB, ...] = (
    (86, 199, 235), (255, 176, 72), (140, 214, 120), (242, 112, 160),
    (190, 150, 255), (240, 226, 110), (80, 212, 190), (255, 128, 102),
)
#: Series colours for light backgrounds: darker hues with good contrast on paper tones.
LIGHT_SERIES: tuple[RGB, ...] = (
    (0, 98, 160), (176, 88, 0), (38, 120, 40), (170, 20, 90),
    (100, 60, 170), (120, 100, 0), (0, 115, 105), (190, 40, 30),
)
#: Distinct marker characters, used when colour is off (NO_COLOR): each series gets its own.
PLAIN_MARKERS = ("*", "o", "+", "x", "#", "%", "@", "=", "~", "^")

_BOX_TO_ASCII = str.maketrans({
    "─": "-", "│": "|", "┌": "+", "┐": "+", "└": "+", "┘": "+", "┬": "+", "┴": "+",
    "├": "+", "┤": "+", "┼": "+", "▏": "|", "•": "*",
})

#: Smallest plot area (cells) worth drawing; below this plotext output is unreadable.
MIN_WIDTH, MIN_HEIGHT = 30, 8

SGR = re.compile(r"\x1b\[([0-9;]*)m")
"""A colour code in plotext's output (plotext writes 24-bit foreground colours and resets only)."""


def locale_is_utf8(environ: Mapping[str, str] | None = None) -> bool:
    """Whether the terminal's locale (LC_ALL, then LC_CTYPE, then LANG) says UTF-8.

    Python may run in UTF-8 mode under ``LANG=C``, so its own encoding says
    nothing about what the terminal can show.
    """
    env = os.environ if environ is None else environ
    for var in ("LC_ALL", "LC_CTYPE", "LANG"):
        value = env.get(var)
        if var == "LC_CTYPE" and value in _COERCED and not env.get("LC_ALL"):
            continue                # Python's own doing under LANG=C (PEP 538), not the terminal's
        if value:
            return "utf-8" in value.lower() or "utf8" in value.lower()
    return False


#: What Python 3.7+ sets LC_CTYPE to at start-up when the locale is "C" or "POSIX" (PEP 538 locale
#: coercion): under ``LANG=C`` the process sees ``LC_CTYPE=C.UTF-8`` although the user asked for C.
_COERCED = frozenset({"C.UTF-8", "C.utf8", "UTF-8"})


@dataclass(frozen=True)
class PlotStyle:
    """How series are told apart on the current terminal and theme."""

    colors: tuple[RGB, ...] | None
    """Series colours, or None when colour is off."""
    guide: RGB | None
    """Colour of the current-pH marker, or None when colour is off."""
    ascii: bool
    """Draw with ASCII characters only (no braille, no box drawing)."""

    @classmethod
    def for_terminal(cls, *, dark: bool, color: bool, utf8: bool) -> "PlotStyle":
        """The style for a dark or light theme, with or without colour and UTF-8."""
        if not color:
            return cls(None, None, not utf8)
        return cls(DARK_SERIES if dark else LIGHT_SERIES, (235, 235, 235) if dark else (30, 30, 30), not utf8)

    def color(self, i: int) -> RGB | None:
        return None if self.colors is None else self.colors[i % len(self.colors)]

    def marker(self, i: int) -> str:
        if self.colors is None:
            return PLAIN_MARKERS[i % len(PLAIN_MARKERS)]
        return "*" if self.ascii else "braille"

    def legend_symbol(self, i: int) -> str:
        if self.colors is None:
            return PLAIN_MARKERS[i % len(PLAIN_MARKERS)]
        return "*" if self.ascii else "●"


@dataclass(frozen=True)
class PlotRequest:
    """What to draw: which kind, how big (cells), which system and in what style."""

    kind: str
    width: int
    height: int
    system: str | None
    """Only this acid–base system, or None for all of them."""
    style: PlotStyle


LegendLine = tuple[tuple[str, "RGB | None"], ...]
"""One legend line: (text, colour) pieces; colour None means the panel's own text colour."""


@dataclass(frozen=True)
class Drawing:
    """A finished plot: plotext's output (with its colour codes) and the legend lines under it."""

    canvas: str
    legend: tuple[LegendLine, ...] = ()
    note: bool = False
    """True when ``canvas`` is a short message instead of a plot (shown dimmed)."""

    @property
    def plain(self) -> str:
        """The whole drawing as text without colour codes."""
        lines = [SGR.sub("", self.canvas)] + ["".join(piece for piece, _ in line) for line in self.legend]
        return "\n".join(lines)


@dataclass(frozen=True)
class PlotKind:
    """A plot the chart panel can show."""

    id: str
    title: str
    """Shown in the panel's border, e.g. "fraction vs pH"."""
    build: Callable[[chem.Equilibrium, PlotRequest], Drawing]
    """Draws the plot for a solved mixture; runs in a worker thread."""


def grid_points(width: int) -> int:
    """Points per curve: about twice the plot width (more cannot be seen, and cost time)."""
    return int(min(400, max(60, 2 * width)))


def simplify(x: np.ndarray, y: np.ndarray, x_step: float, y_step: float) -> tuple[np.ndarray, np.ndarray]:
    """Drop points that lie within half a plot dot of the line through their neighbours.

    Ramer–Douglas–Peucker line simplification in units of plot dots
    (``x_step`` and ``y_step`` are the data size of one dot). Flat and straight
    stretches shrink to their end points, which is most of a speciation curve,
    and plotext's cost grows with the number of segments drawn.
    """
    if len(x) < 3 or not (x_step > 0 and y_step > 0):  # a flat axis: nothing to measure against
        return x, y
    px, py = x / x_step, y / y_step
    keep = np.zeros(len(x), dtype=bool)
    keep[0] = keep[-1] = True
    stack = [(0, len(x) - 1)]
    while stack:
        a, b = stack.pop()
        if b - a < 2:
            continue
        dx, dy = px[b] - px[a], py[b] - py[a]
        seg = np.hypot(dx, dy) or 1.0
        dist = np.abs(dy * (px[a + 1:b] - px[a]) - dx * (py[a + 1:b] - py[a])) / seg
        i = int(np.argmax(dist))
        if dist[i] > 0.5:
            k = a + 1 + i
            keep[k] = True
            stack += [(a, k), (k, b)]
    return x[keep], y[keep]


def visible_runs(y: np.ndarray, floor: float) -> list[slice]:
    """Stretches of ``y`` that rise above ``floor``, each widened by one point at both ends.

    A curve lying on the bottom of the plot draws nothing worth seeing (it would
    only thicken the axis), and every dot plotext draws costs time.
    """
    up = np.concatenate(([False], y > floor, [False]))
    edges = np.flatnonzero(up[1:] != up[:-1])
    return [slice(max(a - 1, 0), min(b + 1, len(y))) for a, b in zip(edges[::2], edges[1::2])]


def figure_text(fig) -> str:
    """What plotext's ``fig.build()`` returns, with the last step done in one pass per line.

    plotext builds a matrix of characters and colours, then joins it into text cell by
    cell, comparing colour lists at every cell: 2–3 ms at 70x25, a fifth of a plot's
    cost. Here runs of equal colour are joined at once. The text is the same, code for
    code (a test compares it with plotext's own ``build()``).
    """
    from plotext import _utility as ut  # noqa: PLC0415 - loaded with plotext, in the worker

    fig._set_sizes()
    fig._build_matrix()
    matrix = fig.monitor.matrix
    to_ansi, end = ut.colors_to_ansi, ut.ansi_end
    lines = []
    for row in range(matrix.rows - 1, -1, -1):
        markers = matrix.marker[row]
        pieces, col = [], 0
        for colors, run in groupby(zip(matrix.fullground[row], matrix.style[row], matrix.background[row])):
            n = sum(1 for _ in run)
            pieces.append(to_ansi(*colors) + "".join(markers[col:col + n]) + end)
            col += n
        lines.append("".join(pieces))
    return "\n".join(lines) + "\n"


def _step(span: float, most: int) -> float:
    """A 1-2-2.5-5 step giving at most ``most`` intervals over ``span``."""
    raw = span / max(most, 1)
    mag = 10.0 ** math.floor(math.log10(raw))
    for m in (1.0, 2.0, 2.5, 5.0, 10.0):
        if span / (m * mag) <= most + 1e-9:
            return m * mag
    return 10.0 * mag


def _legend(labels: Sequence[str], style: PlotStyle, width: int, max_rows: int) -> tuple[LegendLine, ...]:
    """Series names with their symbols, wrapped to ``width``, at most ``max_rows`` lines."""
    lines: list[list[tuple[str, RGB | None]]] = [[]]
    used = 0
    for i, label in enumerate(labels):
        # chemists' names (HPO₄²⁻) where the terminal can draw them, as the species panel shows them
        entry = [(style.legend_symbol(i), style.color(i)), (f" {shown_name(label, not style.ascii)}", None)]
        size = len(entry[0][0]) + len(entry[1][0])
        last_row = len(lines) == max_rows
        room = width - (len(f"  +{len(labels)} more") if last_row and i < len(labels) - 1 else 0)
        if used and used + 2 + size > room:
            if last_row:
                lines[-1].append((f"  +{len(labels) - i} more", None))
                break
            lines.append([])
            used = 0
        if used:
            lines[-1].append(("  ", None))
            used += 2
        lines[-1] += entry
        used += size
    return tuple(tuple(line) for line in lines)


def draw(x: np.ndarray, curves: Sequence[tuple[str, np.ndarray]], ph: float, request: PlotRequest,
         *, ylabel: str, ylim: tuple[float, float], yticks: Sequence[float]) -> Drawing:
    """Draw curves over pH with a marker at the current ``ph``; legend below the axes.

    Args:
        x: pH grid shared by all curves.
        curves: (label, values) pairs, one per series.
        ph: Current pH of the mixture, marked by a vertical line.
        request: Size and style.
        ylabel: Label of the y axis.
        ylim: y axis range.
        yticks: Tick positions on the y axis.

    Returns:
        The plot and its legend, together at most ``request`` in size.
    """
    from plotext._figure import _figure_class  # noqa: PLC0415 - deferred: 35 ms, only needed in the worker

    style, width = request.style, request.width
    legend = _legend([label for label, _ in curves], style, width, max(1, request.height // 6)) if curves else ()
    height = request.height - len(legend)
    fig = _figure_class()
    fig.plotsize(width, height)
    fig._set_size(width, height)
    fig.theme("clear")
    lo, hi = float(x[0]), float(x[-1])
    x_step = (hi - lo) / (2 * width)                  # braille: 2 x 4 dots per cell
    y_step = (ylim[1] - ylim[0]) / (4 * height)
    for i, (_, y) in enumerate(curves):
        y = np.clip(y, *ylim)
        for run in visible_runs(y, ylim[0] + y_step / 2):
            fig.plot(*simplify(x[run], y[run], x_step, y_step), marker=style.marker(i), color=style.color(i))
    fig.xlim(lo, hi)
    fig.ylim(*ylim)
    step = 2.0 if width >= 50 else 3.5
    fig.xticks(list(np.arange(lo, hi + 1e-9, step)))
    fig.yticks(list(yticks), [f"{t:g}" for t in yticks])
    fig.xlabel("pH")
    fig.ylabel(ylabel)
    if lo <= ph <= hi:
        fig.vline(ph, style.guide)
        right = ph > lo + 0.7 * (hi - lo)
        fig.text(f"pH {ph:.2f}", x=ph - 0.15 if right else ph + 0.15, y=ylim[1],
                 color=style.guide, alignment="right" if right else "left")
    out = figure_text(fig).rstrip("\n")
    if style.ascii:
        out = out.translate(_BOX_TO_ASCII)
    return Drawing(out, legend)


def _selected_systems(result: chem.Equilibrium, request: PlotRequest) -> tuple[str, ...] | None:
    names = {st.name for st in result.systems}
    return (request.system,) if request.system in names else None


def build_distribution(result: chem.Equilibrium, request: PlotRequest) -> Drawing:
    """Fraction of each species of each (or the selected) system vs pH."""
    ph = chem.default_grid(grid_points(request.width))
    diagram = chem.distribution(result.mixture, ph, ionic_strength=result.ionic_strength,
                                    systems=_selected_systems(result, request))
    if not diagram.series and request.system is not None and _selected_systems(result, request):
        # the selected ingredient's system has no acid–base forms (a metal): draw its forms, its
        # complexes and solids, as shares of its total (pH held at each point) instead of a note
        from tui.widgets.speciation_kinds import build_forms

        return build_forms(result, request, None, selected=request.system)
    if not diagram.series:
        return Drawing("No acid–base system in the flask: nothing to distribute.\n"
                       "Add an acid, a base or a buffer salt (n).", note=True)
    curves = list(diagram.series.items())
    return draw(diagram.ph, curves, result.pH, request, ylabel="fraction", ylim=(0.0, 1.0),
                yticks=(0.0, 0.25, 0.5, 0.75, 1.0))


def build_log_concentration(result: chem.Equilibrium, request: PlotRequest) -> Drawing:
    """log10 of each species' concentration vs pH, with H+ and OH- and the complexes.

    With one system selected, its complexes (those holding it) are drawn with its own species.
    """
    ph = chem.default_grid(grid_points(request.width))
    diagram = chem.log_concentrations(result.mixture, ph, ionic_strength=result.ionic_strength)
    keep = _selected_systems(result, request)
    holding = {s.name for s in result.species if s.holds and keep and any(name in keep for name, _ in s.holds)}
    curves = [(name, values) for system, names in diagram.systems.items()
              if keep is None or system == "water" or system in keep or system == "complex"
              for name, values in ((n, diagram.series[n]) for n in names)
              if system != "complex" or keep is None or name in holding]
    low = float(min(v.min() for _, v in curves))
    high = float(max(v.max() for _, v in curves))
    step = 2.0 if high - low <= 16 else 4.0
    bottom, top = step * np.floor(low / step), step * np.ceil(high / step)
    ticks = np.arange(bottom, top + 1e-9, step)
    return draw(diagram.ph, curves, result.pH, request, ylabel="log C (M)", ylim=(bottom, top),
                yticks=tuple(float(t) for t in ticks))


PLOT_KINDS: tuple[PlotKind, ...] = (
    PlotKind("distribution", "fraction vs pH", build_distribution),
    PlotKind("log-c", "log C vs pH", build_log_concentration),
)
"""The plots the chart panel cycles through, in order."""


def plot_kind(kind_id: str) -> PlotKind:
    """The registered plot kind with id ``kind_id``."""
    for kind in PLOT_KINDS:
        if kind.id == kind_id:
            return kind
    raise KeyError(kind_id)


def draw_kind(kind: PlotKind, result: chem.Equilibrium, request: PlotRequest) -> Drawing:
    """``kind``'s plot for ``request``, or a short note when the area is too small to draw in.

    Works for every :class:`PlotKind` (the curve kinds too); runs in a worker thread.
    """
    if request.width < MIN_WIDTH or request.height < MIN_HEIGHT:
        return Drawing(f"Enlarge the window to see the plot (needs {MIN_WIDTH}x{MIN_HEIGHT} cells).", note=True)
    return kind.build(result, request)
