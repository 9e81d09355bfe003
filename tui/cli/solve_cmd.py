"""``protomix solve FILE [--json]``: print the equilibrium of a preset."""

from __future__ import annotations

import json
import math
import sys

from tui.cli import EXIT_NO_ANSWER

HELP = "print the equilibrium of a preset as a table (or --json)"

EPILOG = "A solve that does not converge still prints its numbers, marked unreliable, and exits with status 3."


def notice_lines(result) -> list[str]:
    """One line per warning, then per caution, of a solved result or a recipe."""
    return ([f"warning [{w.code}]: {w.message}" for w in result.warnings]
            + [f"CAUTION [{c.code}]: {c.message}" for c in result.cautions])


def add_arguments(parser) -> None:
    parser.add_argument("file", metavar="FILE.toml", help="preset file to solve")
    parser.add_argument("--json", action="store_true", help="print the result as one JSON object")
    parser.add_argument("--uncertainty", action="store_true",
                        help="also give the uncertainty of pH and species from the constants' uncertainties "
                             "(first-order propagation)")
    parser.add_argument("--monte-carlo", type=int, metavar="N",
                        help="with --uncertainty: propagate by N Monte Carlo draws instead")


def _fmt(x: float | None, spec: str) -> str:
    if x is None:
        return "—"
    if not math.isfinite(x):
        return "-inf" if x < 0 else "inf"
    return format(x, spec)


def render_table(eq) -> str:
    """The human-readable report of an :class:`chem.Equilibrium`."""
    from chem import format_molar

    mix = eq.mixture
    out = []
    if mix.title:
        out.append(mix.title)
    status = "converged" if eq.converged else "NOT CONVERGED - do not use these numbers"
    out.append(f"pH {eq.pH:.3f}   pOH {eq.pOH:.3f}   {mix.temperature_c:g} °C   activity: {mix.activity}")
    out.append(f"ionic strength {eq.ionic_strength:.4g} M   balance error {abs(eq.balance_error):.1e} M   {status}")
    out.append("")
    out.append("ingredients")
    for ing in mix.ingredients:
        out.append(f"  {ing.reagent.name:<40} {ing.label}")
    if not mix.ingredients:
        out.append("  (none: pure water)")
    out.append("")
    head = f"  {'species':<22} {'system':<18} {'conc / M':>11} {'log C':>7} {'gamma':>6} {'fraction':>8}"
    out.append(head)
    out.append("  " + "-" * (len(head) - 2))
    for s in eq.species:
        frac = "" if s.fraction is None else f"{s.fraction:8.4f}"
        out.append(f"  {s.name:<22} {s.system:<18} {s.conc:11.4e} {_fmt(s.log_c, '7.3f')} "
                   f"{s.activity_coefficient:6.3f} {frac:>8}")
    if eq.systems:
        out.append("")
        out.append("totals: " + ", ".join(f"{st.name} {format_molar(st.total)}" for st in eq.systems))
    out += _where_lines(eq)
    out += _solid_lines(eq)
    out += _gas_lines(eq)
    out += _water_lines(eq)
    out += notice_lines(eq)
    out.append("")
    out.append("Model estimate: check against measurement; defer to safety data sheets, local codes and licensed practice.")
    return "\n".join(out)


def _where_lines(eq) -> list[str]:
    """Where each system bound in complexes or solids is: its forms, largest share first."""
    from chem import format_molar

    out = []
    for st in eq.systems:
        own = {s.name for s in eq.species if s.system == st.name}
        if all(name in own for name, _ in st.distribution):
            continue                     # only its own acid–base forms: the species table says it all
        if not out:
            out += ["", "where each system is (share of its total)"]
        shares = [f"{name} {share:.1%}" for name, share in st.distribution if share >= 0.0005][:6]
        out.append(f"  {st.name:<22} total {format_molar(st.total, 4):<10} free {format_molar(st.free, 4):<10} "
                   + ", ".join(shares))
    return out


def _solid_lines(eq) -> list[str]:
    if not eq.solids:
        return []
    out = ["", f"  {'solid':<22} {'formula':<14} {'SI':>7} {'log Ksp':>8} {'amount / M':>11}  may form"]
    for s in eq.solids:
        mark = "  supersaturated" if s.saturation_index > 1e-6 and s.amount == 0.0 else ""
        out.append(f"  {s.name:<22} {s.formula:<14} {s.saturation_index:7.2f} {s.log_k:8.2f} "
                   f"{s.amount:11.4e}  {'yes' if s.allowed else 'no'}{mark}")
    return out


def _gas_lines(eq) -> list[str]:
    if not eq.gases:
        return []
    out = ["", f"  {'gas':<10} {'pressure / atm':>14} {'ppm':>10} {'dissolved / M':>14} {'uptake / M':>11}"]
    for g in eq.gases:
        how = "held" if g.fixed else "over the solution"
        out.append(f"  {g.name:<10} {g.pressure_atm:14.4e} {g.pressure_atm * 1e6:10.4g} {g.dissolved:14.4e} "
                   f"{g.uptake:11.3e}  {how}")
    return out


def _water_lines(eq) -> list[str]:
    names = {s.name for s in eq.systems}
    if not names & {"calcium", "magnesium", "carbonate"}:
        return []
    out = ["", f"alkalinity {eq.alkalinity * 1000:.4g} meq/L = {eq.alkalinity_mg_l:.4g} mg/L as CaCO3"]
    hardness = eq.hardness_mg_l
    if hardness is not None:
        out[-1] += f"   hardness {hardness:.4g} mg/L as CaCO3"
    return out


def run(args) -> int:
    from chem import load_preset, solve
    from tui.text import printable, safe_json

    eq = solve(load_preset(args.file))
    unc = _uncertainty(eq, args) if args.uncertainty or args.monte_carlo is not None else None
    if args.json:
        doc = eq.to_dict()
        if unc is not None:
            doc["uncertainty"] = unc.to_dict()
        sys.stdout.write(safe_json(json.dumps(doc, indent=2, ensure_ascii=False)) + "\n")
    else:
        print(printable(render_table(eq), newlines=True))     # names and titles come from a shared file
        if unc is not None:
            from tui.cli.uncertainty_text import uncertainty_lines

            print(printable("\n".join(uncertainty_lines(unc)), newlines=True))
    if not eq.converged:
        print("protomix: warning: the solve did not converge; the numbers above are unreliable", file=sys.stderr)
        return EXIT_NO_ANSWER
    return 0


def _uncertainty(eq, args):
    from chem import UncertaintyError, propagate

    if args.monte_carlo is not None:
        if not args.uncertainty:
            raise UncertaintyError("--monte-carlo goes with --uncertainty")
        return propagate(eq, method="monte-carlo", samples=args.monte_carlo)
    return propagate(eq)
