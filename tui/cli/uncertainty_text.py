"""Text lines for an uncertainty result (``solve --uncertainty``, ``recipe``): formatting only."""

from __future__ import annotations


def uncertainty_lines(unc, *, species: bool = True, limit: int = 4) -> list[str]:
    """pH ± sd with the 95 % interval, the largest sources, which constants used the default sd."""
    from chem import DEFAULT_LOG_K_SD, DEFAULT_PKA_SD

    lo, hi = unc.pH_interval_95
    how = ("first-order propagation" if unc.method == "first-order"
           else f"Monte Carlo, {unc.samples} draws" + (f", {unc.failed} failed" if unc.failed else ""))
    out = ["", f"uncertainty from the constants ({how}; constants taken as independent)",
           f"  pH {unc.pH:.3f} ± {unc.pH_sd:.3f}   95 %: {lo:.3f} to {hi:.3f}"]
    top = [c for c in unc.contributions if c.pH_sd > 0.0005][:limit]
    if top:
        out.append("  largest sources: " + ", ".join(
            f"{c.key} (±{c.sd:g}{'' if c.stated else '*'} -> ±{c.pH_sd:.3f})" for c in top))
    if unc.defaults:
        out.append(f"  * no uncertainty stated by the source: default ±{DEFAULT_PKA_SD:g} for a pKa, "
                   f"±{DEFAULT_LOG_K_SD:g} for a log K")
    if species:
        wide = sorted((s for s in unc.species if s.conc > 0), key=lambda s: -s.log10_sd)[:limit]
        if wide:
            out.append("  least certain species (sd of log10 C): "
                       + ", ".join(f"{s.name} ±{s.log10_sd:.3f}" for s in wide))
    return out
