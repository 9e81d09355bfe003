"""``protomix recipe``: design a buffer that has its pH at the working temperature.

All chemistry (the design, unit reading, the shortcut comparison) happens in
chem (:func:`chem.design_buffer`, :func:`chem.design_metal_buffer`); this module reads the options and prints the result.
"""

from __future__ import annotations

import json
import os
import sys

from tui.cli import EXIT_NO_ANSWER
from tui.cli.solve_cmd import notice_lines

HELP = "design a buffer recipe (grams, titrant or stock volumes) for a pH at a temperature"

DESCRIPTION = """\
Design a buffer that has the target pH at the temperature where it is used,
solved through the full equilibrium (activity, temperature, water), with the
Henderson–Hasselbalch shortcut's answer shown beside it.

  protomix recipe --system hepes --pH 7.4 --temp 37 --total "50 mM" --volume "1 L" --salt "NaCl 150 mM"
  protomix recipe --system tris --pH 8.0 --temp 4 --form titrant --titrant-conc "1 M"
  protomix recipe --pH 8.0 --temp 4 --suggest
"""

EPILOG = ("Amounts are for the whole final volume: dissolve, add the listed volumes, make up to volume.\n"
          "Model estimate: check the pH with a calibrated meter at the working temperature.")


def _ph(text: str) -> float:
    """argparse type of --pH: a number on the pH scale every command shares (:func:`chem.check_ph`)."""
    import argparse

    from chem import ChemError, check_ph

    try:
        return check_ph(float(text), "pH")
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc) if isinstance(exc, ChemError) else f"'{text}' is not a number")


def _celsius(text: str) -> float:
    """argparse type of --temp and --check-temp: 37, "37 °C", "37C" or "37 ℃", within the model's range."""
    import argparse

    from chem import ChemError, parse_temperature

    try:
        return parse_temperature(text)
    except ChemError as exc:
        raise argparse.ArgumentTypeError(str(exc))


#: Options that shape a designed recipe, with their defaults: meaningless with --suggest.
_DESIGN_ONLY = {"system": None, "total": "50 mM", "volume": "1 L", "form": "reagents", "salt": [],
                "ionic_strength": None, "ionic_salt": None, "acid_form": None, "base_form": None, "cation": None,
                "titrant": None, "titrant_conc": None, "stock_conc": None, "check_temp": None, "free": None,
                "metal_salt": None, "save": None, "force": False}


def _option(dest: str) -> str:
    return "--" + dest.replace("_", "-")


def check_options(args) -> str | None:
    """The first option given that conflicts with another or is ignored, as a one-line message; or None."""
    if args.suggest:
        for dest, default in _DESIGN_ONLY.items():
            if getattr(args, dest, default) != default:
                return (f"{_option(dest)} does not go with --suggest, which only ranks buffer systems "
                        "(leave --suggest out to design a recipe)")
    elif args.limit is not None:
        return "--limit goes with --suggest"
    if args.limit is not None and args.limit < 1:
        return f"--limit must be 1 or more (got {args.limit})"
    if args.save is not None and not args.save.strip():
        return "--save needs a file name"
    if args.force and args.save is None:
        return "--force goes with --save (it lets --save replace an existing file)"
    return None


def add_arguments(parser) -> None:
    parser.add_argument("--system", metavar="NAME",
                        help="buffer system (e.g. phosphate, tris, hepes); omitted: the best-ranked one")
    parser.add_argument("--pH", type=_ph, required=True, metavar="PH",
                        help="target pH at the working temperature (0 to 14)")
    parser.add_argument("--temp", type=_celsius, default=None, metavar="°C",
                        help="working temperature, e.g. 37 or \"37 °C\" (default 25)")
    parser.add_argument("--total", default="50 mM", metavar="CONC",
                        help='total buffer concentration, all forms (default "50 mM")')
    parser.add_argument("--volume", default="1 L", metavar="VOL", help='final volume (default "1 L")')
    parser.add_argument("--form", choices=("reagents", "titrant", "stocks"), default="reagents",
                        help="two reagents in grams (default), one form plus a titrant, or two stock solutions")
    parser.add_argument("--salt", action="append", default=[], metavar='"NAME CONC"',
                        help='background salt, e.g. "NaCl 150 mM" (repeatable)')
    parser.add_argument("--ionic-strength", metavar="CONC",
                        help='target ionic strength, reached by adding NaCl (KCl with --cation K), e.g. "0.15 M"')
    parser.add_argument("--ionic-salt", metavar="NAME", help="salt used to reach --ionic-strength")
    parser.add_argument("--acid-form", metavar="NAME", help="reagent to use as the acid form")
    parser.add_argument("--base-form", metavar="NAME", help="reagent to use as the base form")
    parser.add_argument("--cation", metavar="ION", help="counter-ion of the reagents and titrant (Na, K, ...)")
    parser.add_argument("--titrant", metavar="NAME", help="strong acid or base for --form titrant")
    parser.add_argument("--titrant-conc", metavar="CONC", help='titrant stock concentration (default "1 M")')
    parser.add_argument("--stock-conc", metavar="CONC", help='stock concentration for --form stocks (default "0.5 M")')
    parser.add_argument("--check-temp", type=_celsius, action="append", metavar="°C",
                        help="also report the pH of the same solution at this temperature (repeatable)")
    parser.add_argument("--activity", choices=("davies", "extended-dh", "ideal"), default="davies",
                        help="activity model (default davies)")
    parser.add_argument("--free", metavar='"SPECIES=CONC"',
                        help='metal buffer: the free level wanted, e.g. "Ca^2+=100 nM" (with --system NAME of '
                             "the chelator: edta, egta, nta, citrate, atp ...)")
    parser.add_argument("--metal-salt", metavar="NAME",
                        help="with --free: the metal salt weighed (default the metal's chloride)")
    parser.add_argument("--save", metavar="FILE.toml", help="save the final solution as a preset")
    parser.add_argument("--force", action="store_true", help="let --save replace an existing file")
    parser.add_argument("--suggest", action="store_true", help="rank buffer systems for --pH and --temp")
    parser.add_argument("--limit", type=int, metavar="N", help="with --suggest: show at most N systems")
    parser.add_argument("--json", action="store_true", help="print the result as one JSON object")


