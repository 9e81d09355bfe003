"""Curve plots for the chart panel: titration, buffer capacity, sweep and dilution.

These are :class:`~tui.widgets.plot_kinds.PlotKind` objects like the ones in
:data:`~tui.widgets.plot_kinds.PLOT_KINDS`, drawn the same way (plotext text
built in a worker thread, legend lines under it). Every number comes from
chem (:func:`chem.titration`, :func:`chem.sweep` ...); amounts and volumes typed by the user are read by
:func:`chem.parse_concentration` and :func:`chem.parse_volume`. This module
only draws.

API:
    ``titration_kind(settings=None)``, ``capacity_kind()``, ``sweep_kind(settings=None)``,
    ``dilution_kind()`` -> :class:`PlotKind` (ids "titration", "capacity", "sweep", "dilution").
    ``curve_kinds(titration=None, sweep=None)`` -> those four, in chart order.
    ``draw_kind`` (from :mod:`plot_kinds`, re-exported) -> :class:`Drawing` for any kind.
    ``TitrationSettings`` / ``SweepSettings``: what the setup forms return (text as typed); a titration
    may follow a species (``track="Ca^2+"``: pCa is plotted, with its equivalence points), a sweep
    may vary a gas's partial pressure (``vary="CO2"``, pressures typed with units) and show every
    solid's saturation index (``show="SI"``, drawn by :func:`tui.widgets.line_plot.draw_lines`);
    ``default_titration(result)`` / ``default_sweep(mixture)``: the settings used when none are set.
    ``read_number(text, what)`` / ``read_celsius(text, what)``: numbers typed in forms (the temperature
    read and range-checked by :func:`chem.parse_temperature`, as in the line commands).
    A ``None`` setting means "the default for the mixture on display", decided at build time.

The explorer (``tui/app.py``) lists these after :data:`PLOT_KINDS`, imports this module on first
use (it is not needed for the first frame), and opens the setup screens with ``v``.

A setting that no longer fits the mixture (a swept ingredient removed, say) is not an error of
the app: the kind draws chem's one-line message in place of the plot, and ``v`` fixes it.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass, replace
from typing import Callable, Sequence

import numpy as np
from textual.worker import NoActiveWorker, get_current_worker

import chem
from chem import PH_MAX, PH_MIN, check_ph, neutral_ph, ph_grid
from tui.cli.curve_cmd import p_label
from tui.widgets.plot_kinds import (_BOX_TO_ASCII, RGB, Drawing, LegendLine, PlotKind, PlotRequest, _step, draw,
                                    figure_text, grid_points, simplify)
from tui.widgets.plot_kinds import draw_kind  # noqa: F401  (re-exported: one entry point for every kind)

#: The ids of the kinds made here, in the order the chart cycles through them.
CURVE_KIND_IDS = ("titration", "capacity", "sweep", "dilution")

#: Default titration: stock concentration, sample volume, last volume added.
DEFAULT_TITRANT_CONC = "0.1 M"
DEFAULT_SAMPLE = "25 mL"
DEFAULT_TO = "50 mL"
#: Default sweep of the temperature, °C, and the number of points of a sweep.
DEFAULT_T_RANGE = ("5", "50")
DEFAULT_SWEEP_POINTS = 101
#: Top of the default sweep of an ingredient whose amount is zero (otherwise twice its amount).
DEFAULT_AMOUNT_TOP = "10 mM"
#: Top of the default sweep of a gas not held over the solution (otherwise twice its pressure).
DEFAULT_GAS_TOP = "1 %"
#: Most points a sweep may ask for (each is solved; more than the plot shows is wasted).
MAX_SWEEP_POINTS = 2000
#: Dilution factors plotted: from undiluted to this.
DILUTION_TO = 1000.0
#: Smallest pH span of a y axis: flatter curves are shown in a band this wide, not magnified.
MIN_PH_SPAN = 1.0
#: The buffer-capacity plot's y axis is scaled to β over this pH range (water dominates outside).
SCALE_PH = (3.0, 11.0)
#: Most units of saturation index a sweep's SI plot shows (from the top of the data; SI = 0 always in view).
SI_SPAN = 20
#: Cap on the titration points after refinement of its steep parts (keeps a build short).
MAX_TITRATION_POINTS = 3000

#: Text that a terminal without UTF-8 cannot show, spelled in ASCII (box drawing is handled by plot_kinds).
_ASCII_TEXT = str.maketrans({"·": "-", "…": "...", "–": "-", "β": "beta", "°": "", "µ": "u"})


# --------------------------------------------------------------------------
# settings, as typed in the setup forms
# --------------------------------------------------------------------------

def read_number(text: str, what: str) -> float:
    """A plain finite number typed into a form; raises :class:`chem.UnitError` naming ``what``."""
    try:
        value = float(text.strip())
    except ValueError:
        raise chem.UnitError(f"{what}: '{text.strip()}' is not a number") from None
    if not math.isfinite(value):
        raise chem.UnitError(f"{what}: '{text.strip()}' is not a finite number")
    return value


def read_ph(text: str, what: str = "pH") -> float:
    """A pH typed into a form, on the pH scale every command shares (:func:`chem.check_ph`)."""
    return check_ph(read_number(text, what), what)


def read_celsius(text: str, what: str = "temperature") -> float:
    """A temperature in °C typed as ``37``, ``37 °C``, ``37C`` or ``37 ℃``, within the model's range.

    The same reading and the same range as every line command (:func:`chem.parse_temperature`).
    """
    return chem.parse_temperature(text, what)


def _positive_volume(text: str, what: str) -> float:
    litres = chem.parse_volume(text)
    if not litres > 0:
        raise chem.CurveError(f"{what}: must be more than zero (got '{text.strip()}')")
    return litres


@dataclass(frozen=True)
class TitrationSettings:
    """A titration as the user typed it: what is added, how strong, to how much sample, up to what volume."""

    titrant_name: str
    """Reagent name, alias or formula (library, or a custom reagent of the mixture)."""
    titrant_conc_text: str
    """Stock concentration, e.g. "0.1 M" (g/L when the titrant has a molar mass)."""
    sample_text: str
    """Volume of the flask's mixture titrated, e.g. "25 mL"."""
    to_text: str
    """Last volume of titrant added, e.g. "50 mL"."""
    track: str = ""
    """A species whose level pX = −log10 a(X) is plotted instead of the pH (e.g. "Ca^2+"), or ""."""

    @property
    def level_name(self) -> str:
        """What the y axis shows: "pH", or the followed species' level ("pCa")."""
        return p_label(self.track.strip()) if self.track.strip() else "pH"

    def titrant(self, mixture: chem.Mixture, library: chem.Library | None = None) -> chem.Reagent:
        """The titrant reagent; raises :class:`chem.ChemError` with a one-line message."""
        if not self.titrant_name.strip():
            raise chem.CurveError("titrant: give a reagent name, e.g. NaOH")
        return chem.find_reagent(self.titrant_name.strip(), mixture, library)

    def titrant_conc(self, titrant: chem.Reagent | None) -> float:
        """Stock concentration, mol/L (mass units need the titrant's molar mass)."""
        conc = chem.parse_concentration(self.titrant_conc_text,
                                        molar_mass=None if titrant is None else titrant.molar_mass)
        if not conc > 0:
            raise chem.CurveError(f"stock concentration: must be more than zero "
                                    f"(got '{self.titrant_conc_text.strip()}')")
        return conc

    def sample_volume(self) -> float:
        """Sample volume, L."""
        return _positive_volume(self.sample_text, "sample volume")

    def to_volume(self) -> float:
        """Last titrant volume, L."""
        return _positive_volume(self.to_text, "titrate up to")

    def resolve(self, mixture: chem.Mixture,
                library: chem.Library | None = None) -> tuple[chem.Reagent, float, float, float]:
        """(titrant, stock mol/L, sample L, last volume L); raises :class:`chem.ChemError`."""
        titrant = self.titrant(mixture, library)
        return titrant, self.titrant_conc(titrant), self.sample_volume(), self.to_volume()


