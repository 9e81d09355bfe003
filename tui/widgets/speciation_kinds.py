"""Plots of full speciation with the pH held at each point: forms of a system, solubility, saturation.

At every point of the pH axis the pH is imposed (as a pH-stat holds it) and the mixture's
totals stay as given, as in ``protomix curve --kind distribution --system``, ``--kind
solubility --solid`` and ``--kind saturation``. Every number comes from chem
(:func:`chem.system_distribution`, :func:`chem.solubility`, :func:`chem.saturation`); this
module only chooses what to show and draws it (:func:`tui.widgets.line_plot.draw_lines`).

API:
    ``SPECIATION_KIND_IDS``: ("forms", "solubility", "saturation"), in chart order.
    ``HeldSettings(system=None, solid=None, from_text, to_text)``: what the setup form returns
    (``v``): the system whose forms are drawn, the solid held in excess, the pH range as typed
    (default :data:`chem.HELD_PH_RANGE`). None means "chosen for the mixture on display".
    ``speciation_kinds(settings, result=None, selected=None)`` -> the three
    :class:`~tui.widgets.plot_kinds.PlotKind` objects, titled for ``result``.
    ``applies(kind_id, result)``: whether the kind has anything to show for this mixture (``g``
    skips the ones that do not).
    ``held_system(result, settings, selected)`` / ``held_solid(result, settings)``: the choice made
    when the settings leave it open.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass

import numpy as np

import chem
from tui.widgets.curve_kinds import SI_SPAN, Mark, _guarded, _unconverged, read_ph, ticks_within
from tui.widgets.line_plot import draw_lines, index_axis, log_axis
from tui.widgets.plot_kinds import Drawing, PlotKind, PlotRequest, grid_points

SPECIATION_KIND_IDS = ("forms", "solubility", "saturation")

#: Forms whose share stays below this everywhere on the axis are not drawn (only counted), so the
#: legend names what can be seen.
MIN_SHARE = 0.01
#: Most decades of dissolved concentration shown on the solubility plot (from the top of the data).
LOG_DECADES = 12


def _default_range() -> tuple[str, str]:
    lo, hi = chem.HELD_PH_RANGE
    return f"{lo:g}", f"{hi:g}"


@dataclass(frozen=True)
class HeldSettings:
    """The pH-held plots as the user set them up: which system, which solid, over which pH range."""

    system: str | None = None
    """System whose forms are drawn (None: the selected ingredient's, else the first metal)."""
    solid: str | None = None
    """Solid held in excess for the solubility plot (None: the one nearest saturation)."""
    from_text: str = _default_range()[0]
    """Start of the pH axis, as typed."""
    to_text: str = _default_range()[1]

    def ph_range(self) -> tuple[float, float]:
        """(from, to) read on the pH scale every command shares; raises :class:`chem.ChemError`."""
        lo = read_ph(self.from_text, "from pH")
        hi = read_ph(self.to_text, "to pH")
        if not hi > lo:
            raise chem.UnitError(f"to pH: must be above 'from' (got {self.from_text.strip()} and "
                                 f"{self.to_text.strip()})")
        return lo, hi

    def grid(self, request: PlotRequest) -> np.ndarray:
        lo, hi = self.ph_range()
        return chem.ph_grid(grid_points(request.width), lo, hi)


def _present(result: chem.Equilibrium) -> list[chem.SystemState]:
    return [st for st in result.systems if st.total > 0]


def held_system(result: chem.Equilibrium, settings: HeldSettings | None, selected: str | None) -> str | None:
    """The system whose forms are drawn: the one set up, else the selected ingredient's, else the first metal."""
    present = _present(result)
    by_key = {st.name.casefold(): st.name for st in present}
    for wanted in ((settings.system if settings else None), selected):
        if wanted and wanted.strip().casefold() in by_key:
            return by_key[wanted.strip().casefold()]
    metals = [st.name for st in present if st.is_metal]
    return (metals or [st.name for st in present] or [None])[0]


def held_solid(result: chem.Equilibrium, settings: HeldSettings | None) -> str | None:
    """The solid held in excess: the one set up, else the candidate nearest (or past) saturation."""
    names = [s.name for s in result.solids]
    if settings is not None and settings.solid in names:
        return settings.solid
    if not result.solids:
        return None
    return max(result.solids, key=lambda s: s.saturation_index).name


def applies(kind_id: str, result: chem.Equilibrium | None) -> bool:
    """Whether ``kind_id`` has something to show for ``result`` (every other kind always does)."""
    if result is None or kind_id not in SPECIATION_KIND_IDS:
        return True
    if kind_id == "forms":
        return bool(_present(result))
    return bool(result.solids)


def _ph_marks(result: chem.Equilibrium) -> list[Mark]:
    return [Mark(result.pH, f"pH {result.pH:.2f}")]


def _ph_axis(request: PlotRequest, lo: float, hi: float) -> list[float]:
    """Round pH ticks; a tick every 6 cells or more (pH labels are at most 4 characters wide)."""
    return ticks_within(lo, hi, max(2, request.width // 6))


def _y_most(request: PlotRequest) -> int:
    return max(2, (request.height - 4) // 3)


def _note(request: PlotRequest, *paragraphs: str) -> Drawing:
    """A short message in place of the plot, wrapped to the plot's width."""
    lines = [line for text in paragraphs for line in textwrap.wrap(text, max(request.width, 10))]
    return Drawing("\n".join(lines[: request.height]), note=True)


def _no_solids(request: PlotRequest) -> Drawing:
    return _note(request, "No solid can form from this mixture's systems: nothing to show.",
                 "Add a metal salt and a partner (calcium chloride and sodium carbonate, say) with n.")


def build_forms(result: chem.Equilibrium, request: PlotRequest, settings: HeldSettings | None,
                selected: str | None = None) -> Drawing:
    """Every species and solid holding one system, as its share of the system's total, vs pH (pH held).

    The system is the one set up, else ``selected`` (the selected ingredient's), else the first metal.
    """
    settings = settings or HeldSettings()
    system = held_system(result, settings, selected)
    if system is None:
        return _note(request, "Nothing in the flask: no system to follow.", "Add a reagent with n.")
    ph = settings.grid(request)
    diagram = chem.system_distribution(result.mixture, system, ph)
    curves = [(name, values) for name, values in diagram.series.items() if np.nanmax(values) >= MIN_SHARE]
    minor = len(diagram.series) - len(curves)
    notes = [f"every form of {system} as a share of its total", "pH held at each point"]
    if minor:
        notes.append(f"{minor} form{'s' * (minor != 1)} under {MIN_SHARE:.0%} not drawn")
    notes += _unconverged(diagram.converged, diagram.no_solution)
    lo, hi = float(ph[0]), float(ph[-1])
    return draw_lines(ph, curves, request, xlabel="pH", xlim=(lo, hi), xticks=_ph_axis(request, lo, hi),
                      xtick_label=lambda t: f"{t:g}", ylabel="share of total", ylim=(0.0, 1.0),
                      yticks=(0.0, 0.25, 0.5, 0.75, 1.0), marks=_ph_marks(result), notes=notes)


def build_solubility(result: chem.Equilibrium, request: PlotRequest, settings: HeldSettings | None) -> Drawing:
    """log10 of the dissolved total of each system a solid holds, with an excess of it, vs pH (pH held)."""
    settings = settings or HeldSettings()
    solid = held_solid(result, settings)
    if solid is None:
        return _no_solids(request)
    ph = settings.grid(request)
    diagram = chem.solubility(result.mixture, solid, ph)
    with np.errstate(divide="ignore", invalid="ignore"):
        curves = [(f"{name}, dissolved", np.log10(values)) for name, values in diagram.series.items()]
    ylim, yticks = log_axis([v for _, v in curves], _y_most(request), LOG_DECADES)
    lo, hi = float(ph[0]), float(ph[-1])
    notes = [f"with an excess of {solid}", "pH held at each point", *_unconverged(diagram.converged, diagram.no_solution)]
    return draw_lines(ph, curves, request, xlabel="pH", xlim=(lo, hi), xticks=_ph_axis(request, lo, hi),
                      xtick_label=lambda t: f"{t:g}", ylabel="log C (M)", ylim=ylim, yticks=yticks,
                      marks=_ph_marks(result), notes=notes)


def build_saturation(result: chem.Equilibrium, request: PlotRequest, settings: HeldSettings | None) -> Drawing:
    """Saturation index of every candidate solid vs pH (pH held); SI = 0 drawn as a line."""
    settings = settings or HeldSettings()
    if not result.solids:
        return _no_solids(request)
    ph = settings.grid(request)
    diagram = chem.saturation(result.mixture, ph)
    ylim, yticks = index_axis(list(diagram.series.values()), _y_most(request), SI_SPAN)
    curves = [(name, values) for name, values in diagram.series.items() if np.nanmax(values) > ylim[0]]
    below = len(diagram.series) - len(curves)
    above = sorted(s.name for s in result.solids if s.saturation_index > 0)
    notes = ["SI = log(IAP/Ksp); above 0 supersaturated", "pH held at each point"]
    if above:
        notes.append(f"at pH {result.pH:.2f}: {', '.join(above)} above 0")
    if below:
        notes.append(f"{below} solid{'s' * (below != 1)} below SI {ylim[0]:g} not drawn")
    notes += _unconverged(diagram.converged, diagram.no_solution)
    lo, hi = float(ph[0]), float(ph[-1])
    return draw_lines(ph, curves, request, xlabel="pH", xlim=(lo, hi), xticks=_ph_axis(request, lo, hi),
                      xtick_label=lambda t: f"{t:g}", ylabel="SI", ylim=ylim, yticks=yticks,
                      marks=_ph_marks(result), hlines=(0.0,), notes=notes)


def speciation_kinds(settings: HeldSettings | None = None, result: chem.Equilibrium | None = None,
                     selected: str | None = None) -> tuple[PlotKind, ...]:
    """The three pH-held kinds with ``settings``, titled for ``result`` (the system and solid shown)."""
    system = held_system(result, settings, selected) if result is not None else None
    solid = held_solid(result, settings) if result is not None else None
    return (
        PlotKind("forms", f"forms of {system or 'a system'} vs pH · pH held",
                 _guarded(lambda r, q: build_forms(r, q, settings, selected))),
        PlotKind("solubility", f"solubility of {solid or 'a solid'} vs pH",
                 _guarded(lambda r, q: build_solubility(r, q, settings))),
        PlotKind("saturation", "saturation indices vs pH", _guarded(lambda r, q: build_saturation(r, q, settings))),
    )


__all__ = ["SPECIATION_KIND_IDS", "HeldSettings", "applies", "build_forms", "build_saturation", "build_solubility",
           "held_solid", "held_system", "speciation_kinds"]
