"""The full-screen explorer: a flask of reagents, solved live.

Data flows one way. An edit makes a new :class:`chem.Mixture`; the app keeps
it in :attr:`ExplorerApp.mixture` and hands it down to the widgets. A thread
worker solves it and builds the plot text, then posts :class:`Solved` and
:class:`Plotted` back; each carries the generation of its request, and only the
newest is shown. Widgets draw; only :mod:`chem` computes.
"""

from __future__ import annotations

import asyncio
import contextlib
import gc
import os
import signal
import sys
import time
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Iterable

from rich.style import Style

from textual import events, on, work
from textual.app import App, ComposeResult, SystemCommand
from textual.binding import Binding
from textual.containers import Horizontal
from textual.notifications import SeverityLevel
from textual.reactive import var
from textual.screen import Screen
from textual.theme import Theme
from textual.timer import Timer
from textual.widget import MountError
from textual.widgets import Footer, Input, Static
from textual.worker import Worker, WorkerCancelled, WorkerFailed, WorkerState, get_current_worker

import chem
from chem import ACTIVITY_MODELS as MODELS
from tui import storage
from tui.fit_actions import FitActions
from tui.speciation_actions import SpeciationActions
from tui.messages import AutosaveWritten, Plotted, Solved
from tui.plot_actions import PlotActions
from tui.text import one_line
from tui.widgets.flask_list import FlaskList
from tui.widgets.notice_bar import NoticeBar
from tui.widgets.phase_panel import PhasePanel
from tui.widgets.plot_area import PlotArea, prepare
from tui.widgets.plot_kinds import PLOT_KINDS, PlotKind, PlotRequest, PlotStyle, draw_kind, locale_is_utf8
from tui.widgets.readout import Readout
from tui.widgets.species_table import SpeciesTable
from tui.widgets.title_bar import TitleBar

if TYPE_CHECKING:
    from tui.widgets.curve_kinds import SweepSettings, TitrationSettings


def _curves():
    """The curve plot kinds module, imported on first use (the first frame does not need it)."""
    from tui.widgets import curve_kinds

    return curve_kinds


#: Amount nudges: a coarse and a fine factor per key press.
NUDGE_FACTORS = (1.25, 1.05)
#: Temperature nudge per key press, °C.
TEMPERATURE_STEP = 1.0
#: Undo steps kept.
HISTORY_LIMIT = 500
#: Seconds after the last edit before the session is autosaved.
AUTOSAVE_DELAY_S = 0.3
#: A plot that took longer than this (s) to draw no longer holds back the numbers of the next edit.
SLOW_PLOT_S = 0.025
#: While an entry has the focus, a finished solve or plot is shown this much later (s): a repaint of
#: the panels just before a keystroke made the frame that echoes it wait for the next frame slot.
TYPING_DEFER_S = 1 / 60
#: Smallest terminal the four panels fit in (columns, rows); below it a notice asks for a larger window.
MIN_SIZE = (60, 16)

NIGHT = Theme(
    name="protomix-night", dark=True,
    primary="#3DB8A9", secondary="#D9A441", accent="#C792EA",
    warning="#E8B04B", error="#EF6461", success="#6CCB8A",
    foreground="#DCE3E8", background="#0E1417", surface="#141C21", panel="#1B262C",
)
DAY = Theme(
    name="protomix-day", dark=False,
    primary="#12766B", secondary="#8C5A00", accent="#7A3FB5",
    warning="#8A5200", error="#B3261E", success="#2E7D32",
    foreground="#1E2A30", background="#F2EFE7", surface="#FBF9F3", panel="#E4DFD2",
)


@dataclass(frozen=True)
class Command:
    """One user action: its key, what the footer and palette call it, and a line of help."""

    key: str
    action: str
    label: str
    help: str
    footer: bool = False
    key_display: str | None = None


