"""Benchmark: full speciation (complexes, solids) — single solves, a scripted comparison, a pH sweep.

Run:  python tests/bench/bench_speciation.py
Reports medians (CPU time of this process, so other work on the machine
matters less); not a test, nothing here can flake CI.

Targets (issue: full speciation in the core):
* an 11-or-so-component mixture with about 60 complexes (Davies): median
  ≤ 1 ms, and ≥ 3× faster than a scripted ``scipy.optimize.root`` solve of
  the same equations measured in the same run, even when that one starts
  near the answer;
* the same with 3 candidate solids of which 2 form: ≤ 2 ms;
* a 1000-point pH sweep (pH imposed) of the mixture: ≤ 0.2 s.
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

import chem  # noqa: E402
from chem import Ingredient, Mixture, parse_concentration, solve  # noqa: E402
from chem._solver import kernel_inputs  # noqa: E402
from chem.diagrams import saturation  # noqa: E402
from chem.problem import LN10, compile  # noqa: E402

LIB = chem.load_library()

WATER = [("calcium chloride", "2 mM"), ("magnesium sulfate heptahydrate", "1 mM"),
         ("copper(II) sulfate pentahydrate", "10 uM"), ("zinc sulfate heptahydrate", "10 uM"),
         ("sodium bicarbonate", "3 mM"), ("disodium hydrogen phosphate", "0.5 mM"), ("citric acid", "0.2 mM"),
         ("ammonium chloride", "0.5 mM"), ("sodium chloride", "10 mM"), ("iron(III) chloride hexahydrate", "5 uM")]


def mixture(precipitate=False) -> Mixture:
    return Mixture(tuple(Ingredient(LIB.reagent(n), parse_concentration(c)) for n, c in WATER),
                   activity="davies", temperature_c=25.0, precipitate=precipitate)


def with_solids() -> Mixture:
    """Three candidate solids allowed; hydroxyapatite and ferrihydrite form, calcite does not."""
    return mixture(("calcite", "hydroxyapatite", "ferrihydrite"))


def median_ms(fn, repeat: int) -> float:
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.process_time()
        fn()
        times.append(time.process_time() - t0)
    return statistics.median(times) * 1000.0


def scripted_root(mix: Mixture, start_scale: float = 1.0):
    """What a user would script: scipy.optimize.root on the same mass balances, ln activities as unknowns.

    Activity coefficients are iterated outside (ionic strength from the species); the start is the
    answer perturbed by ``start_scale`` ln units (0: starting at the answer).
    """
    from scipy.optimize import root

    prob = compile(mix)
    st = prob.structure
    inp = kernel_inputs(prob)
    eq = solve(mix)
    u_true = eq._state.u
    lnk = inp.lnk[0]
    nu = st.nu
    tot = prob.totals
    zc = st.z_comp
    a = inp.a[0]

    def run():
        u = u_true + start_scale * 0.5
        ionic = eq.ionic_strength * 1.2
        for _ in range(30):
            si = math.sqrt(ionic)
            lng = -LN10 * a * st.z2 * (si / (1 + si) - 0.3 * ionic)

            def f(uu):
                c = np.exp(lnk - lng + nu @ uu)
                r = c @ nu - tot
                r[0] = c @ (nu @ zc) + prob.inert_q      # charge balance for the proton row
                return r / np.maximum(c @ np.abs(nu) + np.abs(tot), 1e-300)

            sol = root(f, u, method="hybr")
            u = sol.x
            c = np.exp(lnk - lng + nu @ u)
            new_i = 0.5 * c @ st.z2 + prob.inert_i
            if abs(new_i - ionic) < 1e-10 * new_i:
                break
            ionic = new_i
        return -u[0] / LN10

    return run, eq.pH


def main() -> None:
    mix = mixture()
    st = compile(mix).structure
    print(f"mixture: {len(st.components)} components, {len(st.complexes)} complexes, Davies, 25 °C")
    eq = solve(mix)
    print(f"  pH {eq.pH:.4f}, converged {eq.converged}, iterations {eq.iterations}")
    t_solve = median_ms(lambda: solve(mix), 200)
    print(f"  solve                                   median {t_solve:7.3f} ms   target ≤ 1 ms")
    for scale, label in ((1.0, "started 0.5 ln units off"), (0.0, "started at the answer")):
        run, ph = scripted_root(mix, scale)
        got = run()
        t_script = median_ms(run, 40)
        print(f"  scripted scipy root, {label:<24} median {t_script:7.3f} ms  (pH {got:.4f} vs {ph:.4f}); "
              f"ratio {t_script / t_solve:5.2f}x  (target ≥ 3)")
    solid_mix = with_solids()
    eq = solve(solid_mix)
    formed = [s.name for s in eq.solids if s.amount > 0]
    print(f"with 3 candidate solids: formed {formed}, converged {eq.converged}, iterations {eq.iterations}")
    t_solids = median_ms(lambda: solve(solid_mix), 200)
    print(f"  solve                                   median {t_solids:7.3f} ms   target ≤ 2 ms")
    grid = np.linspace(2.0, 12.0, 1000)
    t_sweep = median_ms(lambda: saturation(mix, grid), 5)
    print(f"1000-point pH sweep (pH imposed, SI of every solid)  median {t_sweep:7.1f} ms   target ≤ 200 ms")


if __name__ == "__main__":
    main()
