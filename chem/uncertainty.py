"""How sure a result is: the uncertainty of pH and species from the constants (and amounts).

Every tabulated constant carries a standard uncertainty: the one its source
states (``pKa_sd`` of a system, ``log_K_sd`` of a complex, solid or gas), or
else a stated default (:data:`DEFAULT_PKA_SD`, :data:`DEFAULT_LOG_K_SD`) —
results say which constants used the default.  Constants are taken as
independent.

Two methods:

* ``"first-order"`` (default): linear propagation through the solver's own
  Jacobian.  At the solution the derivatives of pH and of every ln c with
  respect to every constant come from the implicit-function theorem (one
  linear solve for all constants; activity, complexes, present solids and
  fixed gases included), and
  sd(y)² = Σ_k (∂y/∂θ_k · sd_k)².
* ``"monte-carlo"``: the constants are drawn from independent normal
  distributions and every draw is solved by the batch kernel in one call;
  sd and the 2.5/97.5 % quantiles come from the draws.

For small uncertainties the two agree (the tests check this); the 95 %
interval of the first-order method is ±1.96 sd.

Amounts (what was weighed) can be included as relative standard
uncertainties (:func:`propagate` ``amount_rel_sd``), as the recipe designer
does with ±1 % on each mass.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import _kernel as K
from ._sens import (DEFAULT_LOG_K_SD, DEFAULT_PKA_SD, constant_derivatives, constant_rhs,
                    log_conc_derivatives, shift_inputs, solve_columns)
from ._solver import kernel_inputs, run_kernel
from .errors import ChemError
from .model import Equilibrium, Mixture
from .problem import LN10, TINY_TOTAL, compile, component_totals

__all__ = ["DEFAULT_LOG_K_SD", "DEFAULT_PKA_SD", "METHODS", "WEIGHING_REL_SD", "Band", "Contribution",
           "RecipeUncertainty", "SpeciesUncertainty", "Uncertainty", "UncertaintyError", "curve_band", "propagate",
           "recipe_uncertainty"]

METHODS = ("first-order", "monte-carlo")
#: z of the two-sided 95 % interval of a normal distribution.
Z95 = 1.959963984540054
#: Draws of the Monte Carlo method unless told otherwise.
DEFAULT_SAMPLES = 2000


class UncertaintyError(ChemError):
    """Uncertainty was asked for with bad settings (method, samples)."""


@dataclass(frozen=True)
class Contribution:
    """One source of uncertainty and the share of the pH's it causes."""

    key: str
    """"pKa:phosphate:2", "logK:CaHCO3+", ..., or "amount:REAGENT" for a weighed amount."""
    sd: float
    """Its standard uncertainty (log units, or relative for an amount)."""
    stated: bool
    """Whether the source states ``sd`` (False: the default was used)."""
    dpH: float
    """∂pH/∂θ (per log unit; per relative change of an amount)."""

    @property
    def pH_sd(self) -> float:
        return abs(self.dpH) * self.sd


@dataclass(frozen=True)
class SpeciesUncertainty:
    name: str
    conc: float
    log10_sd: float
    """Standard uncertainty of log10 of the concentration."""
    interval_95: tuple[float, float]
    """mol/L."""


