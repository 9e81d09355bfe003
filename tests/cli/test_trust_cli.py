"""The line commands with hostile or broken input: one line and status 2, never a crash or a raw escape.

Exit statuses: 0 done, 1 internal error (a bug), 2 bad input or a file problem, 3 no usable
answer (not converged, nothing matches). Most checks call the dispatcher in-process (fast);
those about the process itself (a full device, what --help imports) run it as a subprocess.
"""

from __future__ import annotations

import csv
import dataclasses
import io
import json
import os
import subprocess
import sys
import unicodedata
from pathlib import Path

import pytest

import chem
from tui.cli import main

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "presets" / "demo.toml"
ESC = "\x1b]0;owned\x07\x1b[2J\x9b31m\u202e"          # OSC title, clear screen, C1 CSI, bidi override


def cli(capsys, *args):
    code = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def run(*args, **kwargs):
    return subprocess.run([sys.executable, "-m", "tui", *map(str, args)], capture_output=True, text=True,
                          **kwargs)


def unsafe(text: str) -> list[str]:
    """Characters in ``text`` that a terminal would act on (line feeds aside)."""
    return sorted({repr(ch) for ch in text if ch != "\n" and unicodedata.category(ch) in ("Cc", "Cf", "Zl", "Zp")})


def one_error_line(code, out, err, status=2) -> str:
    assert code == status, err
    assert err.count("\n") == 1 and err.startswith("protomix") and "Traceback" not in err, err
    assert not unsafe(err)
    return err


def preset(tmp_path, text: str | bytes, name="p.toml") -> Path:
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def ingredient(name: str = "NaCl", conc: str = '"1 mM"') -> str:
    return f'format = 1\n[[ingredient]]\nname = "{name}"\nconc = {conc}\n'


# -- files that are not presets ------------------------------------------------------------------

@pytest.mark.parametrize("text, fragment", [
    ("format = 1\nx = " + "[" * 2000 + "]" * 2000 + "\n", "nested"),
    (ingredient(conc="9" * 5000), "too many digits"),
    (ingredient(conc="9" * 4000), "too large"),
    (ingredient(conc='"５ mM"'), "digits 0-9"),
    (ingredient(conc='"1e-400 M"'), "too small"),
])
def test_hostile_preset_contents_give_one_line(capsys, tmp_path, text, fragment):
    err = one_error_line(*cli(capsys, "solve", preset(tmp_path, text)))
    assert fragment in err


def test_a_byte_order_mark_is_accepted(capsys, tmp_path):
    code, out, err = cli(capsys, "solve", preset(tmp_path, b"\xef\xbb\xbf" + ingredient().encode()))
    assert code == 0, err and "sodium chloride" in out


def _bounded():
    """In the child: at most 3 GB of memory, so a regression (reading /dev/zero forever) fails, not the machine."""
    import resource

    resource.setrlimit(resource.RLIMIT_AS, (3 << 30, 3 << 30))


@pytest.mark.parametrize("make", ["device", "fifo"])
def test_devices_and_pipes_are_not_read(tmp_path, make):
    path = Path("/dev/zero") if make == "device" else tmp_path / "pipe.toml"
    if make == "fifo":
        os.mkfifo(path)                                 # nobody writes: reading it would wait forever
    out = run("solve", path, timeout=60, preexec_fn=_bounded)
    assert out.returncode == 2
    assert out.stderr.strip() == f"protomix: error: {path}: is not a regular file (a device, pipe or socket); not read"


@pytest.mark.parametrize("make", ["folder", "huge"])
def test_only_regular_files_of_a_sane_size_are_read(capsys, tmp_path, make):
    if make == "folder":
        path = tmp_path / "dir.toml"
        path.mkdir()
    else:
        path = preset(tmp_path, ingredient() + "#" * 2_000_000 + "\n")
    err = one_error_line(*cli(capsys, "solve", path))
    assert {"folder": "folder", "huge": "MB"}[make] in err


def test_a_long_name_is_quoted_short(capsys, tmp_path):
    err = one_error_line(*cli(capsys, "solve", preset(tmp_path, ingredient("a" * 100_000))))
    assert len(err) < 800 and "…" in err


# -- text from a file never reaches the terminal raw --------------------------------------------

def toml_text(text: str) -> str:
    """``text`` as a TOML basic string, every non-printable character as a \\u escape."""
    return '"' + "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in text) + '"'


def hostile(tmp_path) -> Path:
    name = toml_text(f"evil{ESC}acid")
    return preset(tmp_path, f'''format = 1
title = {toml_text(f"Title{ESC}")}
notes = {toml_text(f"notes{ESC}")}
[[ingredient]]
name = {name}
conc = "10 mM"
[[custom]]
name = {name}
pKa = [4.5]
charge_fully_protonated = 0
protons = 1
species = [{toml_text(f"H{ESC}A")}, {toml_text(f"A{ESC}-")}]
''')


