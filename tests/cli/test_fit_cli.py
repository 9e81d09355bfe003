"""protomix fit, solve --uncertainty, curve --uncertainty and recipe's uncertainty, as a user runs them."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from chem import load_preset, solve

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "core"))
from titration_reference import weak_acid_curve  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore:Descending:DeprecationWarning")

ROOT = Path(__file__).resolve().parents[2]
RINSE = ROOT / "presets" / "warm-room-rinse.toml"

SAMPLE = """format = 1
title = "unknown acid"
temperature_c = 25.0
activity = "ideal"

[[ingredient]]
name = "acid Y"
conc = "10.5 mM"

[[custom]]
name = "acid Y"
pKa = [4.9]
charge_fully_protonated = 0
protons = 1
counter_ions = {}
"""


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "tui", *args], capture_output=True, text=True, cwd=cwd)


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """A sample preset and reference data: 10 mM acid (pKa 4.76) in 100 mL, 0.1 M NaOH, noise 0.005."""
    folder = tmp_path_factory.mktemp("fit")
    (folder / "sample.toml").write_text(SAMPLE)
    v = np.linspace(0.2, 18.0, 45)
    ph = weak_acid_curve(0.010, 4.76, 0.1, 100.0, v) + np.random.default_rng(5).normal(0, 0.005, v.size)
    lines = ["volume_mL,pH,operator"] + [f"{a:.2f},{b:.4f},A" for a, b in zip(v, ph)]
    (folder / "run.csv").write_text("\n".join(lines) + "\n")
    return folder


FIT = ["fit", "sample.toml", "run.csv", "--titrant", "NaOH", "--titrant-conc", "0.1 M", "--sample", "100 mL"]


def test_json_follows_the_contract(files):
    out = run(*FIT, "--vary", "amount:acid Y", "--vary", "pKa:acid Y:1", "--vary", "offset", "--json", cwd=files)
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    assert set(doc) >= {"converged", "parameters", "rms_pH", "points", "residuals", "correlation"}
    assert doc["converged"] is True and doc["points"] == 45 and len(doc["residuals"]) == 45
    assert [p["name"] for p in doc["parameters"]] == ["amount:acid Y", "pKa:acid Y:1", "offset"]
    for p in doc["parameters"]:
        assert set(p) >= {"name", "value", "stderr", "unit"} and p["stderr"] > 0
    assert [p["unit"] for p in doc["parameters"]] == ["mol/L", "", "pH"]
    values = {p["name"]: p for p in doc["parameters"]}
    assert abs(values["pKa:acid Y:1"]["value"] - 4.76) < 4 * values["pKa:acid Y:1"]["stderr"]
    assert abs(values["amount:acid Y"]["value"] - 0.010) < 4 * values["amount:acid Y"]["stderr"]
    assert np.array(doc["correlation"]).shape == (3, 3)
    assert 0.003 < doc["rms_pH"] < 0.008
    [ep] = doc["equivalence_points"]
    assert ep["volume_mL"] == pytest.approx(10.0, rel=5e-3)
    assert {g["branch"] for g in doc["gran"]} == {"before", "after"}


def test_text_fits_in_80_columns(files):
    out = run(*FIT, "--vary", "amount:acid Y", "--vary", "pKa:acid Y:1", "--vary", "titrant", cwd=files)
    assert out.returncode == 0, out.stderr
    lines = out.stdout.splitlines()
    assert max(len(line) for line in lines) <= 80
    text = out.stdout
    assert "amount:acid Y" in text and "± std. error" in text and "rms residual" in text
    assert "equivalence point of the fitted curve" in text and "Gran" in text
    assert "strongly correlated: amount:acid Y and titrant" in text


def test_save_writes_the_fitted_sample(files):
    target = files / "fitted.toml"
    out = run(*FIT, "--vary", "amount:acid Y", "--vary", "pKa:acid Y:1", "--save", str(target), cwd=files)
    assert out.returncode == 0, out.stderr
    mix = load_preset(target)
    assert mix.ingredients[0].conc == pytest.approx(0.010, rel=3e-3)
    assert mix.ingredients[0].reagent.system.pka[0] == pytest.approx(4.76, abs=0.02)
    assert "Fitted by protomix fit" in mix.notes
    again = run(*FIT, "--vary", "amount:acid Y", "--save", str(target), cwd=files)
    assert again.returncode == 2 and "already exists" in again.stderr


@pytest.mark.parametrize("csv_text, vary, message", [
    ("volume_mL,pH\n0,3\n1,x\n", ["amount:acid Y"], "row 3, column pH: 'x' is not a number"),
    ("volume_mL,reading\n0,3\n", ["amount:acid Y"], "no 'pH' column"),
    ("volume_mL,pH\n", ["amount:acid Y"], "no data rows"),
    ("volume_mL,pH\n0,3\n2,4\n1,5\n", ["amount:acid Y"], "volumes must increase"),
    ("volume_mL,pH\n0,3\n1,4\n", ["amount:acid Y", "pKa:acid Y:1", "offset"], "2 points cannot determine 3"),
    ("volume_mL,pH\n0,3\n1,4\n2,5\n", ["amount:water"], "not an ingredient"),
])
def test_bad_input_is_one_line_and_exit_2(files, csv_text, vary, message):
    (files / "bad.csv").write_text(csv_text)
    args = ["fit", "sample.toml", "bad.csv", "--titrant", "NaOH", "--titrant-conc", "0.1 M", "--sample", "100 mL"]
    for v in vary:
        args += ["--vary", v]
    out = run(*args, cwd=files)
    assert out.returncode == 2
    assert out.stderr.count("\n") == 1 and out.stderr.startswith("protomix: error: ")
    assert message in out.stderr
    assert out.stdout == ""


def test_undetermined_parameter_exit_2(files):
    (files / "salt.toml").write_text(SAMPLE + '\n[[ingredient]]\nname = "NaCl"\nconc = "50 mM"\n'.replace(
        "\n[[ingredient]]\nname = \"NaCl\"", "\n[[ingredient]]\nname = \"NaCl\""))
    text = SAMPLE.replace('[[custom]]', '[[ingredient]]\nname = "NaCl"\nconc = "50 mM"\n\n[[custom]]')
    (files / "salt.toml").write_text(text)
    out = run("fit", "salt.toml", "run.csv", "--titrant", "NaOH", "--titrant-conc", "0.1 M", "--sample", "100 mL",
              "--vary", "amount:acid Y", "--vary", "amount:NaCl", cwd=files)
    assert out.returncode == 2 and "cannot determine amount:NaCl" in out.stderr


def test_control_characters_from_the_data_do_not_reach_the_terminal(files):
    (files / "evil.csv").write_text("volume_mL,pH\n0,3\n1,\x1b]0;owned\x07\n")
    out = run("fit", "sample.toml", "evil.csv", "--titrant", "NaOH", "--titrant-conc", "0.1 M", "--sample",
              "100 mL", "--vary", "offset", cwd=files)
    assert out.returncode == 2
    assert "\x1b" not in out.stderr and "\x07" not in out.stderr


def test_solve_without_uncertainty_is_unchanged():
    plain = json.loads(run("solve", str(RINSE), "--json").stdout)
    assert "uncertainty" not in plain
    eq = solve(load_preset(RINSE))
    assert plain["pH"] == pytest.approx(eq.pH, abs=1e-12)


def test_solve_json_uncertainty():
    out = run("solve", str(RINSE), "--json", "--uncertainty")
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    unc = doc["uncertainty"]
    assert unc["method"] == "first-order"
    assert set(unc["pH"]) == {"sd", "interval_95"}
    lo, hi = unc["pH"]["interval_95"]
    assert lo < doc["pH"] < hi and unc["pH"]["sd"] > 0
    assert "H2PO4-" in unc["species"] and unc["species"]["H2PO4-"]["log10_sd"] >= 0
    assert "pKa:phosphate:2" in unc["defaults"]["used_for"]
    mc = json.loads(run("solve", str(RINSE), "--json", "--uncertainty", "--monte-carlo", "2000").stdout)
    assert mc["uncertainty"]["method"] == "monte-carlo"
    assert mc["uncertainty"]["pH"]["sd"] == pytest.approx(unc["pH"]["sd"], rel=0.08)


def test_solve_text_uncertainty():
    out = run("solve", str(RINSE), "--uncertainty")
    assert out.returncode == 0 and "± 0.02" in out.stdout and "pKa:phosphate:2" in out.stdout
    bad = run("solve", str(RINSE), "--monte-carlo", "10")
    assert bad.returncode == 2 and "--monte-carlo goes with --uncertainty" in bad.stderr


def test_curve_band_series():
    out = run("curve", str(RINSE), "--kind", "titration", "--titrant", "HCl", "--titrant-conc", "0.1 M", "--sample",
              "25 mL", "--to", "10 mL", "--uncertainty", "--json", "--species", "HPO4^2-")
    assert out.returncode == 0, out.stderr
    s = json.loads(out.stdout)["series"]
    for name in ("pH", "HPO4^2-"):
        lo, mid, hi = (np.array(s[k], dtype=float) for k in (f"{name}_lo", name, f"{name}_hi"))
        assert np.all(lo <= mid) and np.all(mid <= hi) and np.any(hi > lo)
    plain = json.loads(run("curve", str(RINSE), "--kind", "titration", "--titrant", "HCl", "--titrant-conc", "0.1 M",
                           "--sample", "25 mL", "--to", "10 mL", "--json").stdout)
    assert "pH_lo" not in plain["series"]
    cap = run("curve", str(RINSE), "--kind", "capacity", "--uncertainty")
    assert cap.returncode == 2 and "--uncertainty applies only" in cap.stderr


def test_recipe_says_how_sure():
    out = run("recipe", "--system", "tris", "--pH", "7.4", "--temp", "37")
    assert out.returncode == 0 and "how sure: pH 7.40 ±" in out.stdout and "weighing" in out.stdout
    doc = json.loads(run("recipe", "--system", "tris", "--pH", "7.4", "--json").stdout)
    assert doc["uncertainty"]["from_weighing_sd"] > 0 and doc["uncertainty"]["from_constants_sd"] > 0


def test_names_from_the_preset_reach_the_terminal_escaped_in_text_and_json(files):
    """A colleague's preset names its acid with a bidirectional override and a C1 control:
    neither reaches the terminal raw; the JSON keeps the name exactly (as \\u escapes)."""
    evil = SAMPLE.replace("acid Y", "acid \\u202e\\u0085Y")
    (files / "evil.toml").write_text(evil)
    name = "amount:acid \u202e\u0085Y"
    args = ["fit", "evil.toml", "run.csv", "--titrant", "NaOH", "--titrant-conc", "0.1 M", "--sample", "100 mL",
            "--vary", name]
    text = run(*args, cwd=files)
    assert text.returncode == 0, text.stderr
    assert "\u202e" not in text.stdout and "\u0085" not in text.stdout
    assert "amount:acid \\u202e\\x85Y" in text.stdout
    out = run(*args, "--json", cwd=files)
    assert out.returncode == 0, out.stderr
    assert "\u202e" not in out.stdout and "\u0085" not in out.stdout
    assert json.loads(out.stdout)["parameters"][0]["name"] == name
