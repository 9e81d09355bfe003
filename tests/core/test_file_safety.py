"""Reading and writing preset files safely, reading amounts and temperatures, and the shared limits."""

from __future__ import annotations

import os
import stat
import time

import pytest

import chem
from chem import limits
from chem.presets import (MAX_PRESET_BYTES, STALE_TEMP_S, check_save_target, clean_stale_temps, read_preset_bytes,
                          write_atomic)
from chem.units import parse_concentration, parse_temperature, parse_volume, shown
from chem.water import pkw

PRESET = 'format = 1\n[[ingredient]]\nname = "NaCl"\nconc = "1 mM"\n'


# -- reading ----------------------------------------------------------------------------------------

def test_a_byte_order_mark_is_read_as_utf8_text():
    assert chem.loads_preset(b"\xef\xbb\xbf" + PRESET.encode()) == chem.loads_preset(PRESET)


@pytest.mark.parametrize("text, fragment", [
    ("format = 1\nx = " + "[" * 2000 + "]" * 2000, "nested too deeply"),
    ("format = 1\nx = " + "[" * 20 + "]" * 20, "nested more than"),
    (PRESET.replace('"1 mM"', "9" * 5000), "too many digits"),
    (PRESET.replace('"1 mM"', "9" * 400), "too large"),
    ("format = 1\ntemperature_c = " + "9" * 400, "too large"),
])
def test_what_the_toml_reader_accepts_but_no_preset_holds_is_refused(text, fragment):
    with pytest.raises(chem.PresetError, match=fragment):
        chem.loads_preset(text, "x.toml")


def test_only_regular_files_are_read(tmp_path):
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)
    for path in (fifo, "/dev/zero"):
        with pytest.raises(chem.PresetError, match="not a regular file"):
            chem.load_preset(path)
    with pytest.raises(chem.PresetError, match="is a folder"):
        chem.load_preset(tmp_path)
    big = tmp_path / "big.toml"
    big.write_bytes(b"#" * (MAX_PRESET_BYTES + 1))
    with pytest.raises(chem.PresetError, match="MB"):
        read_preset_bytes(big)
    with pytest.raises(chem.PresetError, match="part of the path is not a folder"):
        chem.load_preset(big / "x.toml")


# -- writing ----------------------------------------------------------------------------------------

@pytest.mark.parametrize("umask, mode", [(0o022, 0o644), (0o027, 0o640), (0o077, 0o600)])
def test_a_new_file_follows_the_umask(tmp_path, umask, mode):
    old = os.umask(umask)
    try:
        path = write_atomic(tmp_path / "a.toml", PRESET)
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == mode


def test_a_replaced_file_keeps_its_permissions(tmp_path):
    path = tmp_path / "a.toml"
    path.write_text("old")
    path.chmod(0o664)
    write_atomic(path, PRESET, overwrite=True)
    assert path.read_text() == PRESET and stat.S_IMODE(path.stat().st_mode) == 0o664


@pytest.mark.parametrize("make", ["symlink", "fifo", "folder"])
def test_only_regular_files_are_written_or_replaced(tmp_path, make):
    path = tmp_path / "x.toml"
    if make == "symlink":
        (tmp_path / "real.toml").write_text("keep")
        path.symlink_to(tmp_path / "real.toml")
    elif make == "fifo":
        os.mkfifo(path)
    else:
        path.mkdir()
    for check in (lambda: write_atomic(path, PRESET, overwrite=True),
                  lambda: check_save_target(path, overwrite=True)):
        with pytest.raises(chem.PresetError, match="symbolic link|regular file|folder"):
            check()
    if make == "symlink":
        assert path.is_symlink() and (tmp_path / "real.toml").read_text() == "keep"
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


def test_a_missing_folder_and_an_empty_name_are_one_line_errors(tmp_path):
    with pytest.raises(chem.PresetError, match="does not exist"):
        write_atomic(tmp_path / "no" / "x.toml", PRESET)
    with pytest.raises(chem.PresetError, match="no file name"):
        write_atomic("", PRESET)