def test_solve_table_and_json_escape_control_characters(capsys, tmp_path):
    path = hostile(tmp_path)
    code, out, err = cli(capsys, "solve", path)
    assert code == 0, err
    assert not unsafe(out)
    assert "\\x1b]0;owned" in out                         # shown, as an escape, not acted on
    code, out, err = cli(capsys, "solve", path, "--json")
    assert code == 0 and not unsafe(out)
    doc = json.loads(out)                               # still valid JSON, with the names as they are
    assert any(s["name"] == f"H{ESC}A" for s in doc["species"])


@pytest.mark.parametrize("kind", ["distribution", "logc"])
@pytest.mark.parametrize("form", [[], ["--csv"], ["--json"]])
def test_curve_output_escapes_control_characters(capsys, tmp_path, kind, form):
    code, out, err = cli(capsys, "curve", hostile(tmp_path), "--kind", kind, "--points", 11, *form)
    assert code == 0, err
    assert not unsafe(out) and not unsafe(err)


def test_error_messages_quoting_a_name_escape_it(capsys, tmp_path):
    err = one_error_line(*cli(capsys, "solve", preset(tmp_path, ingredient(toml_text(f"no such{ESC}thing")[1:-1]))))
    assert "\\x1b" in err
    err = one_error_line(*cli(capsys, "recipe", "--system", "tris", "--pH", "7.4", "--salt", f"X{ESC} 1 mM"))
    assert "\\x1b" in err or "\\x9b" in err


def test_library_escapes_its_query(capsys):
    code, out, err = cli(capsys, "library", f"zz{ESC}")
    assert code == 3 and not unsafe(err) and "\\x1b" in err


# -- exit statuses --------------------------------------------------------------------------------

def test_a_solve_that_did_not_converge_exits_3(capsys, monkeypatch):
    real = chem.solve

    def unconverged(mixture):
        return dataclasses.replace(real(mixture), converged=False)

    monkeypatch.setattr(chem, "solve", unconverged)
    code, out, err = cli(capsys, "solve", DEMO)
    assert code == 3
    assert "NOT CONVERGED" in out and "did not converge" in err
    code, out, err = cli(capsys, "solve", DEMO, "--json")
    assert code == 3 and json.loads(out)["converged"] is False


def test_library_without_a_match_exits_3_and_counts_in_words(capsys):
    code, out, err = cli(capsys, "library", "zzzz")
    assert code == 3 and out == "" and "nothing in the library matches 'zzzz'" in err
    code, out, err = cli(capsys, "library", "hepes")
    assert code == 0 and out.strip().splitlines()[-1].startswith("1 system, ")


def test_the_exit_statuses_are_in_the_help(capsys):
    code, out, _ = cli(capsys, "--help")
    assert code == 0 and "exit status: 0 done" in out and "3 no usable answer" in out
    code, out, _ = cli(capsys, "solve", "--help")
    assert code == 0 and "status 3" in out


# -- options that do not go together -------------------------------------------------------------

@pytest.mark.parametrize("args, fragment", [
    (["recipe", "--pH", "7.4", "--suggest", "--system", "tris"], "--system does not go with --suggest"),
    (["recipe", "--pH", "7.4", "--system", "tris", "--limit", "3"], "--limit goes with --suggest"),
    (["recipe", "--pH", "7.4", "--system", "tris", "--force"], "--force goes with --save"),
    (["recipe", "--pH", "7.4", "--system", "tris", "--save", ""], "--save needs a file name"),
    (["recipe", "--pH", "7.4", "--suggest", "--limit", "0"], "--limit must be 1 or more"),
    (["curve", DEMO, "--kind", "capacity", "--csv", "--width", "50"], "--width sizes the text plot"),
])
def test_conflicting_options_exit_2(capsys, args, fragment):
    code, out, err = cli(capsys, *args)
    assert fragment in one_error_line(code, out, err)
    assert out == ""


# -- --save ----------------------------------------------------------------------------------------

def _unwritable(tmp_path) -> Path:
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o555)
    if os.access(folder, os.W_OK):                     # root: modes do not stop it
        folder = Path("/sys")
        if os.access(folder, os.W_OK) and (folder / "kernel").exists():
            try:
                (folder / "x.toml").touch()
            except OSError:
                return folder
            pytest.skip("no unwritable folder here")
    return folder


@pytest.mark.parametrize("where", ["unwritable", "missing", "device", "symlink"])
def test_save_refuses_before_doing_the_work(capsys, tmp_path, where):
    if where == "unwritable":
        target, extra = _unwritable(tmp_path) / "x.toml", []
    elif where == "missing":
        target, extra = tmp_path / "no" / "such" / "x.toml", []
    elif where == "device":                            # a pipe: like /dev/null, not a regular file
        target, extra = tmp_path / "pipe.toml", ["--force"]
        os.mkfifo(target)
    else:
        real = tmp_path / "real.toml"
        real.write_text("keep me")
        target = tmp_path / "link.toml"
        target.symlink_to(real)
        extra = ["--force"]
    code, out, err = cli(capsys, "recipe", "--system", "tris", "--pH", "7.4", "--save", target, *extra)
    one_error_line(code, out, err)
    assert out == ""                                    # nothing designed, nothing printed
    if where == "device":
        assert target.is_fifo()
    if where == "symlink":
        assert target.is_symlink() and (tmp_path / "real.toml").read_text() == "keep me"


