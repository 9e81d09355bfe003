"""Hypothesis strategies for random mixtures (:class:`~tests.reference.spec.Spec`).

The constants are kept inside ranges real aqueous chemistry spans, so that
every mixture is solvable in double precision (common practice for the
ranges; the values themselves are invented):

* pKa −1.5..15, at least 0.3 apart; ΔH −60..60 kJ/mol, ΔCp −300..300 J/(K·mol);
* 1:1 complexes log K 0.5..(2 + 3·|z_M z_L|), at most 22; log β2 ≤ 2 log K1;
* first hydrolysis constants log *K: −14..−12 (z = 1), −13..−6 (z = 2), −5..−1.5 (z = 3);
* hydroxides log Ksp −20..−11 (z = 2), −39..−33 (z = 3); salts −2..−6 per ion;
* Henry's constants log K_H −2..1.5, partial pressures 1e-6..1 atm;
* every amount 1e-12..1 mol/L (all ingredients together at most 2 mol/L).
"""

from __future__ import annotations

import math
import re
from math import gcd

from hypothesis import strategies as st

from .spec import STRONG_REAGENTS, Complex, FixedGas, Gas, Solid, Spec, System

MODELS = ("davies", "extended-dh", "ideal")


def charge_suffix(z: int) -> str:
    """``-2`` -> ``"^2-"``, ``1`` -> ``"+"``, ``0`` -> ``""`` (the trade's way of writing charges)."""
    if z == 0:
        return ""
    sign = "+" if z > 0 else "-"
    return sign if abs(z) == 1 else f"^{abs(z)}{sign}"


def _u(draw, lo: float, hi: float) -> float:
    """A number in [lo, hi], rounded to 4 decimals (readable presets)."""
    return round(draw(st.floats(lo, hi, allow_nan=False, allow_infinity=False)), 4) + 0.0   # never -0.0


def _conc(draw) -> float:
    return float(f"{10.0 ** _u(draw, -12.0, 0.0):.6g}")


def _optional(draw, lo, hi):
    return _u(draw, lo, hi) if draw(st.booleans()) else None


def _ligand(draw, idx: int, allow_no_pka: bool, need_neutral: bool = False) -> System:
    base = f"L{idx}"
    n = draw(st.integers(0 if allow_no_pka else 1, 4))
    if need_neutral:
        n = max(n, 1)
    pka = []
    p = _u(draw, -1.5, 12.0 - 1.5 * (n - 1)) if n else 0.0
    for _ in range(n):
        pka.append(round(p, 4))
        p += _u(draw, 0.3, 4.5)
    pka = [min(v, 15.0 - 0.5 * (n - 1 - i)) for i, v in enumerate(pka)]       # keep increasing, ≤ 15
    if n == 0:
        charge_fp = draw(st.integers(-2, -1))
    elif need_neutral:
        charge_fp = draw(st.integers(0, min(1, n)))       # a neutral form exists
    else:
        charge_fp = draw(st.sampled_from([0, 0, 0, 1, -1]))
    names = []
    for k in range(n + 1):
        j = n - k
        h = "" if j == 0 else ("H" if j == 1 else f"H{j}")
        names.append(f"{h}{base}{charge_suffix(charge_fp - k)}")
    protons = draw(st.integers(0, n))
    q = charge_fp - n + protons
    if q < 0:
        counter = ((draw(st.sampled_from(["Na+", "K+"])), -q),)
    elif q > 0:
        counter = ((draw(st.sampled_from(["Cl-", "NO3-"])), q),)
    else:
        counter = ()
    dh = tuple(_u(draw, -60.0, 60.0) for _ in range(n)) if n and draw(st.booleans()) else None
    dcp = tuple(_u(draw, -300.0, 300.0) for _ in range(n)) if dh and draw(st.booleans()) else None
    return System(name=f"ligand {base}", species=tuple(names), pka=tuple(pka), charge_fp=charge_fp,
                  protons=protons, counter_ions=counter, dh_kj=dh, dcp_j=dcp,
                  ion_size=_optional(draw, 3.0, 9.0))


def _metal(draw, idx: int) -> System:
    z = draw(st.integers(1, 3))
    anion = draw(st.sampled_from(["Cl-", "NO3-"]))
    return System(name=f"metal M{idx}", species=(f"M{idx}{charge_suffix(z)}",), pka=(), charge_fp=z,
                  protons=0, counter_ions=((anion, z),), ion_size=_optional(draw, 3.0, 9.0))


def _bare(species: str) -> str:
    """A species name without its charge suffix: ``HL3^2-`` -> ``HL3``."""
    return re.sub(r"(\^\d+[+-]|[+-])$", "", species)


def _group(part: str, n: int) -> str:
    """``M1``, 1 -> ``M1``; ``L3``, 2 -> ``(L3)2``."""
    return part if n == 1 else f"({part}){n}"


def _base(s: System) -> str:
    return s.name.split()[-1]


def _z_last(s: System) -> int:
    return s.charge(len(s.pka))


