"""The pH-held plots and their form in a real terminal (tmux), at 80x24 and 120x40: nothing cut off."""

from __future__ import annotations

import sys
import time

import pytest

from tests.e2e.test_tmux import ROOT, Pane, pytestmark  # noqa: F401  (the tmux marks apply here too)


@pytest.mark.parametrize("size", [(80, 24), (120, 40)], ids=lambda s: f"{s[0]}x{s[1]}")
def test_saturation_plot_and_its_form_fit_the_terminal(tmp_path, size):
    width, height = size
    pane = Pane({"PROTOMIX_DATA_DIR": str(tmp_path / "data"), "TERM": "xterm-256color", "LANG": "C.UTF-8"},
                width, height)
    try:
        pane.keys(f"cd {ROOT} && {sys.executable} -m tui presets/cooling-tower-makeup.toml; echo EXIT=$?", "Enter")
        pane.wait_for(r"pOH")
        pane.keys("C-p")
        pane.wait_for(r"Search for commands")
        pane.keys("saturation indices", literal=True)
        time.sleep(0.3)
        pane.keys("Enter")
        pane.wait_for(r"saturation indices vs pH")
        shown = pane.wait_for(r"SI = log\(IAP/Ksp\)").string
        lines = shown.split("\n")
        assert len(lines) <= height + 1 and all(len(line) <= width for line in lines)
        axis = next(line for line in lines if "└" in line and "┬" in line)
        ticks = pane.text().split("\n")[lines.index(axis) + 1]
        assert "12" in ticks and ticks.rstrip().endswith("│")      # the pH axis ends inside the panel
        assert "calcite" in shown
        pane.keys("v")
        form = pane.wait_for(r"enter draw · esc close").string
        for label in ("Saturation indices vs pH", "from pH", "to pH"):
            assert label in form
        pane.keys("Escape")
        time.sleep(0.2)
        pane.keys("q")
        pane.wait_for(r"EXIT=0")
    finally:
        pane.close()
