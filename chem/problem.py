"""The chemistry of a mixture, defined once: ``compile(mixture) -> Problem``.

The formulation is a tableau.  Components are H+, the fully deprotonated
species of every system in the mixture, and every strong ion that a complex,
solid or fixed gas names (other strong ions are inert: they only add charge
and ionic strength).  Every dissolved species s is formed from components,

    ln a_s = ln K_s(T) + Σ_j ν_sj u_j,        u_j = ln a_j (free component activity),
    c_s = a_s / γ_s,

so the whole problem is the stoichiometry matrix ν (species × components),
the formation constants ln K_s(T), charges and ion sizes (for γ), and the
component totals T_j:

    Σ_s ν_sj c_s + Σ_p A_pj n_p = T_j + Σ_g ν_gj U_g      (mass balances)

with n_p the amount of solid p (present only when its saturation index is 0)
and U_g the uptake of a gas held at fixed partial pressure.  Solids are
linear constraints in u (SI_p = (A_p·u − b_p)/ln 10 ≤ 0), fixed gases linear
equalities (ν_g·u = ln(K_H p) − ln K_g), and so is a pH held by a pH-stat
(u_H = −pH·ln 10).

Temperature enters through one vectorised van 't Hoff evaluation of every
constant (water's own ionization from the IAPWS formulation: every
constant carries a count of OH- it was written with).  Constants stated at
an ionic strength (concentration quotients) are converted to I = 0 here, with
the mixture's activity model at 25 °C.

Nothing here iterates: :mod:`chem._kernel` solves the equations and
:mod:`chem._solver` assembles the result.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np

from . import water
from .activity import ActivityModel, model as activity_model
from .errors import ModelError
from .library import WATER_IONS, load_library, resolve, species_index
from .model import (T_REF_C, AcidBaseSystem, Complex, Gas, Ion, Mixture, Solid, vant_hoff_log_k)

# Ion-size parameters (Å) of H+ and OH- for the extended Debye–Hückel model:
# Kielland (1937), J. Am. Chem. Soc. 59, 1675, Table (from memory).
SIZE_H = 9.0
SIZE_OH = 3.5

#: Stand-in total (mol/L) for a component whose total is zero, so that its
#: species keep well-defined (limiting) fractions; reported amounts of such a
#: component are set to 0.
TINY_TOTAL = 1e-200

LN10 = math.log(10.0)


class SpeciesInfo(NamedTuple):
    """What the result needs to know about one species row."""

    name: str
    kind: str
    """"water", "system", "complex" or "strong"."""
    owner: object
    """The AcidBaseSystem, Ion or Complex; None for H+ and OH-."""
    protons: int | None
    """Bound protons for system species (H+: 1, OH-: 0); None for complexes and ions."""


class LogKData(NamedTuple):
    """log10 K(T) = van 't Hoff(log_k25, dh, dcp) − n_w·pKw(T), one entry per row."""

    log_k25: np.ndarray
    dh: np.ndarray
    """J/mol."""
    dcp: np.ndarray
    """J/(K·mol)."""
    n_w: np.ndarray
    has_dh: np.ndarray

    def at(self, t_c) -> np.ndarray:
        """log10 K at temperatures ``t_c`` (scalar -> (rows,), (P,) -> (P, rows))."""
        t = np.asarray(t_c, dtype=float)
        tt = t[..., None]
        lk = vant_hoff_log_k(self.log_k25, self.dh, self.dcp, tt)
        if np.any(self.n_w):
            lk = lk - self.n_w * np.asarray(water.pkw(tt), dtype=float)
        return lk

    def take(self, idx) -> "LogKData":
        return LogKData(*(a[idx] for a in self))


