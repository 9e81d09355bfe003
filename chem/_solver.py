"""The equilibrium solver.

Formulation
-----------
The mixture is written as a tableau: components are H+ and the fully
deprotonated form L of each acid–base system; every species is formed from
components with a formation constant, HjL = L + j H+ with log β_j the sum of
the last j stepwise pKa values (at the working temperature).  Strong ions
(Na+, Cl-, ...) are fixed; water gives H+ and OH- with Kw(T).

For the acid–base case every species holds exactly one non-proton component,
so with the activity coefficients fixed the fractions of each system are
explicit functions of x = log10 a(H+), and the charge balance

    F(x) = [H+] - [OH-] + sum_s C_s sum_k alpha_sk z_sk + sum_strong z c = 0

is strictly increasing in x.  It is solved by Newton's method on x kept
inside a bracket that always contains the root (bisection whenever a Newton
step leaves it), so it cannot fail to converge.  The ionic strength is found
self-consistently around it.  No small-x or 5 % shortcut is used anywhere.

Everything is vectorised over a leading batch axis, so sweeps and titrations
solve hundreds of related mixtures in one call.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from . import water
from .activity import VALID_UP_TO
from .cautions import cautions_of
from .model import (T_REF_C, AcidBaseSystem, Equilibrium, Ion, Mixture, Notice, Species,
                    charge_label)

# Ion-size parameters (Å) of H+ and OH- for the extended Debye–Hückel model:
# Kielland (1937), J. Am. Chem. Soc. 59, 1675, Table (from memory).
SIZE_H = 9.0
SIZE_OH = 3.5

_LN10 = math.log(10.0)
_sum = np.add.reduce
_X_LO, _X_HI = -19.0, 4.0   # initial bracket on log10 a(H+)


@dataclass(frozen=True)
class Tableau:
    """Components, species and formation constants of a mixture at its temperature.

    Species rows are the system species (padded to a common width per system)
    in the layout the solver uses.  ``stoichiometry`` lists, per species, the
    count of each component (H+ first).
    """

    components: tuple[str, ...]
    species: tuple[str, ...]
    stoichiometry: np.ndarray
    log_beta: np.ndarray
    charges: np.ndarray


class _Layout:
    """Padded arrays (systems × species) for a list of acid–base systems."""

    def __init__(self, systems: tuple[AcidBaseSystem, ...]):
        self.systems = systems
        s = len(systems)
        m = max((sys_.steps for sys_ in systems), default=0) + 1
        self.width = m
        self.mask = np.zeros((s, m), dtype=bool)
        self.z = np.zeros((s, m))
        self.j = np.zeros((s, m))
        self.size = np.full((s, m), 4.0)
        self.pka0 = np.zeros((s, max(m - 1, 1)))
        self.dh = np.zeros_like(self.pka0)
        self.dcp = np.zeros_like(self.pka0)
        for i, sys_ in enumerate(systems):
            n = sys_.steps
            k = np.arange(n + 1)
            self.mask[i, : n + 1] = True
            self.z[i, : n + 1] = sys_.charge_fully_protonated - k
            self.j[i, : n + 1] = n - k
            self.size[i, :] = sys_.ion_size_a
            self.pka0[i, :n] = sys_.pka
            if sys_.dh_kj is not None:
                self.dh[i, :n] = np.asarray(sys_.dh_kj) * 1000.0
                if sys_.dcp_j is not None:
                    self.dcp[i, :n] = sys_.dcp_j
        for arr in (self.mask, self.z, self.j, self.size, self.pka0, self.dh, self.dcp):
            arr.setflags(write=False)          # layouts are cached and shared

    def log_beta(self, t_c) -> np.ndarray:
        """log10 β of each padded species at temperatures ``t_c`` (shape (P,)).

        Returns (P, S, M), -inf where padded.
        """
        t = np.atleast_1d(np.asarray(t_c, dtype=float))
        T = (t + water.KELVIN)[:, None, None]
        T0 = T_REF_C + water.KELVIN
        pka = (self.pka0 + self.dh / (water.R_J * _LN10) * (1.0 / T - 1.0 / T0)
               - self.dcp / (water.R_J * _LN10) * (T0 / T - 1.0 + np.log(T / T0)))
        s, m = self.mask.shape
        lb = np.zeros((t.size, s, m))
        if m > 1:
            # log β for species k (k protons removed) = sum of pKa[k:]
            rev = np.cumsum(pka[..., ::-1], axis=-1)[..., ::-1]
            lb[..., : m - 1] = rev[..., : m - 1]
        lb[:, ~self.mask] = -np.inf
        return lb


@functools.lru_cache(maxsize=256)
def layout_for(systems: tuple[AcidBaseSystem, ...]) -> _Layout:
    """The padded layout of ``systems`` (cached: building it costs ~0.2 ms; layouts are never changed)."""
    return _Layout(systems)


def tableau(mixture: Mixture) -> Tableau:
    """The components-and-species formulation of ``mixture`` at its temperature."""
    systems = tuple(s for s, _ in mixture.systems())
    comps = ("H+",) + tuple(f"{s.species[-1]}" for s in systems)
    names, rows, betas, charges = [], [], [], []
    for i, sys_ in enumerate(systems):
        pka = sys_.pka_at(mixture.temperature_c)
        for k, name in enumerate(sys_.species):
            row = [0] * len(comps)
            row[0] = sys_.steps - k
            row[i + 1] = 1
            names.append(name)
            rows.append(row)
            betas.append(float(_sum(pka[k:])))
            charges.append(sys_.charge_of(k))
    return Tableau(comps, tuple(names), np.array(rows, dtype=int).reshape(len(names), len(comps)),
                   np.array(betas), np.array(charges))


# --------------------------------------------------------------------------
# scalar kernel (one mixture): the same equations in plain Python floats,
# which for tens of species beats numpy's per-call overhead several times.
# --------------------------------------------------------------------------

def _kernel(systems: list, q_strong: float, i_strong: float, kw: float, a: float, b: float, model: str):
    """The balance equations of one mixture as closures over its data (see :func:`_solve_scalar`).

    Returns ``(dfactor, bases, water_gammas, evaluate, joint)``.
    """
    ideal = model == "ideal"
    davies = model == "davies"
    exp = math.exp
    sqrt = math.sqrt
    ln10 = _LN10
    al = ln10 * a

    def dfactor(size: float, ionic: float) -> float:
        """D(I) in log10 γ = -A z² D(I)."""
        if ideal:
            return 0.0
        si = sqrt(ionic)
        if davies:
            return si / (1.0 + si) - 0.3 * ionic
        return si / (1.0 + b * size * si)

    def dterm(size: float, ionic: float) -> float:
        """dD/dI."""
        si = sqrt(max(ionic, 1e-16))
        if davies:
            return 1.0 / (2.0 * si * (1.0 + si) ** 2) - 0.3
        return 1.0 / (2.0 * si * (1.0 + b * size * si) ** 2)

    def bases(ionic: float):
        """Per system: (total, z, ln β - ln γ per species, j, z², size, A·ln10·D)."""
        out = []
        k_of: dict[float, float] = {}
        for total, c, lnb, jj, z2s, size, zs in systems:
            k = k_of.get(size)
            if k is None:
                k = k_of[size] = al * dfactor(size, ionic)
            out.append((total, zs, [v + k * z2 for v, z2 in zip(lnb, z2s)], jj, z2s, size, k))
        return out

    def water_gammas(ionic: float) -> tuple[float, float]:
        return exp(-al * dfactor(SIZE_H, ionic)), exp(-al * dfactor(SIZE_OH, ionic))

    def evaluate(x: float, prepared, g_h: float, g_oh: float):
        """Charge balance F, dF/dx and the ionic strength the species imply."""
        f = q_strong
        df = 0.0
        iz2 = 0.0
        xl = x * ln10
        for total, zs, base, jj, z2s, _, _ in prepared:
            ws = [v + j * xl for v, j in zip(base, jj)]
            m = max(ws)
            s0 = s1 = s2 = 0.0
            for w, z, z2 in zip(ws, zs, z2s):
                e = exp(w - m)
                s0 += e
                s1 += e * z          # Σα z directly: no cancellation in the charge balance
                s2 += e * z2
            zbar = s1 / s0
            z2bar = s2 / s0
            f += total * zbar
            var = z2bar - zbar * zbar     # var(j) = var(z)
            if var > 0.0:
                df += total * var
            iz2 += total * z2bar
        h = exp(xl)
        hc = h / g_h
        ohc = kw / (h * g_oh)
        f += hc - ohc
        df = ln10 * (df + hc + ohc)
        return f, df, i_strong + 0.5 * (iz2 + hc + ohc), hc, ohc

    def joint(x: float, ionic: float, prepared, g_h: float, g_oh: float):
        """F, G = I_computed - I, and the four partial derivatives."""
        dd_of: dict[float, float] = {}
        f = q_strong
        fx = fi = gx = gi = 0.0
        ez2 = 0.0
        xl = x * ln10
        for total, zs, base, jj, z2s, size, _ in prepared:
            ws = [v + j * xl for v, j in zip(base, jj)]
            m = max(ws)
            s0 = s1 = s2 = s3 = s4 = 0.0
            for w, z, z2 in zip(ws, zs, z2s):
                e = exp(w - m)
                ez = e * z2
                s0 += e
                s1 += e * z
                s2 += ez
                s3 += ez * z
                s4 += ez * z2
            zbar = s1 / s0
            z2bar = s2 / s0
            var_j = z2bar - zbar * zbar          # var(j) = var(z), cov(j, z²) = cov(z, z²)
            if var_j < 0.0:
                var_j = 0.0
            cov_jz2 = s3 / s0 - zbar * z2bar
            var_z2 = s4 / s0 - z2bar * z2bar
            if var_z2 < 0.0:
                var_z2 = 0.0
            dd = dd_of.get(size)
            if dd is None:
                dd = dd_of[size] = al * dterm(size, ionic)
            f += total * zbar
            fx += total * var_j
            fi += total * dd * cov_jz2
            ez2 += total * z2bar
            gx += total * cov_jz2
            gi += total * dd * var_z2
        h = exp(xl)
        hc = h / g_h
        ohc = kw / (h * g_oh)
        dh_ = al * dterm(SIZE_H, ionic)
        doh = al * dterm(SIZE_OH, ionic)
        f += hc - ohc
        fx = ln10 * (fx + hc + ohc)
        fi += dh_ * hc - doh * ohc
        g = i_strong + 0.5 * (ez2 + hc + ohc) - ionic
        gx = 0.5 * ln10 * (gx + hc - ohc)
        gi = 0.5 * (gi + dh_ * hc + doh * ohc) - 1.0
        return f, g, fx, fi, gx, gi

    return dfactor, bases, water_gammas, evaluate, joint


def _solve_scalar(systems: list, q_strong: float, i_strong: float, kw: float, a: float, b: float,
                  model: str, *, tol: float, max_iter: int, x0: float = -7.0):
    """Solve one mixture.

    ``systems`` lists ``(total, c, ln_beta, j, z2, size, z)`` per acid–base
    system: total (mol/L), the charge ``c`` of the fully deprotonated form, per
    species the natural-log formation constant, bound protons and squared
    charge, the system's ion size (Å), and per species the charge.  Returns
    ``(x, ionic, alphas, lgs, lg_h, lg_oh, residual, scale, converged, iterations)``
    with x = log10 a(H+), ``alphas`` the fractions and ``lgs`` the log10 γ of
    each system's species.
    """
    ideal = model == "ideal"
    dfactor, bases, water_gammas, evaluate, joint = _kernel(systems, q_strong, i_strong, kw, a, b, model)
    ln10 = _LN10
    sqrt = math.sqrt
    exp = math.exp

    x = min(max(x0, _X_LO), _X_HI)
    ionic = i_strong
    # No ionic strength can exceed this (every ion at its largest charge, plus
    # water's ions); capping keeps wild early iterates finite.
    i_cap = 2.0 * (i_strong + sum(p[0] * max(p[4]) for p in systems)) + 1.0
    iterations = 0

    # Phase 1: two-dimensional Newton on (x, I) with analytic derivatives:
    # F(x, I) is the charge balance, G(x, I) = I_computed - I.
    if not ideal:
        for _ in range(min(40, max_iter)):
            iterations += 1
            prepared = bases(ionic)
            g_h, g_oh = water_gammas(ionic)
            f, g, fx, fi, gx, gi = joint(x, ionic, prepared, g_h, g_oh)
            det = fx * gi - fi * gx
            if det == 0.0 or not math.isfinite(det):
                break
            dx = (f * gi - g * fi) / det
            d_i = (fx * g - gx * f) / det
            dx = min(max(dx, -2.0), 2.0)
            x = min(max(x - dx, _X_LO), _X_HI)
            new_i = ionic - d_i
            if not new_i > 0.1 * ionic:
                new_i = 0.1 * ionic if ionic > 0 else i_strong
            ionic = min(new_i, i_cap)
            if abs(dx) < 1e-10 and abs(d_i) <= 1e-11 * ionic + 1e-16:
                break

    # Phase 2: at fixed activity coefficients the balance is monotone in x;
    # safeguarded Newton inside a bracket (bisection whenever Newton leaves
    # it) cannot fail.  Around it, the ionic-strength fixed point.
    converged = False
    for outer in range(60):
        prepared = bases(ionic)
        g_h, g_oh = water_gammas(ionic)
        lo, hi = -math.inf, math.inf
        inner_ok = False
        last = None
        while iterations < max_iter:
            iterations += 1
            last = evaluate(x, prepared, g_h, g_oh)
            f, df = last[0], last[1]
            if f == 0.0:
                inner_ok = True
                break
            if f < 0.0:
                lo = x
            else:
                hi = x
            newton = x - f / df if df > 0 else math.nan
            if abs(newton - x) <= tol * (1.0 + abs(x)):
                x = newton           # below tolerance: take the last step, re-evaluate below
                last = None
                inner_ok = True
                break
            if not (lo < newton < hi) or abs(newton - x) > 3.0:
                if math.isinf(lo):
                    lo = _bracket_end(evaluate, prepared, g_h, g_oh, -1)
                if math.isinf(hi):
                    hi = _bracket_end(evaluate, prepared, g_h, g_oh, +1)
                if not lo < newton < hi:
                    newton = 0.5 * (lo + hi)
            x = newton
            last = None
            if hi - lo <= 4e-16 * (1.0 + abs(x)):
                inner_ok = True
                break
        if last is None:
            last = evaluate(x, prepared, g_h, g_oh)
        f, _, new_i, hc, ohc = last
        if ideal:
            converged = inner_ok
            ionic = new_i      # reported for information; γ = 1 regardless
            break
        i_ok = abs(new_i - ionic) <= 1e-10 * new_i + 1e-15
        converged = inner_ok and i_ok
        if converged or iterations >= max_iter:
            break
        new_i = min(new_i, i_cap)
        ionic = new_i if outer < 30 else 0.5 * (ionic + new_i)

    # fractions and activity coefficients at the solution
    xl = x * ln10
    alphas, lgs = [], []
    scale = hc + ohc + abs(q_strong) + i_strong
    for total, _, base, jj, z2s, _, k in prepared:
        ws = [v + j * xl for v, j in zip(base, jj)]
        m = max(ws)
        es = [exp(w - m) for w in ws]
        s0 = math.fsum(es)
        alphas.append([e / s0 for e in es])
        lgs.append([-k * z2 / ln10 for z2 in z2s])
        scale += total * sqrt(max(z2s))
    lg_h = -a * dfactor(SIZE_H, ionic)
    lg_oh = -a * dfactor(SIZE_OH, ionic)
    return (x, ionic, alphas, lgs, lg_h, lg_oh, f, scale, converged, iterations)


def _capacity_scalar(systems: list, q_strong: float, i_strong: float, kw: float, a: float, b: float,
                     model: str, x: float, ionic: float) -> float:
    """β = dC_b/dpH at the solved state (x = log10 a(H+), I) of one mixture.

    Strong monovalent base C_b raises the charge balance F by C_b and the
    ionic strength by C_b/2; the implicit-function theorem on F = 0 and
    G = I_computed - I = 0 gives dx/dC_b, and β = -1/(dx/dC_b) (pH = -x).
    Exact for the model, activity corrections included.
    """
    _, bases, water_gammas, _, joint = _kernel(systems, q_strong, i_strong, kw, a, b, model)
    g_h, g_oh = water_gammas(ionic)
    _, _, fx, fi, gx, gi = joint(x, ionic, bases(ionic), g_h, g_oh)
    if model == "ideal":          # γ = 1: the ionic strength changes nothing
        return fx
    return (fx * gi - fi * gx) / (gi - 0.5 * fi)


def _bracket_end(evaluate, prepared, g_h, g_oh, direction):
    """A point beyond which the balance has the sign that brackets the root."""
    end = _X_LO if direction < 0 else _X_HI
    for _ in range(8):
        f = evaluate(end, prepared, g_h, g_oh)[0]
        if (f < 0) if direction < 0 else (f > 0):
            return end
        end += 10.0 * direction
    return end


# --------------------------------------------------------------------------
# single-mixture front end
# --------------------------------------------------------------------------

def _strong_sums(strong: tuple[tuple[Ion, float], ...]) -> tuple[float, float]:
    q = sum(ion.charge * c for ion, c in strong)
    i = 0.5 * sum(ion.charge * ion.charge * c for ion, c in strong)
    return q, i


def prepare(mixture: Mixture):
    """Layout and totals of a mixture (shared by solve, sweeps and curves)."""
    pairs = mixture.systems()
    systems = tuple(s for s, _ in pairs)
    lay = layout_for(systems)
    totals = np.array([c for _, c in pairs], dtype=float)
    strong = mixture.strong_ions()
    return lay, totals, strong


@functools.lru_cache(maxsize=8192)
def _scalar_system(sys_: AcidBaseSystem, t_c: float) -> tuple:
    """(c, ln β, j, z², size, z) of a system at ``t_c``, in plain floats (cached)."""
    pka = [float(v) for v in sys_.pka_at(t_c)]
    n = sys_.steps
    c = float(sys_.charge_fully_protonated - n)
    ln_beta = [_LN10 * math.fsum(pka[k:]) for k in range(n + 1)]
    jj = [float(n - k) for k in range(n + 1)]
    zs = [c + j for j in jj]
    return c, ln_beta, jj, [z * z for z in zs], sys_.ion_size_a, zs


@functools.lru_cache(maxsize=1024)
def _water_constants(t_c: float) -> tuple[float, float, float]:
    return (float(water.pkw(t_c)), float(water.debye_huckel_a(t_c)), float(water.debye_huckel_b(t_c)))


def solve(mixture: Mixture, *, tol: float = 1e-13, max_iter: int = 200) -> Equilibrium:
    """Solve the complete acid–base equilibrium of ``mixture``.

    Parameters
    ----------
    mixture : Mixture
        Ingredients, temperature (°C) and activity model.
    tol : float, optional
        Convergence tolerance on log10 a(H+).
    max_iter : int, optional
        Cap on solver iterations; when reached, the result says
        ``converged=False`` instead of raising.

    Returns
    -------
    Equilibrium
        pH (= -log10 a(H+)), every species with concentration (mol/L),
        activity coefficient and fraction of its system, ionic strength,
        the remaining charge-balance error, warnings and cautions.
    """
    t = mixture.temperature_c
    pairs = mixture.systems()
    strong = mixture.strong_ions()
    q, i_s = _strong_sums(strong)
    pkw, a, b = _water_constants(t)
    sys_data = [(total, *_scalar_system(sys_, t)) for sys_, total in pairs]
    (x, ionic, alphas, lgs, lg_h, lg_oh, resid, scale, converged, iterations) = _solve_scalar(
        sys_data, q, i_s, 10.0 ** -pkw, a, b, mixture.activity, tol=tol, max_iter=max_iter)
    return _assemble(mixture, pairs, strong, x, ionic, alphas, lgs, lg_h, lg_oh, resid, scale,
                     converged, iterations, pkw, a, b)


def buffer_capacity_at(source: Equilibrium | Mixture) -> float:
    """Buffer capacity of a mixture at its own pH, mol/(L·pH).

    β = dC_b/dpH for strong monovalent base added without change of volume,
    exact for the model (activity corrections included): the implicit-function
    theorem at the solved state, see :func:`_capacity_scalar`.  It agrees with
    :func:`chem.curves.buffer_capacity` at the same pH.

    Parameters
    ----------
    source : Equilibrium or Mixture
        A solved mixture, or a mixture to solve.
    """
    if isinstance(source, Mixture):
        source = solve(source)
    if not isinstance(source, Equilibrium):
        raise TypeError(f"buffer capacity needs a mixture or an equilibrium (got {source!r})")
    mixture = source.mixture
    t = mixture.temperature_c
    q, i_s = _strong_sums(mixture.strong_ions())
    pkw, a, b = _water_constants(t)
    sys_data = [(total, *_scalar_system(sys_, t)) for sys_, total in mixture.systems()]
    return float(_capacity_scalar(sys_data, q, i_s, 10.0 ** -pkw, a, b, mixture.activity,
                                  -source.pH, source.ionic_strength))


def _assemble(mixture: Mixture, pairs, strong, x: float, ionic: float, alphas, lgs, lg_h: float,
              lg_oh: float, resid: float, scale: float, converged: bool, iterations: int,
              pkw: float, a: float, b: float) -> Equilibrium:
    model = mixture.activity
    ph = -x
    g_h = 10.0 ** lg_h
    g_oh = 10.0 ** lg_oh
    a_h = 10.0 ** x
    species: list[Species] = [
        Species("H+", "water", 1, 1, a_h / g_h, g_h, None),
        Species("OH-", "water", 0, -1, 10.0 ** (-pkw) / a_h / g_oh, g_oh, None),
    ]
    for (sys_, total), alpha, lg in zip(pairs, alphas, lgs):
        for k, name in enumerate(sys_.species):
            frac = float(alpha[k])
            species.append(Species(name, sys_.name, sys_.steps - k, sys_.charge_of(k),
                                   float(total) * frac, 10.0 ** float(lg[k]), frac))
    for ion, c in strong:
        lg = _log_gamma_scalar(model, ion.charge ** 2, ion.ion_size_a, ionic, a, b)
        species.append(Species(ion.name, "strong", 0, ion.charge, c, 10.0 ** lg, None))
    rel = abs(resid) / scale if scale > 0 else 0.0
    message = ("converged" if converged else
               f"not converged after {iterations} iterations (relative balance error {rel:.1e})")
    warnings = _warnings(mixture, [s for s, _ in pairs], ionic, converged, message)
    species_t = tuple(species)
    return Equilibrium(mixture=mixture, pH=ph, pOH=pkw - ph, pKw=pkw, ionic_strength=ionic,
                       converged=converged, balance_error=resid, iterations=iterations,
                       message=message, species=species_t,
                       systems=tuple((s.name, float(c)) for s, c in pairs),
                       warnings=tuple(warnings), cautions=tuple(cautions_of(mixture, ph, species_t)))


def equilibrium_at(mixture: Mixture, batch, idx: int) -> Equilibrium:
    """The :class:`Equilibrium` of point ``idx`` of a batch solve (:mod:`chem._batch`) of ``mixture``."""
    t = mixture.temperature_c
    pkw, a, b = _water_constants(t)
    pairs = mixture.systems()
    alphas = [batch.alpha[idx, s, : sys_.steps + 1] for s, (sys_, _) in enumerate(pairs)]
    lgs = [batch.lg[idx, s, : sys_.steps + 1] for s, (sys_, _) in enumerate(pairs)]
    return _assemble(mixture, pairs, mixture.strong_ions(), float(batch.x[idx]), float(batch.ionic[idx]),
                     alphas, lgs, float(batch.lg_h[idx]), float(batch.lg_oh[idx]),
                     float(batch.residual[idx]), float(batch.scale[idx]), bool(batch.converged[idx]),
                     batch.iterations, pkw, a, b)


def _log_gamma_scalar(model: str, z2: float, size: float, ionic: float, a: float, b: float) -> float:
    """log10 γ for one ion (plain floats; same equations as :func:`chem.activity.log_gamma`)."""
    if model == "ideal" or z2 == 0:
        return 0.0
    si = math.sqrt(ionic)
    if model == "davies":
        return -a * z2 * (si / (1.0 + si) - 0.3 * ionic)
    return -a * z2 * si / (1.0 + b * size * si)


def _warnings(mixture: Mixture, systems, ionic: float, converged: bool, message: str):
    out: list[Notice] = []
    if not converged:
        out.append(Notice("not-converged", f"The solver did not converge: {message}. "
                                           "Do not use these numbers."))
    limit = VALID_UP_TO[mixture.activity]
    if ionic > limit:
        out.append(Notice("ionic-strength-high",
                          f"Ionic strength {ionic:.3g} M is beyond the {mixture.activity} model's "
                          f"usual range (up to about {limit:g} M); activity coefficients are rough."))
    t = mixture.temperature_c
    for sys_ in systems:
        if not sys_.has_temperature_data():
            if abs(t - T_REF_C) > 0.5:
                out.append(Notice("no-temperature-data",
                                  f"{sys_.name}: no reaction enthalpy known; its 25 °C pKa is used at {t:g} °C."))
        elif sys_.t_range_c is not None and not (sys_.t_range_c[0] - 1e-9 <= t <= sys_.t_range_c[1] + 1e-9):
            lo, hi = sys_.t_range_c
            out.append(Notice("temperature-out-of-range",
                              f"{sys_.name}: {t:g} °C is outside its temperature data ({lo:g}–{hi:g} °C); "
                              "pKa extrapolated by van 't Hoff."))
    return out


def species_label(system: AcidBaseSystem, k: int) -> str:
    """Generic label for a species of a custom system with no names given."""
    return f"{system.name} ({charge_label(system.charge_of(k)) or '0'})"
