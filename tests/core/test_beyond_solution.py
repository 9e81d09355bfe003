"""Points with no solution the model can represent are recognised at once, not iterated to the budget.

A solid held in excess at a held pH fixes its metal's free activity by its
solubility product alone. Tenorite, CuO(s) + 2 H+ = Cu2+ + H2O, log *Ks0 = 7.64
(Powell et al. 2007, Pure Appl. Chem. 79, 895, the library's constant), pins
log a(Cu2+) = 7.64 - 2 pH: above 30 mol/L (the kernel's PINNED_ACTIVITY_MAX)
below pH (7.64 - log 30)/2 = 3.081.
"""

from __future__ import annotations

import json
import math

import numpy as np

import chem
from chem import _kernel as K


def _rinse():
    return chem.load_preset("presets/plating-rinse-copper.toml")


def test_held_tenorite_below_the_pinned_limit_has_no_solution_and_above_it_converges():
    edge = (7.64 - math.log10(K.PINNED_ACTIVITY_MAX)) / 2
    ph = np.array([2.0, edge - 0.01, edge + 0.01, 5.0, 9.0])
    d = chem.solubility(_rinse(), "tenorite", ph)
    cu = d.series["copper"]
    assert list(d.converged) == [False, False, True, True, True]
    assert np.isnan(cu[:2]).all()
    assert np.isfinite(cu[2:]).all() and (cu[2:] > 0).all()


def test_a_point_beyond_solution_does_not_disturb_its_neighbours():
    ph = np.array([2.0, 6.0, 8.0])
    both = chem.solubility(_rinse(), "tenorite", ph).series["copper"]
    alone = chem.solubility(_rinse(), "tenorite", ph[1:]).series["copper"]
    np.testing.assert_allclose(both[1:], alone, rtol=1e-9)


def test_beyond_solution_only_flags_pinned_components():
    # pH held but no solid held: only H+ is pinned, which never counts (a held pH is a real value)
    prob_mix = _rinse()
    d = chem.saturation(prob_mix, np.array([2.0, 12.0]))
    assert d.converged.all()


def test_json_of_a_curve_with_points_beyond_solution_writes_null(tmp_path, capsys):
    from tui.cli import main
    rc = main(["curve", "--kind", "solubility", "presets/plating-rinse-copper.toml", "--solid", "tenorite",
               "--points", "11", "--json"])
    out = capsys.readouterr()
    assert rc == 0                    # points without a solution are not a failure to converge
    data = json.loads(out.out)
    assert data["series"]["copper"][0] is None and data["series"]["copper"][5] > 0
    assert "have no solution" in out.err and "did not converge" not in out.err


def test_explorer_note_counts_points_without_a_solution_apart_from_unconverged_ones():
    from tui.widgets.curve_kinds import _unconverged
    conv = np.array([False, False, True, False])
    none = np.array([True, True, False, False])
    notes = _unconverged(conv, none)
    assert notes[0].startswith("1 point did not converge")
    assert notes[1].startswith("2 points left out: no solution")


def test_forms_of_a_system_under_a_held_gas_are_shares_of_what_is_present():
    # CO2 held over the cooling-tower water: a pH-stat at pH 10 draws in far more carbonate than
    # the preset's total; the shares are of the amount present and add up to 1 (conservation).
    # Above pH ~11.7 the held CO2 pins CO3^2- above 30 mol/L: no solution (log K of CO2(g) to
    # CO3^2- + 2 H+ about -18.15 at 25 °C, from the library's constants).
    mix = chem.load_preset("presets/cooling-tower-makeup.toml")
    d = chem.system_distribution(mix, "carbonate", np.array([6.0, 10.0, 12.5]))
    total = np.sum(list(d.series.values()), axis=0)
    np.testing.assert_allclose(total[:2], 1.0, rtol=1e-9)
    assert list(d.no_solution) == [False, False, True] and np.isnan(total[2])