def _logk(rows: list[tuple[float, float, float, float, bool]]) -> LogKData:
    if not rows:
        z = np.zeros(0)
        return LogKData(z, z, z, z, np.zeros(0, dtype=bool))
    a = np.array([r[:4] for r in rows], dtype=float)
    out = LogKData(a[:, 0].copy(), a[:, 1].copy(), a[:, 2].copy(), a[:, 3].copy(),
                   np.array([r[4] for r in rows], dtype=bool))
    for arr in out:
        arr.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class Structure:
    """Everything about a mixture's problem except its amounts, pressures and temperature.

    Cached: edits that only change amounts (the usual keystroke) reuse it.
    """

    components: tuple[str, ...]
    comp_owner: tuple
    species: tuple[SpeciesInfo, ...]
    nu: np.ndarray
    """(species, components) stoichiometry, float."""
    z: np.ndarray
    z2: np.ndarray
    size: np.ndarray
    logk: LogKData
    systems: tuple[AcidBaseSystem, ...]
    sys_comp: tuple[int, ...]
    """Component column of each system."""
    sys_rows: tuple[tuple[int, ...], ...]
    """Species rows of each system's own species."""
    ions: tuple[Ion, ...]
    """Reactive strong ions (components), in component order after the systems."""
    complexes: tuple[Complex, ...]
    solids: tuple[Solid, ...]
    sol_a: np.ndarray
    """(solids, components): component stoichiometry of each solid's dissolution."""
    sol_logk: LogKData
    """b_p/ln10 = log Ksp − Σ n_r log K_r, as van 't Hoff data."""
    sol_ksp: LogKData
    """log10 Ksp of each solid's own reaction."""
    sol_allowed: np.ndarray
    gases: tuple[Gas, ...]
    gas_row: tuple[int, ...]
    """Species row of each gas's dissolved species."""
    gas_kh: LogKData
    fixed: tuple[int, ...]
    """Indices into ``gases`` of the gases held at fixed pressure."""
    model: ActivityModel
    fast: bool
    """Pure acid–base: no complexes, no solids that may form, no fixed gases."""
    supplied: np.ndarray
    """Components a fixed gas can supply (never "really zero")."""
    z_comp: np.ndarray
    """Charge of each component (H+ first)."""
    alk_level: np.ndarray
    """Per species: acceptors minus donors relative to the pK 4.5 reference level (alkalinity)."""
    cache: dict = field(default_factory=dict, compare=False, repr=False)
    """Values derived from the structure alone (log K at a temperature, ...), filled on use."""

    def log_k_at(self, t_c: float) -> np.ndarray:
        """log10 K of every species at ``t_c`` (I = 0); read-only, cached."""
        return self.value_at("logk", t_c)

    def value_at(self, name: str, t_c: float) -> np.ndarray:
        """``getattr(self, name).at(t_c)`` for one temperature (``logk``, ``sol_logk``, ``sol_ksp``,
        ``gas_kh``): read-only, cached."""
        cache = self.cache.setdefault(name, {})
        v = cache.get(t_c)
        if v is None:
            v = np.asarray(getattr(self, name).at(t_c), dtype=float)
            v.setflags(write=False)
            if len(cache) > 256:
                cache.clear()
            cache[t_c] = v
        return v

    @property
    def n_species(self) -> int:
        return len(self.species)

    @property
    def n_components(self) -> int:
        return len(self.components)


@dataclass(frozen=True, eq=False)
class Problem:
    """A compiled mixture: its :class:`Structure` plus amounts, pressures and temperature."""

    mixture: Mixture
    structure: Structure
    totals: np.ndarray
    """Component totals, mol/L (H+ first); zero totals replaced by :data:`TINY_TOTAL` except H+."""
    zero: np.ndarray
    """Components whose total is really zero."""
    inert_q: float
    """Net charge of the inert strong ions, mol/L."""
    inert_i: float
    """Their ionic-strength contribution, mol/L."""
    inert: tuple[tuple[Ion, float], ...]
    pressures: np.ndarray
    """Partial pressure (atm) of each fixed gas."""
    temperature_c: float

    def log_k(self) -> np.ndarray:
        """log10 K of every species at the problem's temperature (I = 0); read-only, cached per temperature."""
        return self.structure.log_k_at(self.temperature_c)


# --------------------------------------------------------------------------
# compile
# --------------------------------------------------------------------------

def compile(mixture: Mixture) -> Problem:  # noqa: A001 - the name the formulation uses
    """The tableau of ``mixture``: components, species, constants and totals."""
    return _problem(mixture, structure_of(mixture))


#: Structures by the identity of what defines them (the usual edit changes only amounts).
_BY_IDENTITY: dict = {}


