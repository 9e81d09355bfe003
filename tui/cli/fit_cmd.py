"""``protomix fit SAMPLE.toml DATA.csv ...``: fit a measured titration, with standard errors.

All the work happens in :func:`chem.fit_titration`; this module reads the options,
prints the result and writes the fitted sample.
"""

from __future__ import annotations

import json
import math
import os
import sys
from pathlib import Path

HELP = "fit a measured titration (amounts, pKa, titrant, offset) with standard errors"

DESCRIPTION = """\
Fit a measured titration through the full equilibrium model: the sample in
SAMPLE.toml (its amounts and constants are the starting guesses), the points
in DATA.csv (a header row naming volume_mL and pH; an optional temperature_c
column overrides the preset's temperature per point; other columns ignored).

  protomix fit vinegar.toml run1.csv --titrant NaOH --titrant-conc "0.1 M" \\
      --sample "25 mL" --vary "amount:acetic acid" --vary pKa:acetate:1 --vary offset
"""

EPILOG = """\
--vary (repeatable):
  amount:INGREDIENT   the ingredient's amount in the sample, mol/L
  pKa:SYSTEM:STEP     the step's thermodynamic pKa at 25 °C, I = 0 (step 1: the first proton)
  titrant             the titrant stock's concentration, mol/L
  offset              a constant pH offset of the electrode (measured = true + offset)
Standard errors are from the Jacobian at the optimum, scaled by the residual
variance; Gran end points are computed from the measured points alone."""


def add_arguments(parser) -> None:
    parser.add_argument("sample", metavar="SAMPLE.toml", help="preset with the sample as believed")
    parser.add_argument("data", metavar="DATA.csv", help="measured points: volume_mL, pH[, temperature_c]")
    parser.add_argument("--titrant", required=True, metavar="NAME",
                        help="reagent added (library name, alias or formula, or a custom reagent of the preset)")
    parser.add_argument("--titrant-conc", required=True, metavar="AMOUNT",
                        help='titrant stock concentration, e.g. "0.1 M" (the starting guess with --vary titrant)')
    parser.add_argument("--sample", dest="sample_volume", required=True, metavar="VOLUME",
                        help='volume of the sample titrated, e.g. "25 mL"')
    parser.add_argument("--vary", action="append", required=True, metavar="WHAT",
                        help="a parameter to fit (repeatable; see below)")
    parser.add_argument("--json", action="store_true", help="print the result as one JSON object")
    parser.add_argument("--save", metavar="FILE.toml", help="write the fitted sample as a preset")
    parser.add_argument("--force", action="store_true", help="let --save replace an existing file")


def _num(x: float | None, spec: str) -> str:
    if x is None or not math.isfinite(x):
        return "—"
    return format(x, spec)


def _value_text(p) -> tuple[str, str]:
    """The value and its standard error with the same number of decimals (two significant in the error)."""
    if p.stderr is None or not p.stderr > 0:
        return f"{p.value:.6g}", "—"
    decimals = max(0, 1 - int(math.floor(math.log10(p.stderr))))
    decimals = min(decimals, 12)
    return f"{p.value:.{decimals}f}", f"{p.stderr:.{decimals}f}"


