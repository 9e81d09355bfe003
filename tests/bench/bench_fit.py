"""Benchmark: fitting a titration and propagating uncertainty (issue 12 targets).

Run:  python tests/bench/bench_fit.py
Reports medians over repetitions (not a test; nothing here can flake CI).

Targets: a 3-parameter fit of 60 points within 0.5 s; ``--uncertainty`` on the
10-system benchmark mixture within 20 ms.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "core"))

from bench_solve import ten_system_mixture  # noqa: E402
from titration_reference import weak_acid_curve  # noqa: E402

from chem import Ingredient, Mixture, load_library, solve  # noqa: E402
from chem.fit import TitrationData, fit_titration  # noqa: E402
from chem.model import AcidBaseSystem, Reagent  # noqa: E402
from chem.uncertainty import propagate  # noqa: E402
from timing import median_ms  # noqa: E402


def main() -> None:
    lib = load_library()
    naoh = lib.reagent("NaOH")
    v = np.linspace(0.2, 18.0, 60)
    truth = weak_acid_curve(0.010, 4.76, 0.1, 100.0, v)
    rng = np.random.default_rng(0)
    system = AcidBaseSystem("acid Y", ("HY", "Y-"), (4.9,), 0, custom=True)
    ideal = Mixture((Ingredient(Reagent("acid Y", system, 1, custom=True), 0.0105),), activity="ideal")
    davies = Mixture((Ingredient(lib.reagent("acetic acid"), 0.0105),))
    draws = [TitrationData(v, truth + rng.normal(0, 0.01, v.size)) for _ in range(20)]
    it = iter(draws * 1000)

    def fit_ideal():
        fit_titration(ideal, next(it), naoh, 0.098, 0.1, ["amount:acid Y", "pKa:acid Y:1", "titrant"])

    def fit_davies():
        fit_titration(davies, next(it), naoh, 0.098, 0.1, ["amount:acetic acid", "pKa:acetate:1", "titrant"])

    t_fit = median_ms(fit_ideal, 20)
    t_fit_d = median_ms(fit_davies, 20)
    mix = ten_system_mixture()
    eq = solve(mix)
    t_prop = median_ms(lambda: propagate(eq), 200)

    def solve_with_uncertainty():
        e = solve(mix)
        doc = e.to_dict()
        doc["uncertainty"] = propagate(e).to_dict()

    def solve_plain():
        solve(mix).to_dict()

    t_full = median_ms(solve_with_uncertainty, 200)
    t_plain = median_ms(solve_plain, 200)
    t_mc = median_ms(lambda: propagate(eq, method="monte-carlo", samples=2000), 5)
    print("fit: 60 points, 3 parameters (amount, pKa, titrant)")
    print(f"  ideal model, custom acid           median {t_fit:8.1f} ms   target <= 500 ms")
    print(f"  davies model, library acetic acid  median {t_fit_d:8.1f} ms   target <= 500 ms")
    print("uncertainty, 10-system mixture (davies, 37 °C)")
    print(f"  first-order propagation alone      median {t_prop:8.2f} ms")
    print(f"  solve + JSON + uncertainty         median {t_full:8.2f} ms   target <= 20 ms")
    print(f"  solve + JSON (no --uncertainty)    median {t_plain:8.2f} ms")
    print(f"  Monte Carlo, 2000 draws            median {t_mc:8.1f} ms")


if __name__ == "__main__":
    main()