def structure_of(mixture: Mixture) -> Structure:
    """The :class:`Structure` of ``mixture`` (cached by the identity of its definitions)."""
    systems = tuple(s for s, _ in mixture.systems())
    ions = tuple(i for i, _ in mixture.strong_ions())
    sig = (tuple(map(id, systems)), tuple(map(id, ions)), tuple(map(id, mixture.custom_complexes)),
           tuple(map(id, mixture.custom_solids)), tuple(map(id, mixture.custom_gases)),
           tuple(id(g.gas) for g in mixture.gases), mixture.use_library, mixture.precipitate, mixture.activity)
    hit = _BY_IDENTITY.get(sig)
    if hit is not None:
        return hit[1]
    struct = _structure(_key(mixture))
    if len(_BY_IDENTITY) > 512:
        _BY_IDENTITY.clear()
    # the value keeps every object whose id is in the key alive, so ids stay unique while cached
    _BY_IDENTITY[sig] = ((systems, ions, mixture.custom_complexes, mixture.custom_solids, mixture.custom_gases,
                          tuple(g.gas for g in mixture.gases)), struct)
    return struct


def component_totals(struct: Structure, ingredients) -> tuple[np.ndarray, float, float]:
    """Component totals (H+ first; zeros kept) of ``ingredients`` in ``struct``'s layout,
    with the net charge and ionic strength of the inert strong ions."""
    nc = struct.n_components
    totals = np.zeros(nc)
    col = {s.name: struct.sys_comp[k] for k, s in enumerate(struct.systems)}
    base = 1 + len(struct.systems)
    ion_col = {ion.name: base + k for k, ion in enumerate(struct.ions)}
    h = []
    q = []
    i_s = []
    for ing in ingredients:
        h.append(ing.conc * ing.reagent.proton_count)
        for sys_, n in ing.reagent.systems:
            totals[col[sys_.name]] += ing.conc * n
        for ion, n in ing.reagent.counter_ions:
            if ion.name in ("H+", "OH-"):
                continue
            k = ion_col.get(ion.name)
            if k is not None:
                totals[k] += ing.conc * n
            else:
                q.append(ion.charge * ing.conc * n)
                i_s.append(0.5 * ion.charge * ion.charge * ing.conc * n)
    totals[0] = math.fsum(h)
    return totals, math.fsum(q), math.fsum(i_s)


def _problem(mixture: Mixture, struct: Structure) -> Problem:
    totals, q, i_s = component_totals(struct, mixture.ingredients)
    reactive = {ion.name for ion in struct.ions}
    inert = tuple((ion, c) for ion, c in mixture.strong_ions() if ion.name not in reactive)
    low = totals <= 0.0
    low[0] = False                       # the H+ total may be zero or negative (excess strong base)
    zero = low & ~struct.supplied
    totals = np.where(low, TINY_TOTAL, totals)
    fixed_p = {g.gas.name: g.pressure_atm for g in mixture.gases}
    pressures = np.array([fixed_p[struct.gases[g].name] for g in struct.fixed], dtype=float)
    return Problem(mixture, struct, totals, zero, q, i_s, inert, pressures, mixture.temperature_c)


class _Key(NamedTuple):
    systems: tuple[AcidBaseSystem, ...]
    ions: tuple[Ion, ...]
    complexes: tuple[Complex, ...]
    solids: tuple[Solid, ...]
    gases: tuple[Gas, ...]
    fixed: tuple[str, ...]
    allowed: object
    model: str


