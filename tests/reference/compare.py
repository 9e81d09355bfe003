"""protomix through its public contract, set beside the reference.

``protomix_json(spec)`` runs exactly what a user's preset goes through:
preset text -> ``chem.loads_preset`` -> ``chem.solve`` -> ``to_dict()``
(the JSON of DESIGN §6 and §8.3).  ``differences`` lists every field that
disagrees with the reference beyond the tolerances below, and
``balance_errors`` recomputes the balances from the JSON alone (plus the
stoichiometry of the solids, which the JSON does not carry).
"""

from __future__ import annotations

import math

import mpmath as mp

import chem
from chem import water

from .solver import Result
from .spec import Spec, to_toml

PH_ABS = 1e-8
CONC_REL = 1e-7
IGNORE_BELOW = 1e-25          # mol/L: species this rare are not compared
SI_ABS = 1e-7
AMOUNT_REL = 1e-8             # of the largest amount the totals allow
BALANCE_REL = 1e-10


def protomix_json(spec: Spec) -> dict:
    """Solve ``spec`` with protomix through the preset text and return its JSON object."""
    return chem.solve(chem.loads_preset(to_toml(spec), "reference-case.toml")).to_dict()


def _close(got, want, rel, floor=0.0) -> bool:
    if got is None:
        return False
    want = float(want)
    return abs(got - want) <= rel * abs(want) + floor