@dataclass(frozen=True)
class Uncertainty:
    """The uncertainty of one solved mixture."""

    method: str
    pH: float
    pH_sd: float
    pH_interval_95: tuple[float, float]
    species: tuple[SpeciesUncertainty, ...]
    contributions: tuple[Contribution, ...] = ()
    """First order: every source, largest effect on pH first."""
    defaults: tuple[str, ...] = ()
    """Keys of the constants (that matter here) whose sd is the default, not the source's."""
    samples: int = 0
    failed: int = 0
    """Monte Carlo draws whose solve did not converge (left out)."""
    extra: dict = field(default_factory=dict, compare=False)

    def to_dict(self) -> dict:
        """The ``"uncertainty"`` object of ``protomix solve --json --uncertainty``."""
        def num(x):
            return None if x is None or not math.isfinite(x) else float(x)

        out = {
            "method": self.method,
            "pH": {"sd": num(self.pH_sd), "interval_95": [num(self.pH_interval_95[0]), num(self.pH_interval_95[1])]},
            "species": {s.name: {"conc_M": num(s.conc), "log10_sd": num(s.log10_sd),
                                 "interval_95": [num(s.interval_95[0]), num(s.interval_95[1])]}
                        for s in self.species},
            "sources": [{"constant": c.key, "sd": num(c.sd), "sd_stated": c.stated, "dpH_dconstant": num(c.dpH),
                         "pH_sd": num(c.pH_sd)} for c in self.contributions],
            "defaults": {"pKa_sd": DEFAULT_PKA_SD, "log_K_sd": DEFAULT_LOG_K_SD,
                         "used_for": list(self.defaults)},
            "independent": True,
        }
        if self.method == "monte-carlo":
            out["samples"] = self.samples
            out["failed"] = self.failed
        return out


# --------------------------------------------------------------------------
# one solved mixture
# --------------------------------------------------------------------------

def _result_of(eq: Equilibrium, inp: K.Inputs) -> K.Result:
    state = eq._state      # type: ignore[attr-defined]
    st = eq._problem.structure  # type: ignore[attr-defined]
    return K.Result(u=state.u[None], ionic=np.array([state.ionic]), lng=state.lng[None], conc=state.conc[None],
                    amounts=state.amounts[None] if state.amounts.size else np.zeros((1, len(st.solids))),
                    eq_mult=state.eq_mult[None] if state.eq_mult.size else np.zeros((1, inp.eq_rows.shape[0])),
                    converged=np.array([state.converged]), residual=np.array([state.residual]), iterations=0)


def _species_rows(st) -> list[int]:
    return [r for r, info in enumerate(st.species) if info.kind != "strong"]


def _amount_rhs(prob, inp, res) -> tuple[list[str], np.ndarray]:
    """Right-hand sides for a relative change of each ingredient's amount."""
    st = prob.structure
    names, tots, inert = [], [], []
    for ing in prob.mixture.ingredients:
        t, _, i_s = component_totals(st, (ing,))
        names.append(f"amount:{ing.reagent.name}")
        tots.append(t)
        inert.append(i_s)
    if not names:
        return [], np.zeros((1, 0, 0))
    from ._sens import columns_rhs
    d_t = np.array(tots).T[None]                 # (1, nc, k)
    d_i = np.array(inert)[None]                  # (1, k)
    return names, columns_rhs(inp, res, d_totals=d_t, d_inert_i=d_i)


