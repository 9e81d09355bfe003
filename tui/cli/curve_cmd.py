"""``protomix curve FILE --kind KIND``: a curve of a preset as a text plot, CSV or JSON.

Kinds: titration (pH vs added titrant), capacity (buffer capacity vs pH),
dilution (pH and species vs dilution factor), sweep (one amount or the
temperature varied), distribution (fractions vs pH) and logc (log C vs pH).
All numbers come from chem's curves and diagrams (``chem.titration``, ``chem.solubility`` ...); this
module only reads options, draws and writes.
"""

from __future__ import annotations

import csv
import json
import math
import os
import shutil
import sys
import time
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from tui.cli import EXIT_NO_ANSWER, EXIT_OK

if TYPE_CHECKING:          # numpy is imported only when a curve is computed (keeps --help fast)
    import numpy as np

HELP = "curves of a preset: titration, buffer capacity, dilution, sweeps, distribution, log C"

DESCRIPTION = ("Compute a curve of the mixture in FILE.toml and draw it as a text plot, "
               "or write the data with --csv or --json.")

EPILOG = """examples:
  protomix curve buffer.toml --kind titration --titrant NaOH --titrant-conc "0.1 M" --sample "25 mL" --to "50 mL"
  protomix curve buffer.toml --kind capacity --from 3 --to 11
  protomix curve buffer.toml --kind dilution --to 1000 --json
  protomix curve buffer.toml --kind sweep --vary "sodium chloride" --from "0 mM" --to "500 mM" --points 101 --csv
  protomix curve buffer.toml --kind sweep --vary temperature --from 4 --to 60 --species HPO4^2-
  protomix curve buffer.toml --kind distribution --species H2PO4-,HPO4^2-
  protomix curve plating.toml --kind distribution --system copper
  protomix curve scale.toml --kind solubility --solid calcite --from 6 --to 10
  protomix curve scale.toml --kind saturation
  protomix curve hardness.toml --kind titration --titrant "disodium EDTA dihydrate" --titrant-conc "10 mM" \
      --sample "50 mL" --to "20 mL" --species "Ca^2+"
  protomix curve medium.toml --kind sweep --vary CO2 --from 0 --to "5 %"

--from/--to mean: titration, titrant volumes (default from 0 mL); sweep, amounts of
the varied ingredient (e.g. "1 mM") or temperatures in °C; dilution, dilution factors
(default 1 to 1000); capacity, distribution, logc, pH (default 0 to 14); distribution
--system, solubility and saturation, pH (default 2 to 12), imposed at each point as a
pH-stat would hold it, with the mixture's totals as given. A titration with --species X
also follows pX = -log10 a(X) and finds its equivalence points on pX.
Species series are concentrations in mol/L (fractions of their system with --fractions)."""

KINDS = ("titration", "capacity", "dilution", "sweep", "distribution", "logc", "solubility", "saturation")

#: Options that only make sense for some kinds (dest -> (option, kinds)).
_ONLY_FOR = {
    "titrant": ("--titrant", ("titration",)),
    "titrant_conc": ("--titrant-conc", ("titration",)),
    "sample": ("--sample", ("titration",)),
    "max_step": ("--max-step", ("titration",)),
    "vary": ("--vary", ("sweep",)),
    "fractions": ("--fractions", ("titration", "dilution", "sweep")),
    "species": ("--species", ("titration", "dilution", "sweep", "distribution", "logc")),
    "uncertainty": ("--uncertainty", ("titration", "dilution", "sweep")),
    "system": ("--system", ("distribution",)),
    "solid": ("--solid", ("solubility",)),
}
_REQUIRED = {
    "titration": (("titrant", "--titrant"), ("titrant_conc", "--titrant-conc"), ("sample", "--sample"),
                  ("stop", "--to")),
    "sweep": (("vary", "--vary"), ("start", "--from"), ("stop", "--to")),
    "solubility": (("solid", "--solid"),),
}
#: Cap on a titration's points after refinement of its steep parts (at least the points asked for).
_TITRATION_MAX_POINTS = 20_000
_DEFAULT_POINTS = {"titration": 201, "capacity": 281, "dilution": 61, "sweep": 101, "distribution": 281,
                   "logc": 281, "solubility": 201, "saturation": 201}