def _clip(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


def render_fit(result, sample_label: str) -> str:
    """The human-readable report of a :class:`chem.FitResult`, at most 80 columns wide."""
    from chem import clean_text

    data = result.data
    n, k = len(data), len(result.parameters)
    status = "converged" if result.converged else "NOT CONVERGED - do not use these numbers"
    out = [_clip(f"fit of {data.label} to {clean_text(sample_label, 40)}", 80),
           f"{n} points, {k} parameter{'s' * (k != 1)}, {result.dof} degrees of freedom, "
           f"{result.evaluations} evaluations: {status}", ""]
    width = min(max(len(p.name) for p in result.parameters), 34)
    head = f"  {'parameter':<{width}}  {'value':>14}  {'± std. error':>13}  unit"
    out.append(head)
    out.append("  " + "-" * (len(head) - 2))
    for p in result.parameters:
        value, err = _value_text(p)
        out.append(f"  {_clip(p.name, width):<{width}}  {value:>14}  {err:>13}  {p.unit}")
    out.append("")
    out.append(f"rms residual {result.rms_pH:.4f} pH   largest {_largest(result)}")
    if k > 1:
        out.append("correlation")
        labels = [f"[{i + 1}]" for i in range(k)]
        out.append("      " + "".join(f"{lab:>8}" for lab in labels[:8]))
        for i, row in enumerate(result.correlation[:8]):
            out.append(f"  {labels[i]:<4}" + "".join(f"{c:8.3f}" for c in row[:8]))
        high = [(result.parameters[i].name, result.parameters[j].name, result.correlation[i, j])
                for i in range(k) for j in range(i + 1, k) if abs(result.correlation[i, j]) > 0.95]
        for a, b, c in high:
            out.append(_clip(f"  strongly correlated: {a} and {b} ({c:+.3f})", 80))
    out.append("")
    eqp = result.equivalence_points
    if eqp:
        for i, e in enumerate(eqp):
            out.append(f"equivalence point{f' {i + 1}' if len(eqp) > 1 else ''} of the fitted curve: "
                       f"{e.volume_mL:.4f} mL, pH {e.pH:.3f}")
    else:
        out.append("no equivalence point of the fitted curve within the measured volumes")
    if result.gran:
        for g in result.gran:
            where = "short of the end point" if g.branch == "before" else "past the end point"
            out.append(_clip(f"Gran ({where}, {g.function}, {g.points} points): {g.volume_mL:.4f} "
                             f"± {g.sd_mL:.4f} mL", 80))
    else:
        out.append("Gran check: needs a strong acid or base titrant and enough points on each side")
    for note in result.notes:
        out.append(_clip(f"note: {note}", 200))
    if not result.converged:
        out.append(f"fit: {result.message}")
    out.append("")
    out.append("Model estimate; standard errors assume independent, equal pH errors.")
    return "\n".join(out)


def _largest(result) -> str:
    import numpy as np

    i = int(np.argmax(np.abs(result.residuals)))
    return f"{result.residuals[i]:+.4f} at {result.data.volume_mL[i]:g} mL"


def run(args) -> int:
    from chem import (find_reagent, fit_titration, load_preset, parse_concentration, parse_volume, read_titration,
                      save_preset)

    from tui.text import printable, safe_json

    if args.save:
        from chem import check_save_target

        if not args.force and os.path.lexists(args.save):
            print(f"protomix: error: {printable(args.save)} already exists; not overwritten "
                  "(add --force to replace it)", file=sys.stderr)
            return 2
        check_save_target(args.save, overwrite=args.force)       # before the fit: fail with one line
    mixture = load_preset(args.sample)
    data = read_titration(args.data)
    titrant = find_reagent(args.titrant, mixture)
    conc = parse_concentration(args.titrant_conc, molar_mass=titrant.molar_mass)
    sample = parse_volume(args.sample_volume)
    result = fit_titration(mixture, data, titrant, conc, sample, args.vary)
    if args.json:
        sys.stdout.write(safe_json(json.dumps(result.to_dict(), indent=2, ensure_ascii=False)) + "\n")
    else:
        print(printable(render_fit(result, Path(args.sample).name), newlines=True))
    if args.save:
        if result.mixture is None:
            print("protomix: error: the fitted sample cannot be written as a preset "
                  f"({printable('; '.join(result.notes)) or 'see above'})", file=sys.stderr)
            return 2
        path = save_preset(result.mixture, args.save, overwrite=args.force)
        print(f"saved the fitted sample as {printable(str(path))}", file=sys.stderr if args.json else sys.stdout)
    return 0