def default_titration(result: chem.Equilibrium) -> TitrationSettings:
    """0.1 M NaOH into 25 mL of the mixture up to 50 mL; HCl instead when the mixture is basic.

    Basic means above neutral water at the mixture's temperature (pKw/2: 7.00 at 25 °C, 6.81 at 37 °C).
    """
    titrant = "NaOH" if result.pH <= neutral_ph(result.mixture.temperature_c) else "HCl"
    return TitrationSettings(titrant, DEFAULT_TITRANT_CONC, DEFAULT_SAMPLE, DEFAULT_TO)


@dataclass(frozen=True)
class SweepSettings:
    """A sweep as the user typed it: what varies (an ingredient, "temperature" or a gas), from, to, points,
    and what is plotted (the pH, or the saturation index of every candidate solid)."""

    vary: str
    """Ingredient name (reagent name, alias or formula), "temperature", or a gas (e.g. "CO2")."""
    from_text: str
    """Start: an amount ("0 mM"), a temperature ("5", "5 °C") or a gas pressure ("0", "420 uatm", "1 %")."""
    to_text: str
    points: int = DEFAULT_SWEEP_POINTS
    show: str = "pH"
    """What the plot shows: "pH", or "SI" (saturation index of every candidate solid)."""

    @property
    def is_temperature(self) -> bool:
        return self.vary.strip().casefold() == "temperature"

    def gas(self, mixture: chem.Mixture) -> chem.Gas | None:
        """The gas whose partial pressure varies (held over the solution at each value), or None."""
        return None if self.is_temperature else chem.gas_named(mixture, self.vary.strip())

    def ingredient(self, mixture: chem.Mixture) -> chem.Ingredient:
        """The ingredient that varies; raises :class:`chem.ChemError` if the mixture has none by that name."""
        return mixture.ingredients[chem.ingredient_index(mixture, self.vary)]

    def value(self, text: str, mixture: chem.Mixture, what: str) -> float:
        """One end of the range: mol/L of the ingredient, °C (checked against the model's range) or atm."""
        if self.is_temperature:
            return read_celsius(text, what)             # chem's reading, range and message
        if self.gas(mixture) is not None:
            return chem.parse_pressure(text, allow_zero=True)
        reagent = self.ingredient(mixture).reagent
        return chem.parse_concentration(text, molar_mass=reagent.molar_mass)

    def check_points(self) -> int:
        """``points``, if it is a whole number in the range a sweep may ask for."""
        if isinstance(self.points, bool) or not isinstance(self.points, int) or \
                not 2 <= self.points <= MAX_SWEEP_POINTS:
            raise chem.CurveError(f"points must be a whole number from 2 to {MAX_SWEEP_POINTS} "
                                    f"(got {self.points!r})")
        return self.points

    def resolve(self, mixture: chem.Mixture) -> tuple[str, np.ndarray]:
        """(what varies, for :func:`chem.sweep`, and the values); raises :class:`chem.ChemError`."""
        gas = self.gas(mixture)
        vary = ("temperature" if self.is_temperature else gas.name if gas is not None
                else self.ingredient(mixture).reagent.name)
        lo = self.value(self.from_text, mixture, "from")
        hi = self.value(self.to_text, mixture, "to")
        if not hi > lo:
            raise chem.CurveError(f"'from' must be below 'to' (got {self.from_text.strip()} and "
                                    f"{self.to_text.strip()})")
        return vary, np.linspace(lo, hi, self.check_points())