def add_arguments(parser) -> None:
    parser.add_argument("file", metavar="FILE.toml", help="preset file with the mixture")
    parser.add_argument("--kind", required=True, choices=KINDS, help="which curve")
    rng = parser.add_argument_group("range")
    rng.add_argument("--from", dest="start", metavar="X", help="start of the range (meaning depends on --kind)")
    rng.add_argument("--to", dest="stop", metavar="Y", help="end of the range (meaning depends on --kind)")
    rng.add_argument("--points", type=int, metavar="N", help="number of points (titration: the even grid "
                     "before refinement in steep parts)")
    tit = parser.add_argument_group("titration")
    tit.add_argument("--titrant", metavar="NAME", help="reagent added (library name, alias or formula, "
                     "or a custom reagent of the preset)")
    tit.add_argument("--titrant-conc", metavar="AMOUNT", help='titrant stock concentration, e.g. "0.1 M"')
    tit.add_argument("--sample", metavar="VOLUME", help='volume of the sample titrated, e.g. "25 mL"')
    tit.add_argument("--max-step", type=float, metavar="PH",
                     help="largest pH step left between neighbouring points (default 0.05)")
    swp = parser.add_argument_group("sweep")
    swp.add_argument("--vary", metavar="NAME", help="ingredient whose amount varies, 'temperature', "
                     "or a gas held over the solution (e.g. CO2; --from/--to as pressures)")
    spc = parser.add_argument_group("speciation")
    spc.add_argument("--system", metavar="NAME", help="distribution: every species and solid holding this "
                     "system, as its share of the system's total (pH imposed)")
    spc.add_argument("--solid", metavar="NAME", help="solubility: the solid held in excess; series are the "
                     "dissolved totals of the systems it holds")
    sel = parser.add_argument_group("series")
    sel.add_argument("--species", action="append", metavar="NAME[,NAME...]",
                     help="species to include (repeatable; 'all' for every species)")
    sel.add_argument("--fractions", action="store_true",
                     help="species as fractions of their system instead of mol/L")
    out = parser.add_argument_group("output").add_mutually_exclusive_group()
    out.add_argument("--csv", action="store_true", help="write the data as CSV")
    out.add_argument("--json", action="store_true", help="write the data as one JSON object")
    parser.add_argument("--uncertainty", action="store_true",
                        help="add a 95 %% band from the constants' uncertainties (series NAME_lo, NAME_hi)")
    parser.add_argument("--width", type=int, metavar="COLS", help="plot width (default: the terminal's)")
    parser.add_argument("--height", type=int, metavar="ROWS", help="plot height (default: about 24 rows)")


# --------------------------------------------------------------------------
# the data, whatever the kind
# --------------------------------------------------------------------------

