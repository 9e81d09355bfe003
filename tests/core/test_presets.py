"""Preset files: every shipped preset works; every bad input gets a one-line error."""

from __future__ import annotations

from pathlib import Path

import pytest

from chem import PresetError, dumps_preset, load_preset, loads_preset, save_preset, shipped_presets, solve
from chem.presets import demo_mixture

PRESETS = Path(__file__).resolve().parents[2] / "presets"


@pytest.mark.parametrize("path", sorted(PRESETS.glob("*.toml")), ids=lambda p: p.stem)
def test_every_shipped_preset_loads_and_converges(path):
    mix = load_preset(path)
    eq = solve(mix)
    assert eq.converged
    assert mix.title, "shipped presets carry a title"


def test_at_least_six_scenarios_and_a_demo_ship():
    names = {p.name for p in shipped_presets()}
    assert "demo.toml" in names and len(names) >= 7
    assert demo_mixture().ingredients


GOOD = """format = 1
title = "t"
temperature_c = 30.0
activity = "extended-dh"
[[ingredient]]
name = "Na2HPO4"
conc = "20 mM"
[[ingredient]]
name = "sodium dihydrogen phosphate"
conc = 0.01
[[ingredient]]
name = "compound 7"
conc = "1.5 g/L"
[[custom]]
name = "compound 7"
pKa = [3.1, 8.4]
dH_kJ = [5.0, 45.0]
charge_fully_protonated = 1
protons = 2
counter_ions = { "Cl-" = 1 }
molar_mass = 300.0
"""


def test_good_preset_reads_every_unit_and_the_custom_reagent():
    mix = loads_preset(GOOD, "good.toml")
    assert mix.temperature_c == 30.0 and mix.activity == "extended-dh"
    concs = [i.conc for i in mix.ingredients]
    assert concs == pytest.approx([0.02, 0.01, 0.005])
    assert mix.ingredients[2].reagent.system.pka == (3.1, 8.4)


@pytest.mark.parametrize("unit, factor", [("M", 1.0), ("mM", 1e-3), ("uM", 1e-6), ("µM", 1e-6), ("nM", 1e-9),
                                          ("mol/L", 1.0), ("mmol/L", 1e-3)])
def test_concentration_units(unit, factor):
    mix = loads_preset(f'[[ingredient]]\nname = "NaCl"\nconc = "2.5 {unit}"\n', "u.toml")
    assert mix.ingredients[0].conc == pytest.approx(2.5 * factor)


def test_mass_units_use_the_molar_mass(lib):
    mix = loads_preset('[[ingredient]]\nname = "NaCl"\nconc = "584.4 mg/L"\n', "m.toml")
    assert mix.ingredients[0].conc == pytest.approx(0.5844 / lib.reagent("NaCl").molar_mass)


BAD = {
    "unknown name": ('[[ingredient]]\nname = "unobtainium"\nconc = "1 mM"\n', "ingredient 1 (unobtainium): name"),
    "bad unit": ('[[ingredient]]\nname = "NaCl"\nconc = "5 kg"\n', "conc: '5 kg': unknown unit 'kg'"),
    "negative": ('[[ingredient]]\nname = "NaCl"\nconc = -0.1\n', "cannot be negative"),
    "negative text": ('[[ingredient]]\nname = "NaCl"\nconc = "-3 mM"\n', "cannot be negative"),
    "nan": ('[[ingredient]]\nname = "NaCl"\nconc = nan\n', "finite"),
    "inf": ('[[ingredient]]\nname = "NaCl"\nconc = inf\n', "finite"),
    "huge": ('[[ingredient]]\nname = "NaCl"\nconc = "500 M"\n', "more than 20 mol/L"),
    "unknown key": ('colour = "blue"\n', "unknown key 'colour'"),
    "unknown ingredient key": ('[[ingredient]]\nname = "NaCl"\nconc = 1\namount = 2\n', "unknown key 'amount'"),
    "wrong type": ('temperature_c = "warm"\n', "temperature_c: expected a number"),
    "wrong conc type": ('[[ingredient]]\nname = "NaCl"\nconc = [1]\n', "conc:"),
    "missing conc": ('[[ingredient]]\nname = "NaCl"\n', "missing 'conc'"),
    "temperature out of range": ("temperature_c = 150.0\n", "temperature_c: 150 is outside 0..100"),
    "unknown model": ('activity = "pitzer"\n', "unknown model 'pitzer'"),
    "bad format": ("format = 2\n", "format: expected 1"),
    "malformed": ('[[ingredient]\nname = "NaCl"\n', "malformed TOML"),
    "non-neutral custom": ('[[custom]]\nname = "X"\npKa = [4.0]\ncharge_fully_protonated = 0\nprotons = 1\n'
                           'counter_ions = { "Na+" = 1 }\n', "not electrically neutral"),
    "unordered pKa": ('[[custom]]\nname = "X"\npKa = [9.0, 4.0]\ncharge_fully_protonated = 0\nprotons = 2\n',
                      "pKa values must increase"),
    "pKa out of range": ('[[custom]]\nname = "X"\npKa = [17.5]\ncharge_fully_protonated = 0\nprotons = 1\n',
                         "outside -2..16"),
    "unknown counter-ion": ('[[custom]]\nname = "X"\npKa = [4.0]\ncharge_fully_protonated = 0\nprotons = 0\n'
                            'counter_ions = { "Xx+" = 1 }\n', "unknown ion 'Xx+'"),
    "mass unit without molar mass": ('[[custom]]\nname = "X"\npKa = [4.0]\ncharge_fully_protonated = 0\n'
                                     'protons = 1\n[[ingredient]]\nname = "X"\nconc = "1 g/L"\n',
                                     "needs a molar mass"),
    "system not reagent": ('[[ingredient]]\nname = "phosphate"\nconc = "1 mM"\n', "is an acid–base system"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_presets_give_one_line_errors_naming_file_and_field(case):
    text, fragment = BAD[case]
    with pytest.raises(PresetError) as err:
        loads_preset(text, "flask.toml")
    msg = str(err.value)
    assert "\n" not in msg
    assert msg.startswith("flask.toml: ")
    assert fragment in msg


def test_missing_and_unreadable_files(tmp_path):
    with pytest.raises(PresetError, match="no such file"):
        load_preset(tmp_path / "absent.toml")
    with pytest.raises(PresetError, match="folder"):
        load_preset(tmp_path)
    (tmp_path / "bin.toml").write_bytes(b"\xff\xfe\x00")
    with pytest.raises(PresetError, match="UTF-8"):
        load_preset(tmp_path / "bin.toml")


def test_save_round_trips_and_never_overwrites_silently(tmp_path):
    mix = loads_preset(GOOD, "good.toml")
    path = save_preset(mix, tmp_path / "mine.toml")
    again = load_preset(path)
    assert again == mix
    assert solve(again).pH == solve(mix).pH
    with pytest.raises(PresetError, match="already exists"):
        save_preset(mix, path)
    save_preset(mix.with_temperature(10.0), path, overwrite=True)
    assert load_preset(path).temperature_c == 10.0
    assert [p.name for p in tmp_path.iterdir()] == ["mine.toml"], "no temporary files left behind"


def test_dumped_text_is_valid_preset_text():
    mix = loads_preset(GOOD, "good.toml")
    assert loads_preset(dumps_preset(mix), "again.toml") == mix
