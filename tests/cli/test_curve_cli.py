"""``protomix curve``: every kind, the JSON and CSV contracts, the text plot and bad options."""

from __future__ import annotations

import csv
import io
import json
import math
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from chem import load_library, load_preset, parse_volume
from chem.curves import titration
from tui.cli import main
from tui.cli.curve_cmd import _ProgressBar

ROOT = Path(__file__).resolve().parents[2]
PRESET = ROOT / "presets" / "warm-room-rinse.toml"
TITRATION = ["--kind", "titration", "--titrant", "NaOH", "--titrant-conc", "0.1 M", "--sample", "25 mL",
             "--to", "5 mL"]


def curve(capsys, *args):
    code = main(["curve", str(PRESET), *args])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_titration_json_follows_the_contract_and_matches_the_core(capsys):
    code, out, err = curve(capsys, *TITRATION, "--json")
    assert code == 0, err
    doc = json.loads(out)
    assert set(doc) == {"kind", "x_label", "x", "series", "equivalence_points"}
    assert doc["kind"] == "titration" and doc["x_label"] == "volume_mL"
    assert "pH" in doc["series"] and all(len(v) == len(doc["x"]) for v in doc["series"].values())
    lib = load_library()
    direct = titration(load_preset(PRESET), lib.reagent("NaOH"), 0.1, parse_volume("25 mL"), parse_volume("5 mL"))
    np.testing.assert_array_equal(doc["x"], direct.x)
    np.testing.assert_array_equal(doc["series"]["pH"], direct.pH)
    [ep] = doc["equivalence_points"]
    assert set(ep) == {"volume_mL", "pH"}
    # 6 mM NaH2PO4 in 25 mL takes 1.5 mL of 0.1 M NaOH to reach HPO4^2- (stoichiometry)
    assert ep["volume_mL"] == pytest.approx(1.5, rel=2e-3)
    assert ep["pH"] == pytest.approx(direct.equivalence_points[0].pH)


def test_csv_parses_back_and_matches_the_json(capsys):
    args = ["--kind", "sweep", "--vary", "sodium chloride", "--from", "0 mM", "--to", "500 mM", "--points", "11",
            "--species", "H2PO4-,HPO4^2-"]
    _, out_json, _ = curve(capsys, *args, "--json")
    code, out_csv, err = curve(capsys, *args, "--csv")
    assert code == 0, err
    doc = json.loads(out_json)
    rows = list(csv.reader(io.StringIO(out_csv)))
    assert rows[0] == [doc["x_label"], *doc["series"]]
    assert rows[0][:3] == ["sodium chloride_M", "pH", "ionic_strength_M"]
    assert len(rows) == 1 + len(doc["x"]) == 12
    for j, row in enumerate(rows[1:]):
        assert float(row[0]) == doc["x"][j]
        for k, name in enumerate(doc["series"], start=1):
            assert float(row[k]) == doc["series"][name][j]
    assert doc["x"][-1] == pytest.approx(0.5)


@pytest.mark.parametrize("args, kind, label", [
    (["--kind", "capacity", "--from", "4", "--to", "10", "--points", "13"], "capacity", "pH"),
    (["--kind", "dilution", "--to", "100", "--points", "5", "--fractions"], "dilution", "dilution_factor"),
    (["--kind", "sweep", "--vary", "temperature", "--from", "4", "--to", "60 °C", "--points", "8"], "sweep",
     "temperature_C"),
    (["--kind", "distribution", "--points", "15"], "distribution", "pH"),
    (["--kind", "logc", "--points", "15", "--species", "H+,HPO4^2-"], "logc", "pH"),
])
def test_every_kind_writes_json_with_a_ph_series(capsys, args, kind, label):
    code, out, err = curve(capsys, *args, "--json")
    assert code == 0, err
    doc = json.loads(out)
    assert doc["kind"] == kind and doc["x_label"] == label
    assert "pH" in doc["series"]
    assert all(len(v) == len(doc["x"]) for v in doc["series"].values())
    assert "equivalence_points" not in doc
    if kind == "capacity":
        assert min(doc["series"]["beta_M_per_pH"]) > 0
    if kind == "logc":
        assert set(doc["series"]) == {"pH", "H+", "HPO4^2-"}
    if kind == "dilution":
        fractions = [doc["series"][n] for n in ("H3PO4", "H2PO4-", "HPO4^2-", "PO4^3-")]
        assert all(math.isclose(sum(col), 1.0, abs_tol=1e-12) for col in zip(*fractions))


def test_text_plot_is_the_default(capsys):
    code, out, err = curve(capsys, *TITRATION, "--width", "70", "--height", "16")
    assert code == 0, err
    assert "Rinse buffer" in out and "titrant added (mL)" in out
    found = re.search(r"equivalence point 1: ([\d.]+) mL, pH ([\d.]+)", out)
    assert found and float(found.group(1)) == pytest.approx(1.5, rel=2e-3)
    assert "\x1b[" not in out            # not a terminal: no colour codes
    assert max(len(line) for line in out.splitlines()[1:18]) <= 70


