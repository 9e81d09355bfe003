"""Benchmark: titration curves, sweeps, dilution and buffer capacity (issue 4 targets).

Run:  python tests/bench/bench_curves.py
Reports medians over repetitions (not a test; nothing here can flake CI).

Target: a 1000-point sweep of a 10-system mixture with the Davies model in
under 0.1 s, solved together (vectorised), not 1000 separate solves; the
same sweep as a Python loop of chem.solve is timed for comparison.  Also
reported: a titration curve of 500 points (plus the points added where it
is steep) for the same mixture, a 1000-point temperature sweep and
dilution, and a 400-point buffer-capacity curve.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_solve import ten_system_mixture  # noqa: E402
from timing import median_ms  # noqa: E402

from chem import load_library, solve  # noqa: E402
from chem.curves import buffer_capacity, dilution, sweep, titration  # noqa: E402


def main() -> None:
    lib = load_library()
    mix = ten_system_mixture("davies")
    naoh = lib.reagent("sodium hydroxide")
    amounts = np.linspace(0.0, 0.08, 1000)
    temps = np.linspace(0.0, 100.0, 1000)

    def loop_of_solves():
        idx = next(i for i, ing in enumerate(mix.ingredients) if ing.reagent is naoh)
        return [solve(mix.with_replaced(idx, mix.ingredients[idx].with_conc(float(c)))).pH for c in amounts]

    swept = sweep(mix, "sodium hydroxide", amounts)
    looped = loop_of_solves()
    worst = float(np.max(np.abs(swept.pH - np.array(looped))))
    assert swept.all_converged and worst < 1e-9, f"sweep disagrees with chem.solve by {worst}"
    curve = titration(mix, naoh, 0.1, 0.025, 0.060, points=500)
    assert curve.all_converged

    t_sweep = median_ms(lambda: sweep(mix, "sodium hydroxide", amounts), 30)
    t_loop = median_ms(loop_of_solves, 5)
    t_temp = median_ms(lambda: sweep(mix, "temperature", temps), 30)
    t_dil = median_ms(lambda: dilution(mix, np.logspace(0, 4, 1000)), 30)
    t_tit = median_ms(lambda: titration(mix, naoh, 0.1, 0.025, 0.060, points=500), 20)
    t_cap = median_ms(lambda: buffer_capacity(mix), 30)

    print(f"10-system mixture, {len(mix.ingredients)} ingredients, {mix.temperature_c:g} °C, davies")
    print(f"  sweep of NaOH, 1000 points            median {t_sweep:8.2f} ms   target < 100 ms")
    print(f"  same as a loop of 1000 chem.solve     median {t_loop:8.2f} ms   ({t_loop / t_sweep:.1f}x slower)")
    print(f"  temperature sweep, 1000 points        median {t_temp:8.2f} ms")
    print(f"  dilution, 1000 factors                median {t_dil:8.2f} ms")
    print(f"  titration, 500 points + refinement    median {t_tit:8.2f} ms   "
          f"({len(curve)} points, {len(curve.equivalence_points)} equivalence point(s))")
    print(f"  buffer capacity, 400 pH points        median {t_cap:8.2f} ms")
    print(f"  sweep vs loop of solves: largest pH difference {worst:.1e}")


if __name__ == "__main__":
    main()