def _key(mixture: Mixture) -> _Key:
    systems = tuple(s for s, _ in mixture.systems())
    ions = tuple(i for i, _ in mixture.strong_ions())
    present_sys = set(systems)
    present_ion = {i.name for i in ions}
    index = None
    lib = load_library() if mixture.use_library else None

    def owners_of(item):
        nonlocal index
        if item.owners:
            return item
        if index is None:
            index = species_index([*systems, *(lib.systems if lib else ())], [*ions, *(lib.ions if lib else ())],
                                  [*(c for c in mixture.custom_complexes if c.owners)])
        return resolve(item, index, allow_complex=isinstance(item, Gas))

    def participates(item) -> bool:
        for own in item.owners:
            if own is None:
                continue
            if isinstance(own, AcidBaseSystem) and own not in present_sys:
                return False
            if isinstance(own, Ion) and own.name not in present_ion:
                return False
            if isinstance(own, Complex) and not participates(own):
                return False
        return True

    complexes = []
    seen = set()
    for cx in (*mixture.custom_complexes, *(lib.complexes if lib else ())):
        cx = owners_of(cx)
        if cx.name not in seen and participates(cx):
            complexes.append(cx)
            seen.add(cx.name)
    solids = []
    seen_s = set()
    for so in (*mixture.custom_solids, *(lib.solids if lib else ())):
        so = owners_of(so)
        if so.name not in seen_s and participates(so):
            solids.append(so)
            seen_s.add(so.name)
    cx_names = {c.name for c in complexes}
    gases = []
    seen_g = set()
    fixed_names = tuple(g.gas.name for g in mixture.gases)
    fixed_gases = {g.gas.name: g.gas for g in mixture.gases}
    for ga in (*fixed_gases.values(), *mixture.custom_gases, *(lib.gases if lib else ())):
        ga = owners_of(ga)
        if ga.name in seen_g:
            continue
        own = ga.owners[0]
        ok = own in present_sys if isinstance(own, AcidBaseSystem) else (
            isinstance(own, Complex) and own.name in cx_names)
        if ok:
            gases.append(ga)
            seen_g.add(ga.name)
    missing = [n for n in fixed_names if n not in seen_g]
    if missing:
        raise ModelError(f"gas {missing[0]}: its dissolved species cannot form in this mixture")
    p = mixture.precipitate
    allowed = p if isinstance(p, bool) else tuple(sorted(p))
    if not isinstance(p, bool):
        known = seen_s
        unknown = [n for n in p if n not in known]
        if unknown and lib is not None:
            lib_names = {s.name for s in lib.solids}
            really = [n for n in unknown if n not in lib_names and n not in {s.name for s in mixture.custom_solids}]
            if really:
                raise ModelError(f"precipitate: unknown solid '{really[0]}'")
    return _Key(systems, ions, tuple(complexes), tuple(solids), tuple(gases), fixed_names, allowed,
                mixture.activity)


def _species_log_k(sys_: AcidBaseSystem, k: int, mdl: ActivityModel) -> tuple[float, float, float, bool]:
    """(log β at 25 °C and I = 0, ΔH J/mol, ΔCp, has ΔH) of ``sys_.species[k]`` formed from L + j H+."""
    n = sys_.steps
    pka = list(sys_.pka)
    if sys_.ionic_strength > 0 and not mdl.ideal:
        pka = [p + _conditional_shift_pka(sys_, i, mdl) for i, p in enumerate(pka)]
    lb = math.fsum(pka[k:n])
    dh = -1000.0 * math.fsum(sys_.dh_kj[k:n]) if sys_.dh_kj is not None else 0.0
    dcp = -math.fsum(sys_.dcp_j[k:n]) if sys_.dcp_j is not None else 0.0
    return lb, dh, dcp, sys_.dh_kj is not None or k == n


def _ref_log_gamma(mdl: ActivityModel, z: int, size: float, ionic: float) -> float:
    if z == 0 or mdl.ideal:
        return 0.0
    a = float(water.debye_huckel_a(T_REF_C))
    b = float(water.debye_huckel_b(T_REF_C))
    return float(mdl.log_gamma(z * z, size, ionic, a, b))


def _conditional_shift_pka(sys_: AcidBaseSystem, i: int, mdl: ActivityModel) -> float:
    """pKa(I=0) − pKa(I) of step i: a concentration quotient HA ⇌ H + A converted with the model."""
    ionic = sys_.ionic_strength
    size = sys_.ion_size_a
    lg_ha = _ref_log_gamma(mdl, sys_.charge_of(i), size, ionic)
    lg_a = _ref_log_gamma(mdl, sys_.charge_of(i + 1), size, ionic)
    lg_h = _ref_log_gamma(mdl, 1, SIZE_H, ionic)
    return -(lg_h + lg_a - lg_ha)


