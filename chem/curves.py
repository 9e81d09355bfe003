"""Curves of a mixture: titration, buffer capacity, dilution and sweeps.

Every curve solves many related mixtures at once with the vectorised kernel
(:func:`chem._batch.solve_batch`): the same equations, activity model and
temperature dependence as :func:`chem.solve`, so each point agrees with a
separate solve of the mixture it stands for (``curve.mixture_at(i)``).

Derivatives (the slope of a titration curve, buffer capacity) are exact for
the model: the implicit-function theorem on the charge balance and the
ionic-strength equation, activity corrections included.

Results are frozen objects holding read-only numpy arrays, so they can be
computed in a worker thread and handed to a user interface as they are.
Every function takes ``progress``, a callable given the fraction done
(0..1); returning ``False`` from it cancels the computation by raising
:class:`Cancelled`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np

from . import _kernel as K
from ._solver import buffer_capacity_at, kernel_inputs, run_kernel, solve
from .diagrams import default_grid
from .errors import ChemError
from .limits import PH_MAX, PH_MIN
from .library import Library, load_library, normalise
from .model import Equilibrium, FixedGas, Ingredient, Mixture, Reagent
from .problem import LN10, TINY_TOTAL, compile, component_totals
from .units import MAX_CONC
from .water import T_MAX_C, T_MIN_C

__all__ = [
    "CapacityCurve", "Cancelled", "Curve", "CurveError", "EquivalencePoint", "TitrationCurve",
    "buffer_capacity", "buffer_capacity_at", "dilution", "find_reagent", "ingredient_index", "sweep", "titration",
]

Progress = Callable[[float], "bool | None"]

#: Points solved per kernel call in sweeps and dilutions (bounds memory, paces progress).
_CHUNK = 4096


class CurveError(ChemError):
    """A curve was asked for with bad settings (volumes, ranges, names)."""


class Cancelled(Exception):
    """The ``progress`` callback asked to stop."""


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------

def _freeze(obj) -> None:
    for value in vars(obj).values():
        if isinstance(value, np.ndarray):
            value.setflags(write=False)


@dataclass(frozen=True, eq=False)
class Curve:
    """pH, ionic strength and every species along a one-parameter family of mixtures.

    ``conc`` and ``fraction`` have one row per point and one column per name
    in ``species`` (H+ and OH- first, then each system's species, then the
    complexes); fractions of H+, OH- and complexes are NaN.  Strong ions
    (Na+, Cl-, ...) are not included.
    """

    kind: str
    """One of "titration", "dilution" and "sweep"."""
    x: np.ndarray
    x_label: str
    """Name and unit of ``x`` for tables, e.g. "volume_mL", "dilution_factor"."""
    pH: np.ndarray
    ionic_strength: np.ndarray
    """mol/L."""
    species: tuple[str, ...]
    species_system: tuple[str, ...]
    """System of each species ("water" for H+ and OH-)."""
    conc: np.ndarray
    """mol/L, shape (points, species)."""
    fraction: np.ndarray
    converged: np.ndarray
    mixture: Mixture
    """The mixture the curve starts from."""
    _build: Callable[[int], Mixture] = field(repr=False)
    solids: tuple[str, ...] = field(default=(), kw_only=True)
    """Candidate solids, in the columns of ``saturation`` and ``amounts``."""
    saturation: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)), kw_only=True)
    """Saturation index of each solid at every point."""
    amounts: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)), kw_only=True)
    """mol/L of each solid precipitated (0 unless allowed to form)."""
    gases: tuple[str, ...] = field(default=(), kw_only=True)
    gas_pressure: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)), kw_only=True)
    """Partial pressure (atm) of each gas: held, or in equilibrium with the solution."""

    def __post_init__(self) -> None:
        _freeze(self)

    def __len__(self) -> int:
        return int(self.x.size)

    @property
    def all_converged(self) -> bool:
        return bool(self.converged.all())

    def index(self, name: str) -> int:
        """Column of species ``name`` in ``conc`` and ``fraction``."""
        try:
            return self.species.index(name)
        except ValueError:
            raise CurveError(f"no species '{name}' in this mixture (species: {', '.join(self.species)})") from None

    def conc_of(self, name: str) -> np.ndarray:
        """Concentration of species ``name`` at every point, mol/L."""
        return self.conc[:, self.index(name)]

    def fraction_of(self, name: str) -> np.ndarray:
        """Share of species ``name`` in its system at every point (NaN for H+, OH-)."""
        return self.fraction[:, self.index(name)]

    def mixture_at(self, i: int) -> Mixture:
        """The mixture that point ``i`` stands for."""
        n = len(self)
        if not -n <= i < n:
            raise IndexError(f"point {i} of a {n}-point curve")
        return self._build(i % n)

    def equilibrium_at(self, i: int) -> Equilibrium:
        """The full :class:`Equilibrium` of point ``i`` (one :func:`chem.solve`)."""
        return solve(self.mixture_at(i))


@dataclass(frozen=True)
class EquivalencePoint:
    """An equivalence point: where pH (or the tracked pX) changes fastest with added titrant."""

    volume_L: float
    pH: float
    slope: float
    """dpH/dV there, pH per mL (negative when the pH falls)."""
    level: float | None = None
    """The tracked level (pH, or pX of the tracked species) there."""
    level_slope: float | None = None

    @property
    def volume_mL(self) -> float:
        return self.volume_L * 1000.0


@dataclass(frozen=True, eq=False)
class TitrationCurve(Curve):
    """pH vs added titrant volume (``x`` in mL), with dpH/dV and the equivalence points."""

    volume_L: np.ndarray
    slope: np.ndarray
    """dpH/dV at every point, pH per mL (exact for the model)."""
    equivalence_points: tuple[EquivalencePoint, ...]
    titrant: Reagent
    titrant_conc: float
    """mol/L of the titrant stock."""
    sample_volume_L: float
    track: str | None = None
    """The species whose level pX = −log10 a(X) is followed, or None (the pH)."""
    level: np.ndarray | None = None
    """pX at every point (None unless ``track``)."""
    level_slope: np.ndarray | None = None
    """dpX/dV, per mL."""


@dataclass(frozen=True, eq=False)
class CapacityCurve:
    """Buffer capacity β = dC_b/dpH vs pH.

    Each point is the mixture brought to that pH by a strong monovalent base
    (or acid, below the mixture's own pH) without change of volume;
    ``added_base`` is that amount (mol/L, negative for acid).
    """

    pH: np.ndarray
    beta: np.ndarray
    """mol/(L·pH)."""
    added_base: np.ndarray
    ionic_strength: np.ndarray
    converged: np.ndarray
    mixture: Mixture

    def __post_init__(self) -> None:
        _freeze(self)

    @property
    def all_converged(self) -> bool:
        return bool(self.converged.all())


# --------------------------------------------------------------------------
# a family of mixtures: amounts are weighted sums of fixed parts
# --------------------------------------------------------------------------

class _Family:
    """Mixtures sharing one compiled problem whose amounts are ``weights @ parts``.

    ``layout_mixture`` fixes the components, species, solids and gases (and
    the temperature, activity model, fixed gases and precipitation setting);
    each part is a group of ingredients whose component totals and inert
    ionic strength are added with the point's weight.
    """

    def __init__(self, layout_mixture: Mixture, parts: Sequence[Sequence[Ingredient]]):
        self.prob = compile(layout_mixture)
        st = self.prob.structure
        self.st = st
        self.model = layout_mixture.activity
        self.t_c = layout_mixture.temperature_c
        k = len(parts)
        self.tot = np.zeros((k, st.n_components))
        self.inert_i = np.zeros(k)
        self.inert_q = np.zeros(k)
        for n, group in enumerate(parts):
            self.tot[n], self.inert_q[n], self.inert_i[n] = component_totals(st, group)
        rows = [r for r, info in enumerate(st.species) if info.kind != "strong"]
        self.rows = np.array(rows, dtype=int)
        names = [st.species[r].name for r in rows]
        owners = [_owner_name(st.species[r]) for r in rows]
        seen: dict[str, int] = {}
        for name in names:
            seen[name] = seen.get(name, 0) + 1
        self.species = tuple(f"{n} [{o}]" if seen[n] > 1 else n for n, o in zip(names, owners))
        self.owners = tuple(owners)
        # fraction of its system for system species: column of the system's total
        col = {s.name: st.sys_comp[k] for k, s in enumerate(st.systems)}
        self.frac_col = np.array([col.get(o, -1) if st.species[r].kind == "system" else -1
                                  for r, o in zip(rows, owners)], dtype=int)

    def totals(self, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Per-point totals with zeros replaced (for the kernel), and which components are really zero."""
        tot = weights @ self.tot
        low = tot <= 0.0
        low[:, 0] = False
        zero = low & ~self.st.supplied[None, :]
        return np.where(low, TINY_TOTAL, tot), zero

    def solve(self, weights: np.ndarray, t_c: np.ndarray | None = None, start=None, *, fixed_ph=None,
              pressures=None, fixed_ionic=None, allowed=None):
        """Solve the points; ``start`` = (u, I) guesses.  Returns (inputs, result, zero mask)."""
        tot, zero = self.totals(weights)
        inp = kernel_inputs(self.prob, t_c=t_c, totals=tot, inert_i=weights @ self.inert_i,
                            inert_q=weights @ self.inert_q,
                            pressures=pressures, fixed_ph=fixed_ph, fixed_ionic=fixed_ionic, allowed=allowed)
        u0, i0 = (None, None) if start is None else start
        res = run_kernel(self.prob, inp, u0=u0, i0=i0, fixed_ph=fixed_ph)
        return inp, res, zero

    def table(self, inp, res, zero, t_c=None) -> dict[str, np.ndarray]:
        """pH, ionic strength, species (conc, fraction), solids and gases of solved points."""
        st = self.st
        conc = res.conc[:, self.rows]
        if zero.any():
            holds = (st.nu[self.rows][None, :, :] != 0) & zero[:, None, :]
            conc = np.where(holds.any(axis=2), 0.0, conc)
        frac = np.full(conc.shape, np.nan)
        sys_cols = self.frac_col >= 0
        if sys_cols.any():
            denom = np.array(inp.totals)
            if st.fixed:      # a fixed gas exchanges material: the total is what is there at equilibrium
                there = res.conc @ st.nu
                if st.solids:
                    there = there + res.amounts @ st.sol_a
                denom[:, st.supplied] = np.where(there[:, st.supplied] > 0, there[:, st.supplied],
                                                 denom[:, st.supplied])
            frac[:, sys_cols] = res.conc[:, self.rows[sys_cols]] / denom[:, self.frac_col[sys_cols]]
        out = {"pH": -res.u[:, 0] / LN10, "ionic": np.array(res.ionic), "conc": conc, "fraction": frac,
               "converged": np.array(res.converged), "u": res.u}
        if st.solids:
            out["si"] = (res.u @ st.sol_a.T - inp.sol_b) / LN10
            out["amounts"] = np.array(res.amounts)
        if st.gases:
            lnk = inp.lnk
            t = np.broadcast_to(np.asarray(self.t_c if t_c is None else t_c, dtype=float), (lnk.shape[0],))
            kh = LN10 * st.gas_kh.at(t)                      # (P, gases)
            p = []
            for g in range(len(st.gases)):
                r = st.gas_row[g]
                p.append(np.exp(lnk[:, r] + res.u @ st.nu[r] - kh[:, g]))
            out["gas_p"] = np.column_stack(p)
        return out

    def run(self, weights: np.ndarray, t_c: np.ndarray | None = None,
            d_weights: np.ndarray | None = None, start=None, pressures=None) -> dict[str, np.ndarray]:
        """Solve every point; with ``d_weights``, also dpH per unit of the curve parameter."""
        inp, res, zero = self.solve(weights, t_c, start, pressures=pressures)
        out = self.table(inp, res, zero, t_c)
        if d_weights is not None:
            y = K.sensitivity(inp, res, d_totals=d_weights @ self.tot, d_inert_i=d_weights @ self.inert_i)
            out["dpH"] = -y[:, 0] / LN10
            out["du"] = y[:, :self.st.n_components]
        return out

    def run_chunked(self, weights: np.ndarray, t_c: np.ndarray | None,
                    progress: Progress | None, pressures: np.ndarray | None = None) -> dict[str, np.ndarray]:
        """:meth:`run` in chunks of at most ``_CHUNK`` points, reporting progress after each."""
        n = weights.shape[0]
        pieces = []
        for start in range(0, n, _CHUNK):
            stop = min(start + _CHUNK, n)
            pieces.append(self.run(weights[start:stop], None if t_c is None else t_c[start:stop],
                                   pressures=None if pressures is None else pressures[start:stop]))
            _report(progress, stop / n)
        return {k: np.concatenate([p[k] for p in pieces]) for k in pieces[0]}


def _owner_name(info) -> str:
    if info.kind == "water":
        return "water"
    if info.kind == "complex":
        return "complex"
    if info.kind == "strong":
        return "strong"
    return info.owner.name


def _report(progress: Progress | None, fraction: float) -> None:
    if progress is not None and progress(min(max(fraction, 0.0), 1.0)) is False:
        raise Cancelled("cancelled")


def _make_curve(cls, kind: str, x: np.ndarray, x_label: str, res: dict, fam: _Family, mixture: Mixture,
                build: Callable[[int], Mixture], **extra):
    st = fam.st
    n = np.asarray(x).size
    return cls(kind=kind, x=np.asarray(x, dtype=float), x_label=x_label, pH=res["pH"],
               ionic_strength=res["ionic"], species=fam.species, species_system=fam.owners,
               conc=res["conc"], fraction=res["fraction"], converged=res["converged"], mixture=mixture,
               _build=build, solids=tuple(s.name for s in st.solids),
               saturation=res.get("si", np.zeros((n, 0))), amounts=res.get("amounts", np.zeros((n, 0))),
               gases=tuple(g.name for g in st.gases), gas_pressure=res.get("gas_p", np.zeros((n, 0))),
               **extra)


# --------------------------------------------------------------------------
# checks
# --------------------------------------------------------------------------

def _positive(value, what: str, *, upper: float | None = None, unit: str = "") -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise CurveError(f"{what} must be a number (got {value!r})") from None
    if not math.isfinite(v) or v <= 0:
        raise CurveError(f"{what} must be a positive number (got {value!r})")
    if upper is not None and v > upper:
        raise CurveError(f"{what} must be at most {upper:g}{unit} (got {v:g}{unit})")
    return v


def _points(points, what: str = "points", lo: int = 2, hi: int = 1_000_000) -> int:
    if isinstance(points, bool) or not isinstance(points, (int, np.integer)) or not lo <= points <= hi:
        raise CurveError(f"{what} must be a whole number from {lo} to {hi} (got {points!r})")
    return int(points)


def _values(values, what: str, lo: float, hi: float, unit: str) -> np.ndarray:
    try:
        arr = np.array(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise CurveError(f"{what} must be numbers") from None
    if arr.size == 0:
        raise CurveError(f"{what}: no values given")
    if not np.all(np.isfinite(arr)):
        raise CurveError(f"{what} must be finite numbers")
    if arr.min() < lo or arr.max() > hi:
        raise CurveError(f"{what} must lie between {lo:g} and {hi:g}{unit} "
                         f"(got {arr.min():g} to {arr.max():g}{unit})")
    return arr


def find_reagent(name: str, mixture: Mixture | None = None, library: Library | None = None) -> Reagent:
    """A reagent by name: a custom reagent of ``mixture`` first, then the library.

    Parameters
    ----------
    name : str
        Name, alias or formula (case-insensitive).
    mixture : Mixture, optional
        Its ingredients' reagents (custom ones included) are searched first.
    library : Library, optional
        Default: the built-in library.
    """
    if mixture is not None:
        for ing in mixture.ingredients:
            if _is_called(ing.reagent, name):
                return ing.reagent
    return (library or load_library()).reagent(name)


def _is_called(reagent: Reagent, name: str) -> bool:
    """Whether ``name`` is the reagent's name, an alias or its formula (case-insensitive)."""
    key = normalise(name)
    return key in {normalise(reagent.name), *(normalise(a) for a in reagent.aliases)} or bool(
        reagent.formula and key == normalise(reagent.formula))


# --------------------------------------------------------------------------
# titration
# --------------------------------------------------------------------------

def titration(mixture: Mixture, titrant: Reagent, titrant_conc: float, sample_volume_L: float,
              to_volume_L: float, *, from_volume_L: float = 0.0, points: int = 201, max_step: float = 0.05,
              max_points: int = 20000, track: str | None = None,
              progress: Progress | None = None) -> TitrationCurve:
    """pH vs volume of titrant added to a sample of ``mixture``, with equivalence points.

    Adding V of titrant stock (concentration c_t) to a sample of volume V0
    dilutes every sample amount by V0/(V0+V) and brings the titrant to
    c_t·V/(V0+V).  The volume grid starts evenly spaced; every interval
    whose ends differ by more than ``max_step`` in pH is split (into up to
    eight parts per pass) until none does, so steep regions are drawn in
    full.  Equivalence points are the
    clear maxima of |dpH/dV| (exact slope), each located to about 1e-9 of
    the volume range.

    Parameters
    ----------
    mixture : Mixture
        The sample (its temperature and activity model apply throughout).
    titrant : Reagent
        Any reagent (library or custom): a strong or weak acid or base, a salt.
    titrant_conc : float
        Concentration of the titrant stock, mol/L (0 < c ≤ 20).
    sample_volume_L : float
        Volume of the sample, L.
    to_volume_L : float
        Largest titrant volume, L.
    from_volume_L : float, optional
        Smallest titrant volume, L (default 0).
    points : int, optional
        Evenly spaced volumes to start from (default 201).
    max_step : float, optional
        Largest pH difference left between neighbouring points (default 0.05).
    max_points : int, optional
        Cap on the number of points after refinement.
    track : str, optional
        A species (e.g. "Ca^2+") whose level pX = −log10 a(X) is followed
        besides the pH: the curve is refined where pX changes fast and the
        equivalence points are the clear maxima of |dpX/dV| (a complexometric
        titration).  Default: the pH.
    progress : callable, optional
        Called with the fraction done; return False to cancel.

    Returns
    -------
    TitrationCurve
        ``x`` is the added volume in mL, ``volume_L`` in L; ``slope`` is dpH/dV
        in pH per mL; ``equivalence_points`` in order of volume (of pX when
        ``track`` is given, with ``level``/``level_slope`` its values).
    """
    if not isinstance(titrant, Reagent):
        raise CurveError(f"titrant must be a reagent (got {titrant!r})")
    c_t = _positive(titrant_conc, "titrant concentration", upper=MAX_CONC, unit=" mol/L")
    v0 = _positive(sample_volume_L, "sample volume", upper=1000.0, unit=" L")
    v_to = _positive(to_volume_L, "final titrant volume", upper=1000.0, unit=" L")
    try:
        v_from = float(from_volume_L)
    except (TypeError, ValueError):
        raise CurveError(f"starting titrant volume must be a number (got {from_volume_L!r})") from None
    if not (math.isfinite(v_from) and 0.0 <= v_from < v_to):
        raise CurveError(f"the titrant volume range must run upwards from 0 or more "
                         f"(got {v_from * 1000:g} mL to {v_to * 1000:g} mL)")
    points = _points(points)
    max_points = _points(max_points, "max_points", lo=points)
    max_step = _positive(max_step, "pH step")

    fam = _Family(mixture.with_ingredient(Ingredient(titrant, 0.0)),
                  [mixture.ingredients, (Ingredient(titrant, 1.0),)])

    def weights(v):
        return np.column_stack([v0 / (v0 + v), c_t * v / (v0 + v)])

    def d_weights(v):       # per litre of titrant
        return np.column_stack([-v0 / (v0 + v) ** 2, c_t * v0 / (v0 + v) ** 2])

    st = fam.st
    if track is not None:
        names = [info.name for info in st.species]
        if track not in names:
            raise CurveError(f"no species '{track}' in this titration (species: {', '.join(names)})")
        r = names.index(track)
        nu_r = st.nu[r]
        lk_r = LN10 * float(st.log_k_at(fam.t_c)[r])

    def run(v, start=None):
        out = fam.run(weights(v), None, d_weights(v), start)
        if track is not None:
            out["level"] = -(lk_r + out["u"] @ nu_r) / LN10
            out["dlevel"] = -(out["du"] @ nu_r) / LN10
        else:
            out["level"], out["dlevel"] = out["pH"], out["dpH"]
        return out

    v = np.linspace(v_from, v_to, points)
    res = run(v)
    _report(progress, 0.2)
    min_width = 1e-12 * (v_to - v_from)
    for n_pass in range(80):
        dph = np.maximum(np.abs(np.diff(res["pH"])), np.abs(np.diff(res["level"])))
        need = np.nonzero((dph > max_step) & (np.diff(v) > min_width))[0]
        room = max_points - v.size
        if need.size == 0 or room <= 0:
            break
        # split each coarse interval into up to 8 parts (fewer passes than bisection)
        parts = np.clip(np.ceil(dph[need] / max_step), 2, 8).astype(int)
        if parts.sum() - need.size > room:
            order = np.argsort(dph[need])[::-1]
            keep = order[np.cumsum(parts[order] - 1) <= room]
            need, parts = need[keep], parts[keep]
            if need.size == 0:
                break
        owner = np.repeat(np.arange(need.size), parts - 1)
        step = np.concatenate([np.arange(1, k) / k for k in parts])
        lo, hi = need[owner], need[owner] + 1
        new_v = v[lo] + (v[hi] - v[lo]) * step
        start = (res["u"][lo] + (res["u"][hi] - res["u"][lo]) * step[:, None],
                 res["ionic"][lo] + (res["ionic"][hi] - res["ionic"][lo]) * step)
        new = run(new_v, start)
        v = np.concatenate([v, new_v])
        order = np.argsort(v, kind="stable")
        v = v[order]
        res = {k: np.concatenate([res[k], new[k]])[order] for k in res}
        _report(progress, 0.2 + 0.6 * (1.0 - 0.7 ** (n_pass + 1)))
    _report(progress, 0.8)
    slope = res["dpH"] / 1000.0
    eqp = _equivalence_points(v, res["dlevel"] / 1000.0, res, run)
    _report(progress, 1.0)

    def build(i: int) -> Mixture:
        vi = float(v[i])
        return mixture.scaled(v0 / (v0 + vi)).with_ingredient(Ingredient(titrant, c_t * vi / (v0 + vi)))

    return _make_curve(TitrationCurve, "titration", v * 1000.0, "volume_mL", res, fam, mixture, build,
                       volume_L=v, slope=slope, equivalence_points=eqp, titrant=titrant,
                       titrant_conc=c_t, sample_volume_L=v0, track=track,
                       level=res["level"] if track else None,
                       level_slope=res["dlevel"] / 1000.0 if track else None)


#: A maximum of |dpH/dV| counts as an equivalence point when it is at least
#: this many times the slope in the flattest part on either side of it
#: (the buffer region before it and after it).
_MIN_PEAK_RATIO = 4.0


def _peak_indices(s: np.ndarray) -> list[int]:
    """Interior maxima of ``s`` that stand out from both neighbouring valleys."""
    out = []
    candidates = np.nonzero((s[1:-1] > s[:-2]) & (s[1:-1] >= s[2:]))[0] + 1
    for i in candidates:
        left = s[:i][::-1]
        higher = np.nonzero(left > s[i])[0]
        valley_l = left[: higher[0] if higher.size else left.size].min()
        right = s[i + 1:]
        higher = np.nonzero(right > s[i])[0]
        valley_r = right[: higher[0] if higher.size else right.size].min()
        if s[i] >= _MIN_PEAK_RATIO * max(valley_l, valley_r, 1e-300):
            out.append(int(i))
    return out


def _equivalence_points(v: np.ndarray, slope: np.ndarray, res: dict, run) -> tuple[EquivalencePoint, ...]:
    """Locate the maxima of |dpH/dV| by repeated zooming, all peaks in one batch per step."""
    idx = _peak_indices(np.abs(slope))
    if not idx:
        return ()
    idx = np.array(idx)
    lo, hi = v[idx - 1].copy(), v[idx + 1].copy()
    start_u, start_i = res["u"][idx], res["ionic"][idx]
    k_grid = 33
    frac = np.linspace(0.0, 1.0, k_grid)
    rows = np.arange(idx.size)
    best = v[idx].copy()
    for _ in range(10):
        grid = lo[:, None] + (hi - lo)[:, None] * frac[None, :]
        out = run(grid.ravel(), (np.repeat(start_u, k_grid, axis=0), np.repeat(start_i, k_grid)))
        s = np.abs(out["dlevel"]).reshape(idx.size, k_grid)
        k = np.argmax(s, axis=1)
        kl, kr = np.maximum(k - 1, 0), np.minimum(k + 1, k_grid - 1)
        # vertex of the parabola through the three points around the maximum
        inner = (k > 0) & (k < k_grid - 1)
        s0, s1, s2 = s[rows, kl], s[rows, k], s[rows, kr]
        den = s0 - 2.0 * s1 + s2
        h = grid[rows, kr] - grid[rows, k]
        with np.errstate(all="ignore"):
            shift = np.where(inner & (den < 0), 0.5 * h * (s0 - s2) / den, 0.0)
        best = grid[rows, k] + np.clip(shift, -h, h)
        start_u = out["u"].reshape(idx.size, k_grid, -1)[rows, k]
        start_i = out["ionic"].reshape(idx.size, k_grid)[rows, k]
        lo, hi = grid[rows, kl], grid[rows, kr]
        if np.all(hi - lo <= 1e-11 * (v[-1] - v[0])):
            break
    final = run(best, (start_u, start_i))
    return tuple(EquivalencePoint(volume_L=float(b), pH=float(p), slope=float(d) / 1000.0, level=float(lv),
                                  level_slope=float(dl) / 1000.0)
                 for b, p, d, lv, dl in zip(best, final["pH"], final["dpH"], final["level"], final["dlevel"]))


# --------------------------------------------------------------------------
# buffer capacity
# --------------------------------------------------------------------------

def buffer_capacity(mixture: Mixture, ph=None, *, progress: Progress | None = None) -> CapacityCurve:
    """Buffer capacity β = dC_b/dpH of ``mixture`` over a pH grid.

    At each pH the amount C_b of strong monovalent base (negative: acid)
    that brings the mixture there, without change of volume, is solved
    together with the ionic strength it produces; β is the exact
    derivative dC_b/dpH along that path, the change of activity
    coefficients included.  For the ideal model this is the classical
    ln10([H+] + [OH-] + Σ C_s·var_s), var_s the variance of the number of
    bound protons over the species of system s (Van Slyke 1922).

    With activity corrections the derivative has a small kink at the
    mixture's own pH: below it acid is added (its anion raises I), from it
    upwards base (its cation raises I).  At the own pH the base side is
    reported, as :func:`buffer_capacity_at` does.

    Parameters
    ----------
    mixture : Mixture
        Supplies the systems, strong ions, temperature and activity model.
    ph : array_like, optional
        pH values (default 0 to 14, 400 points).
    progress : callable, optional
        Called with the fraction done; return False to cancel.

    Returns
    -------
    CapacityCurve
        β in mol/(L·pH), the added base in mol/L and the ionic strength.
    """
    ph = _values(default_grid() if ph is None else ph, "pH values", PH_MIN, PH_MAX, "")
    fam = _Family(mixture, [mixture.ingredients])
    n = ph.size
    pieces = []
    for start in range(0, n, _CHUNK):
        stop = min(start + _CHUNK, n)
        w = np.ones((stop - start, 1))
        inp, res, _ = fam.solve(w, fixed_ph=ph[start:stop])
        row = inp.counter_row
        d_rhs = np.zeros((stop - start, inp.eq_rows.shape[0]))
        d_rhs[:, row] = -LN10
        y = K.sensitivity(inp, res, d_eq_rhs=d_rhs)
        nc = fam.st.n_components
        pieces.append((y[:, nc + 1 + row], res.eq_mult[:, row], np.array(res.ionic), np.array(res.converged)))
        _report(progress, stop / n)
    beta, added, ionic, converged = (np.concatenate([p[k] for p in pieces]) for k in range(4))
    _report(progress, 1.0)
    return CapacityCurve(pH=ph, beta=beta, added_base=added, ionic_strength=ionic, converged=converged,
                         mixture=mixture)


# --------------------------------------------------------------------------
# dilution and sweeps
# --------------------------------------------------------------------------

def dilution(mixture: Mixture, factors=None, *, points: int = 61,
             progress: Progress | None = None) -> Curve:
    """pH and speciation as ``mixture`` is diluted with water.

    Parameters
    ----------
    mixture : Mixture
        The undiluted mixture.
    factors : array_like, optional
        Dilution factors (≥ 1; 10 means one part mixture in ten).  Default:
        ``points`` values spaced evenly in log from 1 to 1000.
    points : int, optional
        Number of default factors.
    progress : callable, optional
        Called with the fraction done; return False to cancel.

    Returns
    -------
    Curve
        ``x`` is the dilution factor.
    """
    if factors is None:
        factors = np.logspace(0.0, 3.0, _points(points))
    f = _values(factors, "dilution factors", 1.0, 1e12, "")
    fam = _Family(mixture, [mixture.ingredients])
    res = fam.run_chunked((1.0 / f)[:, None], None, progress)

    def build(i: int) -> Mixture:
        return mixture.scaled(1.0 / float(f[i]))

    return _make_curve(Curve, "dilution", f, "dilution_factor", res, fam, mixture, build)


#: A gas "held at 0" is held at this partial pressure (atm): the open system's limit.
MIN_PRESSURE_ATM = 1e-15


def gas_named(mixture: Mixture, vary):
    """The gas ``vary`` names (a fixed gas of the mixture, a custom or a library gas), or None."""
    if not isinstance(vary, str):
        return None
    key = normalise(vary)
    for g in mixture.gases:
        if key in {normalise(g.gas.name), *(normalise(a) for a in g.gas.aliases)}:
            return g.gas
    for g in mixture.custom_gases:
        if key == normalise(g.name):
            return g
    if key == "temperature" or any(_is_called(i.reagent, vary) for i in mixture.ingredients):
        return None
    try:
        return load_library().gas(vary)
    except ChemError:
        return None


def ingredient_index(mixture: Mixture, vary) -> int:
    """Index in ``mixture.ingredients`` of an ingredient given by index or by reagent name, alias or formula."""
    n = len(mixture.ingredients)
    if isinstance(vary, (int, np.integer)) and not isinstance(vary, bool):
        if not 0 <= vary < n:
            raise CurveError(f"ingredient {vary} does not exist (the mixture has {n})")
        return int(vary)
    if not isinstance(vary, str) or not vary.strip():
        raise CurveError(f"vary must be an ingredient name or index, or 'temperature' (got {vary!r})")
    for i, ing in enumerate(mixture.ingredients):
        if _is_called(ing.reagent, vary):
            return i
    names = ", ".join(f"'{ing.reagent.name}'" for ing in mixture.ingredients) or "none"
    raise CurveError(f"'{vary}' is not an ingredient of the mixture (ingredients: {names}; or use 'temperature')")


def sweep(mixture: Mixture, vary, values, *, progress: Progress | None = None) -> Curve:
    """pH, ionic strength and speciation as one amount, or the temperature, varies.

    All points are solved together (vectorised), not one by one.

    Parameters
    ----------
    mixture : Mixture
        The mixture; everything except ``vary`` stays as it is.
    vary : str or int
        An ingredient (reagent name, alias or formula, or its index in
        ``mixture.ingredients``), "temperature", or a gas (a library gas
        such as "CO2", or one the mixture holds), which is then held over
        the solution at each pressure.
    values : array_like
        The ingredient's concentration in mol/L (0..20), the temperature
        in °C (0..100), or the gas's partial pressure in atm (0 is the
        open system's limit: the gas is stripped).
    progress : callable, optional
        Called with the fraction done; return False to cancel.

    Returns
    -------
    Curve
        ``x`` is ``values``; ``x_label`` is "temperature_C", "<reagent>_M" or "<gas>_atm".
    """
    gas = gas_named(mixture, vary)
    if gas is not None:
        p = _values(values, f"{gas.name} pressures", 0.0, 1000.0, " atm")
        held = np.maximum(p, MIN_PRESSURE_ATM)
        base = mixture.with_gas(FixedGas(gas, float(held[0])))
        fam = _Family(base, [base.ingredients])
        st = fam.st
        k = [st.gases[g].name for g in st.fixed].index(gas.name)
        pressures = np.tile(fam.prob.pressures, (p.size, 1))
        pressures[:, k] = held
        res = fam.run_chunked(np.ones((p.size, 1)), None, progress, pressures)

        def build_g(i: int) -> Mixture:
            return mixture.with_gas(FixedGas(gas, float(held[i])))

        return _make_curve(Curve, "sweep", p, f"{gas.name}_atm", res, fam, mixture, build_g)

    if isinstance(vary, str) and normalise(vary) == "temperature":
        t = _values(values, "temperatures", T_MIN_C, T_MAX_C, " °C")
        fam = _Family(mixture, [mixture.ingredients])
        res = fam.run_chunked(np.ones((t.size, 1)), t, progress)

        def build_t(i: int) -> Mixture:
            return mixture.with_temperature(float(t[i]))

        return _make_curve(Curve, "sweep", t, "temperature_C", res, fam, mixture, build_t)

    idx = ingredient_index(mixture, vary)
    c = _values(values, "amounts", 0.0, MAX_CONC, " mol/L")
    ing = mixture.ingredients[idx]
    rest = mixture.ingredients[:idx] + mixture.ingredients[idx + 1:]
    fam = _Family(mixture, [rest, (ing.with_conc(1.0),)])
    res = fam.run_chunked(np.column_stack([np.ones(c.size), c]), None, progress)

    def build(i: int) -> Mixture:
        return mixture.with_replaced(idx, ing.with_conc(float(c[i])))

    return _make_curve(Curve, "sweep", c, f"{ing.reagent.name}_M", res, fam, mixture, build)
