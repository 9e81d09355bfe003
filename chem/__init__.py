"""protomix core: the complete aqueous acid–base equilibrium of a mixture.

Pure numpy/scipy; no user-interface imports.

>>> from chem import load_preset, solve          # doctest: +SKIP
>>> eq = solve(load_preset("presets/warm-room-rinse.toml"))
>>> eq.pH, eq.ionic_strength, eq.species
"""

from __future__ import annotations

from ._solver import buffer_capacity_at, solve, tableau
from .errors import ChemError, LibraryError, ModelError, PresetError, UnitError
from .library import Library, load_library
from .model import (AcidBaseSystem, Complex, Equilibrium, FixedGas, Gas, GasState, Ingredient, Ion, Mixture,
                    Notice, Reagent, Solid, SolidState, Species, SystemState, format_molar)
from .presets import demo_mixture, dumps_preset, load_preset, loads_preset, save_preset, shipped_presets
from .units import parse_concentration, parse_pressure, parse_volume

# Curves and recipes are loaded on first use: the recipe designer needs
# scipy.optimize (about 0.3-0.7 s to import), which the explorer's start-up
# should not pay for.
_LAZY = {
    **{name: "curves" for name in ("CapacityCurve", "Curve", "CurveError", "EquivalencePoint", "TitrationCurve",
                                   "buffer_capacity", "dilution", "sweep", "titration")},
    **{name: "recipe" for name in ("Recipe", "RecipeError", "design_buffer", "design_metal_buffer",
                                   "suggest_systems")},
}


def __getattr__(name: str):
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'chem' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(f"chem.{module}"), name)
    globals()[name] = value
    return value

__version__ = "0.1.0"

__all__ = [
    "AcidBaseSystem", "ChemError", "Complex", "Equilibrium", "FixedGas", "Gas", "GasState", "Ingredient", "Ion",
    "Library", "LibraryError", "Solid", "SolidState", "SystemState",
    "Mixture", "ModelError", "Notice", "PresetError", "Reagent", "Species", "UnitError",
    "demo_mixture", "dumps_preset", "format_molar", "shipped_presets", "load_library", "load_preset", "loads_preset",
    "parse_concentration", "parse_pressure", "parse_volume", "save_preset", "solve", "tableau", "__version__",
    "CapacityCurve", "Curve", "CurveError", "EquivalencePoint", "TitrationCurve", "buffer_capacity",
    "buffer_capacity_at", "dilution", "sweep", "titration",
    "Recipe", "RecipeError", "design_buffer", "design_metal_buffer", "suggest_systems",
]