@functools.lru_cache(maxsize=256)
def _structure(key: _Key) -> Structure:
    mdl = activity_model(key.model)
    systems = key.systems
    # reactive ions: named by a participating complex, an allowed-or-reported solid, or a fixed gas
    named: dict[str, Ion] = {}
    fixed_set = set(key.fixed)
    for item in (*key.complexes, *key.solids, *(g for g in key.gases if g.name in fixed_set)):
        for own in item.owners:
            if isinstance(own, Ion):
                named.setdefault(own.name, own)
    ions = tuple(i for i in key.ions if i.name in named)
    components = ("H+",) + tuple(s.species[-1] for s in systems) + tuple(i.name for i in ions)
    comp_owner = (None,) + systems + ions
    nc = len(components)
    sys_col = {s: 1 + k for k, s in enumerate(systems)}
    ion_col = {i.name: 1 + len(systems) + k for k, i in enumerate(ions)}

    infos: list[SpeciesInfo] = []
    rows: list[np.ndarray] = []
    lk_rows: list[tuple] = []
    z: list[int] = []
    size: list[float] = []
    by_name: dict[str, int] = {}

    def add(info: SpeciesInfo, nu: np.ndarray, lk: tuple, charge: int, sz: float) -> None:
        by_name[info.name] = len(infos)
        infos.append(info)
        rows.append(nu)
        lk_rows.append(lk)
        z.append(charge)
        size.append(sz)

    e_h = np.zeros(nc)
    e_h[0] = 1.0
    add(SpeciesInfo("H+", "water", None, 1), e_h, (0.0, 0.0, 0.0, 0.0, True), 1, SIZE_H)
    add(SpeciesInfo("OH-", "water", None, 0), -e_h, (0.0, 0.0, 0.0, 1.0, True), -1, SIZE_OH)
    sys_rows = []
    for sys_ in systems:
        col = sys_col[sys_]
        idx = []
        for k, name in enumerate(sys_.species):
            nu = np.zeros(nc)
            nu[col] = 1.0
            nu[0] = sys_.steps - k
            lb, dh, dcp, has = _species_log_k(sys_, k, mdl)
            idx.append(len(infos))
            add(SpeciesInfo(name, "system", sys_, sys_.steps - k), nu, (lb, dh, dcp, 0.0, has),
                sys_.charge_of(k), sys_.ion_size_a)
        sys_rows.append(tuple(idx))

    def term(own, name: str):
        """(ν, (log k, dh, dcp, n_w, has)) of a reaction species in component terms."""
        if own is None:
            if name == "H+":
                return e_h, (0.0, 0.0, 0.0, 0.0, True)
            return -e_h, (0.0, 0.0, 0.0, 1.0, True)
        if isinstance(own, Ion):
            nu = np.zeros(nc)
            nu[ion_col[own.name]] = 1.0
            return nu, (0.0, 0.0, 0.0, 0.0, True)
        r = by_name[name]
        return rows[r], lk_rows[r]

    def summed(item):
        """Σ n_r ν_r and Σ n_r (log K_r, ΔH_r, ΔCp_r, n_w,r) over the reaction's species."""
        nu = np.zeros(nc)
        lk = [0.0, 0.0, 0.0, 0.0, item.dh_kj is not None]
        for own, (name, coeff) in zip(item.owners, item.reaction):
            tnu, tlk = term(own, name)
            nu = nu + coeff * tnu
            for i in range(4):
                lk[i] += coeff * tlk[i]
            lk[4] = lk[4] and tlk[4]
        return nu, lk

    for cx in key.complexes:
        # formation: log K_comp = log K + Σ n_r log K_r
        nu, lk = summed(cx)
        lk[0] += cx.log_k
        lk[1] += (cx.dh_kj or 0.0) * 1000.0
        if cx.ionic_strength > 0 and not mdl.ideal:
            lk[0] += _conditional_shift_reaction(cx, mdl, cx.charge, cx.ion_size_a, infos, by_name, size)
        add(SpeciesInfo(cx.name, "complex", cx, None), nu, tuple(lk), cx.charge, cx.ion_size_a)
    for ion in ions:
        nu = np.zeros(nc)
        nu[ion_col[ion.name]] = 1.0
        add(SpeciesInfo(ion.name, "strong", ion, None), nu, (0.0, 0.0, 0.0, 0.0, True), ion.charge, ion.ion_size_a)

    nu_mat = np.array(rows, dtype=float).reshape(len(rows), nc)
    z_arr = np.array(z, dtype=float)

    # solids: A_p = Σ n_r ν_r; b_p = log Ksp − Σ n_r log K_r (as van 't Hoff data)
    sol_a, sol_rows, ksp_rows = [], [], []
    for so in key.solids:
        nu, lk = summed(so)
        lk = [so.log_k - lk[0], (so.dh_kj or 0.0) * 1000.0 - lk[1], -lk[2], -lk[3], lk[4]]
        if so.ionic_strength > 0 and not mdl.ideal:
            lk[0] += _conditional_shift_reaction(so, mdl, None, 4.0, infos, by_name, size)
        sol_a.append(nu)
        sol_rows.append(tuple(lk))
        ksp_rows.append((so.log_k, (so.dh_kj or 0.0) * 1000.0, 0.0, 0.0, so.dh_kj is not None))
    sol_a_arr = np.array(sol_a, dtype=float).reshape(len(sol_a), nc)
    allowed = np.array([key.allowed if isinstance(key.allowed, bool) else so.name in key.allowed
                        for so in key.solids], dtype=bool)

    gas_row, kh_rows, fixed = [], [], []
    for g, ga in enumerate(key.gases):
        gas_row.append(by_name[ga.species])
        lk0 = ga.log_k
        if ga.ionic_strength > 0 and not mdl.ideal:
            own = ga.owners[0]
            zz = own.charge if isinstance(own, Complex) else own.charge_of(own.species.index(ga.species))
            sz = own.ion_size_a
            lk0 -= _ref_log_gamma(mdl, zz, sz, ga.ionic_strength)   # K_H' = c/p -> K_H = a/p
        kh_rows.append((lk0, (ga.dh_kj or 0.0) * 1000.0, 0.0, 0.0, ga.dh_kj is not None))
        if ga.name in fixed_set:
            fixed.append(g)

    # alkalinity: acceptors − donors relative to the pK 4.5 reference level
    # (Dickson 1981); zero level of a system: steps with pKa < 4.5 deprotonated.
    zl = {}
    for sys_ in systems:
        pka25 = sys_.pka_at(T_REF_C) if sys_.steps else []
        zl[sys_] = sum(1 for p in pka25 if p >= 4.5)
    alk = np.zeros(len(infos))
    for r, info in enumerate(infos):
        level = 0.0
        for k, own in enumerate(comp_owner):
            if isinstance(own, AcidBaseSystem):
                level += nu_mat[r, k] * zl[own]
        alk[r] = level - nu_mat[r, 0]

    fast = not key.complexes and not (allowed.any() if allowed.size else False) and not fixed
    supplied = np.zeros(nc, dtype=bool)
    for g in fixed:
        supplied |= nu_mat[gas_row[g]] != 0
    supplied[0] = False
    supplied.setflags(write=False)
    for arr in (nu_mat, z_arr, sol_a_arr, allowed, alk):
        arr.setflags(write=False)
    sz = np.array(size, dtype=float)
    sz.setflags(write=False)
    z2 = z_arr * z_arr
    z2.setflags(write=False)
    return Structure(
        components=components, comp_owner=comp_owner, species=tuple(infos), nu=nu_mat, z=z_arr, z2=z2,
        size=sz, logk=_logk(lk_rows), systems=systems, sys_comp=tuple(sys_col[s] for s in systems),
        sys_rows=tuple(sys_rows), ions=ions, complexes=key.complexes, solids=key.solids, sol_a=sol_a_arr,
        sol_logk=_logk(sol_rows), sol_ksp=_logk(ksp_rows), sol_allowed=allowed, gases=key.gases,
        gas_row=tuple(gas_row), gas_kh=_logk(kh_rows), fixed=tuple(fixed), model=mdl, fast=fast,
        alk_level=alk, supplied=supplied, z_comp=_read_only(np.array(
            [1.0] + [float(sy.base_charge) for sy in systems] + [float(i.charge) for i in ions])))