def default_sweep(mixture: chem.Mixture, vary: str | None = None) -> SweepSettings:
    """The default sweep of ``vary`` (default: the first ingredient, or the temperature in an empty flask).

    An ingredient runs from none to twice its amount; the temperature from 5 to 50 °C; a gas from
    none to twice the pressure it is held at (:data:`DEFAULT_GAS_TOP` when it is not held).
    """
    names = [i.reagent.name for i in mixture.ingredients]
    if vary is None:
        vary = names[0] if names else "temperature"
    if vary.strip().casefold() == "temperature":
        return SweepSettings("temperature", *DEFAULT_T_RANGE)
    gas = chem.gas_named(mixture, vary.strip())
    if gas is not None:
        held = next((g.pressure_atm for g in mixture.gases if g.gas.name == gas.name), None)
        return SweepSettings(gas.name, "0", DEFAULT_GAS_TOP if held is None else f"{2 * held:.3g} atm")
    ingredient = mixture.ingredients[chem.ingredient_index(mixture, vary)]
    top = chem.format_molar(2 * ingredient.conc) if ingredient.conc > 0 else DEFAULT_AMOUNT_TOP
    return SweepSettings(ingredient.reagent.name, "0", top)


# --------------------------------------------------------------------------
# axes
# --------------------------------------------------------------------------


