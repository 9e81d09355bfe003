"""The front ends use only chem's public face: names of the package itself, never its modules.

``from chem import solve`` and ``import chem`` (then ``chem.titration(...)``) are the way in;
``from chem.curves import titration``, ``import chem.units``, ``from chem import diagrams`` or
``chem.limits.PH_MAX`` reach behind it, and tie the front ends to how the core happens to be
split into files. Whatever a front end needs, ``chem/__init__.py`` exports (lazily where the
module is costly to load), so the core can be reorganised without touching ``tui/``.

Checked on the syntax tree of every module under tui/ (docstrings and comments may name
modules freely). Also checked: the explorer's start-up does not load the curve, recipe or fit
code it does not need, and every name chem lists in ``__all__`` resolves.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
TUI = ROOT / "tui"
SOURCES = sorted(TUI.rglob("*.py"))
#: The modules and packages inside chem/ (``curves``, ``diagrams``, ``_kernel``, ``data`` ...).
CHEM_MODULES = frozenset(p.stem for p in (ROOT / "chem").glob("*.py") if p.stem != "__init__") | frozenset(
    p.name for p in (ROOT / "chem").iterdir() if p.is_dir() and (p / "__init__.py").exists())


def reaches_behind_chem(source: str) -> list[str]:
    """Every place in ``source`` that imports or uses a module of chem instead of the package's own names."""
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Import):
            found += [f"line {node.lineno}: import {a.name}" for a in node.names if a.name.startswith("chem.")]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            if node.module.startswith("chem."):
                found.append(f"line {node.lineno}: from {node.module} import ...")
            elif node.module == "chem":
                found += [f"line {node.lineno}: from chem import {a.name} (a module)" for a in node.names
                          if a.name in CHEM_MODULES]
        elif isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) and node.value.id == "chem" \
                and node.attr in CHEM_MODULES:
            found.append(f"line {node.lineno}: chem.{node.attr}")
    return found


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(ROOT)))
def test_front_ends_use_only_names_of_the_chem_package(path):
    found = reaches_behind_chem(path.read_text(encoding="utf-8"))
    assert not found, f"{path.relative_to(ROOT)} reaches behind chem's public face:\n" + "\n".join(found) + \
        "\nexport what is needed from chem/__init__.py and use it as chem.NAME"


@pytest.mark.parametrize("leak", [
    "from chem.curves import titration",
    "import chem.units",
    "import chem.diagrams as d",
    "from chem import diagrams",
    "from chem import solve, limits",
    "import chem\nx = chem.limits.PH_MAX",
    "import chem\ndef f(m):\n    return chem.recipe.design_buffer(m)",
])
def test_the_check_catches_each_way_of_reaching_behind(leak):
    assert reaches_behind_chem(leak)


@pytest.mark.parametrize("fine", [
    "import chem",
    "from chem import solve, titration, HELD_PH_RANGE",
    "import chem\nx = chem.solubility(m, 'calcite', ph)",
    '"""Numbers come from chem.curves (a docstring may say so)."""',
    "import chemistry_tools\nfrom chemical import curves",
])
def test_the_check_lets_the_public_face_through(fine):
    assert reaches_behind_chem(fine) == []


def test_every_public_name_of_chem_resolves():
    import chem

    missing = [name for name in chem.__all__ if not hasattr(chem, name)]
    assert missing == []


def test_the_explorer_starts_without_loading_curves_recipes_or_fits():
    # The first frame needs the solver only; curves, diagrams, recipes (scipy.optimize), fits and
    # uncertainties load on first use, from the names chem exports lazily.
    code = ("import sys, tui.app\n"
            "print(sorted(m for m in ('chem.curves', 'chem.diagrams', 'chem.recipe', 'chem.fit', "
            "'chem.uncertainty', 'scipy.optimize', 'plotext') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.strip() == "[]", out.stdout + out.stderr
