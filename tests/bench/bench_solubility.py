"""Benchmark: 1000-point solubility curves (pH held, an excess of the solid), and the explorer's plots of them.

Run:  python tests/bench/bench_solubility.py
Reports medians (wall time, several repetitions); not a test, nothing here can flake CI.

Target (issue 11, §5): a 1000-point solubility curve in ≤ 0.3 s. Measured on the shipped
presets over the default pH range of the pH-held curves (2-12): the drug's free base, calcite
in the well water (a closed system), calcite in the digester liquor, calcite in the cooling-tower
water (CO2 held over it: at the ends of the range the dissolved totals reach molar levels),
portlandite in the Ca-EGTA buffer and tenorite in the ammoniacal copper rinse. Each line also
says whether every point converged. Then the explorer's solubility, saturation and forms plots
(a 120x40 terminal's chart, about 110 cells wide: 220 points), built as the worker builds them.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

import chem  # noqa: E402
from timing import median_ms  # noqa: E402

#: (preset, solid) of each case.
CASES = (
    ("drug-base-solubility", "compound 12 base (s)"),
    ("well-water-hardness", "calcite"),
    ("struvite-wastewater", "calcite"),
    ("cooling-tower-makeup", "calcite"),
    ("egta-calcium-buffer", "portlandite"),
    ("plating-rinse-copper", "tenorite"),
)
POINTS = 1000
TARGET_S = 0.3
#: Dissolved totals above this (mol/L) are no longer a dilute aqueous solution the model is meant for.
MOLAR = 1.0


def median_s(fn, repeat: int) -> float:
    return median_ms(fn, repeat) / 1e3


def main() -> None:
    lo, hi = chem.HELD_PH_RANGE
    ph = np.linspace(lo, hi, POINTS)
    print(f"{POINTS}-point solubility curves, pH {lo:g}-{hi:g} (target <= {TARGET_S} s)")
    for name, solid in CASES:
        mix = chem.load_preset(ROOT / "presets" / f"{name}.toml")
        once = time.perf_counter()
        diagram = chem.solubility(mix, solid, ph)
        once = time.perf_counter() - once
        repeat = 5 if once < 1.0 else 1
        t = median_s(lambda: chem.solubility(mix, solid, ph), repeat) if repeat > 1 else once
        top = np.max(np.column_stack(list(diagram.series.values())), axis=1)
        # no solution: the held solid pins a free activity above 30 mol/L (returned as NaN at once)
        beyond = int(np.isnan(top).sum())
        bad = int((~diagram.converged).sum()) - beyond
        verdict = "ok" if t <= TARGET_S and not bad else "OVER" if t > TARGET_S else "NOT CONVERGED"
        print(f"  {name:<24} {solid:<22} {1000 * t:8.0f} ms   {bad:4d} unconverged  {beyond:4d} without a solution"
              f"   {verdict}")
        real = diagram.converged & (top < MOLAR)
        if not real.all() and real.any():
            # the same curve where it stays a real solution: every dissolved total below 1 mol/L
            a, b = float(ph[real].min()), float(ph[real].max())
            sub = np.linspace(a, b, POINTS)
            t = median_s(lambda: chem.solubility(mix, solid, sub), 3)
            print(f"  {'':<24} {'  within pH ' + f'{a:.1f}-{b:.1f}':<22} {1000 * t:8.0f} ms   "
                  f"(where every dissolved total stays below {MOLAR:g} M)")

    from tui.widgets.plot_kinds import PlotRequest, PlotStyle, draw_kind
    from tui.widgets.speciation_kinds import speciation_kinds

    style = PlotStyle.for_terminal(dark=True, color=True, utf8=True)
    print("explorer plots at a 110x30 chart (as built in the worker: chem + plotext)")
    for name in ("drug-base-solubility", "well-water-hardness", "cooling-tower-makeup", "plating-rinse-copper"):
        eq = chem.solve(chem.load_preset(ROOT / "presets" / f"{name}.toml"))
        for kind in speciation_kinds(None, eq, None):
            request = PlotRequest(kind.id, 110, 30, None, style)
            t = median_s(lambda: draw_kind(kind, eq, request), 3)
            print(f"  {name:<24} {kind.title:<44} {1000 * t:8.0f} ms")


if __name__ == "__main__":
    main()
