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


def test_every_text_entry_of_the_interface_keeps_keys_in_typing_order():
    """Textual's Input runs its editing keys after the typed characters that follow them in one read
    (see tui/widgets/entry.py); every entry the interface builds is an Entry."""
    import ast
    from pathlib import Path

    root = Path(__file__).resolve().parents[1] / "tui"
    found = []
    for path in root.rglob("*.py"):
        if path.name == "entry.py":
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "Input":
                found.append(f"{path.relative_to(root)}:{node.lineno} builds Input")
            if isinstance(node, ast.ClassDef) and any(isinstance(b, ast.Name) and b.id == "Input" for b in node.bases):
                found.append(f"{path.relative_to(root)}:{node.lineno} subclasses Input")
    assert not found, found
