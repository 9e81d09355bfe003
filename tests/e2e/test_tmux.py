"""The explorer in a real terminal: tmux at 80x24, keys typed, the pane read back."""

from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest

import chem
from tui.app import NUDGE_FACTORS

ROOT = Path(__file__).resolve().parents[2]

pytestmark = [pytest.mark.tmux,
              pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed")]


class Pane:
    """A detached tmux session on a private server socket."""

    def __init__(self, env: dict[str, str], width: int = 80, height: int = 24) -> None:
        self.tmux = ["tmux", "-L", f"protomix-test-{uuid.uuid4().hex[:8]}"]
        extra = [arg for key, value in env.items() for arg in ("-e", f"{key}={value}")]
        subprocess.run([*self.tmux, "-f", "/dev/null", "new-session", "-d", "-s", "t", "-x", str(width),
                        "-y", str(height), *extra], check=True)

    def keys(self, *keys: str, literal: bool = False) -> None:
        subprocess.run([*self.tmux, "send-keys", "-t", "t", *(["-l"] if literal else []), *keys], check=True)

    def text(self) -> str:
        return subprocess.run([*self.tmux, "capture-pane", "-p", "-t", "t"], capture_output=True, text=True,
                              check=True).stdout

    def wait_for(self, pattern: str, timeout: float = 10.0) -> re.Match:
        end = time.monotonic() + timeout
        while time.monotonic() < end:
            found = re.search(pattern, self.text())
            if found:
                return found
            time.sleep(0.01)
        raise AssertionError(f"{pattern!r} did not appear; the pane shows:\n{self.text()}")

    def close(self) -> None:
        subprocess.run([*self.tmux, "kill-server"], capture_output=True)


def _autosaves(tmp_path: Path) -> list[Path]:
    """The autosave files in the test's data folder."""
    return sorted((tmp_path / "data").glob("session*.toml"))


def _cmdline(proc: Path) -> bytes:
    try:
        return (proc / "cmdline").read_bytes()
    except OSError:                                     # the process ended meanwhile
        return b""


@pytest.fixture
def pane(tmp_path):
    p = Pane({"PROTOMIX_DATA_DIR": str(tmp_path / "data"), "TERM": "xterm-256color", "LANG": "C.UTF-8"})
    yield p
    p.close()


def test_adding_a_reagent_in_a_real_terminal_changes_the_ph(pane, library):
    pane.keys(f"cd {ROOT} && {sys.executable} -m tui; echo EXIT=$?", "Enter")
    demo = chem.demo_mixture()
    before = chem.solve(demo)
    pane.wait_for(rf"pH\s+{before.pH:.3f}")
    for ingredient in demo.ingredients:
        pane.wait_for(re.escape(ingredient.reagent.name) + r"\s+" + re.escape(ingredient.label))
    pane.keys("n")
    pane.wait_for("Add to the flask")
    pane.keys("NaOH", literal=True)
    pane.wait_for("sodium hydroxide")
    pane.keys("Enter")
    pane.wait_for("amount of sodium hydroxide")
    pane.keys("5 mM", literal=True)
    pane.keys("Enter")
    after = chem.solve(demo.with_ingredient(chem.Ingredient(library.reagent("sodium hydroxide"), 0.005)))
    pane.wait_for(rf"pH\s+{after.pH:.3f}")
    assert re.search(r"sodium hydroxide\s+5 mM", pane.text())
    pane.keys("C-q")
    pane.wait_for("not saved as a preset")
    pane.keys("d")
    pane.wait_for(r"EXIT=0")


def test_a_dropped_connection_keeps_the_last_edit(pane, tmp_path):
    # Killing the terminal hangs up on the explorer within a moment of the edit, before its
    # delayed autosave is due: the hang-up itself must write it.
    pane.keys(f"cd {ROOT} && {sys.executable} -m tui", "Enter")
    demo = chem.demo_mixture()
    first = demo.ingredients[0]
    pane.wait_for(rf"pH\s+{chem.solve(demo).pH:.3f}")
    pane.keys("Right")
    nudged = first.with_conc(first.conc * NUDGE_FACTORS[0])
    pane.wait_for(re.escape(first.reagent.name) + r"\s+" + re.escape(nudged.label))
    pane.close()                                        # the terminal goes away: SIGHUP
    end = time.monotonic() + 5.0
    while not _autosaves(tmp_path) and time.monotonic() < end:
        time.sleep(0.05)
    [session] = _autosaves(tmp_path)
    saved = chem.load_preset(session)
    assert saved.ingredients[0].conc == pytest.approx(nudged.conc, rel=1e-12)


def test_sigterm_keeps_the_last_edit_and_gives_the_terminal_back(pane, tmp_path):
    preset = tmp_path / f"term-{uuid.uuid4().hex[:8]}.toml"      # a name to find the process by
    demo = chem.demo_mixture()
    chem.save_preset(demo, preset)
    pane.keys(f"cd {ROOT} && {sys.executable} -m tui {preset}; echo EXIT=$?", "Enter")
    first = demo.ingredients[0]
    pane.wait_for(rf"pH\s+{chem.solve(demo).pH:.3f}")
    pane.keys("Right")
    nudged = first.with_conc(first.conc * NUDGE_FACTORS[0])
    pane.wait_for(re.escape(first.reagent.name) + r"\s+" + re.escape(nudged.label))
    pids = [int(p.name) for p in Path("/proc").iterdir()
            if p.name.isdigit() and preset.name.encode() in _cmdline(p) and b"-m\0tui" in _cmdline(p)]
    assert pids, "the explorer's process was not found"
    for pid in pids:
        os.kill(pid, signal.SIGTERM)
    pane.wait_for(r"EXIT=143")
    assert "Flask" not in pane.text()                   # the explorer's screen is gone, the shell is back
    [session] = _autosaves(tmp_path)
    saved = chem.load_preset(session)
    assert saved.ingredients[0].conc == pytest.approx(nudged.conc, rel=1e-12)


def test_a_bad_preset_path_gives_one_line_and_status_2(pane, tmp_path):
    pane.keys(f"cd {ROOT} && {sys.executable} -m tui {tmp_path}/nope.toml; echo EXIT=$?", "Enter")
    pane.wait_for(r"EXIT=2")
    assert "protomix: error:" in pane.text() and "Traceback" not in pane.text()


@pytest.fixture(scope="module")
def library():
    return chem.load_library()


def _pids(marker: str) -> list[int]:
    """Explorer processes whose command line holds ``marker`` (a unique preset file name)."""
    return [int(p.name) for p in Path("/proc").iterdir()
            if p.name.isdigit() and marker.encode() in _cmdline(p) and b"-m\0tui" in _cmdline(p)]


def test_a_killed_session_keeps_its_edits_when_another_quits_cleanly(tmp_path):
    # Two explorers under one account: B edits, A edits, A quits cleanly, B is killed (SIGKILL,
    # nothing runs on the way out). The next explorer offers B's edits.
    env = {"PROTOMIX_DATA_DIR": str(tmp_path / "data"), "TERM": "xterm-256color", "LANG": "C.UTF-8"}
    demo = chem.demo_mixture()
    first = demo.ingredients[0]
    panes = {name: Pane(env) for name in "ABC"}
    try:
        files = {}
        for name in "AB":
            files[name] = tmp_path / f"{name}-{uuid.uuid4().hex[:8]}.toml"
            chem.save_preset(demo.with_temperature(30.0 if name == "B" else 25.0), files[name])
            panes[name].keys(f"cd {ROOT} && {sys.executable} -m tui {files[name]}; echo EXIT=$?", "Enter")
            panes[name].wait_for(r"pH\s+\d")
        nudged = first.with_conc(first.conc * NUDGE_FACTORS[0])
        for name in "BA":
            panes[name].keys("Right")
            panes[name].wait_for(re.escape(first.reagent.name) + r"\s+" + re.escape(nudged.label))
        time.sleep(0.8)                                 # both autosaves written (0.3 s after an edit)
        panes["A"].keys("q")
        panes["A"].wait_for("not saved as a preset")
        panes["A"].keys("d")
        panes["A"].wait_for(r"EXIT=0")
        for pid in _pids(files["B"].name):
            os.kill(pid, signal.SIGKILL)
        panes["B"].wait_for(r"EXIT=137")
        panes["C"].keys(f"cd {ROOT} && {sys.executable} -m tui; echo EXIT=$?", "Enter")
        panes["C"].wait_for("Restore it")
        assert "30 °C" in panes["C"].text()             # B's flask, not A's
        panes["C"].keys("y")
        panes["C"].wait_for(re.escape(first.reagent.name) + r"\s+" + re.escape(nudged.label))
        panes["C"].wait_for(r"30\.0 °C")
    finally:
        for pane in panes.values():
            pane.close()


def test_the_palette_survives_fast_keys_in_a_real_terminal(pane):
    pane.keys(f"cd {ROOT} && {sys.executable} -m tui; echo EXIT=$?", "Enter")
    pane.wait_for(r"pH\s+\d")
    pane.keys("C-p")
    pane.keys("NPage")                                  # before the list is laid out
    time.sleep(0.5)
    pane.keys("Escape")
    time.sleep(0.3)
    pane.keys("C-p")
    pane.keys("help", literal=True)
    time.sleep(0.6)
    pane.keys("Enter")
    pane.keys("Enter")                                  # arrives while the palette closes
    pane.wait_for("Every key")                          # the help screen, once
    pane.keys("Escape")
    time.sleep(0.3)
    pane.keys("C-q")
    pane.wait_for(r"EXIT=0")
    assert "Traceback" not in pane.text() and "Error" not in pane.text()


def test_a_shared_preset_cannot_retitle_the_terminal(pane, tmp_path):
    preset = tmp_path / "shared.toml"
    preset.write_text('format = 1\ntitle = "before\\u001b]2;OWNED\\u0007after"\n[[ingredient]]\n'
                      'name = "NaCl"\nconc = "1 mM"\n', encoding="utf-8")
    title = [*pane.tmux, "display-message", "-p", "-t", "t", "#{pane_title}"]
    pane.keys(f"cd {ROOT} && {sys.executable} -m tui solve {preset}; echo DONE", "Enter")
    pane.wait_for("DONE")
    pane.keys(f"{sys.executable} -m tui {preset}; echo EXIT=$?", "Enter")
    pane.wait_for(r"before\\x1b")
    assert "OWNED" not in subprocess.run(title, capture_output=True, text=True).stdout
    pane.keys("q")
    pane.wait_for(r"EXIT=0")
    assert "OWNED" not in subprocess.run(title, capture_output=True, text=True).stdout
