"""The line commands: solve, library, --help, --version, and their errors."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from chem import load_preset, solve

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "presets" / "warm-room-rinse.toml"


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "tui", *args], capture_output=True, text=True, cwd=cwd)


def test_solve_json_follows_the_contract():
    out = run("solve", str(DEMO), "--json")
    assert out.returncode == 0, out.stderr
    doc = json.loads(out.stdout)
    assert set(doc) >= {"format", "pH", "pOH", "temperature_c", "activity", "ionic_strength_M", "converged",
                        "balance_error_M", "species", "systems", "warnings", "cautions"}
    assert doc["format"] == 1 and doc["converged"] is True
    eq = solve(load_preset(DEMO))
    assert doc["pH"] == pytest.approx(eq.pH, abs=1e-12)
    assert doc["temperature_c"] == 37.0 and doc["activity"] == "davies"
    for s in doc["species"]:
        assert set(s) == {"name", "system", "protons", "charge", "conc_M", "activity_coefficient", "fraction"}
    by_name = {s["name"]: s for s in doc["species"]}
    assert by_name["H+"]["system"] == "water" and by_name["OH-"]["system"] == "water"
    assert by_name["Na+"]["system"] == "strong"
    assert by_name["H2PO4-"]["protons"] == 2 and by_name["H2PO4-"]["charge"] == -1
    phos = [s for s in doc["species"] if s["system"] == "phosphate"]
    assert sum(s["fraction"] for s in phos) == pytest.approx(1.0, abs=1e-12)
    [phosphate] = doc["systems"]
    assert phosphate["name"] == "phosphate" and phosphate["total_M"] == pytest.approx(0.020)
    # DESIGN §8.3: dissolved, free and the distribution over every form, largest first
    assert phosphate["dissolved_M"] == pytest.approx(0.020) and phosphate["free_M"] == pytest.approx(0.020)
    shares = [d["fraction"] for d in phosphate["distribution"]]
    assert shares == sorted(shares, reverse=True) and sum(shares) == pytest.approx(1.0, abs=1e-12)
    assert doc["solids"] == [] and doc["gases"] == [] and doc["precipitate"] is False


def test_solve_table_is_readable():
    out = run("solve", str(DEMO))
    assert out.returncode == 0
    assert "pH 7.1" in out.stdout and "H2PO4-" in out.stdout and "ionic strength" in out.stdout
    assert "safety data sheets" in out.stdout


def test_cautions_reach_the_json(tmp_path):
    out = run("solve", str(ROOT / "presets" / "cleaning-closet-mixup.toml"), "--json")
    assert any(c["code"] == "chloramine" for c in json.loads(out.stdout)["cautions"])


@pytest.mark.parametrize("args, fragment", [
    (["solve", "nowhere.toml"], "no such file"),
    (["solve"], "required"),
    (["solve", "x.toml", "--bogus"], "unrecognized arguments"),
    (["frobnicate"], "protomix"),
])
def test_bad_input_exits_2_with_one_line(args, fragment):
    out = run(*args)
    assert out.returncode == 2
    assert fragment in out.stderr
    assert "Traceback" not in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1


def test_bad_preset_content_exits_2(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[[ingredient]]\nname = "NaCl"\nconc = "5 kg"\n')
    out = run("solve", str(bad))
    assert out.returncode == 2
    assert out.stderr.strip() == f"protomix: error: {bad}: ingredient 1 (NaCl): conc: '5 kg': unknown unit 'kg' " \
                                 "(use M, mM, uM, nM, mol/L, mmol/L, g/L or mg/L)"


def test_library_lists_and_filters_with_sources():
    out = run("library", "phosphate")
    assert out.returncode == 0
    assert "system   phosphate" in out.stdout and "source:" in out.stdout
    assert "disodium hydrogen phosphate" in out.stdout
    everything = run("library")
    assert "systems" in everything.stdout.splitlines()[-1]


def test_help_and_version():
    out = run("--help")
    assert out.returncode == 0 and "protomix solve" in out.stdout
    ver = run("--version")
    assert ver.returncode == 0 and ver.stdout.startswith("protomix ")
