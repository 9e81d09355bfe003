"""Warnings about the model, derived from a solved equilibrium (the solver computes none).

Each warning has a stable code:

* ``not-converged`` — the solver stopped before the balances closed;
* ``ionic-strength-high`` — beyond the activity model's usual range;
* ``activity-model-invalid`` — far beyond it, or an ion's activity
  coefficient above 1 (the Davies equation turns upwards past about
  I = 0.5 M): the numbers have lost their meaning;
* ``no-temperature-data`` / ``temperature-out-of-range`` — a constant used
  away from 25 °C without a reaction enthalpy, or outside its data's range;
* ``supersaturated`` — a solid with SI > 0 that is not allowed to form;
* ``conditional-constants`` — constants stated at an ionic strength were
  converted to I = 0 with the activity model.

:func:`check_possible` refuses mixtures that cannot exist as a solution.
"""

from __future__ import annotations

from .activity import VALID_UP_TO
from .errors import ModelError
from .model import T_REF_C, Equilibrium, Mixture, Notice

#: No aqueous solution holds more than this many moles of solute formula
#: units per litre (water itself is 55.5 mol/L; the most soluble salts reach
#: about 20 mol/L; common practice).
MAX_TOTAL_FORMULA_UNITS = 30.0

#: Nor more than this mass of solute per litre of solution, g/L (the densest
#: concentrated salt solutions weigh about 2.5 kg/L; common practice).
MAX_SOLUTE_G_PER_L = 2500.0

#: The activity models are not used beyond this many times their usual range.
INVALID_FACTOR = 4.0


def check_possible(mixture: Mixture) -> None:
    """Raise :class:`ModelError` when ``mixture`` holds more solute than any real solution."""
    total = sum(i.conc for i in mixture.ingredients)
    if total > MAX_TOTAL_FORMULA_UNITS:
        raise ModelError(f"the ingredients add up to {total:.3g} mol/L of solute; no aqueous solution holds more "
                         f"than about {MAX_TOTAL_FORMULA_UNITS:g} mol/L (check the amounts)")
    mass = sum(i.conc * i.reagent.molar_mass for i in mixture.ingredients if i.reagent.molar_mass)
    if mass > MAX_SOLUTE_G_PER_L:
        raise ModelError(f"the ingredients weigh {mass:.4g} g per litre of solution; no aqueous solution holds more "
                         f"than about {MAX_SOLUTE_G_PER_L:g} g/L (check the amounts)")


def warnings_for(eq: Equilibrium, problem=None) -> list[Notice]:
    """The model warnings that apply to ``eq``."""
    out: list[Notice] = []
    mixture = eq.mixture
    if not eq.converged:
        out.append(Notice("not-converged", f"The solver did not converge: {eq.message}. Do not use these numbers."))
    model = mixture.activity
    limit = VALID_UP_TO[model]
    ionic = eq.ionic_strength
    gamma_above_one = model != "ideal" and any(
        s.charge != 0 and s.activity_coefficient > 1.0 + 1e-12 for s in eq.species)
    if model != "ideal" and (ionic > INVALID_FACTOR * limit or gamma_above_one):
        why = ("activity coefficients above 1" if gamma_above_one
               else f"ionic strength {ionic:.3g} M, far beyond its range (about {limit:g} M)")
        out.append(Notice("activity-model-invalid",
                          f"The {model} activity model has lost its meaning here ({why}): pH and species "
                          "are not reliable. Use a specific-interaction model or measure."))
    elif ionic > limit:
        out.append(Notice("ionic-strength-high",
                          f"Ionic strength {ionic:.3g} M is beyond the {model} model's "
                          f"usual range (up to about {limit:g} M); activity coefficients are rough."))
    t = mixture.temperature_c
    away = abs(t - T_REF_C) > 0.5
    for sys_, _ in mixture.systems():
        if sys_.steps == 0:
            continue
        if not sys_.has_temperature_data():
            if away:
                out.append(Notice("no-temperature-data",
                                  f"{sys_.name}: no reaction enthalpy known; its 25 °C pKa is used at {t:g} °C."))
        elif sys_.t_range_c is not None and not (sys_.t_range_c[0] - 1e-9 <= t <= sys_.t_range_c[1] + 1e-9):
            lo, hi = sys_.t_range_c
            out.append(Notice("temperature-out-of-range",
                              f"{sys_.name}: {t:g} °C is outside its temperature data ({lo:g}–{hi:g} °C); "
                              "pKa extrapolated by van 't Hoff."))
    if problem is not None:
        st = problem.structure
        if away:
            missing = [cx.name for cx in st.complexes if cx.dh_kj is None]
            missing += [so.name for so in st.solids if so.dh_kj is None]
            missing += [g.name for g in st.gases if g.dh_kj is None]
            if missing:
                shown = ", ".join(missing[:6]) + (f" and {len(missing) - 6} more" if len(missing) > 6 else "")
                which = "its 25 °C constant is" if len(missing) == 1 else "their 25 °C constants are"
                out.append(Notice("no-temperature-data",
                                  f"No reaction enthalpy for {shown}: {which} used at {t:g} °C."))
        conditional = [s.name for s in st.systems if s.ionic_strength > 0]
        conditional += [cx.name for cx in st.complexes if cx.ionic_strength > 0]
        if conditional and model == "ideal":
            out.append(Notice("conditional-constants",
                              "Some constants were measured at a stated ionic strength; the ideal model uses "
                              "them unchanged as if thermodynamic."))
    for so in eq.supersaturated:
        if not so.allowed:
            out.append(Notice("supersaturated",
                              f"{so.name} is supersaturated (SI {so.saturation_index:+.2f}) but not allowed to "
                              "form; allow precipitation to see what settles out."))
    return out