def differences(spec: Spec, ref: Result, got: dict, *, full: bool) -> list[str]:
    """Fields of ``got`` that disagree with ``ref``; ``full`` also checks the DESIGN §8.3 fields."""
    out: list[str] = []
    if got.get("converged") is not True:
        out.append(f"converged = {got.get('converged')!r}")
    if got.get("pH") is None or abs(got["pH"] - float(ref.pH)) > PH_ABS:
        out.append(f"pH {got.get('pH')!r} != {mp.nstr(ref.pH, 15)}")
    pkw = float(water.pkw(spec.temperature_c))
    if got.get("pOH") is None or got.get("pH") is None or abs(got["pOH"] - (pkw - got["pH"])) > PH_ABS:
        out.append(f"pOH {got.get('pOH')!r} != pKw(T) − pH = {pkw - (got.get('pH') or 0.0)!r}")
    if got.get("temperature_c") != spec.temperature_c or got.get("activity") != spec.activity:
        out.append(f"temperature/activity {got.get('temperature_c')!r}/{got.get('activity')!r} "
                   f"!= {spec.temperature_c!r}/{spec.activity!r}")
    if not _close(got.get("ionic_strength_M"), ref.ionic_strength, CONC_REL, 1e-30):
        out.append(f"ionic strength {got.get('ionic_strength_M')!r} != {mp.nstr(ref.ionic_strength, 15)}")

    by_name = {s["name"]: s for s in got.get("species", [])}
    totals = {s["name"]: s.get("total_M") for s in got.get("systems", [])}
    for name, r in ref.species.items():
        if r.conc < IGNORE_BELOW:
            continue
        s = by_name.get(name)
        if s is None:
            out.append(f"species {name} ({mp.nstr(r.conc, 6)} M) missing")
            continue
        if not _close(s.get("conc_M"), r.conc, CONC_REL):
            out.append(f"{name}: conc {s.get('conc_M')!r} != {mp.nstr(r.conc, 15)}")
        if not _close(s.get("activity_coefficient"), r.gamma, CONC_REL):
            out.append(f"{name}: γ {s.get('activity_coefficient')!r} != {mp.nstr(r.gamma, 15)}")
        if s.get("charge") != r.charge:
            out.append(f"{name}: charge {s.get('charge')!r} != {r.charge}")
        want_system = {"water": "water", "strong": "strong", "complex": "complex"}.get(r.kind, r.system)
        if s.get("system") != want_system:
            out.append(f"{name}: system {s.get('system')!r} != {want_system!r}")
        if r.kind in ("system", "complex") and s.get("protons") != r.protons:
            out.append(f"{name}: protons {s.get('protons')!r} != {r.protons!r}")
        if full and r.kind == "complex":
            if s.get("systems") != r.units:
                out.append(f"{name}: systems {s.get('systems')!r} != {r.units!r}")
            if s.get("fraction", 0.0) is not None:
                out.append(f"{name}: fraction {s.get('fraction')!r} should be null for a complex")
        if r.kind == "system":
            frac = r.conc / ref.systems[r.system].total
            if not _close(s.get("fraction"), frac, CONC_REL, 1e-30):
                out.append(f"{name}: fraction {s.get('fraction')!r} != {mp.nstr(frac, 15)}")
    for name, s in by_name.items():
        if name not in ref.species and (s.get("conc_M") or 0.0) >= IGNORE_BELOW:
            out.append(f"species {name} ({s.get('conc_M')!r} M) is not in the reference")

    for name, r in ref.systems.items():
        if name not in totals:
            out.append(f"system {name} missing")
            continue
        if not _close(totals[name], r.total, CONC_REL):
            out.append(f"system {name}: total_M {totals[name]!r} != {mp.nstr(r.total, 15)}")
    if not full:
        return out

    want = sorted(spec.precipitate) if isinstance(spec.precipitate, tuple) else spec.precipitate
    have = got.get("precipitate")
    if (sorted(have) if isinstance(have, list) else have) != want:
        out.append(f"precipitate {got.get('precipitate')!r} != {spec.precipitate!r}")
    systems = {s["name"]: s for s in got.get("systems", [])}
    for name, r in ref.systems.items():
        s = systems.get(name, {})
        for key, want in (("dissolved_M", r.dissolved), ("free_M", r.free)):
            if want < IGNORE_BELOW and s.get(key) is not None and 0.0 <= s[key] < IGNORE_BELOW:
                continue        # as rare as the species that are not compared
            if not _close(s.get(key), want, CONC_REL, 1e-300):
                out.append(f"system {name}: {key} {s.get(key)!r} != {mp.nstr(want, 15)}")
    solids = {s["name"]: s for s in got.get("solids", [])}
    for name, r in ref.solids.items():
        s = solids.get(name)
        if s is None:
            out.append(f"solid {name} missing")
            continue
        if s.get("saturation_index") is None or abs(s["saturation_index"] - float(r.saturation_index)) > SI_ABS:
            out.append(f"solid {name}: SI {s.get('saturation_index')!r} != {mp.nstr(r.saturation_index, 15)}")
        if s.get("log_K") is None or abs(s["log_K"] - float(r.log_k)) > 1e-9:
            out.append(f"solid {name}: log_K {s.get('log_K')!r} != {mp.nstr(r.log_k, 15)}")
        if s.get("amount_M") is None or abs(s["amount_M"] - float(r.amount)) > AMOUNT_REL * float(r.capacity) + 1e-300:
            out.append(f"solid {name}: amount {s.get('amount_M')!r} != {mp.nstr(r.amount, 15)}")
        if s.get("allowed") is not r.allowed:
            out.append(f"solid {name}: allowed {s.get('allowed')!r} != {r.allowed}")
    for name in solids.keys() - ref.solids.keys():
        out.append(f"solid {name} is not in the reference")
    gases = {g["name"]: g for g in got.get("gases", [])}
    for name, r in ref.gases.items():
        g = gases.get(name)
        if g is None:
            out.append(f"gas {name} missing")
            continue
        if not _close(g.get("pressure_atm"), r.pressure, CONC_REL, 1e-300):
            out.append(f"gas {name}: pressure {g.get('pressure_atm')!r} != {mp.nstr(r.pressure, 15)}")
        if not _close(g.get("dissolved_M"), r.dissolved, CONC_REL, 1e-300):
            out.append(f"gas {name}: dissolved {g.get('dissolved_M')!r} != {mp.nstr(r.dissolved, 15)}")
        scale = max(abs(float(r.uptake)), float(max((s.total for s in ref.systems.values()), default=0)))
        if g.get("uptake_M") is None or abs(g["uptake_M"] - float(r.uptake)) > AMOUNT_REL * scale + 1e-300:
            out.append(f"gas {name}: uptake {g.get('uptake_M')!r} != {mp.nstr(r.uptake, 15)}")
        if g.get("fixed") is not r.fixed:
            out.append(f"gas {name}: fixed {g.get('fixed')!r} != {r.fixed}")
    for name in gases.keys() - ref.gases.keys():
        out.append(f"gas {name} is not in the reference")
    return out