#: Every explorer action. The key bindings and the command palette are both built from this list;
#: keys handled by the flask panel itself (edit, nudge by arrow) are listed for the palette only.
COMMANDS: tuple[Command, ...] = (
    Command("f1,question_mark", "help", "Help", "Every key and what each panel shows", True, "F1"),
    Command("n", "add", "Add", "Add a reagent from the library (filter as you type)", True),
    Command("", "edit_amount", "Edit amount", "Type a new amount for the selected ingredient (enter)"),
    Command("x,delete", "remove", "Remove", "Remove the selected ingredient", True),
    Command("plus,equals_sign", "nudge(1, 0)", "More", "Selected amount ×1.25 (→ in the flask)",
            key_display="+"),
    Command("minus", "nudge(-1, 0)", "Less", "Selected amount ÷1.25 (← in the flask)", key_display="-"),
    Command("", "nudge(1, 1)", "A little more", "Selected amount ×1.05 (shift+→ in the flask)"),
    Command("", "nudge(-1, 1)", "A little less", "Selected amount ÷1.05 (shift+← in the flask)"),
    Command("t", "temperature(1)", "Warmer", "Temperature +1 °C"),
    Command("T", "temperature(-1)", "Cooler", "Temperature -1 °C"),
    Command("m", "cycle_model", "Model", "Cycle the activity model (ideal, davies, extended-dh)"),
    Command("c", "custom", "Custom", "Define an acid–base species of your own and add it"),
    Command("p", "pin", "Pin", "Pin this state; show changes against it (again: unpin)", True),
    Command("u,ctrl+z", "undo", "Undo", "Undo the last edit", True),
    Command("r,ctrl+y", "redo", "Redo", "Redo the edit just undone"),
    Command("g", "next_plot", "Plot", "Switch the plot (fractions, log C, titration, buffer capacity, sweep, "
            "dilution, forms of a system, solubility, saturation)", True),
    Command("v", "curve_setup", "Curve", "Set up the plot shown in the chart (titration, sweep, system, solid, "
            "pH range)"),
    # -- plots of full speciation, pH held at each point (tui/plot_actions.py): palette only ---------
    Command("", "show_plot('forms')", "Plot forms of a system",
            "Every species, complex and solid holding one system (a metal, a ligand) vs pH, as shares"),
    Command("", "show_plot('solubility')", "Plot solubility of a solid",
            "Dissolved totals with an excess of one solid vs pH (solids, precipitation)"),
    Command("", "show_plot('saturation')", "Plot saturation indices",
            "SI of every candidate solid vs pH: which solids could precipitate"),
    Command("", "show_plot('titration')", "Plot titration", "The titration curve (v: titrant, followed species)"),
    Command("", "show_plot('sweep')", "Plot sweep",
            "pH or saturation indices as an amount, the temperature or a gas pressure varies (v sets it up)"),
    Command("b", "recipe", "Recipe", "Design a buffer recipe and load it into the flask"),
    Command("f", "fit", "Fit", "Fit a measured titration (CSV); show its points on the titration plot"),
    Command("i", "uncertainty", "± pH", "Show or hide the uncertainty: ± beside the pH, a band on the titration"),
    Command("a", "plot_scope", "All/one", "Plot all systems or only the selected ingredient's"),
    Command("w", "notices", "Notices", "Explain the current warnings and cautions"),
    Command("s,ctrl+s", "save", "Save", "Save the mixture as a preset", True),
    Command("o,ctrl+o", "open", "Open", "Open a shipped or saved preset", True),
    Command("q", "quit", "Quit", "Quit (asks first if the mixture has unsaved changes)"),
    # -- full speciation: species by system, solids, precipitation, gases (tui/speciation_actions.py) --
    Command("l", "species_view", "Species by system", "List species by system (each form's share of the "
            "system's total) or as one flat list"),
    Command("S", "solids", "Solids and gases", "Show the solids (saturation index, amount precipitated, "
            "which may form) and the gases over the solution, in place of the species"),
    Command("P", "precipitation", "Precipitation", "Precipitation: off, every solid, or the solids chosen "
            "in the solids view (space)"),
    Command("A", "air", "Open to air", "Open the flask to air (CO2 held at its air pressure) or close it"),
    Command("G", "gas", "Hold a gas", "Hold a gas at a partial pressure you type (5 %, 420 uatm, 10 ppm), "
            "or release it"),
)


def _collect_from_now_on() -> None:
    gc.freeze()
    gc.enable()


def _bindings() -> list[Binding]:
    return [Binding(c.key, c.action, c.label, show=c.footer, key_display=c.key_display, tooltip=c.help,
                    id=c.action.split("(")[0].replace("_", "-"))
            for c in COMMANDS if c.key]