def propagate(eq: Equilibrium, *, method: str = "first-order", samples: int = DEFAULT_SAMPLES,
              seed: int | None = 0, amount_rel_sd: float | None = None) -> Uncertainty:
    """The uncertainty of ``eq``'s pH and species from its constants.

    Parameters
    ----------
    eq : Equilibrium
        A solved mixture (:func:`chem.solve`).
    method : {"first-order", "monte-carlo"}
        Linear propagation through the solver's Jacobian, or draws solved
        by the batch kernel.
    samples : int
        Monte Carlo draws (100 to 200000).
    seed : int or None
        Seed of the Monte Carlo draws (reproducible by default).
    amount_rel_sd : float, optional
        Also count a relative standard uncertainty of every ingredient's
        amount (0.01 for ±1 % on each mass); first order only.

    Returns
    -------
    Uncertainty
        pH sd and 95 % interval, each species' log10 sd and interval, and
        (first order) each source's contribution.
    """
    if method not in METHODS:
        raise UncertaintyError(f"unknown uncertainty method {method!r} (use {' or '.join(METHODS)})")
    if not isinstance(eq, Equilibrium) or not hasattr(eq, "_state"):
        raise UncertaintyError("uncertainty needs a solved mixture (chem.solve)")
    if method == "monte-carlo":
        if amount_rel_sd is not None:
            raise UncertaintyError("amount uncertainty is propagated to first order only")
        return _monte_carlo(eq, samples, seed)
    prob = eq._problem  # type: ignore[attr-defined]
    st = prob.structure
    der = constant_derivatives(st)
    inp = kernel_inputs(prob)
    res = _result_of(eq, inp)
    cols = list(range(len(der.constants)))
    rhs = constant_rhs(inp, res, st, der, cols)
    names: list[str] = []
    if amount_rel_sd is not None:
        names, rhs_a = _amount_rhs(prob, inp, res)
        if names:
            rhs = np.concatenate([rhs, rhs_a], axis=2)
    y = solve_columns(inp, res, rhs)              # (1, n, k)
    d_lnk = np.zeros((1, st.n_species, rhs.shape[2]))
    d_lnk[0, :, :len(cols)] = LN10 * der.species
    dlnc = log_conc_derivatives(inp, res, y, d_lnk)[0]          # (ns, k)
    dph = -y[0, 0] / LN10                                     # (k,)
    sd = np.array([c.sd for c in der.constants] + [amount_rel_sd or 0.0] * len(names))
    ph = eq.pH
    ph_sd = float(np.sqrt(np.sum((dph * sd) ** 2)))
    contribs = [Contribution(c.key, c.sd, c.sd_stated, float(dph[k])) for k, c in enumerate(der.constants)]
    contribs += [Contribution(n, float(amount_rel_sd), True, float(dph[len(cols) + k])) for k, n in enumerate(names)]
    contribs.sort(key=lambda c: -c.pH_sd)
    species = []
    conc = res.conc[0]
    rows = _species_rows(st)
    zero = _zero_rows(prob)
    for r in rows:
        lsd = float(np.sqrt(np.sum((dlnc[r] * sd) ** 2))) / LN10
        c = 0.0 if zero[r] else float(conc[r])
        f = 10.0 ** min(Z95 * lsd, 300.0)          # a first-order sd of hundreds of decades: no bound
        species.append(SpeciesUncertainty(st.species[r].name, c, lsd, (c / f, c * f)))
    defaults = tuple(c.key for c in contribs if not c.stated and c.pH_sd > 1e-6 and not c.key.startswith("amount:"))
    return Uncertainty("first-order", ph, ph_sd, (ph - Z95 * ph_sd, ph + Z95 * ph_sd), tuple(species),
                       tuple(contribs), defaults)


def _zero_rows(prob) -> np.ndarray:
    st = prob.structure
    if not prob.zero.any():
        return np.zeros(st.n_species, dtype=bool)
    return (st.nu[:, prob.zero] != 0).any(axis=1)


def _monte_carlo(eq: Equilibrium, samples: int, seed: int | None) -> Uncertainty:
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or not 100 <= samples <= 200_000:
        raise UncertaintyError(f"samples must be a whole number from 100 to 200000 (got {samples!r})")
    prob = eq._problem  # type: ignore[attr-defined]
    st = prob.structure
    der = constant_derivatives(st)
    sd = np.array([c.sd for c in der.constants])
    rng = np.random.default_rng(seed)
    delta = rng.standard_normal((samples, sd.size)) * sd
    u, ionic, conc, ok = _solve_draws(prob, eq, der, delta)
    ph = -u[ok, 0] / LN10
    failed = int((~ok).sum())
    if ph.size < 2:
        raise UncertaintyError("the Monte Carlo draws did not converge")
    lo, hi = np.percentile(ph, [2.5, 97.5])
    species = []
    zero = _zero_rows(prob)
    for r in _species_rows(st):
        c = conc[ok, r]
        if zero[r] or not np.all(c > 0):
            species.append(SpeciesUncertainty(st.species[r].name, 0.0 if zero[r] else float(eq._state.conc[r]),
                                              0.0, (0.0, 0.0)))
            continue
        lc = np.log10(c)
        qlo, qhi = np.percentile(lc, [2.5, 97.5])
        species.append(SpeciesUncertainty(st.species[r].name, float(eq._state.conc[r]), float(lc.std(ddof=1)),
                                          (float(10 ** qlo), float(10 ** qhi))))
    first = propagate(eq)           # the sources and which use defaults: from the linear analysis
    return Uncertainty("monte-carlo", eq.pH, float(ph.std(ddof=1)), (float(lo), float(hi)), tuple(species),
                       first.contributions, first.defaults, samples=samples, failed=failed)


