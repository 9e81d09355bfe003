"""``protomix curve --uncertainty``: the 95 % band series of a curve (numbers from :func:`chem.curve_band`)."""

from __future__ import annotations


def add_band(res) -> None:
    """Add ``NAME_lo``/``NAME_hi`` series for pH and every species series of ``res`` (in place)."""
    from chem import DEFAULT_LOG_K_SD, DEFAULT_PKA_SD, Z95, curve_band

    band = curve_band(res.curve)
    lo, hi = band.pH_limits(res.series["pH"])
    added = {"pH_lo": lo, "pH_hi": hi}
    for name in res.extra:
        sd = band.log10_sd.get(name)
        if sd is None:
            continue
        factor = 10.0 ** (Z95 * sd)
        added[f"{name}_lo"] = res.series[name] / factor
        added[f"{name}_hi"] = res.series[name] * factor
    res.series.update(added)
    if res.main == ["pH"]:
        res.main = ["pH", "pH_lo", "pH_hi"]
    widest = float(band.pH_sd.max()) if band.pH_sd.size else 0.0
    res.notes.append(f"95 % band from the constants' uncertainties (first order; default ±{DEFAULT_PKA_SD:g} "
                     f"per pKa and ±{DEFAULT_LOG_K_SD:g} per log K where the source states none): "
                     f"pH ± up to {Z95 * widest:.3f}")
