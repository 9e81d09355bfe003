"""Safety cautions for a solved mixture.

The tool informs; it does not certify. Every caution ends with
:data:`DEFER`, and the README says the same.

Cautions are derived from the solved equilibrium: the pH, the species and
the partial pressures of gases over the solution.  Where the library has a
gas with a published short-term exposure limit, the caution compares the
equilibrium headspace partial pressure with it (so H2S at pH 8, where a tenth
of the sulfide is still H2S, is flagged); a hazardous system without gas
data falls back to the pKa rule.
"""

from __future__ import annotations

from .model import Equilibrium, Notice

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
    mixture = eq.mixture
    ph = eq.pH
    species = eq.species
    out: list[Notice] = []
    pairs = mixture.systems()
    present = {s.name: (s, c) for s, c in pairs if c > TRACE_M}
    hazards = {s.hazard for s, _ in present.values() if s.hazard}
    t = mixture.temperature_c
    gas_of_system = {}
    for g in eq.gases:
        if g.exposure_limit_ppm is not None:
            gas_of_system.setdefault(g.name, g)

    flagged_gas = set()
    for g in eq.gases:
        if g.over_exposure_limit:                       # a gas the user holds is no release
            ppm = g.headspace_ppm
            flagged_gas.add(g.name)
            out.append(Notice(
                "toxic-gas",
                f"The air over this mixture would hold about {_ppm(ppm)} {g.name} at equilibrium "
                f"(limit for short exposure {g.exposure_limit_ppm:g} ppm): toxic gas can escape. Work in a fume "
                f"hood, keep the vessel closed. {DEFER}"))

    for name, (sys_, total) in present.items():
        if sys_.hazard == "chlorine" and ph < 6.0:
            out.append(Notice(
                "chlorine-release",
                f"{name} below pH 6 (here pH {ph:.2f}): hypochlorite/hypochlorous acid releases chlorine gas. "
                f"Do not acidify bleach. {DEFER}"))
        if sys_.hazard == "toxic-gas" and not _has_gas_data(eq, sys_):
            pka = float(sys_.pka_at(t)[0])
            if ph < pka:
                gas = sys_.species[0]
                share = next((s.fraction for s in species if s.system == name and s.name == gas), None)
                pct = f" ({share:.0%} as {gas})" if share is not None else ""
                out.append(Notice(
                    "toxic-gas",
                    f"{name} below its pKa {pka:.2f} (here pH {ph:.2f}){pct}: toxic {gas} gas can escape. "
                    f"Work in a fume hood, keep acids away. {DEFER}"))
        if (sys_.hazard == "ammonia" and total >= 0.1 and ph > float(sys_.pka_at(t)[0])
                and "NH3" not in flagged_gas):
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


def _has_gas_data(eq: Equilibrium, sys_) -> bool:
    """Whether a gas with an exposure limit dissolves into one of ``sys_``'s species in this result."""
    problem = getattr(eq, "_problem", None)
    if problem is None:
        return False
    st = problem.structure
    for g, ga in enumerate(st.gases):
        if ga.exposure_limit_ppm is not None and ga.owners and ga.owners[0] is sys_:
            return True
    return False


def _ppm(ppm: float) -> str:
    if ppm >= 1e4:
        return f"{ppm / 1e4:.3g} % ({ppm:.3g} ppm)"
    return f"{ppm:.3g} ppm"
