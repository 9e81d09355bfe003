"""``protomix solve FILE [--json]``: print the equilibrium of a preset."""

from __future__ import annotations

import json
import math
import sys

HELP = "print the equilibrium of a preset as a table (or --json)"


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
    out += notice_lines(eq)
    out.append("")
    out.append("Model estimate: check against measurement; defer to safety data sheets, local codes and licensed practice.")
    return "\n".join(out)


def run(args) -> int:
    from chem import load_preset, solve

    eq = solve(load_preset(args.file))
    unc = _uncertainty(eq, args) if args.uncertainty or args.monte_carlo is not None else None
    if args.json:
        doc = eq.to_dict()
        if unc is not None:
            doc["uncertainty"] = unc.to_dict()
        json.dump(doc, sys.stdout, indent=2, ensure_ascii=False)
        sys.stdout.write("\n")
    else:
        print(render_table(eq))
        if unc is not None:
            from tui.cli.uncertainty_text import uncertainty_lines

            print("\n".join(uncertainty_lines(unc)))
    return 0


def _uncertainty(eq, args):
    from chem.uncertainty import UncertaintyError, propagate

    if args.monte_carlo is not None:
        if not args.uncertainty:
            raise UncertaintyError("--monte-carlo goes with --uncertainty")
        return propagate(eq, method="monte-carlo", samples=args.monte_carlo)
    return propagate(eq)