def _read_only(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


def _conditional_shift_reaction(item, mdl: ActivityModel, charge, own_size, infos, by_name, sizes) -> float:
    """log K(I=0) − log K(I) for a formation (complex) or dissolution (solid, charge None) quotient."""
    ionic = item.ionic_strength
    total = 0.0
    for own, (name, coeff) in zip(item.owners, item.reaction):
        if own is None:
            zz, sz = (1, SIZE_H) if name == "H+" else (-1, SIZE_OH)
        elif isinstance(own, Ion):
            zz, sz = own.charge, own.ion_size_a
        else:
            r = by_name[name]
            zz = int(round(_charge_of_info(infos[r])))
            sz = sizes[r]
        total += coeff * _ref_log_gamma(mdl, zz, sz, ionic)
    if charge is None:                      # dissolution: K = Π a_r^n = K' Π γ_r^n
        return total
    return _ref_log_gamma(mdl, charge, own_size, ionic) - total


def _charge_of_info(info: SpeciesInfo) -> int:
    own = info.owner
    if isinstance(own, AcidBaseSystem):
        return own.charge_of(own.species.index(info.name))
    if isinstance(own, (Ion, Complex)):
        return own.charge
    return 1 if info.name == "H+" else -1


__all__ = ["Problem", "SpeciesInfo", "Structure", "compile", "component_totals", "SIZE_H", "SIZE_OH", "TINY_TOTAL", "WATER_IONS"]
