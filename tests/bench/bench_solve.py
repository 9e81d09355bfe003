"""Benchmark: single solves and distribution diagrams (issue 2 targets).

Run:  python tests/bench/bench_solve.py
Reports medians over many repetitions (not a test; nothing here can flake CI).

Targets: solve of a 10-system mixture (Davies, 37 °C) under 0.5 ms; a
400-point distribution for it under 1 ms; and faster than a straightforward
scripted ideal solve (scipy brentq on the charge balance, Python loop over
systems) while doing more (activity, temperature, ionic strength).
"""

from __future__ import annotations

import math

from scipy.optimize import brentq

from chem import Ingredient, Mixture, load_library, solve, water
from chem.diagrams import distribution
from timing import median_ms

TEN = [("acetic acid", 0.010), ("sodium dihydrogen phosphate", 0.020), ("disodium hydrogen phosphate", 0.015),
       ("citric acid", 0.005), ("tris base", 0.020), ("hepes free acid", 0.010), ("sodium bicarbonate", 0.004),
       ("boric acid", 0.002), ("ammonium chloride", 0.003), ("glycine free base", 0.005),
       ("mes free acid", 0.008), ("sodium chloride", 0.100), ("sodium hydroxide", 0.012)]


def ten_system_mixture(activity: str = "davies", t_c: float = 37.0) -> Mixture:
    lib = load_library()
    mix = Mixture(tuple(Ingredient(lib.reagent(n), c) for n, c in TEN), temperature_c=t_c, activity=activity)
    assert len(mix.systems()) == 10, len(mix.systems())
    return mix


def scripted_ideal_ph(mix: Mixture) -> float:
    """What a user would write: brentq on the charge balance, a Python loop over systems."""
    t = mix.temperature_c
    kw = 10 ** -float(water.pkw(t))
    systems = [(s, c, [10 ** -p for p in s.pka_at(t)]) for s, c in mix.systems()]
    strong = sum(ion.charge * c for ion, c in mix.strong_ions())

    def balance(ph):
        h = 10 ** -ph
        total = h - kw / h + strong
        for sys_, c, kas in systems:
            terms = [1.0]
            for ka in kas:
                terms.append(terms[-1] * ka / h)
            denom = sum(terms)
            zbar = sum((sys_.charge_fully_protonated - k) * term for k, term in enumerate(terms)) / denom
            total += c * zbar
        return total

    return brentq(balance, -2.0, 16.0, xtol=1e-12)


def main() -> None:
    davies = ten_system_mixture("davies")
    ideal = ten_system_mixture("ideal")
    eq = solve(davies)
    assert eq.converged
    assert abs(scripted_ideal_ph(ideal) - solve(ideal).pH) < 1e-8, "scripted solve disagrees"
    t_solve = median_ms(lambda: solve(davies), 400)
    t_ideal = median_ms(lambda: solve(ideal), 400)
    t_dist = median_ms(lambda: distribution(davies, ionic_strength=eq.ionic_strength), 400)
    t_script = median_ms(lambda: scripted_ideal_ph(ideal), 200)
    print(f"10-system mixture, {len(davies.ingredients)} ingredients, 37 °C")
    print(f"  solve (davies)                     median {t_solve:7.3f} ms   target < 0.5 ms")
    print(f"  solve (ideal)                      median {t_ideal:7.3f} ms")
    print(f"  distribution, 400 pH points        median {t_dist:7.3f} ms   target < 1 ms")
    print(f"  scripted ideal brentq solve        median {t_script:7.3f} ms")
    print(f"  ratio scripted-ideal / protomix-davies = {t_script / t_solve:5.2f}x  (target > 1)")
    print(f"  iterations used: {eq.iterations};  pH {eq.pH:.4f}, I = {eq.ionic_strength:.4f} M")
    if not math.isfinite(eq.pH):
        raise SystemExit("solve returned a non-finite pH")


if __name__ == "__main__":
    main()