def _multiples(lo: float, hi: float, step: float) -> list[float]:
    """The multiples of ``step`` in [lo, hi], rounded to clean decimals."""
    first = math.ceil(lo / step - 1e-9)
    last = math.floor(hi / step + 1e-9)
    return [float(f"{k * step:.10g}") for k in range(first, last + 1)]


def ticks_within(lo: float, hi: float, most: int) -> list[float]:
    """Round tick positions inside [lo, hi], at most ``most`` + 1 of them."""
    return _multiples(lo, hi, _step(hi - lo, most))


def widened(lo: float, hi: float, most: int) -> tuple[tuple[float, float], list[float]]:
    """[lo, hi] widened out to round ticks (about ``most`` intervals), and those ticks."""
    step = _step(hi - lo, most)
    ticks = _multiples(step * math.floor(lo / step + 1e-9), step * math.ceil(hi / step - 1e-9), step)
    return (ticks[0], ticks[-1]), ticks


def ph_axis(values: np.ndarray, most: int) -> tuple[tuple[float, float], list[float]]:
    """A y range for pH values, widened to round ticks and at least :data:`MIN_PH_SPAN` wide, and its ticks."""
    finite = values[np.isfinite(values)]
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (PH_MIN, PH_MAX)
    if hi - lo < MIN_PH_SPAN:
        mid = 0.5 * (lo + hi)
        lo, hi = mid - MIN_PH_SPAN / 2, mid + MIN_PH_SPAN / 2
    return widened(lo, hi, most)


# --------------------------------------------------------------------------
# drawing
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class Mark:
    """A vertical line at ``x`` in the guide colour, labelled at the top of the plot."""

    x: float
    label: str


