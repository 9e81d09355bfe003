"""Safety cautions for a solved mixture.

The tool informs; it does not certify. Every caution ends with
:data:`DEFER`, and the README says the same.
"""

from __future__ import annotations

from .model import Equilibrium, Mixture, Notice

DEFER = ("Model estimate only: follow the safety data sheets, local codes and "
         "licensed practice.")

# Corrosivity: aqueous waste is classed corrosive at pH <= 2 or >= 12.5
# (US EPA, 40 CFR 261.22(a)(1), from memory). Used here as a plain flag.
CORROSIVE_LOW = 2.0
CORROSIVE_HIGH = 12.5

# Below this total (mol/L) a hazardous system is ignored: trace amounts.
TRACE_M = 1e-6


def cautions_for(eq: Equilibrium) -> list[Notice]:
    """The cautions that apply to ``eq`` (possibly none)."""
    return cautions_of(eq.mixture, eq.pH, eq.species)


def cautions_of(mixture: Mixture, ph: float, species) -> list[Notice]:
    """The cautions for ``mixture`` at ``ph`` with its solved ``species``."""
    out: list[Notice] = []
    pairs = mixture.systems()
    present = {s.name: (s, c) for s, c in pairs if c > TRACE_M}
    hazards = {s.hazard for s, _ in present.values() if s.hazard}
    t = mixture.temperature_c

    for name, (sys_, total) in present.items():
        if sys_.hazard == "chlorine" and ph < 6.0:
            out.append(Notice(
                "chlorine-release",
                f"{name} below pH 6 (here pH {ph:.2f}): hypochlorite/hypochlorous acid releases chlorine gas. "
                f"Do not acidify bleach. {DEFER}"))
        if sys_.hazard == "toxic-gas":
            pka = float(sys_.pka_at(t)[0])
            if ph < pka:
                gas = sys_.species[0]
                share = next((s.fraction for s in species if s.system == name and s.name == gas), None)
                pct = f" ({share:.0%} as {gas})" if share is not None else ""
                out.append(Notice(
                    "toxic-gas",
                    f"{name} below its pKa {pka:.2f} (here pH {ph:.2f}){pct}: toxic {gas} gas can escape. "
                    f"Work in a fume hood, keep acids away. {DEFER}"))
        if sys_.hazard == "ammonia" and total >= 0.1 and ph > float(sys_.pka_at(t)[0]):
            out.append(Notice(
                "ammonia-gas",
                f"{name} at {total:.3g} M above its pKa (pH {ph:.2f}): ammonia gas is released; "
                f"ventilate. {DEFER}"))
    if "chlorine" in hazards and ("ammonia" in present or "ammonia" in hazards):
        out.append(Notice(
            "chloramine",
            f"Hypochlorite together with ammonia/ammonium forms chloramines (toxic, irritant gases). "
            f"Never mix bleach with ammonia. {DEFER}"))
    if ph <= CORROSIVE_LOW:
        out.append(Notice("corrosive-acid",
                          f"pH {ph:.2f}: corrosive acid; wear eye and skin protection. {DEFER}"))
    elif ph >= CORROSIVE_HIGH:
        out.append(Notice("corrosive-base",
                          f"pH {ph:.2f}: corrosive base; wear eye and skin protection. {DEFER}"))
    return out
