"""The core stays pure: importing chem loads no user-interface package."""

from __future__ import annotations

import subprocess
import sys


def test_importing_chem_loads_no_ui():
    code = ("import chem, chem.diagrams, sys; chem.solve(chem.demo_mixture()); "
            "print([m for m in ('textual', 'rich', 'plotext', 'tui') if m in sys.modules])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_chem_sources_never_import_ui_packages():
    import pathlib
    import re

    root = pathlib.Path(__file__).resolve().parent.parent / "chem"
    pattern = re.compile(r"^\s*(from|import)\s+(textual|plotext|rich|tui)\b", re.M)
    offenders = [p.name for p in root.rglob("*.py") if pattern.search(p.read_text())]
    assert offenders == []
