"""Speciation across pH: distribution, log C, solubility and saturation vs pH.

* :func:`distribution` and :func:`log_concentrations` hold the ionic
  strength fixed (at the value given, usually the solved mixture's).  For an
  acid–base mixture each system's fractions are then explicit functions of
  pH (no root finding); with complexes, ``log_concentrations`` solves the
  mixture at each pH with the pH imposed.
* :func:`system_distribution`, :func:`solubility` and :func:`saturation`
  impose the pH as a pH-stat would (strong acid or base with a monovalent
  counter-ion, which adds to the ionic strength), keep the mixture's totals,
  and solve the full equilibrium at each point (ionic strength
  self-consistent).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from . import _kernel as K
from ._solver import kernel_inputs, layout_of, run_kernel, water_constants
from .errors import ModelError
from .model import Mixture
from .problem import LN10, compile


@dataclass(frozen=True)
class Diagram:
    """Curves over a pH grid: ``series`` maps a species (or solid, or system) name to an array."""

    ph: np.ndarray
    series: dict[str, np.ndarray]
    systems: dict[str, tuple[str, ...]]
    """System name -> its series names."""
    ionic_strength: float
    temperature_c: float
    converged: np.ndarray | None = None
    no_solution: np.ndarray | None = None
    """Points with no solution the model can represent (their series are NaN; they count as unconverged):
    the held pH, solid or gas would pin a free activity above 30 mol/L."""

    def __post_init__(self) -> None:
        self.ph.setflags(write=False)
        for arr in self.series.values():
            if arr.base is not None:
                arr.base.setflags(write=False)
            arr.setflags(write=False)


def default_grid(points: int = 400) -> np.ndarray:
    """pH from 0 to 14 with ``points`` points (common practice range)."""
    return np.linspace(0.0, 14.0, points)


def _fractions(st, ph: np.ndarray, t_c: float, ionic: float) -> tuple[np.ndarray, np.ndarray]:
    """Fractions of every system's own species at each pH, at fixed ionic strength (acid–base only).

    Returns (fractions (points, S, M), the padded layout's mask (S, M)).
    """
    lay = layout_of(st)
    _, a, b = water_constants(t_c)
    inp = _gamma_inputs(st, a, b)
    lng = K.ln_gamma(inp, np.zeros(1, dtype=int), np.array([ionic]))[0]
    lnk = LN10 * st.logk.at(t_c)
    base = np.where(lay.mask, lnk[lay.rows] - lng[lay.rows], -np.inf)
    w = base[None, :, :] - lay.j[None, :, :] * (LN10 * ph)[:, None, None]
    w -= w.max(axis=2, keepdims=True)
    e = np.exp(w)
    e /= e.sum(axis=2, keepdims=True)
    return e, lay.mask


class _gamma_inputs:       # the fields K.ln_gamma reads
    def __init__(self, st, a, b):
        self.model = st.model
        self.a = np.array([a])
        self.b = np.array([b])
        self.z2 = st.z2
        self.size = st.size


def distribution(mixture: Mixture, ph=None, *, ionic_strength: float | None = None,
                 systems: tuple[str, ...] | None = None) -> Diagram:
    """Fraction of each species of each system (among the system's own species) vs pH.

    Parameters
    ----------
    mixture : Mixture
        Supplies the systems, temperature and activity model.
    ph : array_like, optional
        pH grid (default 0..14, 400 points).
    ionic_strength : float, optional
        Ionic strength (mol/L) at which activity coefficients are taken;
        default 0 (thermodynamic constants).
    systems : tuple of str, optional
        Only these systems (default: all in the mixture).
    """
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    ionic = 0.0 if ionic_strength is None else float(ionic_strength)
    st = compile(mixture).structure
    frac, mask = _fractions(st, ph, mixture.temperature_c, ionic)
    series: dict[str, np.ndarray] = {}
    owners: dict[str, tuple[str, ...]] = {}
    for i, sys_ in enumerate(st.systems):
        if systems is not None and sys_.name not in systems:
            continue
        if sys_.steps == 0:
            continue
        for k, name in enumerate(sys_.species):
            series[name] = frac[:, i, k]
        owners[sys_.name] = sys_.species
    return Diagram(ph.copy(), series, owners, ionic, mixture.temperature_c)


def log_concentrations(mixture: Mixture, ph=None, *, ionic_strength: float | None = None,
                       floor: float = -14.0) -> Diagram:
    """log10 of each species' concentration (mol/L) vs pH, with H+, OH- and complexes.

    Values below ``floor`` are clipped to it so plots stay readable (pass
    ``floor=-np.inf`` for the true values).
    """
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    ionic = 0.0 if ionic_strength is None else float(ionic_strength)
    t = mixture.temperature_c
    prob = compile(mixture)
    st = prob.structure
    series: dict[str, np.ndarray] = {}
    owners: dict[str, tuple[str, ...]] = {"water": ("H+", "OH-")}
    converged = None
    with np.errstate(divide="ignore"):
        if not st.complexes:
            pkw, a, b = water_constants(t)
            inp = _gamma_inputs(st, a, b)
            lng = K.ln_gamma(inp, np.zeros(1, dtype=int), np.array([ionic]))[0] / LN10
            series["H+"] = np.maximum(-ph - lng[0], floor)
            series["OH-"] = np.maximum(ph - pkw - lng[1], floor)
            frac, _ = _fractions(st, ph, t, ionic)
            for i, sys_ in enumerate(st.systems):
                total = prob.totals[st.sys_comp[i]]
                if prob.zero[st.sys_comp[i]]:
                    continue
                for k, name in enumerate(sys_.species):
                    series[name] = np.maximum(np.log10(frac[:, i, k] * total), floor)
                owners[sys_.name] = sys_.species
        else:
            inp = kernel_inputs(prob, fixed_ph=ph, fixed_ionic=np.full(ph.size, ionic))
            res = _chunked(prob, inp, ph)
            converged = np.array(res.converged)
            logc = np.log10(res.conc)
            for r, info in enumerate(st.species):
                if info.kind == "strong":
                    continue
                if any(prob.zero[j] for j in np.nonzero(st.nu[r])[0]):
                    continue
                series[info.name] = np.maximum(logc[:, r], floor)
                key = "water" if info.kind == "water" else ("complex" if info.kind == "complex"
                                                            else info.owner.name)
                if key != "water":
                    owners[key] = owners.get(key, ()) + (info.name,)
    return Diagram(ph.copy(), series, owners, ionic, t, converged)


def _held(mixture: Mixture, ph: np.ndarray, *, solid: str | None = None):
    """Solve ``mixture`` at every pH with the pH imposed (ionic strength self-consistent).

    With ``solid``, that solid is held saturated throughout (an excess of it
    is present).  Returns (problem, inputs, result).
    """
    prob = compile(mixture)
    st = prob.structure
    inp = kernel_inputs(prob, fixed_ph=ph)
    if solid is not None:
        names = [s.name for s in st.solids]
        if solid not in names:
            raise ModelError(f"solid '{solid}' cannot form in this mixture"
                             + (f" (candidates: {', '.join(names)})" if names else " (it has no candidate solids)"))
        q = names.index(solid)
        inp.eq_rows = np.vstack([inp.eq_rows, st.sol_a[q][None]])
        inp.eq_rhs = np.column_stack([inp.eq_rhs, inp.sol_b[:, q]])
        keep = np.ones(len(names), dtype=bool)
        keep[q] = False
        inp.allowed = inp.allowed & keep[None, :]
    res = _chunked(prob, inp, ph)
    return prob, inp, res


#: Points solved per kernel call (bounds memory: the KKT systems are points × n × n).
_CHUNK = 4096


def _chunked(prob, inp, ph):
    """run_kernel in chunks of at most :data:`_CHUNK` points."""
    n = ph.size
    if n <= _CHUNK:
        return run_kernel(prob, inp, fixed_ph=ph)
    pieces = []
    for start in range(0, n, _CHUNK):
        sel = np.arange(start, min(start + _CHUNK, n))
        pieces.append(run_kernel(prob, K._subset(inp, sel), fixed_ph=ph[sel]))
    first = pieces[0]
    for name in ("u", "ionic", "lng", "conc", "amounts", "eq_mult", "converged", "residual"):
        setattr(first, name, np.concatenate([getattr(p_, name) for p_ in pieces]))
    first.iterations = max(p_.iterations for p_ in pieces)
    return first


def system_distribution(mixture: Mixture, system: str, ph=None) -> Diagram:
    """Every species and solid holding ``system``, as its share of the system's total, vs pH.

    The pH is imposed at each point (a pH-stat) and the mixture's totals
    stay as given; solids form where the mixture allows them. The shares are
    of the amount present at each point (a held gas changes it; the shares
    of the dissolved forms and solids then still add up to 1).
    """
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    prob, inp, res = _held(mixture, ph)
    st = prob.structure
    names = {s.name: k for k, s in enumerate(st.systems)}
    key = next((n for n in names if n.casefold() == system.strip().casefold()), None)
    if key is None:
        raise ModelError(f"no system '{system}' in this mixture (systems: {', '.join(names) or 'none'})")
    k = names[key]
    col = st.sys_comp[k]
    total = prob.totals[col]
    if prob.zero[col]:
        raise ModelError(f"system '{key}' has a total of 0 in this mixture")
    # the system's amount at each point, dissolved and solid: the mixture's total in a closed
    # flask, whatever a held gas brings in or takes out otherwise
    present = res.conc @ st.nu[:, col] + (res.amounts @ st.sol_a[:, col] if st.solids else 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        total = np.where(present > 0, present, total)
    series: dict[str, np.ndarray] = {}
    held = np.nonzero(st.nu[:, col])[0]
    for r in held:
        series[st.species[r].name] = st.nu[r, col] * res.conc[:, r] / total
    for q, so in enumerate(st.solids):
        n = st.sol_a[q, col]
        if n:
            series[so.name] = n * res.amounts[:, q] / total
    return Diagram(ph.copy(), series, {key: tuple(series)}, float("nan"), mixture.temperature_c,
                   np.array(res.converged), K.beyond_solution(inp))


def _with_solid(mixture: Mixture, solid: str) -> tuple[Mixture, str]:
    """(mixture, the solid's name) for a solubility curve of ``solid``.

    A preset's own solid is taken as written (any case); otherwise the library solid named by
    name, alias or formula (unknown names are refused with suggestions). The library solid's
    systems the mixture lacks are added at zero amount: an excess of the solid brings them
    itself (calcite in pure water brings calcium and carbonate), and a zero-amount ingredient
    puts them in the tableau without adding any.
    """
    from .library import load_library
    from .model import AcidBaseSystem, Ingredient

    key = solid.strip().casefold()
    custom = next((c.name for c in mixture.custom_solids if c.name.casefold() == key), None)
    if custom is not None:
        return mixture, custom
    lib = load_library()
    item = lib.solid(solid)
    have = {sys_.name for sys_, _ in mixture.systems()}
    index = lib.species_index
    extra = []
    for species, _n in item.reaction:
        owner = index.get(species)
        if not isinstance(owner, AcidBaseSystem) or owner.name in have:
            continue
        # a reagent holding this system alone (its counter-ions inert); any will do at zero amount
        plain = [r for r in lib.reagents_of(owner) if len(r.systems) == 1 and r.units == 1]
        if not plain:
            return mixture, item.name          # the candidate check then says what is missing
        have.add(owner.name)
        extra.append(Ingredient(plain[0], 0.0, "0 M"))
    if extra:
        mixture = replace(mixture, ingredients=tuple(mixture.ingredients) + tuple(extra))
    return mixture, item.name


def solubility(mixture: Mixture, solid: str, ph=None) -> Diagram:
    """Dissolved total of each system ``solid`` holds (mol/L) vs pH, with an excess of the solid present.

    The pH is imposed at each point; the solid is held saturated (it
    dissolves or grows as needed); the mixture's other amounts, fixed gases
    and precipitation setting stay as given. A library solid whose systems
    the mixture lacks brings them (calcite in water under air).
    """
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    mixture, solid = _with_solid(mixture, solid)
    prob, inp, res = _held(mixture, ph, solid=solid)
    st = prob.structure
    q = [s.name for s in st.solids].index(solid)
    series: dict[str, np.ndarray] = {}
    for k, sys_ in enumerate(st.systems):
        col = st.sys_comp[k]
        if st.sol_a[q, col]:
            series[sys_.name] = res.conc @ st.nu[:, col]
    return Diagram(ph.copy(), series, {solid: tuple(series)}, float("nan"), mixture.temperature_c,
                   np.array(res.converged), K.beyond_solution(inp))


def saturation(mixture: Mixture, ph=None) -> Diagram:
    """Saturation index of every candidate solid vs pH (pH imposed, totals as given)."""
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    prob, inp, res = _held(mixture, ph)
    st = prob.structure
    si = (res.u @ st.sol_a.T - inp.sol_b) / LN10
    series = {so.name: si[:, q] for q, so in enumerate(st.solids)}
    return Diagram(ph.copy(), series, {"solids": tuple(series)}, float("nan"), mixture.temperature_c,
                   np.array(res.converged), K.beyond_solution(inp))