def _within_ionic_strength(ingredients, systems: dict[str, System], limit: float):
    """Scale the amounts down so that the ions as added give an ionic strength of at most ``limit``."""
    nominal = 0.0
    for name, conc in ingredients:
        if name in systems:        # the added form and its counter-ions (all monovalent)
            s = systems[name]
            ions = [(s.charge(len(s.pka) - s.protons), 1)]
            ions += [(1 if ion.endswith("+") else -1, n) for ion, n in s.counter_ions]
        else:
            ions = [(1 if ion.endswith("+") else -1, n) for ion, n in STRONG_REAGENTS[name]]
        nominal += 0.5 * conc * sum(n * z * z for z, n in ions)
    if nominal <= limit:
        return ingredients
    return [(n, float(f"{c * limit / nominal:.6g}")) for n, c in ingredients]


def _totals(ingredients, systems: dict[str, System]) -> dict[str, float]:
    """Total of every system and strong ion as added, mol/L."""
    out: dict[str, float] = {}
    for name, conc in ingredients:
        ions = systems[name].counter_ions if name in systems else STRONG_REAGENTS[name]
        if name in systems:
            out[name] = out.get(name, 0.0) + conc
        for ion, n in ions:
            out[ion] = out.get(ion, 0.0) + conc * n
    return out


