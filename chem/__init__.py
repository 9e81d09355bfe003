"""protomix core: the complete aqueous acid–base equilibrium of a mixture.

Pure numpy/scipy; no user-interface imports.

>>> from chem import load_preset, solve          # doctest: +SKIP
>>> eq = solve(load_preset("presets/warm-room-rinse.toml"))
>>> eq.pH, eq.ionic_strength, eq.species
"""

from __future__ import annotations

from ._solver import buffer_capacity_at, solve, tableau
from .activity import MODELS as ACTIVITY_MODELS
from .errors import ChemError, LibraryError, ModelError, PresetError, UnitError
from .library import Library, load_library
from .limits import (AIR_GAS, AIR_PRESSURE, HELD_PH_RANGE, LOG_C_FLOOR, PH_MAX, PH_MIN, PINNED_ACTIVITY_MAX,
                     STANDARD_TEMPERATURE_C,
                     T_MAX_C, T_MIN_C, check_ph, neutral_ph, ph_grid)
from .model import (AcidBaseSystem, Complex, Equilibrium, FixedGas, Gas, GasState, Ingredient, Ion, Mixture,
                    Notice, Reagent, Solid, SolidState, Species, SystemState, format_molar)
from .presets import (check_save_target, clean_stale_temps, custom_reagent, demo_mixture, dumps_preset,
                      load_preset, loads_preset, read_preset_bytes, save_preset, shipped_presets, write_atomic)
from .units import (format_pressure, parse_concentration, parse_pressure, parse_temperature, parse_volume,
                    pressure_ppm)

# Curves, diagrams, recipes, fits and uncertainties are loaded on first use:
# the explorer's first frame needs none of them, and the recipe designer and
# the fit need scipy.optimize (about 0.3-0.7 s to import). Front ends use
# these names from the package itself (``chem.titration``), never the
# modules behind them.
_LAZY = {
    **{name: "curves" for name in ("CapacityCurve", "Cancelled", "Curve", "CurveError", "EquivalencePoint",
                                   "TitrationCurve", "buffer_capacity", "dilution", "find_reagent", "gas_named",
                                   "ingredient_index", "sweep", "titration")},
    **{name: "diagrams" for name in ("Diagram", "default_grid", "distribution", "log_concentrations",
                                     "saturation", "solubility", "system_distribution")},
    **{name: "recipe" for name in ("Recipe", "RecipeError", "design_buffer", "design_metal_buffer",
                                   "suggest_systems")},
    **{name: "fit" for name in ("FitError", "FitResult", "TitrationData", "clean_text", "fit_titration",
                                "parse_parameter", "read_titration")},
    **{name: "uncertainty" for name in ("DEFAULT_LOG_K_SD", "DEFAULT_PKA_SD", "UncertaintyError", "Z95",
                                        "curve_band", "propagate")},
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
    "ACTIVITY_MODELS", "HELD_PH_RANGE", "PINNED_ACTIVITY_MAX", "LOG_C_FLOOR", "PH_MAX", "PH_MIN", "STANDARD_TEMPERATURE_C", "T_MAX_C",
    "T_MIN_C", "check_ph", "neutral_ph", "ph_grid", "check_save_target", "clean_stale_temps", "custom_reagent",
    "read_preset_bytes", "write_atomic", "parse_temperature", "AIR_GAS", "AIR_PRESSURE", "format_pressure",
    "pressure_ppm",
    "Cancelled", "find_reagent", "gas_named", "ingredient_index",
    "Diagram", "default_grid", "distribution", "log_concentrations", "saturation", "solubility",
    "system_distribution",
    "FitError", "FitResult", "TitrationData", "clean_text", "fit_titration", "parse_parameter", "read_titration",
    "DEFAULT_LOG_K_SD", "DEFAULT_PKA_SD", "UncertaintyError", "Z95", "curve_band", "propagate",
    "AcidBaseSystem", "ChemError", "Complex", "Equilibrium", "FixedGas", "Gas", "GasState", "Ingredient", "Ion",
    "Library", "LibraryError", "Solid", "SolidState", "SystemState",
    "Mixture", "ModelError", "Notice", "PresetError", "Reagent", "Species", "UnitError",
    "demo_mixture", "dumps_preset", "format_molar", "shipped_presets", "load_library", "load_preset", "loads_preset",
    "parse_concentration", "parse_pressure", "parse_volume", "save_preset", "solve", "tableau", "__version__",
    "CapacityCurve", "Curve", "CurveError", "EquivalencePoint", "TitrationCurve", "buffer_capacity",
    "buffer_capacity_at", "dilution", "sweep", "titration",
    "Recipe", "RecipeError", "design_buffer", "design_metal_buffer", "suggest_systems",
]