def _solve_draws(prob, eq: Equilibrium, der, delta: np.ndarray):
    """Solve the mixture once per row of ``delta`` (changes of every constant) in one kernel call."""
    st = prob.structure
    n = delta.shape[0]
    inp = kernel_inputs(prob, totals=np.broadcast_to(prob.totals, (n, st.n_components)),
                        inert_q=np.full(n, prob.inert_q))
    inp.inert_i = np.full(n, prob.inert_i)
    shift_inputs(inp, st, der, range(len(der.constants)), delta)
    state = eq._state  # type: ignore[attr-defined]
    res = run_kernel(prob, inp, u0=np.broadcast_to(state.u, (n, st.n_components)),
                     i0=np.full(n, state.ionic))
    ok = np.asarray(res.converged, dtype=bool)
    if not ok.all():                                   # a cold start for the draws that did not settle
        bad = np.nonzero(~ok)[0]
        sub = kernel_inputs(prob, totals=np.broadcast_to(prob.totals, (bad.size, st.n_components)),
                            inert_q=np.full(bad.size, prob.inert_q))
        sub.inert_i = np.full(bad.size, prob.inert_i)
        shift_inputs(sub, st, der, range(len(der.constants)), delta[bad])
        again = run_kernel(prob, sub)
        res.u[bad] = again.u
        res.ionic[bad] = again.ionic
        res.conc[bad] = again.conc
        ok[bad] = again.converged
    return res.u, res.ionic, res.conc, ok