@st.composite
def specs(draw, *, full: bool = True) -> Spec:
    """A random mixture.  ``full=False`` gives acid–base only (DESIGN §4 keys only)."""
    n_metals = draw(st.integers(0, 6)) if full else 0
    n_ligands = draw(st.integers(0 if n_metals else 1, 10 if full else 8))
    metals = [_metal(draw, i + 1) for i in range(n_metals)]
    ligands = [_ligand(draw, i + 1, allow_no_pka=full) for i in range(n_ligands)]
    strong = draw(st.lists(st.sampled_from(sorted(STRONG_REAGENTS)), max_size=3, unique=True))
    ingredients = [(s.name, _conc(draw)) for s in metals + ligands] + [(r, _conc(draw)) for r in strong]
    ingredients = _within_ionic_strength(ingredients, {s.name: s for s in metals + ligands}, 1.0)
    present_ions = {ion for s in metals + ligands for ion, _ in s.counter_ions}
    present_ions |= {ion for r in strong for ion, _ in STRONG_REAGENTS[r] if ion not in ("H+", "OH-")}

    complexes: list[Complex] = []
    solids: list[Solid] = []
    gases: list[Gas] = []
    fixed: list[FixedGas] = []
    names = {sp for s in metals + ligands for sp in s.species} | {s.name for s in metals + ligands}

    def add(items, obj):
        if obj.name not in names:
            names.add(obj.name)
            items.append(obj)

    binders = [lg for lg in ligands if _z_last(lg) <= 0]
    if full:
        for m in metals:
            zm, mb, msp = m.charge_fp, _base(m), m.species[0]
            for lg in draw(st.lists(st.sampled_from(binders), max_size=2, unique_by=lambda s: s.name)
                           if binders else st.just([])):
                if len(complexes) >= 12:
                    break
                zl, lb, lsp = _z_last(lg), _base(lg), lg.species[-1]
                top = min(22.0, 2.0 + 3.0 * abs(zm * zl)) if zl else 5.0
                k1 = _u(draw, 0.5, top)
                add(complexes, Complex(f"{mb}{lb}{charge_suffix(zm + zl)}", ((msp, 1), (lsp, 1)), k1,
                                       _optional(draw, -50.0, 50.0), _optional(draw, 3.0, 9.0)))
                if draw(st.booleans()):
                    add(complexes, Complex(f"{mb}({lb})2{charge_suffix(zm + 2 * zl)}", ((msp, 1), (lsp, 2)),
                                           round(k1 + _u(draw, 0.3, max(0.31, k1)), 4),
                                           _optional(draw, -50.0, 50.0)))
                if lg.pka and draw(st.booleans()):
                    add(complexes, Complex(f"{mb}H{lb}{charge_suffix(zm + zl + 1)}",
                                           ((msp, 1), (lsp, 1), ("H+", 1)),
                                           round(lg.pka[-1] + _u(draw, 0.5, 0.8 * k1 + 0.5), 4)))
            if draw(st.booleans()):
                lo, hi = {1: (-14.0, -12.0), 2: (-13.0, -6.0), 3: (-5.0, -1.5)}[zm]
                k_oh = _u(draw, lo, hi)
                add(complexes, Complex(f"{mb}OH{charge_suffix(zm - 1)}", ((msp, 1), ("H+", -1)), k_oh,
                                       _optional(draw, 0.0, 60.0)))
                if zm > 1 and not any(c.name.startswith("(") for c in complexes) and draw(st.booleans()):
                    add(complexes, Complex(f"({mb})2(OH)2{charge_suffix(2 * zm - 2)}",
                                           ((msp, 2), ("H+", -2)), round(2 * k_oh + _u(draw, 1.0, 6.0), 4)))
            if "Cl-" in present_ions and draw(st.integers(0, 3)) == 0:
                add(complexes, Complex(f"{mb}Cl{charge_suffix(zm - 1)}", ((msp, 1), ("Cl-", 1)),
                                       _u(draw, 0.0, 3.0)))
        if "Na+" in present_ions and binders and draw(st.integers(0, 3)) == 0:
            lg = draw(st.sampled_from(binders))
            zl = _z_last(lg)
            if zl < 0:
                add(complexes, Complex(f"Na{_base(lg)}{charge_suffix(zl + 1)}", (("Na+", 1), (lg.species[-1], 1)),
                                       _u(draw, 0.0, 1.5)))

        # solids
        for m in metals:
            if len(solids) >= 5:
                break
            zm, mb, msp = m.charge_fp, _base(m), m.species[0]
            kind = draw(st.sampled_from(["salt", "hydroxide", "salt", "hydroxide-h", "none"]))
            if kind.startswith("hydroxide") and zm > 1:
                lksp = _u(draw, -20.0, -11.0) if zm == 2 else _u(draw, -39.0, -33.0)
                name = f"{mb}(OH){zm}(s)"
                if kind == "hydroxide":
                    add(solids, Solid(name, ((msp, 1), ("OH-", zm)), lksp, _optional(draw, -30.0, 60.0)))
                else:   # M(OH)z(s) + z H+ = M + z H2O: log K = log Ksp + z·14 (pKw at 25 °C, rounded)
                    add(solids, Solid(name, ((msp, 1), ("H+", -zm)), round(lksp + 14.0 * zm, 4)))
            elif kind == "salt":
                anions = [(lg, k) for lg in ligands for k in range(len(lg.species)) if lg.charge(k) < 0]
                use_cl = "Cl-" in present_ions and draw(st.integers(0, 3)) == 0
                if use_cl:
                    a, b, ansp, ab = 1, zm, "Cl-", "Cl"
                elif anions:
                    lg, k = draw(st.sampled_from(anions))
                    za = -lg.charge(k)
                    g = gcd(zm, za)
                    a, b, ansp, ab = za // g, zm // g, lg.species[k], _bare(lg.species[k])
                else:
                    continue
                if draw(st.booleans()):     # about as soluble as the amounts in the flask
                    amounts = _totals(ingredients, {x.name: x for x in metals + ligands})
                    anion_total = amounts["Cl-"] if use_cl else amounts[lg.name]
                    log_iap = a * math.log10(amounts[m.name]) + b * math.log10(anion_total)
                    log_k = round(min(-1.0, max(-45.0, log_iap - _u(draw, -1.0, 4.0))), 4)
                else:
                    log_k = round(-(a + b) * (_u(draw, 1.5, 4.5) if use_cl else _u(draw, 2.0, 6.0)), 4)
                name = f"{_group(mb, a)}{_group(ab, b)}(s)"
                add(solids, Solid(name, ((msp, a), (ansp, b)), log_k, _optional(draw, -30.0, 60.0)))
        if solids:
            mode = draw(st.sampled_from(["true", "list", "false"]))
            if mode == "list":
                precipitate = tuple(draw(st.lists(st.sampled_from([s.name for s in solids]), unique=True)))
            else:
                precipitate = mode == "true"
        else:
            precipitate = draw(st.sampled_from([False, True]))

        # a gas dissolving into the neutral species of a (new) volatile ligand
        if len(ligands) < 10 and draw(st.booleans()):
            idx = len(ligands) + 1
            lg = _ligand(draw, idx, allow_no_pka=False, need_neutral=True)
            k_neutral = lg.charge_fp
            gas = Gas(f"{lg.species[k_neutral]}(g)", lg.species[k_neutral], _u(draw, -2.0, 1.5),
                      _optional(draw, -40.0, -5.0))
            held = draw(st.booleans())
            in_flask = not held or draw(st.booleans())
            ligands.append(lg)
            if in_flask:
                ingredients.append((lg.name, _conc(draw)))
            names.add(gas.name)
            gases.append(gas)
            if held:        # at most 10 mM of the dissolved species itself
                p = 10.0 ** _u(draw, -6.0, min(0.0, -2.0 - gas.log_k))
                unit = draw(st.sampled_from(["atm", "bar", "kPa", "Pa", "uatm", "ppm", "%"]))
                factor = {"atm": 1.0, "bar": 101325.0 / 1e5, "kPa": 101.325, "Pa": 101325.0,
                          "uatm": 1e6, "ppm": 1e6, "%": 100.0}[unit]
                text = f"{p * factor:.6g} {unit}"
                value = float(text.split()[0]) / factor
                fixed.append(FixedGas(gas.name, value, text))
    else:
        precipitate = False

    return Spec(temperature_c=round(draw(st.floats(0.0, 100.0)), 2), activity=draw(st.sampled_from(MODELS)),
                systems=tuple(metals + ligands), ingredients=tuple(ingredients), complexes=tuple(complexes),
                solids=tuple(solids), gases=tuple(gases), fixed=tuple(fixed), precipitate=precipitate,
                write_precipitate=full)


acid_base_specs = specs(full=False)
full_specs = specs(full=True)
