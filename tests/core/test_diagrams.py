"""Distribution and log C diagrams agree with the full solve at the solved pH."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from chem import demo_mixture, load_preset, solve
from chem.diagrams import distribution, log_concentrations


@pytest.mark.parametrize("model", ["ideal", "davies", "extended-dh"])
def test_distribution_at_the_solved_ph_reproduces_the_solved_fractions(model):
    mix = demo_mixture().with_activity(model).with_temperature(31.0)
    eq = solve(mix)
    d = distribution(mix, [eq.pH], ionic_strength=eq.ionic_strength)
    for name, values in d.series.items():
        assert values[0] == pytest.approx(eq.get(name).fraction, abs=1e-12)


def test_fractions_of_each_system_sum_to_one_everywhere():
    d = distribution(demo_mixture())
    for system, names in d.systems.items():
        total = np.sum([d.series[n] for n in names], axis=0)
        assert np.allclose(total, 1.0, atol=1e-12), system


def test_log_c_diagram_matches_solved_concentrations(tmp_path):
    mix = load_preset(Path(__file__).resolve().parents[2] / "presets" / "aquaculture-ammonia.toml")
    eq = solve(mix)
    d = log_concentrations(mix, [eq.pH], ionic_strength=eq.ionic_strength, floor=-30)
    for name in ("NH3", "NH4+", "H+", "OH-", "HCO3-"):
        assert d.series[name][0] == pytest.approx(np.log10(eq.get(name).conc), abs=1e-9)


def test_diagram_arrays_are_read_only():
    d = distribution(demo_mixture())
    with pytest.raises(ValueError):
        next(iter(d.series.values()))[0] = 0.5