def _legend_rows(request: PlotRequest) -> int:
    """Legend lines a plot of this height can spare (the canvas keeps at least 7 rows)."""
    return max(1, min(3, (request.height - 7) // 4 + 1))


def _fit(pieces: Sequence[tuple[str, RGB | None]], width: int) -> LegendLine:
    """One legend line cut to ``width`` cells (an ellipsis marks the cut)."""
    out, used = [], 0
    for text, rgb in pieces:
        if used + len(text) > width:
            out.append((text[: max(width - used - 1, 0)] + "…", rgb))
            break
        out.append((text, rgb))
        used += len(text)
    return tuple(out)


def _notes(first: LegendLine, notes: Sequence[str], request: PlotRequest) -> tuple[LegendLine, ...]:
    """The series line, then ``notes`` joined by " · " into as many lines as the height allows."""
    width, room = request.width, _legend_rows(request) - 1
    if not room:                                 # one line: the notes matter more than the series name
        return (_fit((first[0], (" " + " · ".join(notes), None)), width),) if notes else (_fit(first, width),)
    packed: list[str] = []
    for note in notes:
        if packed and (len(packed) == room or len(packed[-1]) + 3 + len(note) <= width):
            packed[-1] += f" · {note}"                 # the last line allowed takes the rest (cut to fit)
        else:
            packed.append(note)
    return (_fit(first, width), *(_fit(((line, None),), width) for line in packed))


def _say(text: str, request: PlotRequest) -> str:
    """``text`` as the terminal can show it (ASCII spelling when it lacks UTF-8)."""
    return text.translate(_ASCII_TEXT) if request.style.ascii else text


def _ascii_drawing(drawing: Drawing) -> Drawing:
    return Drawing(drawing.canvas.translate(_ASCII_TEXT),
                   tuple(tuple((text.translate(_ASCII_TEXT), rgb) for text, rgb in line) for line in drawing.legend),
                   drawing.note)


def _series_line(request: PlotRequest, text: str) -> LegendLine:
    style = request.style
    return ((style.legend_symbol(0), style.color(0)), (f" {text}", None))


def draw_xy(x: np.ndarray, y: np.ndarray, request: PlotRequest, *, xlabel: str, ylabel: str,
            xlim: tuple[float, float], xticks: Sequence[float], xtick_label: Callable[[float], str],
            ylim: tuple[float, float], yticks: Sequence[float], legend: tuple[LegendLine, ...],
            marks: Sequence[Mark] = (), log_x: bool = False) -> Drawing:
    """Draw one curve ``y(x)`` with labelled vertical marks; legend lines below the axes.

    Args:
        x: Abscissae (all > 0 when ``log_x``).
        y: Values, clipped to ``ylim``.
        request: Size and style; the legend's lines come out of its height.
        xlabel: Label of the x axis.
        ylabel: Label of the y axis.
        xlim: x axis range.
        xticks: Tick positions on the x axis.
        xtick_label: Text of each x tick.
        ylim: y axis range.
        yticks: Tick positions on the y axis.
        legend: Lines under the plot.
        marks: Vertical lines (equivalence points, the current value).
        log_x: Logarithmic x axis.

    Returns:
        The plot and its legend, together at most ``request`` in size.
    """
    from plotext._figure import _figure_class  # noqa: PLC0415 - deferred: 35 ms, only needed in the worker

    style, width = request.style, request.width
    height = request.height - len(legend)
    fig = _figure_class()
    fig.plotsize(width, height)
    fig._set_size(width, height)
    fig.theme("clear")

    def to_plot(v):                                  # positions as the axis spaces them
        return np.log10(v) if log_x else np.asarray(v, dtype=float)

    def from_plot(v):
        return 10.0 ** v if log_x else v

    p_lo, p_hi = (float(v) for v in to_plot(np.array(xlim)))
    ok = np.isfinite(y)
    px, py = simplify(to_plot(x[ok]), np.clip(y[ok], *ylim), (p_hi - p_lo) / (2 * width),
                      (ylim[1] - ylim[0]) / (4 * height))
    fig.plot(from_plot(px), py, marker=style.marker(0), color=style.color(0))
    if log_x:
        fig.xscale("log")
    fig.xlim(p_lo, p_hi)                             # plotext takes log limits on a log axis
    fig.ylim(*ylim)
    fig.xticks(list(xticks), [xtick_label(t) for t in xticks])
    fig.yticks(list(yticks), [f"{t:g}" for t in yticks])
    fig.xlabel(_say(xlabel, request))
    fig.ylabel(_say(ylabel, request))
    pad = 0.01 * (p_hi - p_lo)
    for mark in marks:
        at = float(to_plot(np.array(mark.x)))
        if not p_lo <= at <= p_hi:
            continue
        fig.vline(mark.x, style.guide)
        right = at > p_lo + 0.7 * (p_hi - p_lo)
        fig.text(_say(mark.label, request), x=float(from_plot(at - pad if right else at + pad)), y=ylim[1],
                 color=style.guide, alignment="right" if right else "left")
    out = figure_text(fig).rstrip("\n")
    if style.ascii:
        out = out.translate(_BOX_TO_ASCII)
    return Drawing(out, legend)


def _unconverged(flags: np.ndarray, no_solution: np.ndarray | None = None) -> list[str]:
    none = 0 if no_solution is None else int(no_solution.sum())
    bad = int((~flags).sum()) - none
    notes = [f"{bad} point{'s' * (bad != 1)} did not converge (unreliable)"] if bad else []
    if none:
        notes.append(f"{none} point{'s' * (none != 1)} left out: no solution there "
                     f"(a free ion would pass {chem.PINNED_ACTIVITY_MAX:g} mol/L)")
    return notes


def _x_ticks(request: PlotRequest, lo: float, hi: float, label_width: int) -> list[float]:
    return ticks_within(lo, hi, max(2, request.width // (label_width + 6)))


def _y_most(canvas_rows: int) -> int:
    """Most y intervals for a canvas this tall (a tick every third row or more)."""
    return max(2, canvas_rows // 3)


def _still_wanted(_fraction: float) -> bool:
    """``progress`` for chem's curves: stop computing once the worker asking was cancelled."""
    try:
        return not get_current_worker().is_cancelled
    except NoActiveWorker:
        return True


# --------------------------------------------------------------------------
# the kinds
# --------------------------------------------------------------------------

def build_titration(result: chem.Equilibrium, request: PlotRequest,
                    settings: TitrationSettings | None = None) -> Drawing:
    """pH (or a followed species' pX) vs titrant added, each equivalence point marked and listed under the plot.

    With ``settings.track`` (e.g. "Ca^2+", a complexometric titration) the y axis is that
    species' level pX = −log10 a(X) and the equivalence points are those found on it by chem.
    """
    settings = settings or default_titration(result)
    mixture = result.mixture
    titrant, conc, sample, to = settings.resolve(mixture)
    track = settings.track.strip() or None
    level = settings.level_name
    n = grid_points(request.width)
    curve = chem.titration(mixture, titrant, conc, sample, to, points=n,
                           max_points=max(n, MAX_TITRATION_POINTS), track=track, progress=_still_wanted)
    y = curve.level if track else curve.pH
    eqp = curve.equivalence_points
    many = len(eqp) > 1
    marks = [Mark(e.volume_mL, f"EP{i + 1}" if many else "EP") for i, e in enumerate(eqp)]
    notes = [f"{'EP' + str(i + 1) if many else 'equivalence'} {e.volume_mL:.3f} mL, "
             + (f"{level} {e.level:.2f} (pH {e.pH:.2f})" if track else f"pH {e.pH:.2f}")
             for i, e in enumerate(eqp)] or [f"no clear equivalence point up to {settings.to_text.strip()}"]
    notes += _unconverged(curve.converged)
    first = _series_line(request, f"{level} · {settings.titrant_conc_text.strip()} {titrant.name} into "
                                  f"{settings.sample_text.strip()}")
    legend = _notes(first, notes, request)
    x = np.asarray(curve.x)
    ylim, yticks = ph_axis(y, _y_most(request.height - len(legend)))
    return draw_xy(x, y, request, xlabel="titrant added (mL)", ylabel=level,
                   xlim=(float(x[0]), float(x[-1])), xticks=_x_ticks(request, float(x[0]), float(x[-1]), 5),
                   xtick_label=lambda t: f"{t:g}", ylim=ylim, yticks=yticks, legend=legend, marks=marks)


def build_capacity(result: chem.Equilibrium, request: PlotRequest) -> Drawing:
    """Buffer capacity β vs pH, with a line at the current pH and β there under the plot.

    The y axis is scaled to the buffering between pH 3 and 11 (and the current pH): near pH 0
    and 14 water's own β grows to about 2 M/pH and runs off the top, else it would flatten
    the buffer's peaks to nothing.
    """
    grid = ph_grid(grid_points(request.width))
    cap = chem.buffer_capacity(result.mixture, grid, progress=_still_wanted)
    here = chem.buffer_capacity_at(result)
    shown = float(f"{here:.3g}")                     # three digits are all a reader needs
    notes = [f"β {chem.format_molar(shown)}/pH at pH {result.pH:.2f}", *_unconverged(cap.converged)]
    note_line = _fit(((" · ".join(notes), None),), request.width)
    inner = replace(request, height=request.height - 1)
    middle = cap.beta[(cap.pH >= SCALE_PH[0]) & (cap.pH <= SCALE_PH[1]) & np.isfinite(cap.beta)]
    top_value = max(float(middle.max()) if middle.size else 0.0, here)
    top_value = top_value if top_value > 0 else 1e-3
    ylim, yticks = widened(0.0, top_value, _y_most(inner.height - 2))
    drawing = draw(cap.pH, [("β, buffer capacity", cap.beta)], result.pH, inner, ylabel=_say("β (M/pH)", request),
                   ylim=ylim, yticks=yticks)
    return Drawing(drawing.canvas, drawing.legend + (note_line,))


def build_sweep(result: chem.Equilibrium, request: PlotRequest, settings: SweepSettings | None = None) -> Drawing:
    """pH vs the amount of one ingredient, or vs the temperature, with a line at the current value."""
    mixture = result.mixture
    settings = settings or default_sweep(mixture)
    vary, values = settings.resolve(mixture)
    gas = settings.gas(mixture)
    curve = chem.sweep(mixture, vary, values, progress=_still_wanted)
    x = np.asarray(curve.x)
    lo, hi = float(x[0]), float(x[-1])
    if settings.is_temperature:
        now, xlabel, label, label_width = mixture.temperature_c, "temperature (°C)", lambda t: f"{t:g}", 4
        now_text = f"now {now:g} °C"
    elif gas is not None:
        held = next((g for g in mixture.gases if g.gas.name == gas.name), None)
        state = next((g for g in result.gases if g.name == gas.name), None)
        now = held.pressure_atm if held is not None else state.pressure_atm if state is not None else math.nan
        xlabel, label, label_width = f"{gas.name} partial pressure (atm)", lambda t: f"{t:g}", 7
        now_text = f"{'held' if held is not None else 'now'} {now:.3g} atm"
    else:
        now = settings.ingredient(mixture).conc
        xlabel, label, label_width = vary, chem.format_molar, 8
        now_text = f"now {chem.format_molar(now)}"
    if settings.show == "SI":
        return _sweep_saturation(curve, request, xlabel=xlabel, xlim=(lo, hi),
                                 xticks=_x_ticks(request, lo, hi, label_width), xtick_label=label,
                                 mark=Mark(now, now_text))
    notes = [f"pH {curve.pH[0]:.3f} at {settings.from_text.strip()}, {curve.pH[-1]:.3f} at "
             f"{settings.to_text.strip()}", *_unconverged(curve.converged)]
    legend = _notes(_series_line(request, f"pH as {vary} varies"), notes, request)
    ylim, yticks = ph_axis(curve.pH, _y_most(request.height - len(legend)))
    return draw_xy(x, curve.pH, request, xlabel=xlabel, ylabel="pH", xlim=(lo, hi),
                   xticks=_x_ticks(request, lo, hi, label_width), xtick_label=label, ylim=ylim, yticks=yticks,
                   legend=legend, marks=[Mark(now, now_text)])


def _sweep_saturation(curve, request: PlotRequest, *, xlabel: str, xlim: tuple[float, float],
                      xticks: Sequence[float], xtick_label: Callable[[float], str], mark: Mark) -> Drawing:
    """The saturation index of every candidate solid along a sweep, SI = 0 drawn as a line."""
    from tui.widgets.line_plot import draw_lines, index_axis   # noqa: PLC0415 - imports this module

    if not curve.solids:
        return Drawing("No solid can form from this mixture's systems: no saturation index to show.\n"
                       "Press v and show the pH instead.", note=True)
    series = [(name, curve.saturation[:, k]) for k, name in enumerate(curve.solids)]
    ylim, yticks = index_axis([v for _, v in series], _y_most(request.height - 4), SI_SPAN)
    shown = [(name, v) for name, v in series if np.nanmax(v) > ylim[0]]
    notes = ["SI = log(IAP/Ksp); above 0 supersaturated"]
    if len(shown) < len(series):
        hidden = len(series) - len(shown)
        notes.append(f"{hidden} solid{'s' * (hidden != 1)} below SI {ylim[0]:g} not drawn")
    notes += _unconverged(curve.converged)
    return draw_lines(np.asarray(curve.x), shown, request, xlabel=_say(xlabel, request), xlim=xlim, xticks=xticks,
                      xtick_label=xtick_label, ylabel="SI", ylim=ylim, yticks=yticks,
                      marks=[Mark(mark.x, _say(mark.label, request))] if math.isfinite(mark.x) else [],
                      hlines=(0.0,), notes=notes)


def build_dilution(result: chem.Equilibrium, request: PlotRequest) -> Drawing:
    """pH vs dilution factor with water, on a logarithmic axis from undiluted to 1000-fold."""
    curve = chem.dilution(result.mixture, np.logspace(0.0, math.log10(DILUTION_TO), grid_points(request.width)),
                          progress=_still_wanted)
    x = np.asarray(curve.x)
    notes = [f"pH {curve.pH[0]:.3f} undiluted, {curve.pH[-1]:.3f} at {DILUTION_TO:g}-fold",
             *_unconverged(curve.converged)]
    legend = _notes(_series_line(request, "pH on dilution with water"), notes, request)
    ylim, yticks = ph_axis(curve.pH, _y_most(request.height - len(legend)))
    decades = [10.0 ** k for k in range(0, int(round(math.log10(DILUTION_TO))) + 1)]
    return draw_xy(x, curve.pH, request, xlabel="dilution factor (log scale)", ylabel="pH",
                   xlim=(1.0, DILUTION_TO), xticks=decades, xtick_label=lambda t: f"{t:g}", ylim=ylim,
                   yticks=yticks, legend=legend, log_x=True)


def _guarded(build: Callable[[chem.Equilibrium, PlotRequest], Drawing]) -> Callable[
        [chem.Equilibrium, PlotRequest], Drawing]:
    """``build`` with chem's one-line errors (bad settings, ...) drawn as a note instead of raised."""

    def run(result: chem.Equilibrium, request: PlotRequest) -> Drawing:
        try:
            drawing = build(result, request)
        except chem.ChemError as exc:
            text = "\n".join(textwrap.wrap(str(exc), request.width) + ["Press v to change the curve's settings."])
            drawing = Drawing(text, note=True)
        except chem.Cancelled:
            drawing = Drawing("cancelled", note=True)
        return _ascii_drawing(drawing) if request.style.ascii else drawing

    return run


def titration_kind(settings: TitrationSettings | None = None) -> PlotKind:
    """pH vs titrant added (None: :func:`default_titration` of the mixture on display)."""
    title = "titration" if settings is None else f"titration with {settings.titrant_name.strip()}"
    if settings is not None and settings.track.strip():
        title += f" · {settings.level_name}"
    return PlotKind("titration", title, _guarded(lambda r, q: build_titration(r, q, settings)))


def capacity_kind() -> PlotKind:
    """Buffer capacity β vs pH."""
    return PlotKind("capacity", "buffer capacity vs pH", _guarded(build_capacity))


def sweep_kind(settings: SweepSettings | None = None) -> PlotKind:
    """pH vs one ingredient's amount or the temperature (None: :func:`default_sweep`)."""
    what = "SI" if settings is not None and settings.show == "SI" else "pH"
    title = "pH sweep" if settings is None else f"{what} vs {settings.vary.strip()}"
    return PlotKind("sweep", title, _guarded(lambda r, q: build_sweep(r, q, settings)))


def dilution_kind() -> PlotKind:
    """pH vs dilution factor."""
    return PlotKind("dilution", "pH vs dilution", _guarded(build_dilution))


def curve_kinds(titration: TitrationSettings | None = None,
                sweep: SweepSettings | None = None) -> tuple[PlotKind, ...]:
    """The four curve kinds with these settings, in the order the chart cycles through them."""
    return titration_kind(titration), capacity_kind(), sweep_kind(sweep), dilution_kind()