def test_end_to_end_through_the_console_entry():
    out = subprocess.run([sys.executable, "-m", "tui", "curve", str(PRESET), "--kind", "capacity", "--points", "5",
                          "--csv"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    rows = list(csv.reader(io.StringIO(out.stdout)))
    assert rows[0] == ["pH", "beta_M_per_pH", "added_base_M", "ionic_strength_M"]
    assert len(rows) == 6
    assert out.stderr == ""              # no progress bar when stderr is not a terminal


@pytest.mark.parametrize("args, fragment", [
    (["--kind", "titration", "--titrant", "NaOH"], "needs --titrant-conc"),
    (TITRATION[:-2], "needs --to"),
    ([*TITRATION[:2], "--titrant", "unobtainium", *TITRATION[4:]], "unknown reagent 'unobtainium'"),
    ([*TITRATION[:4], "--titrant-conc", "0.1 kg", *TITRATION[6:]], "unknown unit 'kg'"),
    ([*TITRATION, "--from", "9 mL"], "upwards"),
    (["--kind", "capacity", "--titrant", "NaOH"], "--titrant applies only to --kind titration"),
    (["--kind", "sweep", "--vary", "NaOH", "--from", "0", "--to", "1 mM"], "not an ingredient"),
    (["--kind", "sweep", "--vary", "temperature", "--from", "warm", "--to", "30"], "not a temperature"),
    (["--kind", "sweep", "--vary", "temperature", "--from", "20"], "needs --to"),
    (["--kind", "dilution", "--from", "0.5"], "upwards from 1"),
    (["--kind", "capacity", "--from", "9", "--to", "3"], "below --to"),
    (["--kind", "logc", "--species", "XYZ"], "no species 'XYZ'"),
    (["--kind", "logc", "--points", "1"], "--points"),
    (["--kind", "spiral"], "invalid choice"),
    (["--kind", "logc", "--csv", "--json"], "not allowed with"),
])
def test_bad_options_give_one_line_errors_and_exit_2(capsys, args, fragment):
    code, out, err = curve(capsys, *args)
    assert code == 2
    assert out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("protomix") and "error" in lines[0]
    assert fragment in lines[0]
    assert "Traceback" not in err


def test_missing_preset_file_is_a_one_line_error(capsys, tmp_path):
    code = main(["curve", str(tmp_path / "nope.toml"), "--kind", "logc"])
    err = capsys.readouterr().err
    assert code == 2 and "no such file" in err and len(err.strip().splitlines()) == 1


class _FakeTerminal(io.StringIO):
    def __init__(self, tty: bool):
        super().__init__()
        self.tty = tty

    def isatty(self) -> bool:
        return self.tty


def test_progress_bar_shows_only_on_a_terminal_and_only_after_the_delay():
    term = _FakeTerminal(True)
    bar = _ProgressBar(term, delay=0.0)
    assert bar(0.5) is True
    assert "50%" in term.getvalue()
    bar.close()
    assert term.getvalue().endswith("\r")
    quick = _FakeTerminal(True)
    slow_to_show = _ProgressBar(quick, delay=60.0)
    slow_to_show(0.5)
    slow_to_show.close()
    assert quick.getvalue() == ""
    piped = _FakeTerminal(False)
    never = _ProgressBar(piped, delay=0.0)
    never(0.5)
    never.close()
    assert piped.getvalue() == ""


def test_solubility_of_calcite_in_pure_water_under_air(capsys, tmp_path):
    # A preset with no calcium and no carbonate ingredient, only CO2 held: the excess of calcite
    # brings both (issue: "the mixture plus an excess of that solid"). Near pH 8.3 calcite in
    # equilibrium with air holds about 0.5 mM calcium (common practice; see
    # tests/core/test_published_speciation.py for the source of that value).
    preset = tmp_path / "air.toml"
    preset.write_text('format = 1\ntitle = "water under air"\n[[gas]]\nname = "CO2"\npressure = "420 uatm"\n')
    def run(*args):
        code = main(["curve", str(preset), *args])
        got = capsys.readouterr()
        return code, got.out, got.err

    code, out, err = run("--kind", "solubility", "--solid", "calcite", "--from", "8.2", "--to", "8.4",
                         "--points", "3", "--json")
    assert code == 0, err
    doc = json.loads(out)
    assert set(doc["series"]) == {"pH", "calcium", "carbonate"}
    assert 0.3e-3 < doc["series"]["calcium"][1] < 0.8e-3
    code, out, err = run("--kind", "solubility", "--solid", "CaCO3", "--json")
    assert code == 2 and "name one" in err