@dataclass
class _Result:
    """One curve ready to write or draw."""

    kind: str
    x_label: str
    x: np.ndarray
    series: dict[str, np.ndarray]
    main: list[str]
    """Series drawn in the top plot."""
    ylabel: str
    xlabel: str
    extra: list[str] = field(default_factory=list)
    """Species series drawn in a second plot."""
    extra_label: str = ""
    marks: list[float] = field(default_factory=list)
    """x positions marked with a vertical line (equivalence points, the mixture's pH)."""
    log_x: bool = False
    equivalence: list[tuple[float, float]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    not_converged: int = 0
    no_solution: str = ""
    """The note on points without a solution (left empty), also said on stderr with --json/--csv."""
    curve: object = None
    """The chem curve behind the series (titration, dilution, sweep), for --uncertainty."""
    level_name: str | None = None
    """A titration's tracked level (e.g. "pCa"), reported with each equivalence point."""
    levels: list[float] = field(default_factory=list)


def _fail(message: str):
    from chem import CurveError

    raise CurveError(message)


def _check_options(args) -> None:
    for dest, (option, kinds) in _ONLY_FOR.items():
        value = getattr(args, dest)
        if value not in (None, False) and args.kind not in kinds:
            _fail(f"{option} applies only to --kind {' or '.join(kinds)}")
    for dest, option in _REQUIRED.get(args.kind, ()):
        if getattr(args, dest) is None:
            _fail(f"--kind {args.kind} needs {option}")
    if args.points is not None and not 2 <= args.points <= 1_000_000:
        _fail(f"--points must be from 2 to 1000000 (got {args.points})")
    for option, value, least in (("--width", args.width, 30), ("--height", args.height, 8)):
        if value is not None and not least <= value <= 1000:
            _fail(f"{option} must be from {least} to 1000 (got {value})")
    if args.max_step is not None and not (math.isfinite(args.max_step) and args.max_step > 0):
        _fail(f"--max-step must be a positive number of pH units (got {args.max_step})")
    if args.csv or args.json:
        for option, value in (("--width", args.width), ("--height", args.height)):
            if value is not None:
                _fail(f"{option} sizes the text plot; it does not go with --{'csv' if args.csv else 'json'}")


def _number(text: str | None, option: str, what: str, default: float | None = None) -> float:
    if text is None:
        if default is None:
            _fail(f"{option} is needed")
        return default
    if what == "temperature":                           # one reading and range for every command
        from chem import parse_temperature

        return parse_temperature(text, option)
    try:
        value = float(text.strip())
    except ValueError:
        _fail(f"{option}: '{text}' is not a {what}")
    if not math.isfinite(value):
        _fail(f"{option}: '{text}' is not a finite number")
    if what == "pH":                                    # one pH range for every command
        from chem import check_ph

        return check_ph(value, option)
    return value


def _species_list(args, available: tuple[str, ...]) -> list[str]:
    """The species named with --species ('all' for every one of ``available``)."""
    names: list[str] = []
    for item in args.species:
        for name in (n.strip() for n in item.split(",")):
            if not name:
                continue
            if name.lower() == "all":
                names.extend(n for n in available if n not in names)
            elif name not in available:
                _fail(f"--species: no species '{name}' here (species: {', '.join(available)})")
            elif name not in names:
                names.append(name)
    return names


def _curve_species(curve, args, default_all: bool) -> tuple[dict[str, np.ndarray], list[str]]:
    """Species series of a curve: the chosen ones, or (``default_all``) every system species."""
    system_species = tuple(n for n, s in zip(curve.species, curve.species_system) if s != "water")
    if args.species:
        names = _species_list(args, system_species if args.fractions else curve.species)
    else:
        names = list(system_species) if default_all else []
    get = curve.fraction_of if args.fractions else curve.conc_of
    return {n: get(n) for n in names}, names


def p_label(species: str) -> str:
    """The level name of a species: "Ca^2+" -> "pCa", "Cu(NH3)4^2+" -> "pCu(NH3)4"."""
    base = species
    for suffix in ("+", "-"):
        if base.endswith(suffix):
            base = base[:-1]
            head, _, n = base.rpartition("^")
            if head and n.isdigit():
                base = head
            break
    return "p" + base


def _titration(args, mixture, progress) -> _Result:
    from chem import find_reagent, parse_concentration, parse_volume, titration

    titrant = find_reagent(args.titrant, mixture)
    conc = parse_concentration(args.titrant_conc, molar_mass=titrant.molar_mass)
    sample = parse_volume(args.sample)
    start = 0.0 if args.start is None else parse_volume(args.start)
    track = None
    if args.species:
        first = next((n.strip() for item in args.species for n in item.split(",") if n.strip()), None)
        if first is not None and first.lower() != "all":
            track = first
    points = args.points or _DEFAULT_POINTS["titration"]
    curve = titration(mixture, titrant, conc, sample, parse_volume(args.stop), from_volume_L=start,
                      points=points, max_points=max(points, _TITRATION_MAX_POINTS),
                      max_step=0.05 if args.max_step is None else args.max_step, track=track, progress=progress)
    species, names = _curve_species(curve, args, default_all=False)
    series = {"pH": curve.pH, "dpH_dmL": curve.slope, "ionic_strength_M": curve.ionic_strength}
    main, ylabel = ["pH"], "pH"
    level = p_label(track) if track else "pH"
    if track:
        series[level] = curve.level
        series[f"d{level}_dmL"] = curve.level_slope
        main, ylabel = [level], level
    series.update(species)
    eqp = [(e.volume_mL, e.pH) for e in curve.equivalence_points]
    levels = [e.level for e in curve.equivalence_points]
    notes = [f"titrant {titrant.name}, {args.titrant_conc.strip()}, into a {args.sample.strip()} sample; "
             f"{len(curve)} points"]
    notes += [f"equivalence point {i + 1}: {v:.4f} mL, pH {p:.3f}" + (f", {level} {lv:.3f}" if track else "")
              for i, ((v, p), lv) in enumerate(zip(eqp, levels))]
    if not eqp:
        notes.append("no clear equivalence point in this range")
    res = _Result("titration", curve.x_label, curve.x, series, main, ylabel, "titrant added (mL)",
                  extra=names, extra_label="fraction" if args.fractions else "mol/L",
                  marks=[v for v, _ in eqp], equivalence=eqp, notes=notes,
                  not_converged=int((~curve.converged).sum()), curve=curve)
    if track:
        res.level_name = level
        res.levels = levels
    return res


def _ph_grid(args):
    """The pH grid of --from/--to/--points for the pH-axis kinds (default 0..14)."""
    import numpy as np

    from chem import HELD_PH_RANGE, PH_MAX, PH_MIN

    held = args.kind in ("solubility", "saturation") or (args.kind == "distribution" and args.system)
    lo = _number(args.start, "--from", "pH", HELD_PH_RANGE[0] if held else PH_MIN)
    hi = _number(args.stop, "--to", "pH", HELD_PH_RANGE[1] if held else PH_MAX)
    if not hi > lo:
        _fail(f"--from must be below --to (got {lo:g} and {hi:g})")
    return np.linspace(lo, hi, args.points or _DEFAULT_POINTS[args.kind])


def _capacity(args, mixture, progress) -> _Result:
    from chem import buffer_capacity, buffer_capacity_at, format_molar, solve

    grid = _ph_grid(args)
    cap = buffer_capacity(mixture, grid, progress=progress)
    eq = solve(mixture)
    beta = buffer_capacity_at(eq)
    series = {"pH": cap.pH, "beta_M_per_pH": cap.beta, "added_base_M": cap.added_base,
              "ionic_strength_M": cap.ionic_strength}
    notes = [f"buffer capacity at the mixture's pH {eq.pH:.3f}: {format_molar(beta)}/pH",
             "added_base_M: strong base (negative: acid) that brings the mixture to each pH"]
    marks = [eq.pH] if grid[0] <= eq.pH <= grid[-1] else []
    return _Result("capacity", "pH", cap.pH, series, ["beta_M_per_pH"], "β (mol/L per pH)", "pH", marks=marks,
                   notes=notes, not_converged=int((~cap.converged).sum()))


def _dilution(args, mixture, progress) -> _Result:
    import numpy as np

    from chem import dilution

    lo = _number(args.start, "--from", "dilution factor", 1.0)
    hi = _number(args.stop, "--to", "dilution factor", 1000.0)
    if not 1.0 <= lo < hi:
        _fail(f"dilution factors must run upwards from 1 or more (got {lo:g} to {hi:g})")
    factors = np.logspace(math.log10(lo), math.log10(hi), args.points or _DEFAULT_POINTS["dilution"])
    curve = dilution(mixture, factors, progress=progress)
    species, names = _curve_species(curve, args, default_all=True)
    series = {"pH": curve.pH, "ionic_strength_M": curve.ionic_strength, **species}
    notes = [f"pH {curve.pH[0]:.3f} undiluted, {curve.pH[-1]:.3f} at {hi:g}-fold dilution"]
    return _Result("dilution", curve.x_label, curve.x, series, ["pH"], "pH", "dilution factor", extra=names,
                   extra_label="fraction" if args.fractions else "mol/L", log_x=True, notes=notes,
                   not_converged=int((~curve.converged).sum()), curve=curve)


def _sweep(args, mixture, progress) -> _Result:
    import numpy as np

    from chem import gas_named, ingredient_index, parse_concentration, sweep

    points = args.points or _DEFAULT_POINTS["sweep"]
    gas = gas_named(mixture, args.vary)
    if args.vary.strip().lower() == "temperature":
        lo = _number(args.start, "--from", "temperature")
        hi = _number(args.stop, "--to", "temperature")
        vary, xlabel = "temperature", "temperature (°C)"
    elif gas is not None:
        from chem import parse_pressure

        def pressure(text, option):
            try:
                return parse_pressure(text, allow_zero=True)
            except Exception as exc:  # noqa: BLE001 - a ChemError with the reason
                _fail(f"{option}: {exc}")

        lo = pressure(args.start, "--from")
        hi = pressure(args.stop, "--to")
        vary, xlabel = gas.name, f"{gas.name} partial pressure (atm)"
    else:
        ing = mixture.ingredients[ingredient_index(mixture, args.vary)]
        mm = ing.reagent.molar_mass
        lo = parse_concentration(args.start, molar_mass=mm)
        hi = parse_concentration(args.stop, molar_mass=mm)
        vary, xlabel = args.vary, f"{ing.reagent.name} (mol/L)"
    if not hi > lo:
        _fail(f"--from must be below --to (got {args.start} and {args.stop})")
    curve = sweep(mixture, vary, np.linspace(lo, hi, points), progress=progress)
    species, names = _curve_species(curve, args, default_all=False)
    series = {"pH": curve.pH, "ionic_strength_M": curve.ionic_strength, **species}
    # saturation index of every candidate solid, keyed by the solid's name
    for k, solid in enumerate(curve.solids):
        series[solid] = curve.saturation[:, k]
    for k, gas_name in enumerate(curve.gases):
        if gas is None or gas_name != gas.name:          # the varied gas is already the x axis
            series[f"{gas_name}_atm"] = curve.gas_pressure[:, k]
    notes = [f"pH {curve.pH[0]:.3f} at {args.start.strip()}, {curve.pH[-1]:.3f} at {args.stop.strip()}"]
    if curve.solids:
        notes.append("series named after a solid are its saturation index; <gas>_atm the partial pressure")
    return _Result("sweep", curve.x_label, curve.x, series, ["pH"], "pH", xlabel, extra=names,
                   extra_label="fraction" if args.fractions else "mol/L", notes=notes,
                   not_converged=int((~curve.converged).sum()), curve=curve)


def _diagram(args, mixture, progress) -> _Result:
    from chem import distribution, log_concentrations, solve

    grid = _ph_grid(args)
    eq = solve(mixture)
    if args.kind == "distribution" and args.system:
        return _held_diagram(args, mixture, grid, eq)
    if args.kind == "distribution":
        diagram = distribution(mixture, grid, ionic_strength=eq.ionic_strength)
        ylabel = "fraction"
    else:
        # the true values (a plot clips them for drawing only)
        diagram = log_concentrations(mixture, grid, ionic_strength=eq.ionic_strength, floor=-math.inf)
        ylabel = "log C (M)"
    names = _species_list(args, tuple(diagram.series)) if args.species else list(diagram.series)
    series = {"pH": diagram.ph, **{n: diagram.series[n] for n in names}}
    notes = [f"at the mixture's ionic strength {eq.ionic_strength:.4g} M; the mixture's pH is {eq.pH:.3f}"]
    marks = [eq.pH] if grid[0] <= eq.pH <= grid[-1] else []
    return _Result(args.kind, "pH", diagram.ph, series, names, ylabel, "pH", marks=marks, notes=notes)


def _held_diagram(args, mixture, grid, eq) -> _Result:
    """distribution --system, solubility and saturation: the pH imposed at each point."""
    from chem import saturation, solubility, system_distribution

    if args.kind == "distribution":
        d = system_distribution(mixture, args.system, grid)
        ylabel, note = "fraction", f"every form of {args.system}, as its share of the system's total"
    elif args.kind == "solubility":
        d = solubility(mixture, args.solid, grid)
        ylabel, note = "dissolved (mol/L)", f"with an excess of {args.solid}: dissolved total of each system it holds"
    else:
        d = saturation(mixture, grid)
        ylabel, note = "saturation index", "SI = log(IAP/Ksp) of every candidate solid (0: saturated)"
    if not d.series:
        _fail("nothing to draw: this mixture has no candidate solids" if args.kind == "saturation"
              else "nothing to draw")
    names = list(d.series)
    series = {"pH": d.ph, **d.series}
    notes = [note, "pH imposed at each point (as a pH-stat holds it); the mixture's totals as given"]
    marks = [eq.pH] if grid[0] <= eq.pH <= grid[-1] else []
    none = 0 if d.no_solution is None else int(d.no_solution.sum())
    bad = 0 if d.converged is None else int((~d.converged).sum()) - none
    from chem import PINNED_ACTIVITY_MAX

    empty = (f"{none} point(s) have no solution and are left empty: there a free ion would pass "
             f"{PINNED_ACTIVITY_MAX:g} mol/L "
             "(no aqueous solution holds that)") if none else ""
    if empty:
        notes.append(empty)
    return _Result(args.kind, "pH", d.ph, series, names, ylabel, "pH", marks=marks, notes=notes, not_converged=bad,
                   no_solution=empty)


def _held(args, mixture, progress) -> _Result:
    from chem import solve

    return _held_diagram(args, mixture, _ph_grid(args), solve(mixture))


_COMPUTE = {"titration": _titration, "capacity": _capacity, "dilution": _dilution, "sweep": _sweep,
            "distribution": _diagram, "logc": _diagram, "solubility": _held, "saturation": _held}


# --------------------------------------------------------------------------
# output
# --------------------------------------------------------------------------

def _num(v) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def to_json(res: _Result) -> dict:
    """The JSON object of ``protomix curve --json``."""
    doc = {"kind": res.kind, "x_label": res.x_label, "x": [_num(v) for v in res.x],
           "series": {name: [_num(v) for v in values] for name, values in res.series.items()}}
    if res.kind == "titration":
        doc["equivalence_points"] = [{"volume_mL": _num(v), "pH": _num(p)} for v, p in res.equivalence]
        if res.level_name:
            for point, level in zip(doc["equivalence_points"], res.levels):
                point[res.level_name] = _num(level)
    return doc


def write_csv(res: _Result, stream) -> None:
    """Header row (x label, then series names), then one row per point.

    A series that only repeats the x column (pH against pH) is left out; names are made
    safe to print (species names can come from a shared preset).
    """
    import numpy as np

    from tui.text import printable

    writer = csv.writer(stream, lineterminator="\n")
    names = [n for n in res.series if not (n == res.x_label and np.array_equal(res.series[n], res.x))]
    writer.writerow([printable(res.x_label), *(printable(n) for n in names)])
    columns = [res.x, *(res.series[n] for n in names)]
    for row in zip(*columns):
        writer.writerow(["" if not math.isfinite(v) else repr(float(v)) for v in row])


_ASCII = str.maketrans({"─": "-", "│": "|", "┌": "+", "┐": "+", "└": "+", "┘": "+", "┬": "+", "┴": "+",
                        "├": "+", "┤": "+", "┼": "+", "▏": "|", "•": "*"})


def render_plot(res: _Result, width: int, height: int, *, color: bool, utf8: bool) -> str:
    """The text plot (plotext): the main series on top, species below when there are any."""
    import numpy as np
    import plotext as plt

    from chem import LOG_C_FLOOR
    from tui.text import printable

    plt.clear_figure()
    two = bool(res.extra)
    plt.plotsize(width, height * 2 if two else height)
    if two:
        plt.subplots(2, 1)
        plt.subplot(1, 1)
    marker = "braille" if utf8 else "*"
    x = [float(v) for v in res.x]

    def draw(names, ylabel):
        for name in names:
            y = res.series[name]
            if res.kind == "logc":                          # the data keep their true values
                y = np.maximum(y, LOG_C_FLOOR)
            ok = np.isfinite(y)
            plt.plot([xv for xv, good in zip(x, ok) if good], [float(v) for v in y[ok]],
                     label=printable(name) if len(names) > 1 else None, marker=marker)
        for m in res.marks:
            plt.vline(float(m), "gray" if color else None)
        if res.log_x:
            plt.xscale("log")
        plt.ylabel(ylabel)

    draw(res.main, res.ylabel)
    plt.title(f"{res.kind}")
    if two:
        plt.subplot(2, 1)
        draw(res.extra, res.extra_label)
    plt.xlabel(res.xlabel)
    text = plt.build()
    if not color:
        text = plt.uncolorize(text)
    if not utf8:
        text = text.translate(_ASCII)
    return text


class _ProgressBar:
    """A bar on stderr for work taking over a second; nothing when stderr is not a terminal."""

    def __init__(self, stream=None, delay: float = 1.0):
        self.stream = stream if stream is not None else sys.stderr
        self.enabled = bool(getattr(self.stream, "isatty", lambda: False)())
        self.start = time.monotonic()
        self.delay = delay
        self.shown = False

    def __call__(self, fraction: float) -> bool:
        if self.enabled and time.monotonic() - self.start >= self.delay:
            filled = int(round(30 * fraction))
            self.stream.write(f"\rcomputing [{'#' * filled}{'.' * (30 - filled)}] {100 * fraction:3.0f}%")
            self.stream.flush()
            self.shown = True
        return True

    def close(self) -> None:
        if self.shown:
            self.stream.write("\r" + " " * 50 + "\r")
            self.stream.flush()


def run(args) -> int:
    from chem import load_preset

    _check_options(args)
    mixture = load_preset(args.file)
    bar = _ProgressBar()
    try:
        res = _COMPUTE[args.kind](args, mixture, bar)
    finally:
        bar.close()
    from tui.text import printable, safe_json

    if getattr(args, "uncertainty", False):
        from tui.cli.curve_band import add_band

        add_band(res)
    if res.not_converged:
        print(f"protomix: warning: {res.not_converged} point(s) did not converge; their numbers are unreliable",
              file=sys.stderr)
    if res.no_solution and (args.json or args.csv):
        print(f"protomix: note: {res.no_solution}", file=sys.stderr)
    if args.json:
        sys.stdout.write(safe_json(json.dumps(to_json(res), ensure_ascii=False)) + "\n")
    elif args.csv:
        write_csv(res, sys.stdout)
    else:
        cols, _rows = shutil.get_terminal_size((100, 30))
        width = args.width or max(40, min(cols, 160))
        height = args.height or 24
        out = sys.stdout
        tty = bool(getattr(out, "isatty", lambda: False)())
        color = tty and "NO_COLOR" not in os.environ
        encoding = (getattr(out, "encoding", None) or "").lower().replace("-", "")
        utf8 = encoding == "utf8"
        title = printable(mixture.title or args.file)
        print(f"{title}  ({mixture.temperature_c:g} °C, activity: {mixture.activity})")
        print(render_plot(res, width, height, color=color, utf8=utf8))
        for note in res.notes:
            print(printable(note))
    return EXIT_NO_ANSWER if res.not_converged else EXIT_OK