class ExplorerApp(SpeciationActions, PlotActions, FitActions, App[int]):
    """The live explorer of one mixture."""

    CSS_PATH = Path(__file__).with_name("app.tcss")
    TITLE = "protomix"
    BINDINGS = _bindings()

    mixture: var[chem.Mixture | None] = var(None, init=False)
    """The mixture in the flask. Replaced by each edit, never mutated."""
    result: var[chem.Equilibrium | None] = var(None, init=False)
    """The solved state of :attr:`mixture` (or of its predecessor while a solve runs)."""
    pinned: var[chem.Equilibrium | None] = var(None, init=False)
    """The state changes are shown against, or None."""
    plot_kind: var[str] = var(PLOT_KINDS[0].id, init=False)
    """Id of the plot on display."""
    plot_all: var[bool] = var(False, init=False)
    """Plot every system (True) or only the selected ingredient's (False)."""
    capacity: var[float | None] = var(None, init=False)
    """Buffer capacity β of :attr:`result` at its pH, mol/(L·pH)."""

    def __init__(self, mixture: chem.Mixture, *, source: str = "", preset_name: str = "",
                 handle_signals: bool = False) -> None:
        """Create the explorer.

        Args:
            mixture: What is in the flask at the start.
            source: Where it came from, for the title bar (e.g. a file name).
            preset_name: Name offered when saving (a user preset's name, or empty).
            handle_signals: Keep the last edit on SIGHUP (the terminal went away) and quit
                cleanly on SIGTERM; for the real program, not for tests.
        """
        super().__init__()
        self._handle_signals = handle_signals
        self.register_theme(NIGHT)
        self.register_theme(DAY)
        self.theme = NIGHT.name
        self.library = chem.load_library()
        self._start = mixture
        self._clean = mixture
        self._source = source
        self._preset_name = preset_name
        self._undo: list[tuple[chem.Mixture, str]] = []
        self._redo: list[tuple[chem.Mixture, str]] = []
        self._generation = 0
        self._plot_seconds = 0.0                            # how long the last plot took to draw
        self._autosave: storage.Autosave | None = None      # this session's own autosave (None: off)
        self._autosave_on = False
        self._autosave_timer: Timer | None = None           # a write is due when it fires
        self._autosave_sequence = 0                         # orders the writes (newest edit wins)
        self._autosave_failing: str | None = None           # the last write's problem, said once
        self._orphans: list[storage.Orphan] = []            # autosaves of ended sessions, still to offer
        self._offering: storage.Orphan | None = None        # the one being asked about
        self._enabled: tuple[bool, ...] = ()
        self._utf8 = locale_is_utf8()
        self._titration: TitrationSettings | None = None   # None: default_titration(result)
        self._sweep: SweepSettings | None = None           # None: default_sweep(mixture)

    # -- layout ------------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        yield TitleBar(id="title-bar")
        with Horizontal(id="upper"):
            yield FlaskList(self._start, id="flask")
            yield Readout(utf8=self._utf8, id="readout").data_bind(ExplorerApp.result, ExplorerApp.pinned,
                                                                   ExplorerApp.capacity)
        with Horizontal(id="lower"):
            yield SpeciesTable(utf8=self._utf8, id="species").data_bind(ExplorerApp.result, ExplorerApp.pinned)
            yield PhasePanel(self.library.gases, utf8=self._utf8, id="solids").data_bind(ExplorerApp.result,
                                                                                        ExplorerApp.pinned)
            yield PlotArea(id="chart")
        yield NoticeBar(id="notices").data_bind(ExplorerApp.result)
        yield Static("", id="too-small")

    def on_mount(self) -> None:
        self.query_one("#flask").border_title = "Flask"
        self.query_one("#readout").border_title = "Readout"
        self.query_one("#species").border_title = "Species"
        self.query_one("#solids").border_title = "Solids and gases"
        self.query_one("#solids").border_subtitle = "space form/hold · enter pressure"
        self.theme_changed_signal.subscribe(self, lambda _theme: self._recompute())
        # The first solve takes about a millisecond: do it here, so the very first frame shows the pH
        # (the worker then only draws the plot).
        self.result = chem.solve(self._start)
        self.capacity = chem.buffer_capacity_at(self.result) if self.result.converged else None
        self.mixture = self._start
        self.query_one(FlaskList).focus()
        if self._handle_signals:
            self._catch_signals()
        self._start_storage()
        # The key bar takes ~70 ms to build: add it after the first frame, so the pH shows sooner.
        self.call_after_refresh(self._finish_start)

    async def _finish_start(self) -> None:
        try:
            await self.screen_stack[0].mount(Footer(compact=True))
        except MountError:                              # quit before the first frame: nothing to finish
            return
        self.screen_stack[0].refresh_bindings()         # the footer fills itself on this signal
        # Everything built so far lives as long as the app: keep it out of the garbage collector's
        # sweeps, which otherwise add tens of ms to an occasional keystroke. The entry point turns
        # the collector off for the start-up; from here on it runs.
        self.call_after_refresh(_collect_from_now_on)

    def on_unmount(self) -> None:
        # Ended some other way than quitting (a crash, a signal): keep the last edit, and leave the
        # autosave for the next session to offer.
        self.flush_autosave()
        if self._autosave is not None:
            self._autosave.release()
        self._release_orphans()

    def _catch_signals(self) -> None:
        loop = asyncio.get_running_loop()
        with contextlib.suppress(AttributeError, NotImplementedError, RuntimeError):   # not on every platform
            loop.add_signal_handler(signal.SIGHUP, self._hung_up)
            loop.add_signal_handler(signal.SIGTERM, self._terminated)

    def _hung_up(self) -> None:
        """The terminal went away (a dropped SSH connection): keep the last edit, then end as SIGHUP would."""
        with contextlib.suppress(Exception):
            self.flush_autosave()
        asyncio.get_running_loop().remove_signal_handler(signal.SIGHUP)     # back to the default action
        os.kill(os.getpid(), signal.SIGHUP)

    def _terminated(self) -> None:
        """Asked to end (SIGTERM): keep the last edit and quit, giving the terminal back as it was."""
        with contextlib.suppress(Exception):
            self.flush_autosave()
        self.exit(128 + signal.SIGTERM)

    def on_resize(self, event: events.Resize) -> None:
        main = self.screen_stack[0]
        width, height = event.size
        main.set_class(width >= 110, "-wide")
        main.set_class(height >= 34, "-tall")
        small = width < MIN_SIZE[0] or height < MIN_SIZE[1]
        if small:
            self.query_one("#too-small", Static).update(
                f"The terminal is {width}×{height}: too small.\nEnlarge the window to at least "
                f"{MIN_SIZE[0]}×{MIN_SIZE[1]}.\nKeys still work: s saves, q quits.")
        self._fit_upper()
        was_small = main.has_class("-too-small")
        main.set_class(small, "-too-small")
        if was_small and not small and self.screen is main:
            self.query_one(FlaskList).focus()

    # -- state -------------------------------------------------------------------------------
    @property
    def dirty(self) -> bool:
        """The mixture differs from what was opened or last saved."""
        return self.mixture != self._clean

    def watch_mixture(self, mixture: chem.Mixture) -> None:
        self.query_one(FlaskList).propose(mixture)
        bar = self.query_one(TitleBar)
        bar.heading = mixture.title
        bar.source = self._source
        bar.dirty = self.dirty
        self._recompute()
        if self._autosave_on:
            self._schedule_autosave()
        self._update_keys()

    def watch_pinned(self, pinned: chem.Equilibrium | None) -> None:
        self.query_one(TitleBar).pinned = pinned is not None

    def watch_plot_kind(self) -> None:
        self._recompute()

    def watch_plot_all(self) -> None:
        self._recompute()

    def commit(self, mixture: chem.Mixture, what: str) -> None:
        """Make ``mixture`` current as an undoable edit described by ``what``."""
        if mixture == self.mixture:
            return
        self._undo.append((self.mixture, what))
        del self._undo[:-HISTORY_LIMIT]
        self._redo.clear()
        self.mixture = mixture

    @property
    def selected_index(self) -> int:
        """Index of the ingredient under the flask cursor (may be past the end of an empty flask)."""
        return self.query_one(FlaskList).cursor

    @property
    def selected(self) -> chem.Ingredient | None:
        """The ingredient under the flask cursor, if any."""
        ingredients = self.mixture.ingredients if self.mixture else ()
        return ingredients[self.selected_index] if 0 <= self.selected_index < len(ingredients) else None

    # -- solving and plotting ------------------------------------------------------------------
    @property
    def kinds(self) -> tuple[PlotKind, ...]:
        """Every plot the chart can show, the curve kinds with their current settings."""
        return self.with_overlay(PLOT_KINDS + _curves().curve_kinds(self._titration, self._sweep)
                                 + self.speciation_kinds())

    def _kind(self) -> PlotKind:
        for kind in PLOT_KINDS:                         # the common case, without loading the curves
            if kind.id == self.plot_kind:
                return kind
        return next(k for k in self.kinds if k.id == self.plot_kind)

    def _plot_request(self) -> PlotRequest | None:
        chart = self.query_one(PlotArea)
        size = chart.content_size
        if not size.width or not size.height:
            return None
        system = None
        if not self.plot_all and self.selected is not None and self.selected.reagent.system is not None:
            system = self.selected.reagent.system.name
        style = PlotStyle.for_terminal(dark=self.current_theme.dark, color=not self.no_color, utf8=self._utf8)
        return PlotRequest(self.plot_kind, size.width, size.height, system, style)

    @staticmethod
    def _plot_title(kind: PlotKind, request: PlotRequest) -> str:
        if kind not in PLOT_KINDS:                      # curves are about the whole mixture
            return kind.title
        return f"{kind.title} · {request.system or 'all systems'}"

    def _recompute(self) -> None:
        """Ask for a fresh solve (unless the current result is for this mixture) and plot."""
        if self.mixture is None:
            return
        self._generation += 1
        known = self.result if self.result is not None and self.result.mixture == self.mixture else None
        self._compute(self._generation, self.mixture, known, self._kind(), self._plot_request(),
                      self.query_one(PlotArea).rich_style)

    @work(thread=True, exclusive=True, group="compute", exit_on_error=False, description="solve and plot")
    def _compute(self, generation: int, mixture: chem.Mixture, known: chem.Equilibrium | None,
                 kind: PlotKind, request: PlotRequest | None, base: Style) -> None:
        """Solve (unless ``known``) and draw, then post the answer.

        The numbers and the plot go out in one message, so the screen is painted
        once per edit; the numbers go out alone first when the last plot took
        longer than :data:`SLOW_PLOT_S` to draw.
        """
        worker = get_current_worker()
        pending: Solved | None = None                   # numbers not yet posted
        if known is None:
            result = chem.solve(mixture)
            capacity = chem.buffer_capacity_at(result) if result.converged else None
            if worker.is_cancelled:
                return
            pending = Solved(generation, result, capacity)
            if request is None or self._plot_seconds > SLOW_PLOT_S:
                self.post_message(pending)
                pending = None
        else:
            result = known
        if request is None:
            return
        start = time.perf_counter()
        image = prepare(draw_kind(kind, result, request), request.width, base)
        self._plot_seconds = time.perf_counter() - start
        if worker.is_cancelled:
            return
        plotted = Plotted(generation, image, self._plot_title(kind, request))
        if pending is not None:
            pending.plot = plotted
            self.post_message(pending)
        else:
            self.post_message(plotted)

    def _typing_first(self, message: Solved | Plotted, show) -> bool:
        """Whether to show ``message`` a moment later, so that typing in an entry echoes first."""
        if getattr(message, "_deferred", False) or not isinstance(self.focused, Input):
            return False
        message._deferred = True
        self.set_timer(TYPING_DEFER_S, lambda: show(message))
        return True

    @on(Solved)
    def _show_result(self, message: Solved) -> None:
        if message.generation == self._generation and not self._typing_first(message, self._show_result):
            self.query_one(FlaskList).release()
            self.capacity = message.capacity
            self.result = message.result
            self._update_keys()
            if message.plot is not None:
                message.plot._deferred = True           # shown with the numbers, now
                self._show_plot(message.plot)

    @on(Plotted)
    def _show_plot(self, message: Plotted) -> None:
        if message.generation == self._generation and not self._typing_first(message, self._show_plot):
            self.query_one(FlaskList).release()
            self.query_one(PlotArea).show(message.image, message.title)

    @on(PlotArea.Resized)
    def _plot_resized(self) -> None:
        if self.query_one(PlotArea).image.strips:
            self._recompute()
        else:                                           # the first plot waits for the first frame (pH first)
            self.call_after_refresh(self._recompute)

    @on(FlaskList.Selected)
    def _selection_moved(self) -> None:
        if not self.plot_all:
            self._recompute()
        self._update_keys()

    @on(Worker.StateChanged)
    def _worker_failed(self, event: Worker.StateChanged) -> None:
        if event.state == WorkerState.ERROR:
            error = event.worker.error
            self.notify(f"{event.worker.description} failed: {type(error).__name__}: {error}",
                        title="Background task failed", severity="error", timeout=8)

    # -- autosave and restore ------------------------------------------------------------------
    def _schedule_autosave(self) -> None:
        """Autosave the mixture :data:`AUTOSAVE_DELAY_S` after the last edit.

        Writing after every key press competed with solving and drawing for the
        same interpreter; a hang-up or termination in the meantime writes the
        pending autosave at once (:meth:`flush_autosave`), so nothing is lost.
        """
        if self._autosave_timer is not None:
            self._autosave_timer.stop()
        self._autosave_timer = self.set_timer(AUTOSAVE_DELAY_S, self._autosave_now)

    def _autosave_now(self) -> None:
        self._autosave_timer = None
        if self._autosave is not None and self._autosave_on:
            self._autosave_sequence += 1
            self._autosave_write(self._autosave, self.mixture, self._autosave_sequence)

    def flush_autosave(self) -> bool:
        """Write the autosave now, on the calling thread, unless it already holds the mixture.

        For when the session is about to end: a delayed write still pending, or one
        still running in its worker (the process may not live to finish it). Writes are
        ordered: a worker's older write that finishes later is dropped. Returns True when
        the autosave holds the current mixture.
        """
        if self._autosave_timer is not None:
            self._autosave_timer.stop()
            self._autosave_timer = None
        autosave = self._autosave
        if autosave is None or not self._autosave_on or self.mixture is None:
            return False
        self._autosave_sequence += 1
        try:
            autosave.write(self.mixture, self._autosave_sequence)
        except storage.StorageError as exc:
            self._autosave_problem(str(exc))
            return False
        self._autosave_problem(None)
        return True

    @work(thread=True, exclusive=True, group="autosave", exit_on_error=False, description="autosave")
    def _autosave_write(self, autosave: storage.Autosave, mixture: chem.Mixture, sequence: int) -> None:
        try:
            autosave.write(mixture, sequence)
        except storage.StorageError as exc:
            problem: str | None = str(exc)
        else:
            problem = None
        if problem != self._autosave_failing:          # news: said once (posting never blocks this thread)
            self.post_message(AutosaveWritten(problem))

    @on(AutosaveWritten)
    def _autosave_written(self, message: AutosaveWritten) -> None:
        self._autosave_problem(message.problem)

    def _autosave_problem(self, problem: str | None) -> None:
        """Say once that autosaving failed (``problem``), and once that it works again (None)."""
        if problem == self._autosave_failing or (problem is not None and self._autosave_failing is not None):
            return
        self._autosave_failing = problem
        if problem is None:
            self.notify("Autosave works again.", timeout=4)
        else:
            self.notify(f"Autosave failed: {problem}. Until it works again, an edit is lost if the session "
                        "ends without quitting; save with s.", title="Autosave", severity="error", timeout=15)

    def _start_storage(self) -> None:
        """Claim this session's autosave, tidy up, and offer the autosaves of sessions that ended without quitting.

        Every problem with the data folder or its files ends in one notice; the explorer
        works on without autosave when it must, and says so.
        """
        problems: list[str] = []
        try:
            self._autosave = storage.Autosave.begin()
            self._autosave.holds = self._start          # nothing to keep until the first edit
        except storage.StorageError as exc:
            problems.append(f"Autosave is off: {exc}. Save your work with s.")
        self._autosave_on = self._autosave is not None
        storage.tidy_up()
        try:
            orphans = storage.orphaned_autosaves(self._autosave.path if self._autosave else None)
        except storage.StorageError as exc:
            orphans = []
            if not problems:
                problems.append(f"Autosaved sessions cannot be looked for: {exc}.")
        for orphan in orphans:
            if orphan.mixture is None:
                try:
                    aside = orphan.set_aside()
                except storage.StorageError as exc:
                    problems.append(f"An autosaved session cannot be read ({orphan.problem}); {exc}, "
                                    "so it is left where it is.")
                else:
                    problems.append(f"An autosaved session cannot be read ({orphan.problem}); "
                                    f"it was moved to {aside}.")
            elif orphan.mixture == self._start:          # nothing that the opened file does not hold
                try:
                    orphan.discard()
                except storage.StorageError:
                    orphan.keep()
            else:
                self._orphans.append(orphan)
        if problems:
            self.notify("\n".join(problems), title="Files", severity="warning", timeout=20)
        self._offer_next_orphan()

    def _offer_next_orphan(self) -> None:
        """Ask about the next autosave of a session that ended without quitting (newest first)."""
        if not self._orphans:
            return
        from tui.screens.choice import Choice

        orphan = self._orphans.pop(0)
        self._offering = orphan
        saved = orphan.mixture
        assert saved is not None
        n = len(saved.ingredients)
        what = f"'{saved.title}'" if saved.title else "an untitled mixture"
        stamp = time.localtime(orphan.saved_at)
        when = time.strftime("%H:%M" if stamp[:3] == time.localtime()[:3] else "%Y-%m-%d %H:%M", stamp)
        more = f" ({len(self._orphans)} more after this one.)" if self._orphans else ""
        question = (f"A session ended without quitting; its flask was autosaved at {when}: {what} with {n} "
                    f"ingredient{'s' * (n != 1)} at {saved.temperature_c:g} °C. Restore it?{more}")

        def answer(choice: str) -> None:
            self._offering = None
            if choice == "restore":
                self._restore(orphan)
                return
            if choice == "discard":
                try:
                    orphan.discard()
                except storage.StorageError as exc:
                    orphan.keep()
                    self.notify(str(exc), title="Not discarded", severity="error", timeout=8)
            else:
                orphan.keep()                           # esc: kept, offered again at the next start
            self._offer_next_orphan()

        self.push_screen(Choice(question, [("y", "restore it", "restore"), ("d", "discard it", "discard")],
                                on_escape="keep", escape_label="keep it for later"), answer)

    def _restore(self, orphan: storage.Orphan) -> None:
        """Load an orphaned autosave into the flask; delete it only once this session's autosave holds it."""
        assert orphan.mixture is not None
        self._source = "restored session"
        self.commit(orphan.mixture, "restore the autosaved session")
        if self.flush_autosave():
            try:
                orphan.discard()
            except storage.StorageError:
                orphan.keep()
        else:
            orphan.keep()
        later, self._orphans = self._orphans, []
        for other in later:
            other.keep()
        if later:
            n = len(later)
            self.notify(f"{n} more autosaved session{'s are' if n > 1 else ' is'} kept; "
                        "offered the next time protomix starts.", timeout=8)

    def _release_orphans(self) -> None:
        """Leave every autosave still being offered for a later session."""
        pending = ([self._offering] if self._offering is not None else []) + self._orphans
        self._offering, self._orphans = None, []
        for orphan in pending:
            orphan.keep()

    # -- actions -----------------------------------------------------------------------------
    def _update_keys(self) -> None:
        """Grey out or restore keys in the footer, only when something changed (the footer redraw is costly)."""
        enabled = (self.selected is not None, bool(self._undo), bool(self._redo), self.result is not None)
        if enabled != self._enabled:
            self._enabled = enabled
            self.refresh_bindings()

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        ours = {c.action.split("(")[0] for c in COMMANDS}
        if action not in ours or action == "quit":
            return True
        if self.screen is not self.screen_stack[0]:     # a dialog is open: its keys only
            return False
        if action in ("remove", "nudge", "edit_amount"):
            return self.selected is not None or None
        if action == "undo":
            return bool(self._undo) or None
        if action == "redo":
            return bool(self._redo) or None
        if action in ("pin", "notices", "curve_setup"):
            return self.result is not None or None
        return True

    def action_command_palette(self) -> None:
        """Open the command palette (ctrl+p), guarded against the framework's races (see :mod:`tui.palette`)."""
        from tui.palette import GuardedCommandPalette

        if self.use_command_palette and not GuardedCommandPalette.is_open(self):
            self.push_screen(GuardedCommandPalette(id="--command-palette"))

    def notify(self, message: str, *, title: str = "", severity: SeverityLevel = "information",
               timeout: float | None = None, markup: bool = True) -> None:
        """Show a toast as plain text (every toast goes through here, from any screen or widget).

        Messages quote names, titles and file names from files, so none is read as markup,
        control characters are escaped and each line is kept readable (:mod:`tui.text`).
        """
        text = "\n".join(one_line(line) for line in str(message).split("\n"))
        super().notify(text, title=one_line(title, 80), severity=severity, timeout=timeout, markup=False)

    def get_system_commands(self, screen: Screen) -> Iterable[SystemCommand]:
        yield from super().get_system_commands(screen)
        for c in COMMANDS:
            key = c.key_display or c.key.split(",")[0]
            yield SystemCommand(c.label if c.action != "quit" else "Quit protomix",
                                f"{c.help}" + (f"  [{key}]" if key else ""),
                                lambda action=c.action: self.run_action(action))

    def action_help(self) -> None:
        from tui.screens.help_screen import HelpScreen

        self.push_screen(HelpScreen())

    def action_add(self) -> None:
        from tui.screens.finder import IngredientFinder

        def add(ingredient: chem.Ingredient | None) -> None:
            if ingredient is not None:
                self.commit(self.mixture.with_ingredient(ingredient), f"add {ingredient.reagent.name}")
                self.query_one(FlaskList).select(-1)

        self.push_screen(IngredientFinder(self.library), add)

    async def action_edit_amount(self) -> None:
        flask = self.query_one(FlaskList)
        flask.focus()
        await flask.action_edit()

    @on(FlaskList.AmountEntered)
    def _amount_entered(self, message: FlaskList.AmountEntered) -> None:
        ingredient = self.mixture.ingredients[message.index]
        self._replace(message.index, ingredient, message.conc, message.text,
                      f"{ingredient.reagent.name} to {message.text}")

    def _replace(self, index: int, ingredient: chem.Ingredient, conc: float, text: str | None, what: str) -> None:
        try:
            changed = ingredient.with_conc(conc, text)
        except chem.ChemError as exc:
            self.notify(str(exc), title="Amount not changed", severity="warning")
            return
        self.commit(self.mixture.with_replaced(index, changed), what)

    def action_remove(self) -> None:
        ingredient = self.selected
        if ingredient is not None:
            self.commit(self.mixture.without(self.selected_index), f"remove {ingredient.reagent.name}")

    def action_nudge(self, direction: int, fine: int) -> None:
        ingredient = self.selected
        if ingredient is None:
            return
        factor = NUDGE_FACTORS[1 if fine else 0] ** direction
        self._replace(self.selected_index, ingredient, ingredient.conc * factor, None,
                      f"{'raise' if direction > 0 else 'lower'} {ingredient.reagent.name}")

    def action_temperature(self, step: int) -> None:
        try:
            mixture = self.mixture.with_temperature(self.mixture.temperature_c + step * TEMPERATURE_STEP)
        except chem.ChemError as exc:
            self.notify(str(exc), title="Temperature not changed", severity="warning")
            return
        self.commit(mixture, f"temperature to {mixture.temperature_c:g} °C")

    def action_cycle_model(self) -> None:
        model = MODELS[(MODELS.index(self.mixture.activity) + 1) % len(MODELS)]
        self.commit(self.mixture.with_activity(model), f"activity model {model}")

    def action_custom(self) -> None:
        from tui.screens.custom_species import CustomSpeciesForm

        taken = {i.reagent.name.casefold() for i in self.mixture.ingredients if i.reagent.custom}

        def add(ingredient: chem.Ingredient | None) -> None:
            if ingredient is not None:
                self.commit(self.mixture.with_ingredient(ingredient), f"add {ingredient.reagent.name}")
                self.query_one(FlaskList).select(-1)

        self.push_screen(CustomSpeciesForm(self.library, taken), add)

    def action_pin(self) -> None:
        self.pinned = None if self.pinned is not None else self.result

    def action_undo(self) -> None:
        self._step(self._undo, self._redo, "undone")

    def action_redo(self) -> None:
        self._step(self._redo, self._undo, "redone")

    def _step(self, source: list, target: list, verb: str) -> None:
        if not source:
            return
        mixture, what = source.pop()
        target.append((self.mixture, what))
        self.mixture = mixture
        self.notify(f"{verb}: {what}", timeout=2)

    def action_next_plot(self) -> None:
        self.plot_kind = self.next_plot_id()

    def action_curve_setup(self) -> None:
        from tui.screens.sweep_setup import SweepSetup
        from tui.screens.titration_setup import TitrationSetup

        if self.held_setup():                           # forms, solubility, saturation: their own form
            return
        if self.plot_kind == "sweep":
            def use_sweep(settings: SweepSettings | None) -> None:
                if settings is not None:
                    self._sweep = settings
                    self._recompute()

            self.push_screen(SweepSetup(self.mixture, self._sweep or _curves().default_sweep(self.mixture),
                                        **self.sweep_choices()), use_sweep)
            return

        def use_titration(settings: TitrationSettings | None) -> None:
            if settings is not None:
                self._titration = settings
                if self.plot_kind == "titration":
                    self._recompute()
                else:
                    self.plot_kind = "titration"            # its watcher recomputes

        current = self._titration or (_curves().default_titration(self.result) if self.result else None)
        self.push_screen(TitrationSetup(self.mixture, current, self.library), use_titration)

    def action_recipe(self) -> None:
        from tui.screens.recipe_form import RecipeForm

        def done(answer) -> None:          # chem.Recipe | tuple[str, chem.Recipe] | None
            if answer is None:
                return
            if isinstance(answer, tuple):  # ("save", recipe): name it, confirm, write atomically
                self._save_recipe(answer[1])
                return
            self._source = "buffer recipe"
            self.commit(answer.mixture, f"load the {answer.system.name} recipe")   # undoable
            self.query_one(FlaskList).select(0)

        ph = round(self.result.pH, 2) if self.result is not None else None
        self.push_screen(RecipeForm(self.library, target_pH=ph, temperature_c=self.mixture.temperature_c,
                                    activity=self.mixture.activity), done)

    def _save_recipe(self, recipe) -> None:
        from tui.screens.save_preset import SavePreset, SaveRequest

        def save(request: SaveRequest | None) -> None:
            if request is not None:
                self._save(replace(recipe.mixture, title=request.title), request.name, request.overwrite, False)

        self.push_screen(SavePreset("", recipe.mixture.title), save)

    def action_plot_scope(self) -> None:
        self.plot_all = not self.plot_all

    def action_notices(self) -> None:
        from tui.screens.notice_details import NoticeDetails

        if self.result is not None:
            self.push_screen(NoticeDetails(self.result))

    def action_save(self, then_quit: bool = False) -> None:
        from tui.screens.save_preset import SavePreset, SaveRequest

        def save(request: SaveRequest | None) -> None:
            if request is not None:
                mixture = self.mixture
                if request.title != mixture.title:
                    mixture = replace(mixture, title=request.title)
                    self.commit(mixture, "title")
                self._save(mixture, request.name, request.overwrite, then_quit)

        self.push_screen(SavePreset(self._preset_name, self.mixture.title), save)

    @work(thread=True, exclusive=True, group="save", exit_on_error=False, description="save")
    def _save(self, mixture: chem.Mixture, name: str, overwrite: bool, then_quit: bool) -> None:
        try:
            path = storage.save_user_preset(mixture, name, overwrite=overwrite)
        except (chem.ChemError, storage.StorageError) as exc:
            self.call_from_thread(self.notify, str(exc), title="Not saved", severity="error", timeout=8)
            return
        self.call_from_thread(self._saved, mixture, name, path, then_quit)

    def _saved(self, mixture: chem.Mixture, name: str, path: Path, then_quit: bool) -> None:
        if mixture == self.mixture:                 # a recipe is saved without being loaded
            self._clean = mixture
            self._preset_name = name
            self._source = path.name
            self.query_one(TitleBar).source = path.name
            self.query_one(TitleBar).dirty = self.dirty
        self.notify(f"saved to {path}", timeout=4)
        if then_quit:
            self.call_later(self._leave)

    def action_open(self) -> None:
        from tui.screens.preset_picker import PresetPicker

        def open_(entry: storage.PresetEntry | None) -> None:
            if entry is None:
                return
            try:
                mixture = chem.load_preset(entry.path)
            except chem.ChemError as exc:
                self.notify(str(exc), title="Preset not opened", severity="error", timeout=8)
                return
            self._source = entry.path.name
            self._preset_name = "" if entry.shipped else entry.name
            self._clean = mixture
            self.commit(mixture, f"open {entry.path.name}")
            self.query_one(FlaskList).select(0)

        self.push_screen(PresetPicker(storage.list_presets()), open_)

    async def action_quit(self) -> None:
        if not self.dirty:
            await self._leave()
            return
        from tui.screens.choice import Choice

        def answer(choice: str | None) -> None:
            if choice == "save":
                self.action_save(then_quit=True)
            elif choice == "quit":
                self.call_later(self._leave)

        self.push_screen(Choice("The mixture has changes that are not saved as a preset.",
                                [("s", "save first", "save"), ("d", "discard and quit", "quit")],
                                on_escape=None), answer)

    async def _leave(self) -> None:
        self._autosave_on = False                       # a clean end: nothing to keep
        if self._autosave_timer is not None:
            self._autosave_timer.stop()
            self._autosave_timer = None
        for worker in self.workers:
            if worker.group == "autosave":
                with contextlib.suppress(WorkerCancelled, WorkerFailed):
                    await worker.wait()
        if self._autosave is not None:
            self._autosave.remove()
            self._autosave = None
        self._release_orphans()
        self.exit(0)


def run_explorer(path: str | None) -> int:
    """Open the explorer on the preset at ``path`` (None: the built-in demo mixture).

    Returns the exit status: 0 after a normal quit, 2 when the preset cannot be read
    (after printing a one-line error), 143 after SIGTERM, and non-zero (1) after any crash.
    """
    try:
        if path is None:
            mixture, source, name = chem.demo_mixture(), "built-in demo", ""
        else:
            mixture, source = chem.load_preset(path), Path(path).name
            try:                                        # a user preset keeps its name for saving
                user_dir = storage.presets_dir().resolve()
            except storage.StorageError:                # no usable data folder: the explorer says so
                user_dir = None
            name = Path(path).stem if Path(path).resolve().parent == user_dir else ""
    except chem.ChemError as exc:
        print(f"protomix: error: {one_line(exc)}", file=sys.stderr)
        return 2
    app = ExplorerApp(mixture, source=source, preset_name=name, handle_signals=True)
    result = app.run()
    if app.return_code:                                 # it crashed (the traceback is shown): not a success
        return app.return_code
    return int(result or 0)
