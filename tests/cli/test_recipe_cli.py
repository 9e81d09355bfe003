"""``protomix recipe``: the buffer designer on the command line."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from chem import load_preset, solve
from tui.cli import main

JSON_KEYS = {"system", "target_pH", "temperature_c", "form", "items", "ionic_strength_M",
             "buffer_capacity_mM_per_pH", "shortcut_pH", "warnings"}


def cli(capsys, *args):
    code = main(["recipe", *args])
    out, err = capsys.readouterr()
    return code, out, err


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "tui", *args], capture_output=True, text=True, cwd=cwd)


def test_json_follows_the_contract(capsys):
    code, out, err = cli(capsys, "--system", "hepes", "--pH", "7.4", "--temp", "37", "--total", "50 mM",
                         "--volume", "1 L", "--salt", "NaCl 150 mM", "--json", "--check-temp", "22")
    assert code == 0, err
    doc = json.loads(out)
    assert set(doc) >= JSON_KEYS
    assert doc["system"] == "hepes" and doc["target_pH"] == 7.4 and doc["temperature_c"] == 37.0
    assert doc["form"] == "reagents"
    assert doc["pH"] == pytest.approx(7.4, abs=1e-6)
    for item in doc["items"]:
        assert {"reagent", "amount", "unit"} <= set(item)
        assert isinstance(item["amount"], float) and item["amount"] > 0
    assert [i["unit"] for i in doc["items"]] == ["g", "g", "g"]
    salt = doc["items"][-1]
    assert salt["reagent"] == "sodium chloride" and salt["amount"] == pytest.approx(8.766, abs=0.001)
    assert doc["ionic_strength_M"] > 0.15
    assert isinstance(doc["shortcut_pH"], float) and doc["shortcut_pH"] != pytest.approx(7.4, abs=0.05)
    assert doc["pH_at"][0]["temperature_c"] == 22.0 and doc["pH_at"][0]["pH"] > 7.45


@pytest.mark.parametrize("form, units", [("reagents", {"g"}), ("titrant", {"g", "mL"}), ("stocks", {"mL"})])
def test_each_form_gives_bench_units(capsys, form, units):
    code, out, err = cli(capsys, "--system", "phosphate", "--pH", "7.2", "--form", form, "--json")
    assert code == 0, err
    doc = json.loads(out)
    assert doc["form"] == form
    assert {i["unit"] for i in doc["items"]} == units


def test_table_shows_the_recipe_the_shortcut_and_the_other_temperature(capsys):
    code, out, err = cli(capsys, "--system", "tris", "--pH", "8.0", "--temp", "4", "--form", "titrant",
                         "--check-temp", "22")
    assert code == 0, err
    assert "weigh" in out and "pipette" in out and " mL " in out
    assert "pH 8.000 at 4 °C" in out
    assert "Henderson–Hasselbalch" in out and "predicts pH" in out
    assert "same solution at 22 °C" in out
    assert "water to 1 L" in out


def test_target_outside_the_useful_range_is_warned_in_plain_words(capsys):
    code, out, _ = cli(capsys, "--system", "phosphate", "--pH", "8.6")
    assert code == 0
    assert "warning [outside-useful-range]" in out and "pKa ± 1" in out


def test_suggest_lists_ranked_systems(capsys):
    code, out, err = cli(capsys, "--pH", "8.0", "--temp", "4", "--suggest")
    assert code == 0, err
    lines = [ln for ln in out.splitlines() if ln.strip()[:1].isdigit()]
    assert len(lines) >= 5
    assert "hepes" in out and "dpKa/dT" in out and "mM/pH" in out
    assert "sulfide" not in out


def test_suggest_json(capsys):
    code, out, _ = cli(capsys, "--pH", "7.4", "--temp", "37", "--suggest", "--json", "--limit", "3")
    doc = json.loads(out)
    assert code == 0 and len(doc["suggestions"]) == 3
    assert {"system", "pKa_at_temperature", "dpKa_dT_per_K", "capacity_mM_per_pH"} <= set(doc["suggestions"][0])


def test_save_writes_a_preset_that_solve_reads_back(tmp_path):
    path = tmp_path / "hepes37.toml"
    out = run("recipe", "--system", "hepes", "--pH", "7.4", "--temp", "37", "--salt", "NaCl 150 mM",
              "--form", "titrant", "--save", str(path))
    assert out.returncode == 0, out.stderr
    assert "saved preset" in out.stdout
    solved = run("solve", str(path), "--json")
    assert solved.returncode == 0, solved.stderr
    doc = json.loads(solved.stdout)
    assert doc["temperature_c"] == 37.0
    assert doc["pH"] == pytest.approx(7.4, abs=1e-3)
    assert solve(load_preset(path)).pH == pytest.approx(7.4, abs=1e-3)


def test_save_refuses_to_overwrite_without_force(capsys, tmp_path):
    path = tmp_path / "buffer.toml"
    path.write_text("keep me", encoding="utf-8")
    code, out, err = cli(capsys, "--system", "tris", "--pH", "7.5", "--save", str(path))
    assert code == 2
    assert err.startswith("protomix: error:") and err.count("\n") == 1 and "--force" in err
    assert path.read_text(encoding="utf-8") == "keep me"
    code, out, err = cli(capsys, "--system", "tris", "--pH", "7.5", "--save", str(path), "--force", "--json")
    assert code == 0, err
    json.loads(out)                               # stdout stays pure JSON; the note goes to stderr
    assert "saved preset" in err
    assert solve(load_preset(path)).pH == pytest.approx(7.5, abs=1e-3)


@pytest.mark.parametrize("args, fragment", [
    (["--system", "nonsense", "--pH", "7"], "unknown system"),
    (["--system", "tris", "--pH", "3"], "out of reach"),
    (["--system", "tris", "--pH", "7", "--total", "fifty"], "not an amount"),
    (["--system", "tris", "--pH", "7", "--total=-5 mM"], "negative"),
    (["--system", "tris", "--pH", "7", "--volume", "1 gallon"], "unknown volume unit"),
    (["--system", "tris", "--pH", "seven"], "not a number"),
    (["--system", "tris", "--pH", "7", "--salt", "NaCl"], "name and an amount"),
    (["--system", "tris", "--pH", "7", "--titrant", "HCl"], "only with form 'titrant'"),
    (["--system", "tris", "--pH", "7", "--form", "stocks", "--stock-conc", "5 mM"], "more concentrated"),
    (["--system", "tris"], "required"),
])
def test_bad_requests_give_one_line_errors(capsys, args, fragment):
    code, out, err = cli(capsys, *args)
    assert code == 2
    assert out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith("protomix")
    assert fragment in err


def test_bad_request_through_the_console_entry_point():
    out = run("recipe", "--system", "tris", "--pH", "2")
    assert out.returncode == 2
    assert out.stderr.startswith("protomix: error:") and out.stderr.count("\n") == 1