def test_stale_temporary_files_are_cleaned_up_and_fresh_ones_kept(tmp_path):
    old = time.time() - STALE_TEMP_S - 60
    stale = tmp_path / ".x.toml.a1b2c3d4.tmp"
    fresh = tmp_path / ".x.toml.e5f6a7b8.tmp"
    other = tmp_path / ".y.toml.a1b2c3d4.tmp"
    for path in (stale, fresh, other):
        path.write_text("partial")
    os.utime(stale, (old, old))
    os.utime(other, (old, old))
    assert clean_stale_temps(tmp_path, "x.toml") == 1
    assert not stale.exists() and fresh.exists() and other.exists()
    write_atomic(tmp_path / "y.toml", PRESET)         # a save cleans up after its own name
    assert not other.exists() and fresh.exists()


# -- amounts and temperatures -------------------------------------------------------------------------

@pytest.mark.parametrize("text, fragment", [
    ("５ mM", "digits 0-9"), ("٥ mM", "digits 0-9"), ("1e-400 M", "too small"), ("1e-320 M", "too small"),
    ("1e-300 nM", "too small"),
])
def test_amounts_that_would_be_misread_are_refused(text, fragment):
    with pytest.raises(chem.UnitError, match=fragment):
        parse_concentration(text)


def test_zero_is_still_zero_and_huge_integers_are_refused():
    assert parse_concentration("0 M") == 0.0 and parse_concentration("0.0e-5 mM") == 0.0
    assert parse_volume("0 mL") == 0.0
    with pytest.raises(chem.UnitError, match="too large"):
        parse_concentration(10 ** 400)
    with pytest.raises(chem.UnitError, match="too small"):
        parse_volume("1e-400 mL")


def test_quoted_input_is_short_and_printable():
    text = shown("x" * 100_000 + "\x1b[31m")
    assert len(text) < 60 and "\x1b" not in text and "…" in text


@pytest.mark.parametrize("text", ["37", "37 °C", "37°C", "37 C", "37C", "37 ℃", " 37 c "])
def test_a_temperature_is_read_one_way(text):
    assert parse_temperature(text) == 37.0


@pytest.mark.parametrize("text, fragment", [("37 K", "not a temperature"), ("３７", "digits 0-9"),
                                            ("101", "outside 0 to 100 °C"), ("-1 °C", "outside"),
                                            ("nan", "not a temperature")])
def test_a_bad_temperature_is_refused(text, fragment):
    with pytest.raises(chem.UnitError, match=fragment):
        parse_temperature(text)


# -- limits ----------------------------------------------------------------------------------------

def test_one_ph_scale():
    assert (limits.PH_MIN, limits.PH_MAX) == (0.0, 14.0)
    assert limits.check_ph(7) == 7.0
    for bad in (-0.5, 14.5, float("nan"), float("inf")):
        with pytest.raises(chem.UnitError):
            limits.check_ph(bad)
    with pytest.raises(chem.UnitError, match="below the end"):
        limits.check_ph_range(8, 3)
    grid = limits.ph_grid(5)
    assert grid[0] == limits.PH_MIN and grid[-1] == limits.PH_MAX and len(grid) == 5


@pytest.mark.parametrize("t", [0.0, 25.0, 37.0, 60.0, 100.0])
def test_neutral_water_is_half_of_pkw(t):
    # a(H+) = a(OH-) at neutrality, so pH = pKw/2 at every temperature (Kw from IAPWS R11-07).
    assert limits.neutral_ph(t) == pytest.approx(float(pkw(t)) / 2, abs=1e-12)


def test_neutral_water_is_below_7_when_warm():
    assert limits.neutral_ph(37.0) < 6.9 < 7.0 < limits.neutral_ph(5.0)