def solid_units(spec: Spec) -> dict[str, dict[str, int]]:
    """Units of each system held by one formula unit of each solid (from the spec's reactions)."""
    owner = {sp: s.name for s in spec.systems for sp in s.species}
    out: dict[str, dict[str, int]] = {}
    for solid in spec.solids:
        units: dict[str, int] = {}
        for name, k in solid.reaction:
            if name in owner:
                units[owner[name]] = units.get(owner[name], 0) + k
        out[solid.name] = units
    return out


def balance_errors(spec: Spec, got: dict, *, full: bool) -> list[str]:
    """Balances recomputed from the JSON: charge, every system's mass, fractions, ionic strength."""
    out: list[str] = []
    species = got.get("species", [])
    broken = [s["name"] for s in species if not isinstance(s.get("conc_M"), float) or s["conc_M"] < 0]
    if broken or not isinstance(got.get("ionic_strength_M"), float):
        return out + [f"no finite concentration for {broken} or no ionic strength; balances not computed"]
    net = math.fsum(s["charge"] * s["conc_M"] for s in species)
    scale = math.fsum(abs(s["charge"]) * s["conc_M"] for s in species)
    if abs(net) > BALANCE_REL * scale:
        out.append(f"charge balance off by {net:.3e} M (scale {scale:.3e} M)")
    ionic = 0.5 * math.fsum(s["charge"] ** 2 * s["conc_M"] for s in species)
    if abs(ionic - got["ionic_strength_M"]) > 1e-8 * ionic + 1e-300:
        out.append(f"ionic strength {got['ionic_strength_M']!r} != ½Σz²c = {ionic!r}")
    units = solid_units(spec) if full else {}
    amounts = {s["name"]: s["amount_M"] for s in got.get("solids", [])} if full else {}
    for system in got.get("systems", []):
        name, total = system["name"], system["total_M"]
        own = [s for s in species if s["system"] == name]
        free = math.fsum(s["conc_M"] for s in own)
        bound = [s["systems"][name] * s["conc_M"] for s in species
                 if s.get("system") == "complex" and name in (s.get("systems") or {})]
        solid = [u[name] * amounts.get(sn, 0.0) for sn, u in units.items() if name in u]
        parts = [free, *bound, *solid]
        if abs(math.fsum(parts) - total) > BALANCE_REL * math.fsum(abs(p) for p in parts) + 1e-300:
            out.append(f"system {name}: species + complexes + solids = {math.fsum(parts)!r} != total {total!r}")
        fractions = math.fsum(s["fraction"] for s in own)
        if total > 0 and abs(fractions - free / total) > BALANCE_REL:
            out.append(f"system {name}: fractions sum to {fractions!r}, not free/total = {free / total!r}")
        if full:
            if abs(system.get("free_M", math.nan) - free) > BALANCE_REL * free + 1e-300:
                out.append(f"system {name}: free_M {system.get('free_M')!r} != Σ own species {free!r}")
            dissolved = math.fsum([free, *bound])
            if abs(system.get("dissolved_M", math.nan) - dissolved) > BALANCE_REL * dissolved + 1e-300:
                out.append(f"system {name}: dissolved_M {system.get('dissolved_M')!r} != {dissolved!r}")
            shares = [d.get("fraction") for d in system.get("distribution", [])]
            if total > 0 and (None in shares or abs(math.fsum(shares) - 1.0) > BALANCE_REL):
                out.append(f"system {name}: distribution shares {shares!r} do not add up to 1")
            elif shares != sorted(shares, reverse=True):
                out.append(f"system {name}: distribution is not largest first")
    if full:
        for s in got.get("solids", []):
            if s["amount_M"] < 0:
                out.append(f"solid {s['name']}: negative amount {s['amount_M']!r}")
            if s["amount_M"] > 0 and abs(s["saturation_index"]) > 1e-8:
                out.append(f"solid {s['name']}: present with SI {s['saturation_index']!r}")
            if s["allowed"] and s["saturation_index"] > 1e-8:
                out.append(f"solid {s['name']}: allowed but supersaturated (SI {s['saturation_index']!r})")
    return out