def render_recipe(recipe) -> str:
    """The human-readable report of a :class:`chem.Recipe`."""
    from chem import format_molar

    eq = recipe.equilibrium
    doc = recipe.to_dict()
    t = recipe.temperature_c
    out = [f"{recipe.system.name} buffer, pH {recipe.target_pH:g} at {t:g} °C: {format_molar(recipe.total)} total, "
           f"{recipe.volume_label}   (form: {recipe.form}, activity: {recipe.mixture.activity})", ""]
    names = []
    for it in recipe.items:
        name = it.reagent.name + (f" ({it.reagent.formula})" if it.reagent.formula else "")
        names.append(name + (f", {format_molar(it.stock_conc)} stock" if it.stock_conc is not None else ""))
    width = max((len(n) for n in names), default=0)
    for it, name in zip(recipe.items, names):
        out.append(f"  {it.action:<7} {it.amount:>9.4g} {it.unit:<4} {name:<{width}}   "
                   f"final {format_molar(it.conc):<12} {it.role}")
    out.append(f"  water to {recipe.volume_label} at {t:g} °C")
    out.append("")
    status = "converged" if eq.converged else "NOT CONVERGED - do not use"
    out.append(f"full equilibrium: pH {recipe.pH:.3f} at {t:g} °C   ionic strength {recipe.ionic_strength:.4g} M   "
               f"buffer capacity {doc['buffer_capacity_mM_per_pH']:.3g} mM/pH   {status}")
    pkas = ", ".join(f"{p:.3f}" for p in recipe.pka_at_temperature)
    out.append(f"  pKa at {t:g} °C (I = 0): {pkas}   useful range about pKa ± 1")
    for tc, ph in recipe.checks:
        out.append(f"  same solution at {tc:g} °C: pH {ph:.3f} ({ph - recipe.target_pH:+.3f})")
    sc = recipe.shortcut
    out.append(f"Henderson–Hasselbalch shortcut (pKa{sc.step + 1} {sc.pka:g} at 25 °C, "
               "concentrations, no activity):")
    if sc.pH is None:
        out.append("  no prediction: the recipe is not a mix of one step's acid and base forms")
    else:
        out.append(f"  predicts pH {sc.pH:.3f} for this recipe ({sc.pH - recipe.pH:+.3f} against the full equilibrium)")
    if sc.recipe_pH is not None:
        out.append(f"  a recipe designed by the shortcut would really give pH {sc.recipe_pH:.3f} at {t:g} °C")
    if recipe.free_species is not None:
        sp = eq.get(recipe.free_species)
        out.append(f"free {recipe.free_species}: {format_molar(sp.conc, 4)} (wanted {format_molar(recipe.free_target, 4)}), "
                   f"p{recipe.free_species.split('^')[0].rstrip('+-')} {sp.p_level:.3f} "
                   f"(−log activity)")
    unc = recipe.uncertainty
    lo, hi = unc.interval_95
    if unc.first_order_valid:
        out.append(f"how sure: pH {recipe.pH:.2f} ± {unc.sd:.3f} (95 %: {lo:.2f} to {hi:.2f}); from the constants "
                   f"± {unc.constants_sd:.3f}, from weighing (±{100 * unc.rel_sd:g} % on each amount) "
                   f"± {unc.weighing_sd:.3f}")
    else:
        out.append(f"how sure: not held: ±{100 * unc.rel_sd:g} % on each amount moves this pH by whole units "
                   f"(first-order sd {unc.sd:.2g}, beyond where a linear estimate holds); from the constants "
                   f"alone ± {unc.constants_sd:.3f}")
    if unc.defaults:
        out.append("  (no uncertainty stated for " + ", ".join(unc.defaults[:3])
                   + ("; ..." if len(unc.defaults) > 3 else "") + ": a default was used)")
    out += notice_lines(recipe)
    out.append("")
    out.append("Model estimate: check with a calibrated pH meter at the working temperature.")
    return "\n".join(out)


