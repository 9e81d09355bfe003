"""Full speciation in a real terminal (tmux at 80x24 and 120x40): the new views and switches, nothing cut off."""

from __future__ import annotations

import re
import shutil
import sys

import pytest

import chem
from tests.e2e.test_tmux import ROOT, Pane

pytestmark = [pytest.mark.tmux,
              pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux is not installed")]

PRESET = ROOT / "presets" / "cooling-tower-makeup.toml"


def _panels_closed(text: str, width: int) -> None:
    """Every line between the title bar and the notice bar ends on a panel's right border, in the last column."""
    lines = text.split("\n")
    body = [line for line in lines[1:] if line.strip()][:-2]         # drop the notice and key bars
    for line in body:
        assert len(line) <= width, line
        assert line.rstrip()[-1] in "│╮╯", f"a panel is cut off: {line!r}"


def _readout(text: str) -> list[str]:
    """The readout's lines (the right-hand panel of the upper band)."""
    out = []
    for line in text.split("\n")[2:]:
        if line.startswith("╰"):
            break
        out.append(line[line.index("││") + 2:].rstrip(" │") if "││" in line else "")
    return out


@pytest.mark.parametrize("width, height", [(80, 24), (120, 40)])
def test_the_speciation_views_fit_a_real_terminal(tmp_path, width, height):
    pane = Pane({"PROTOMIX_DATA_DIR": str(tmp_path / "data"), "TERM": "xterm-256color", "LANG": "C.UTF-8"},
                width, height)
    try:
        eq = chem.solve(chem.load_preset(PRESET))
        pane.keys(f"cd {ROOT} && {sys.executable} -m tui {PRESET}; echo EXIT=$?", "Enter")
        pane.wait_for(rf"pH\s+{eq.pH:.3f}")
        pane.wait_for(rf"pCa {eq.free_level('calcium'):.2f}\s+pMg {eq.free_level('magnesium'):.2f}")
        text = pane.wait_for(r"3 supersaturated").string
        readout = _readout(text)
        assert not any(line.endswith("…") for line in readout), readout
        assert any(f"hardness {eq.hardness_mg_l:.0f} mg/L CaCO₃" in line for line in readout), readout
        assert any("CO₂ held 420 µatm" in line for line in readout), "\n".join(readout)
        _panels_closed(text, width)

        pane.keys("l")
        text = pane.wait_for(r"Species by system").string
        assert re.search(r"calcium\s+700 µM", text) and re.search(r"Ca²⁺\s+92\.\d%", text)
        _panels_closed(text, width)

        pane.keys("S")
        text = pane.wait_for(r"Solids · precipitation off").string
        calcite = eq.solid("calcite")
        assert re.search(r"\[ \] calcite\s+" + re.escape(f"{calcite.saturation_index:+.2f}") + r"\s+│[█▌]", text)
        _panels_closed(text, width)

        pane.keys("P")
        text = pane.wait_for(r"Solids · precipitation all").string
        assert re.search(r"\[x\] calcite", text) and "precipitated" in text
        _panels_closed(text, width)

        pane.keys("A")                                          # close the flask to air
        pane.wait_for(r"closed: CO₂ is no longer held")
        pane.keys("G")
        pane.wait_for(r"Hold a gas over the solution")
        pane.keys("CO2", literal=True)
        pane.wait_for(r"1 match")
        pane.keys("Enter")
        pane.wait_for(r"hold CO₂ at: 420 uatm")            # the air's pressure, offered
        pane.keys("C-u")
        pane.wait_for(r"hold CO₂ at: e\.g\.")
        pane.keys("5 %", literal=True)
        pane.wait_for(r"hold CO₂ at: 5 %")
        pane.keys("Enter")
        text = pane.wait_for(r"CO₂ held 5 %").string
        _panels_closed(text, width)
        assert not any(line.endswith("…") for line in _readout(text))

        pane.keys("u")                                          # undo: back to closed
        pane.wait_for(r"undone: hold CO2 at 5 %")
        pane.keys("C-q")
        pane.wait_for("not saved as a preset")
        pane.keys("d")
        pane.wait_for(r"EXIT=0")
        assert "Traceback" not in pane.text()
    finally:
        pane.close()


def test_under_lang_c_the_names_are_ascii_in_a_real_terminal(tmp_path):
    # Python itself sets LC_CTYPE=C.UTF-8 under LANG=C (locale coercion); the explorer still sees C.
    pane = Pane({"PROTOMIX_DATA_DIR": str(tmp_path / "data"), "TERM": "xterm-256color"}, 80, 24)
    try:
        pane.keys(f"cd {ROOT} && LANG=C LC_ALL= LC_CTYPE= {sys.executable} -m tui {PRESET}; echo EXIT=$?", "Enter")
        text = pane.wait_for(r"hardness \d+ mg/L CaCO3").string
        assert "CO2 held 420 uatm" in text and "CaCO₃" not in text
        pane.keys("l")
        text = pane.wait_for(r"Species by system").string
        assert re.search(r"Ca\^2\+\s+92\.\d%", text) and "²" not in text
        pane.keys("S")
        text = pane.wait_for(r"Solids · precipitation off").string
        assert re.search(r"\[ \] calcite\s+\+0\.\d\d\s+\|=", text) and "█" not in text
        pane.keys("C-q")
        pane.wait_for(r"EXIT=0")
    finally:
        pane.close()
