"""The front ends hold no chemistry: checked on the syntax tree of every module under tui/.

``tests/test_import_hygiene.py`` keeps the user interface out of chem/; this keeps physical
constants, chemical ranges and the core's private maths out of tui/. A front end asks chem
(``chem.limits`` for the pH scale, neutral water and the standard temperature;
``chem.units`` for reading amounts and temperatures) and shows what comes back.
"""

from __future__ import annotations

import ast
import math
from pathlib import Path

import pytest

TUI = Path(__file__).resolve().parent.parent / "tui"
SOURCES = sorted(TUI.rglob("*.py"))

#: Numbers that are chemistry or physics, never a layout or timing choice. Where they are
#: needed, chem provides them (chem.limits, chem.water).
PHYSICAL = {
    7.0: "neutral pH at 25 °C (it is pKw(T)/2: chem.limits.neutral_ph)",
    14.0: "pKw at 25 °C / the top of the pH scale (chem.limits.PH_MAX)",
    25.0: "the standard temperature in °C (chem.limits.STANDARD_TEMPERATURE_C)",
    273.15: "0 °C in kelvin",
    298.15: "25 °C in kelvin",
    8.314462618: "the gas constant R",
    96485.33212: "the Faraday constant",
    1e-14: "Kw at 25 °C",
    1e-7: "[H+] of neutral water at 25 °C",
    0.5085: "Debye-Hückel A at 25 °C",
    0.509: "Debye-Hückel A at 25 °C",
    2.302585093: "ln 10",
    55.51: "mol/L of water",
    18.01528: "the molar mass of water",
}
#: Names that say a constant is chemistry (pH limits, pKa, Kw, temperatures).
CHEMICAL_NAME = ("PH", "PKA", "PKW", "KW", "NEUTRAL", "KELVIN", "CELSIUS", "TEMPERATURE", "IONIC", "GAS_CONSTANT")
#: Module constants whose names sound like chemistry but are drawing choices, with the reason.
DISPLAY_CHOICES = {
    "MIN_PH_SPAN": "the smallest span of a pH axis on screen",
    "SCALE_PH": "the pH range the buffer-capacity plot's y axis is scaled to",
    "TEMPERATURE_STEP": "how far t/T nudge the temperature per key press",
    "DEFAULT_T_RANGE": "the default sweep shown, typed text like a user's",
}
#: Modules of chem that a front end must not reach into (the core's private maths and raw data).
PRIVATE = ("chem._", "chem.water", "scipy")


def _modules(path: Path) -> list[str]:
    out = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out += [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            out.append(node.module)
            out += [f"{node.module}.{alias.name}" for alias in node.names]
    return out


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(TUI.parent)))
def test_no_physical_constant_in_the_front_ends(path):
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Constant) and isinstance(node.value, float):
            for value, what in PHYSICAL.items():
                if math.isclose(abs(node.value), value, rel_tol=1e-3):
                    found.append(f"line {node.lineno}: {node.value!r} looks like {what}")
    assert not found, "\n".join(found)


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(TUI.parent)))
def test_no_chemical_constant_defined_in_the_front_ends(path):
    found = []
    for node in ast.parse(path.read_text(encoding="utf-8")).body:
        targets = node.targets if isinstance(node, ast.Assign) else [node.target] if isinstance(
            node, ast.AnnAssign) and node.value is not None else []
        value = node.value if isinstance(node, (ast.Assign, ast.AnnAssign)) else None
        numbers = value is not None and all(
            isinstance(n, ast.Constant) and isinstance(n.value, (int, float)) and not isinstance(n.value, bool)
            for n in ([value] if not isinstance(value, ast.Tuple) else value.elts)
            if not isinstance(n, ast.UnaryOp)) and not isinstance(value, (ast.Call, ast.Name, ast.Attribute))
        for target in targets:
            name = getattr(target, "id", "")
            if numbers and name.isupper() and any(word in name.split("_") for word in CHEMICAL_NAME) \
                    and name not in DISPLAY_CHOICES:
                found.append(f"line {node.lineno}: {name} is chemistry; define it in chem (chem.limits)")
    assert not found, "\n".join(found)


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(TUI.parent)))
def test_front_ends_use_only_the_public_core(path):
    found = [m for m in _modules(path) if any(m == p or m.startswith(p) for p in PRIVATE)]
    assert not found, f"{path.name} imports {found}: ask chem's public modules instead"


def test_the_check_catches_what_it_is_for(tmp_path):
    # The checks above must be able to fail: a front end that decides "basic" against 7.0 and
    # reads Kw from the core's private water module is caught by each of them.
    leak = tmp_path / "leak.py"
    leak.write_text("from chem.water import pkw\nNEUTRAL_PH = 7.0\n")
    with pytest.raises(AssertionError):
        test_no_physical_constant_in_the_front_ends(leak)
    with pytest.raises(AssertionError):
        test_no_chemical_constant_defined_in_the_front_ends(leak)
    with pytest.raises(AssertionError):
        test_front_ends_use_only_the_public_core(leak)