def test_save_follows_the_umask(capsys, tmp_path):
    old = os.umask(0o022)
    try:
        code, out, err = cli(capsys, "recipe", "--system", "tris", "--pH", "7.4", "--save", tmp_path / "b.toml")
    finally:
        os.umask(old)
    assert code == 0, err
    assert (tmp_path / "b.toml").stat().st_mode & 0o777 == 0o644


# -- one pH range, one temperature reading -------------------------------------------------------

@pytest.mark.parametrize("args", [
    ["curve", DEMO, "--kind", "distribution", "--from", "-1000", "--to", "1000"],
    ["curve", DEMO, "--kind", "capacity", "--from", "-1"],
    ["curve", DEMO, "--kind", "logc", "--to", "15"],
    ["recipe", "--suggest", "--pH", "-1"],
    ["recipe", "--system", "tris", "--pH", "14.5"],
])
def test_one_ph_range_for_every_command(capsys, args):
    assert "outside the pH range 0 to 14" in one_error_line(*cli(capsys, *args))


@pytest.mark.parametrize("text, ok", [("37 ℃", True), ("37 °C", True), ("37C", True), ("37", True),
                                      ("37 K", False), ("101", False)])
def test_one_temperature_reading_for_every_command(capsys, text, ok):
    sweep = cli(capsys, "curve", DEMO, "--kind", "sweep", "--vary", "temperature", "--from", "5", "--to", text,
                "--points", 3, "--csv")
    recipe = cli(capsys, "recipe", "--suggest", "--pH", "7.4", "--temp", text, "--limit", 1)
    assert (sweep[0] == 0) is ok and (recipe[0] == 0) is ok
    if not ok:                                          # the same rule, in the same words
        reason = "is not a temperature (expected e.g." if "K" in text else "101 °C is outside 0 to 100 °C"
        assert reason in sweep[2] and reason in recipe[2]


def test_a_titration_takes_the_points_its_help_promises(capsys):
    code, out, err = cli(capsys, "curve", DEMO, "--kind", "titration", "--titrant", "NaOH", "--titrant-conc",
                         "0.1 M", "--sample", "25 mL", "--to", "1 mL", "--points", 20001, "--csv")
    assert code == 0, err
    assert len(out.strip().splitlines()) >= 20002


# -- CSV -----------------------------------------------------------------------------------------

@pytest.mark.parametrize("kind", ["capacity", "distribution", "logc"])
def test_csv_has_one_ph_column(capsys, kind):
    code, out, err = cli(capsys, "curve", DEMO, "--kind", kind, "--points", 5, "--csv")
    assert code == 0, err
    header = next(csv.reader(io.StringIO(out)))
    assert header[0] == "pH" and "pH" not in header[1:]


def test_log_c_csv_has_the_true_values(capsys):
    code, out, err = cli(capsys, "curve", DEMO, "--kind", "logc", "--from", "13", "--to", "14", "--points", 3,
                         "--csv")
    assert code == 0, err
    rows = list(csv.DictReader(io.StringIO(out)))
    assert float(rows[-1]["H3PO4"]) < -20                # about -23 at pH 14; never clipped to -14
    mixture = chem.load_preset(DEMO)
    from chem.diagrams import log_concentrations
    true = log_concentrations(mixture, [14.0], ionic_strength=chem.solve(mixture).ionic_strength,
                              floor=float("-inf")).series["H3PO4"][0]
    assert float(rows[-1]["H3PO4"]) == pytest.approx(true, abs=1e-9)


# -- the process ---------------------------------------------------------------------------------

@pytest.mark.parametrize("args", [["solve", DEMO], ["solve", DEMO, "--json"], ["library"], ["--help"]])
def test_output_to_a_full_device_is_one_line_and_status_2(args):
    if not Path("/dev/full").exists():
        pytest.skip("no /dev/full here")
    with open("/dev/full", "w") as full:
        out = subprocess.run([sys.executable, "-m", "tui", *map(str, args)], stdout=full, stderr=subprocess.PIPE,
                             text=True)
    assert out.returncode == 2
    assert out.stderr.strip() == "protomix: error: cannot write the output (No space left on device)"


@pytest.mark.parametrize("flag", ["--help", "--version"])
def test_help_and_version_load_neither_the_core_nor_numpy(flag):
    code = ("import sys\nfrom tui.cli import main\ntry:\n    main([%r])\nexcept SystemExit:\n    pass\n"
            "print('LOADED', sorted(m for m in ('chem', 'numpy', 'scipy', 'textual', 'plotext') "
            "if m in sys.modules), file=sys.stderr)") % flag
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert "LOADED []" in out.stderr, out.stderr


def test_the_version_matches_the_package_metadata():
    from importlib.metadata import version

    import tui

    assert tui.__version__ == version("protomix") == chem.__version__