# --------------------------------------------------------------------------
# curves: a band around pH (and the species) at every point
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class Band:
    """First-order standard uncertainty along a curve, from the constants."""

    pH_sd: np.ndarray
    log10_sd: dict
    """Species name (as in ``curve.species``) -> sd of log10 C at every point."""

    def pH_limits(self, ph: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return ph - Z95 * self.pH_sd, ph + Z95 * self.pH_sd


def curve_band(curve) -> Band:
    """The first-order uncertainty of a curve's pH and species at every point (from the constants).

    Works for any :class:`chem.curves.Curve` (titration, dilution, sweep):
    every point's mixture is rebuilt (``curve.mixture_at``), all points are
    solved again together and differentiated in one batch.
    """
    n = len(curve)
    if n == 0:
        return Band(np.zeros(0), {})
    mixes = [curve.mixture_at(i) for i in range(n)]
    prob = compile(mixes[0])
    st = prob.structure
    tot = np.zeros((n, st.n_components))
    inert = np.zeros(n)
    charge = np.zeros(n)
    for i, m in enumerate(mixes):
        tot[i], charge[i], inert[i] = component_totals(st, m.ingredients)
    low = tot <= 0.0
    low[:, 0] = False
    zero = low & ~st.supplied[None, :]
    tot = np.where(low, TINY_TOTAL, tot)
    temps = np.array([m.temperature_c for m in mixes])
    pressures = None
    if st.fixed:
        names = [st.gases[g].name for g in st.fixed]
        pressures = np.array([[{g.gas.name: g.pressure_atm for g in m.gases}[nm] for nm in names] for m in mixes])
    inp = kernel_inputs(prob, t_c=temps, totals=tot, inert_i=inert, inert_q=charge, pressures=pressures)
    res = run_kernel(prob, inp)
    der = constant_derivatives(st)
    cols = list(range(len(der.constants)))
    sd = np.array([c.sd for c in der.constants])
    if not cols:
        return Band(np.zeros(n), {})
    y = solve_columns(inp, res, constant_rhs(inp, res, st, der, cols))
    ph_sd = np.sqrt(np.sum((y[:, 0, :] / LN10 * sd) ** 2, axis=1))
    d_lnk = np.broadcast_to(LN10 * der.species[None], (n, st.n_species, len(cols)))
    dlnc = log_conc_derivatives(inp, res, y, d_lnk)
    log_sd = np.sqrt(np.sum((dlnc * sd) ** 2, axis=2)) / LN10          # (P, ns)
    rows = _species_rows(st)
    holds_zero = (st.nu[rows][None, :, :] != 0) & zero[:, None, :]
    out = {}
    for k, (name, r) in enumerate(zip(curve.species, rows)):
        out[name] = np.where(holds_zero[:, k].any(axis=1), 0.0, log_sd[:, r])
    for arr in (ph_sd, *out.values()):
        arr.setflags(write=False)
    return Band(ph_sd, out)


def mixture_uncertainty(mixture: Mixture, **kwargs) -> Uncertainty:
    """:func:`propagate` of ``chem.solve(mixture)``."""
    from ._solver import solve

    return propagate(solve(mixture), **kwargs)


#: Relative standard uncertainty taken for every weighed or pipetted amount of a recipe:
#: ±1 % on each mass, read as one standard deviation (common practice for a laboratory
#: balance and volumetric ware at bench amounts).
WEIGHING_REL_SD = 0.01


#: A recipe pH sd (pH units) beyond which the first-order estimate is not a bound but a sign that
#: nothing holds the pH (the titration curve bends within one sd; common practice for linearisation).
FIRST_ORDER_LIMIT = 0.3


@dataclass(frozen=True)
class RecipeUncertainty:
    """How far a recipe's pH could be off: from the constants and from weighing."""

    pH: float
    constants_sd: float
    weighing_sd: float
    rel_sd: float
    defaults: tuple[str, ...]

    @property
    def sd(self) -> float:
        return math.hypot(self.constants_sd, self.weighing_sd)

    @property
    def interval_95(self) -> tuple[float, float]:
        return self.pH - Z95 * self.sd, self.pH + Z95 * self.sd

    @property
    def first_order_valid(self) -> bool:
        """Whether the linear estimate means anything: beyond :data:`FIRST_ORDER_LIMIT` pH the
        curve bends within one sd (an unbuffered solution), and the sd only says "not held"."""
        return self.sd <= FIRST_ORDER_LIMIT

    def to_dict(self) -> dict:
        lo, hi = self.interval_95
        return {"method": "first-order", "pH_sd": self.sd, "interval_95": [lo, hi],
                "first_order_valid": self.first_order_valid,
                "from_constants_sd": self.constants_sd, "from_weighing_sd": self.weighing_sd,
                "weighing_rel_sd": self.rel_sd, "defaults_used_for": list(self.defaults),
                "default_pKa_sd": DEFAULT_PKA_SD, "default_log_K_sd": DEFAULT_LOG_K_SD}


def recipe_uncertainty(eq: Equilibrium, rel_sd: float = WEIGHING_REL_SD) -> RecipeUncertainty:
    """The pH uncertainty of a solution made up as ``eq.mixture``: constants, and ``rel_sd`` on every amount."""
    unc = propagate(eq, amount_rel_sd=rel_sd)
    const = math.sqrt(sum(c.pH_sd ** 2 for c in unc.contributions if not c.key.startswith("amount:")))
    weigh = math.sqrt(sum(c.pH_sd ** 2 for c in unc.contributions if c.key.startswith("amount:")))
    return RecipeUncertainty(eq.pH, const, weigh, rel_sd, unc.defaults)