def render_suggestions(suggestions, target: float, t_c: float) -> str:
    """The ranked list of buffer systems."""
    from chem import load_library

    lib = load_library()
    out = [f"buffer systems for pH {target:g} at {t_c:g} °C "
           "(ranked by |pH − pKa| + drift over 10 K; hazardous systems left out)", ""]
    head = (f"  {'#':>2}  {'system':<18} {'step':>4} {'pKa':>7} {'dpKa/dT':>9} {'capacity':>13}   "
            "forms in the library")
    out.append(head)
    out.append("  " + "-" * (len(head) - 2))
    for i, s in enumerate(suggestions, 1):
        names = [r.name for r in lib.reagents_of(s.system)]
        forms = ", ".join(names[:3]) + (f" (+{len(names) - 3} more)" if len(names) > 3 else "")
        cap = s.to_dict()["capacity_mM_per_pH"]
        cap = "—" if cap is None else f"{cap:.3g} mM/pH"
        slope = "no data" if s.dpka_dt is None else f"{s.dpka_dt:+.4f}"
        out.append(f"  {i:>2}  {s.system.name:<18} {s.step + 1:>4} {s.pka:>7.3f} {slope:>9} {cap:>13}   {forms}")
    if not suggestions:
        out.append("  (no system in the library has a pKa within ±1 of this pH)")
    out.append("")
    out.append(f"pKa of that step at {t_c:g} °C and I = 0; dpKa/dT in K⁻¹; capacity of a 50 mM solution "
               "at the target pH.\nMake one with: protomix recipe --system NAME --pH ... --temp ...")
    return "\n".join(out)


def run(args) -> int:
    from chem import STANDARD_TEMPERATURE_C, design_buffer, suggest_systems
    from tui.text import printable, safe_json

    problem = check_options(args)
    if problem:
        print(f"protomix: error: {problem}", file=sys.stderr)
        return 2
    if args.temp is None:
        args.temp = STANDARD_TEMPERATURE_C
    if args.suggest:
        sugg = suggest_systems(args.pH, args.temp, activity=args.activity, limit=args.limit)
        if args.json:
            doc = {"format": 1, "target_pH": args.pH, "temperature_c": args.temp,
                   "suggestions": [s.to_dict() for s in sugg]}
            sys.stdout.write(safe_json(json.dumps(doc, indent=2, ensure_ascii=False)) + "\n")
        else:
            print(printable(render_suggestions(sugg, args.pH, args.temp), newlines=True))
        return 0

    if args.metal_salt is not None and args.free is None:
        print("protomix: error: --metal-salt goes with --free", file=sys.stderr)
        return 2
    if args.free is not None and args.system is None:
        print("protomix: error: --free needs --system: the chelator (e.g. egta, edta, nta, citrate, atp)",
              file=sys.stderr)
        return 2
    if args.save is not None:
        from chem import check_save_target

        if not args.force and os.path.lexists(args.save):
            print(f"protomix: error: {printable(args.save)} already exists; not overwritten "
                  "(add --force to replace it)", file=sys.stderr)
            return 2
        check_save_target(args.save, overwrite=args.force)       # before the work: fail with one line
    if args.free is not None:
        from chem import design_metal_buffer

        form = args.form if args.form != "reagents" else "titrant"
        recipe = design_metal_buffer(
            args.free, args.system, args.pH, temperature_c=args.temp, total=args.total, volume=args.volume,
            salts=args.salt, metal_salt=args.metal_salt, cation=args.cation, titrant=args.titrant,
            titrant_conc=args.titrant_conc, form=form, activity=args.activity,
            acid_form=args.acid_form, base_form=args.base_form, check_temperatures=args.check_temp)
    else:
        recipe = design_buffer(
            args.system, args.pH, temperature_c=args.temp, total=args.total, volume=args.volume, form=args.form,
            salts=args.salt, ionic_strength=args.ionic_strength, ionic_salt=args.ionic_salt,
            acid_form=args.acid_form, base_form=args.base_form, cation=args.cation, titrant=args.titrant,
            titrant_conc=args.titrant_conc, stock_conc=args.stock_conc, check_temperatures=args.check_temp,
            activity=args.activity)
    if args.json:
        sys.stdout.write(safe_json(json.dumps(recipe.to_dict(), indent=2, ensure_ascii=False)) + "\n")
    else:
        print(printable(render_recipe(recipe), newlines=True))
    if args.save is not None:
        from chem import save_preset

        path = save_preset(recipe.mixture, args.save, overwrite=args.force)
        print(printable(f"saved preset {path} (read it back with: protomix solve {path})"),
              file=sys.stderr if args.json else sys.stdout)
    if not recipe.equilibrium.converged:
        print("protomix: warning: the recipe's solve did not converge; its numbers are unreliable", file=sys.stderr)
        return EXIT_NO_ANSWER
    return 0
