"""``solve``: a mixture in, an :class:`~chem.model.Equilibrium` out.

The chemistry is compiled once (:func:`chem.problem.compile`); the
equations are solved by the batched kernel (:mod:`chem._kernel`) as a batch
of one, or — for a pure acid–base mixture (no complexes, no solid allowed to
form, no fixed gas) — by a fast path generated from the same problem: every
system's species are then explicit in x = log10 a(H+) and the ionic
strength, so a two-dimensional Newton iteration on (x, I) with analytic
derivatives, confirmed by a bracketed solve that cannot fail, does the work
in plain floats (several times faster than numpy's per-call overhead for
tens of species).  A test compares its residuals and Jacobians with the
general ones at random points.

The result is assembled from the solved free activities u: every species'
concentration and activity coefficient, each system's total, dissolved,
free amounts and distribution, saturation indices and amounts of solids,
gas pressures and uptakes, alkalinity.  Warnings and cautions are derived
from the result by :mod:`chem.notices` and :mod:`chem.cautions`; the solver
computes none.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from . import _kernel as K
from . import _native, water
from .model import (T_REF_C, AcidBaseSystem, Complex, Equilibrium, GasState, Ion, Mixture, SolidState,
                    Species, SystemState, charge_label)
from .problem import LN10, Problem, Structure, compile

_X_LO, _X_HI = -19.0, 4.0   # initial bracket on log10 a(H+) in the fast path


@dataclass(frozen=True)
class Tableau:
    """Components, species and formation constants of a mixture at its temperature.

    ``stoichiometry`` lists, per species, the count of each component (H+
    first); ``log_beta`` is log10 of each species' formation constant from
    the components at the mixture's temperature and I = 0.
    """

    components: tuple[str, ...]
    species: tuple[str, ...]
    stoichiometry: np.ndarray
    log_beta: np.ndarray
    charges: np.ndarray


def tableau(mixture: Mixture) -> Tableau:
    """The components-and-species formulation of ``mixture`` at its temperature."""
    prob = compile(mixture)
    st = prob.structure
    return Tableau(st.components, tuple(s.name for s in st.species), np.rint(st.nu).astype(int),
                   prob.log_k(), st.z.astype(int))


@functools.lru_cache(maxsize=1024)
def water_constants(t_c: float) -> tuple[float, float, float]:
    """(pKw, Debye–Hückel A, B) at ``t_c`` (cached)."""
    return (float(water.pkw(t_c)), float(water.debye_huckel_a(t_c)), float(water.debye_huckel_b(t_c)))


# --------------------------------------------------------------------------
# kernel inputs from a problem
# --------------------------------------------------------------------------

@functools.lru_cache(maxsize=256)
def layout_of(st: Structure) -> K.Layout:
    nsys = len(st.systems)
    ion_cols = [1 + nsys + k for k in range(len(st.ions))]
    names = [s.name for s in st.species]
    ion_rows = [names.index(i.name) for i in st.ions]
    return K.make_layout(st.nu, st.sys_rows, st.sys_comp, ion_cols, ion_rows)


def kernel_inputs(prob: Problem, *, t_c=None, totals=None, inert_i=None, pressures=None,
                  fixed_ph=None, fixed_ionic=None, allowed=None, inert_q=None) -> K.Inputs:
    """The kernel's inputs for ``prob`` at P points.

    Every keyword may give per-point values (leading axis P): temperatures,
    component totals, inert ionic strength, fixed-gas pressures (P, fixed
    gases), a pH held by a pH-stat (P,), an ionic strength held fixed (P,),
    which solids may form (P, solids).
    """
    st = prob.structure
    if (t_c is None and totals is None and inert_i is None and pressures is None and fixed_ph is None
            and fixed_ionic is None and allowed is None and inert_q is None and not st.fixed):
        return _single_inputs(prob)
    if totals is not None and inert_q is None and fixed_ph is None:
        # the proton row is solved as the charge balance, which needs the inert ions' charge
        # for exactly these totals: refuse rather than solve a different mixture
        raise ValueError("kernel_inputs: give inert_q (and inert_i) with per-point totals")
    t = np.atleast_1d(np.asarray(prob.temperature_c if t_c is None else t_c, dtype=float))
    tot = np.atleast_2d(prob.totals if totals is None else np.asarray(totals, dtype=float))
    p = max(t.size, tot.shape[0],
            1 if fixed_ph is None else np.size(fixed_ph),
            1 if pressures is None else np.atleast_2d(pressures).shape[0])
    t = np.broadcast_to(t, (p,))
    tot = np.broadcast_to(tot, (p, tot.shape[1]))
    if t.size and np.all(t == t[0]):
        t_single = float(t[0])
        lk = np.broadcast_to(st.log_k_at(t_single), (p, st.n_species))
        pkw, a0, b0 = water_constants(t_single)
        a = np.full(p, a0)
        b = np.full(p, b0)
    else:
        lk = st.logk.at(t)
        a = np.asarray(water.debye_huckel_a(t), dtype=float)
        b = np.asarray(water.debye_huckel_b(t), dtype=float)
        t_single = None
    lnk = LN10 * lk
    rows, rhs = [], []
    if st.fixed:
        pr = np.atleast_2d(prob.pressures if pressures is None else pressures)
        pr = np.broadcast_to(pr, (p, len(st.fixed)))
        kh = st.gas_kh.take(list(st.fixed)).at(t_single if t_single is not None else t)
        kh = np.broadcast_to(kh, (p, len(st.fixed)))
        for k, g in enumerate(st.fixed):
            r = st.gas_row[g]
            rows.append(st.nu[r])
            rhs.append(LN10 * kh[:, k] + np.log(pr[:, k]) - lnk[:, r])
    counter = None
    if fixed_ph is not None:
        e_h = np.zeros(st.n_components)
        e_h[0] = 1.0
        counter = len(rows)
        rows.append(e_h)
        rhs.append(-LN10 * np.broadcast_to(np.asarray(fixed_ph, dtype=float), (p,)))
    eq_rows = np.array(rows, dtype=float).reshape(len(rows), st.n_components)
    eq_rhs = np.column_stack(rhs) if rhs else np.zeros((p, 0))
    sol_a = st.sol_a
    if t_single is not None:
        cache = st.cache.setdefault("sol_b", {})
        row = cache.get(t_single)
        if row is None:
            row = cache[t_single] = LN10 * st.sol_logk.at(t_single)
        sol_b = np.broadcast_to(row, (p, sol_a.shape[0]))
    else:
        sol_b = LN10 * st.sol_logk.at(t)
    if allowed is None:
        allowed = st.sol_allowed
    allowed = np.broadcast_to(np.asarray(allowed, dtype=bool), (p, sol_a.shape[0]))
    ii = np.broadcast_to(np.asarray(prob.inert_i if inert_i is None else inert_i, dtype=float), (p,))
    fi = None if fixed_ionic is None else np.broadcast_to(np.asarray(fixed_ionic, dtype=float), (p,)).copy()
    iq = None
    if fixed_ph is None:     # a pH-stat's added acid or base carries charge the totals do not show
        iq = np.broadcast_to(np.asarray(prob.inert_q if inert_q is None else inert_q, dtype=float), (p,)).copy()
    return K.Inputs(nu=st.nu, z2=st.z2, size=st.size, model=st.model, lnk=np.ascontiguousarray(lnk),
                    w_hess=_w_hess(st),
                    totals=np.ascontiguousarray(tot), a=a, b=b, inert_i=np.array(ii), eq_rows=eq_rows,
                    eq_rhs=eq_rhs, sol_a=sol_a, sol_b=np.ascontiguousarray(sol_b), allowed=allowed,
                    fixed_ionic=fi, counter_row=counter, z_comp=st.z_comp if iq is not None else None,
                    inert_q=iq)


def _w_hess(st: Structure) -> np.ndarray:
    """ν_sj·ν_sk per species, flattened (the kernel's Hessian is c @ this); cached per structure."""
    w_hess = st.cache.get("w_hess")
    if w_hess is None:
        nu = st.nu
        w_hess = st.cache["w_hess"] = np.ascontiguousarray((nu[:, :, None] * nu[:, None, :]).reshape(nu.shape[0], -1))
    return w_hess


def _single_inputs(prob: Problem) -> K.Inputs:
    """:func:`kernel_inputs` of ``prob`` itself (one point, no fixed gas): what a single solve needs.

    Everything but the totals and the inert ions depends on the structure and
    the temperature only, and is kept per temperature (read-only arrays).
    """
    st = prob.structure
    t = prob.temperature_c
    cache = st.cache.setdefault("single", {})
    parts = cache.get(t)
    if parts is None:
        _, a0, b0 = water_constants(t)
        nc, nq = st.n_components, st.sol_a.shape[0]
        parts = dict(lnk=(LN10 * st.log_k_at(t))[None], a=np.array([a0]), b=np.array([b0]),
                     eq_rows=np.zeros((0, nc)), eq_rhs=np.zeros((1, 0)),
                     sol_b=np.ascontiguousarray((LN10 * st.sol_logk.at(t)).reshape(1, nq)),
                     allowed=np.asarray(st.sol_allowed, dtype=bool).reshape(1, nq).copy())
        for v in parts.values():
            v.setflags(write=False)
        if len(cache) > 256:
            cache.clear()
        cache[t] = parts
    return K.Inputs(nu=st.nu, z2=st.z2, size=st.size, model=st.model, w_hess=_w_hess(st), sol_a=st.sol_a,
                    totals=prob.totals[None], inert_i=np.array([prob.inert_i]), z_comp=st.z_comp,
                    inert_q=np.array([float(prob.inert_q)]), **parts)


def run_kernel(prob: Problem, inp: K.Inputs, *, u0=None, i0=None, max_iter: int = 200,
               fixed_ph=None) -> K.Result:
    """Starting values (unless given) and the kernel solve.

    A batch of a pure acid–base structure (no imposed pH or ionic strength)
    goes through the vectorised fast path first; the kernel takes any point
    it leaves unsettled.
    """
    if (prob.structure.fast and fixed_ph is None and inp.fixed_ionic is None and inp.points > 1
            and max_iter >= 40):
        from . import _fastbatch

        res = _fastbatch.solve(inp, layout_of(prob.structure))
        if res is not None:
            bad = np.nonzero(~res.converged)[0]
            if bad.size:
                sub = K._subset(inp, bad)
                again = run_kernel(prob, sub, max_iter=max_iter, fixed_ph=None) if sub.points == 1 else \
                    _general(prob, sub, max_iter)
                for name in ("u", "lng", "conc", "amounts"):
                    getattr(res, name)[bad] = getattr(again, name)
                res.ionic[bad] = again.ionic
                res.converged[bad] = again.converged
                res.residual[bad] = again.residual
            return res
    return _general(prob, inp, max_iter, u0=u0, i0=i0, fixed_ph=fixed_ph)


def _general(prob: Problem, inp: K.Inputs, max_iter: int, *, u0=None, i0=None, fixed_ph=None) -> K.Result:
    """The general kernel from starting values (unless given)."""
    if u0 is None and inp.points == 1 and _native.ready(inp.model):
        # the compiled iteration costs microseconds a step: start it where every component is free
        # (Newton on the convex objective converges from anywhere); the careful starting values
        # below are for a point it leaves unsettled
        h = None if fixed_ph is None else -LN10 * float(np.ravel(fixed_ph)[0])
        res = K.solve(inp, *K.crude_start(inp, h), max_iter=max_iter, crude=True)
        if bool(res.converged[0]) or not np.isfinite(res.u).all() and K.beyond_solution(inp)[0]:
            return res
    if u0 is None:
        h = None if fixed_ph is None else -LN10 * np.broadcast_to(np.asarray(fixed_ph, dtype=float),
                                                                  (inp.points,))
        u0, i_start = K.starting_values(inp, layout_of(prob.structure), h_fixed=h)
        if i0 is None:
            i0 = i_start
    if i0 is None:
        i0 = np.full(inp.points, prob.inert_i)
    return K.solve(inp, u0, np.broadcast_to(np.asarray(i0, dtype=float), (inp.points,)), max_iter=max_iter)


# --------------------------------------------------------------------------
# the fast path: pure acid–base, two unknowns (x, I), plain floats
# --------------------------------------------------------------------------

def fast_data(prob: Problem, lnk: np.ndarray) -> list:
    """Per system: (total, base charge, ln β per species, j per species, z² per species, size, z per species)."""
    st = prob.structure
    cache = st.cache.setdefault("fast", {})
    template = cache.get(prob.temperature_c)
    if template is None:
        template = []
        lk = lnk.tolist()
        nu_h = st.nu[:, 0].tolist()
        z2 = st.z2.tolist()
        z = st.z.tolist()
        for k, sys_ in enumerate(st.systems):
            rows = st.sys_rows[k]
            template.append((float(sys_.base_charge), [lk[r] for r in rows], [nu_h[r] for r in rows],
                             [z2[r] for r in rows], float(sys_.ion_size_a), [z[r] for r in rows]))
        if len(cache) > 64:
            cache.clear()
        cache[prob.temperature_c] = template
    totals = prob.totals.tolist()
    return [(totals[col], *tpl) for col, tpl in zip(st.sys_comp, template)]


def _fast_kernel(systems: list, q_strong: float, i_strong: float, kw: float, a: float, b: float, mdl):
    """The balance equations of a pure acid–base mixture as closures (see :func:`fast_solve`)."""
    ideal = mdl.ideal
    d1, dd1 = mdl.d1, mdl.dd1
    exp = math.exp
    ln10 = LN10
    al = ln10 * a
    size_h, size_oh = 9.0, 3.5

    def bases(ionic: float):
        """Per system: (total, z, ln β − ln γ per species, j, z², size, A·ln10·D)."""
        out = []
        k_of: dict[float, float] = {}
        for total, c, lnb, jj, z2s, size, zs in systems:
            k = k_of.get(size)
            if k is None:
                k = k_of[size] = 0.0 if ideal else al * d1(ionic, b, size)
            out.append((total, zs, [v + k * z2 for v, z2 in zip(lnb, z2s)], jj, z2s, size, k))
        return out

    def water_gammas(ionic: float) -> tuple[float, float]:
        if ideal:
            return 1.0, 1.0
        return exp(-al * d1(ionic, b, size_h)), exp(-al * d1(ionic, b, size_oh))

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
        """F, G = I_computed − I, and the four partial derivatives."""
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
                dd = dd_of[size] = 0.0 if ideal else al * dd1(ionic, b, size)
            f += total * zbar
            fx += total * var_j
            fi += total * dd * cov_jz2
            ez2 += total * z2bar
            gx += total * cov_jz2
            gi += total * dd * var_z2
        h = exp(xl)
        hc = h / g_h
        ohc = kw / (h * g_oh)
        dh_ = 0.0 if ideal else al * dd1(ionic, b, size_h)
        doh = 0.0 if ideal else al * dd1(ionic, b, size_oh)
        f += hc - ohc
        fx = ln10 * (fx + hc + ohc)
        fi += dh_ * hc - doh * ohc
        g = i_strong + 0.5 * (ez2 + hc + ohc) - ionic
        gx = 0.5 * ln10 * (gx + hc - ohc)
        gi = 0.5 * (gi + dh_ * hc + doh * ohc) - 1.0
        return f, g, fx, fi, gx, gi

    return bases, water_gammas, evaluate, joint


def fast_solve(systems: list, q_strong: float, i_strong: float, kw: float, a: float, b: float, mdl, *,
               tol: float = 1e-13, max_iter: int = 200, x0: float | None = None):
    """Solve a pure acid–base mixture; returns ``(x, ionic, residual, scale, converged, iterations)``.

    ``systems`` is :func:`fast_data`; x = log10 a(H+).  Phase 1: Newton on
    (x, I) started at the ionic strength of the totals; phase 2 (only when
    phase 1 did not settle): at fixed activity coefficients the charge
    balance is strictly increasing in x, so Newton kept inside a bracket
    (bisection whenever it leaves it) cannot fail; around it the ionic-strength
    fixed point.
    """
    ideal = mdl.ideal
    bases, water_gammas, evaluate, joint = _fast_kernel(systems, q_strong, i_strong, kw, a, b, mdl)
    ionic = i_strong + 0.5 * sum(p[0] * p[4][-1] for p in systems)
    if x0 is None:
        # start from the ideal answer at that ionic strength: a bracketed solve in x alone
        prepared = bases(ionic)
        g_h, g_oh = water_gammas(ionic)
        x, _, _, first = _bracketed_x(evaluate, prepared, g_h, g_oh, -7.0, 0.02)
        if not ideal and math.isfinite(first[2]) and first[2] > 0:
            ionic = first[2]        # the ionic strength the species at that x make
    else:
        x = min(max(x0, _X_LO), _X_HI)
    i_cap = 2.0 * (i_strong + sum(p[0] * max(p[4]) for p in systems)) + 1.0
    iterations = 0
    converged = False
    last = None
    dx_prev = di_prev = math.inf
    if not ideal:
        for _ in range(min(30, max_iter)):
            iterations += 1
            prepared = bases(ionic)
            g_h, g_oh = water_gammas(ionic)
            f, g, fx, fi, gx, gi = joint(x, ionic, prepared, g_h, g_oh)
            det = fx * gi - fi * gx
            if det == 0.0 or not math.isfinite(det):
                break
            dx = (f * gi - g * fi) / det
            d_i = (fx * g - gx * f) / det
            if abs(dx) > 1.0:            # far away: a damped step (never a two-cycle)
                scale = 1.0 / abs(dx)
                dx *= scale
                d_i *= scale
            x = min(max(x - dx, _X_LO), _X_HI)
            new_i = ionic - d_i
            if not new_i > 0.1 * ionic:
                new_i = 0.1 * ionic if ionic > 0 else i_strong
            ionic = min(new_i, i_cap)
            if abs(dx) < 1e-11 and abs(d_i) <= 1e-12 * ionic + 1e-17:
                converged = True
                break
            # quadratic convergence: a step below 1e-7 that shrank a thousandfold leaves an
            # error of order dx²/dx_prev < 1e-11 (the next step would be below round-off)
            if (abs(dx) < 1e-7 and abs(dx) < 1e-3 * abs(dx_prev)
                    and abs(d_i) <= 1e-8 * ionic and abs(d_i) < 1e-3 * abs(di_prev) + 1e-17):
                converged = True
                break
            dx_prev, di_prev = dx, d_i
    if converged:
        # the last Newton step was below 1e-11: the balance there is f − f_x·dx, below round-off
        last = (f - fx * dx, fx, ionic, 0.0, 0.0)
    else:
        for outer in range(60):
            prepared = bases(ionic)
            g_h, g_oh = water_gammas(ionic)
            x, inner_ok, its, last = _bracketed_x(evaluate, prepared, g_h, g_oh, x, tol,
                                                  budget=max(max_iter - iterations, 1))
            iterations += its
            new_i = last[2]
            if ideal:
                converged = inner_ok
                ionic = new_i
                break
            converged = inner_ok and abs(new_i - ionic) <= 1e-11 * new_i + 1e-16
            if converged or iterations >= max_iter:
                break
            new_i = min(new_i, i_cap)
            ionic = new_i if outer < 30 else 0.5 * (ionic + new_i)
    if ideal:
        ionic = last[2]
    f, _, _, hc, ohc = last
    scale = hc + ohc + abs(q_strong) + i_strong + sum(p[0] * math.sqrt(max(p[4])) for p in systems) + 1e-300
    return x, ionic, f, scale, converged, iterations


def _bracketed_x(evaluate, prepared, g_h, g_oh, x, tol, budget: int = 200):
    """Root of the charge balance in x at fixed activity coefficients: Newton inside a bracket."""
    lo, hi = -math.inf, math.inf
    its = 0
    ok = False
    last = None
    while its < budget:
        its += 1
        last = evaluate(x, prepared, g_h, g_oh)
        f, df = last[0], last[1]
        if f == 0.0:
            ok = True
            break
        if f < 0.0:
            lo = x
        else:
            hi = x
        newton = x - f / df if df > 0 else math.nan
        if abs(newton - x) <= tol * (1.0 + abs(x)):
            x = newton
            last = None
            ok = True
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
            ok = True
            break
    if last is None:
        last = evaluate(x, prepared, g_h, g_oh)
    return x, ok, its, last


def _bracket_end(evaluate, prepared, g_h, g_oh, direction):
    """A point beyond which the balance has the sign that brackets the root."""
    end = _X_LO if direction < 0 else _X_HI
    for _ in range(8):
        f = evaluate(end, prepared, g_h, g_oh)[0]
        if (f < 0) if direction < 0 else (f > 0):
            return end
        end += 10.0 * direction
    return end


def _state_from_x(prob: Problem, lnk: np.ndarray, x: float, ionic: float, a: float, b: float):
    """u, ln γ and concentrations of a pure acid–base problem from its solved (x, I)."""
    st = prob.structure
    lay = layout_of(st)
    lng = K.ln_gamma(_ONE_POINT(st, a, b), _ZERO, np.array([ionic]))[0]
    u = np.zeros(st.n_components)
    u[0] = x * LN10
    if lay.rows.size:
        w = np.where(lay.mask, lnk[lay.rows] - lng[lay.rows] + lay.j * u[0], -np.inf)
        top = w.max(axis=1)
        u[lay.comp] = np.log(prob.totals[lay.comp]) - (top + np.log(np.exp(w - top[:, None]).sum(axis=1)))
    if lay.ion_cols.size:          # strong ions a candidate solid names: all free
        u[lay.ion_cols] = np.log(prob.totals[lay.ion_cols]) + lng[lay.ion_rows]
    lnc = np.minimum(lnk - lng + st.nu @ u, 690.0)
    return u, lng, np.exp(lnc)


_ZERO = np.zeros(1, dtype=int)


class _ONE_POINT:      # the fields K.ln_gamma reads, for one point
    def __init__(self, st: Structure, a: float, b: float):
        self.model = st.model
        self.a = np.array([a])
        self.b = np.array([b])
        self.z2 = st.z2
        self.size = st.size


# --------------------------------------------------------------------------
# solve
# --------------------------------------------------------------------------

def solve(mixture: Mixture, *, tol: float = 1e-13, max_iter: int = 200) -> Equilibrium:
    """Solve the complete equilibrium of ``mixture``.

    Parameters
    ----------
    mixture : Mixture
        Ingredients, temperature (°C), activity model, fixed gases and the
        precipitation setting.
    tol : float, optional
        Convergence tolerance on log10 a(H+) of the acid–base fast path.
    max_iter : int, optional
        Cap on solver iterations; when reached, the result says
        ``converged=False`` instead of raising.

    Returns
    -------
    Equilibrium
        pH (= −log10 a(H+)), every species with concentration (mol/L),
        activity coefficient and fraction of its system, ionic strength, each
        system's totals and distribution, solids (saturation index, amount),
        gases (pressure, uptake), alkalinity, the remaining balance error,
        warnings and cautions.
    """
    from .notices import check_possible

    check_possible(mixture)
    prob = compile(mixture)
    st = prob.structure
    t = mixture.temperature_c
    pkw, a, b = water_constants(t)
    if st.fast and not _native.ready(st.model):
        # a pure acid–base mixture, no compiled iteration (with it, the general kernel is faster):
        # two unknowns (x, I) in plain floats
        lnk = LN10 * prob.log_k()
        data = fast_data(prob, lnk)
        # strong ions that only a candidate solid names react with nothing here: inert for the fast path
        q_s, i_s = prob.inert_q, prob.inert_i
        base = 1 + len(st.systems)
        for k, ion in enumerate(st.ions):
            q_s += ion.charge * float(prob.totals[base + k])
            i_s += 0.5 * ion.charge * ion.charge * float(prob.totals[base + k])
        try:
            x, ionic, resid, scale, converged, iterations = fast_solve(
                data, q_s, i_s, 10.0 ** -pkw, a, b, st.model, tol=tol, max_iter=max_iter)
        except OverflowError:          # activity coefficients beyond floating point: the general kernel
            converged, iterations = False, 0
        if converged or max_iter < 50:
            u, lng, c = _state_from_x(prob, lnk, x, ionic, a, b)
            nq = len(st.solids)
            state = _State(u, ionic, lng, c, np.zeros(nq), np.zeros(0), converged, iterations,
                           abs(resid) / scale if scale > 0 else 0.0)
            return assemble(prob, state)
        # the fast path did not settle (an activity model far outside its range): the general kernel,
        # whose bracketed ionic-strength search cannot cycle
    inp = kernel_inputs(prob)
    res = run_kernel(prob, inp, max_iter=max_iter)
    state = _State(res.u[0], float(res.ionic[0]), res.lng[0], res.conc[0], res.amounts[0], res.eq_mult[0],
                   bool(res.converged[0]), res.iterations, float(res.residual[0]))
    return assemble(prob, state)


@dataclass(frozen=True)
class _State:
    u: np.ndarray
    ionic: float
    lng: np.ndarray
    conc: np.ndarray
    amounts: np.ndarray
    eq_mult: np.ndarray
    converged: bool
    iterations: int
    residual: float
    """Largest relative mass-balance residual."""


def state_of(res: K.Result, i: int) -> _State:
    return _State(res.u[i], float(res.ionic[i]), res.lng[i], res.conc[i], res.amounts[i], res.eq_mult[i],
                  bool(res.converged[i]), res.iterations, float(res.residual[i]))


def _templates(st: Structure):
    """Per-structure pieces of the result that do not depend on the amounts (cached on the structure)."""
    tpl = st.cache.get("assemble")
    if tpl is not None:
        return tpl
    rows = []
    for r, info in enumerate(st.species):
        if info.kind == "strong":
            continue
        if info.kind == "water":
            rows.append((r, info.name, "water", info.protons, int(st.z[r]), (), (), -1))
        elif info.kind == "system":
            sys_ = info.owner
            col = st.sys_comp[st.systems.index(sys_)]
            rows.append((r, info.name, sys_.name, info.protons, int(st.z[r]), (), (), col))
        else:
            cx = info.owner
            rows.append((r, info.name, "complex", None, int(st.z[r]),
                         tuple((s.name, n) for s, n in cx.systems_held()),
                         tuple((i.name, n) for i, n in cx.ions_held()), -1))
    ion_rows = {info.name: r for r, info in enumerate(st.species) if info.kind == "strong"}
    systems = []
    for k, sys_ in enumerate(st.systems):
        col = st.sys_comp[k]
        holders = [(int(r), float(st.nu[r, col]), st.species[r].name) for r in np.nonzero(st.nu[:, col])[0]]
        solids = [(q, float(st.sol_a[q, col]), so.name) for q, so in enumerate(st.solids) if st.sol_a[q, col]]
        systems.append((sys_, col, holders, list(st.sys_rows[k]), solids))
    tpl = (rows, ion_rows, systems)
    st.cache["assemble"] = tpl
    return tpl


def assemble(prob: Problem, state: _State) -> Equilibrium:
    """The :class:`Equilibrium` of a solved problem."""
    from .cautions import cautions_for
    from .notices import warnings_for

    st = prob.structure
    mixture = prob.mixture
    t = prob.temperature_c
    pkw, a, b = water_constants(t)
    u = state.u
    c_arr = state.conc
    zero_comp = prob.zero
    if zero_comp.any():
        # a species holding a component whose total is really zero has none of it
        holds_zero = (st.nu[:, zero_comp] != 0).any(axis=1)
        c_arr = np.where(holds_zero, 0.0, c_arr)
    c = c_arr.tolist()
    c_raw = state.conc.tolist()
    gamma = np.exp(state.lng).tolist()
    totals = prob.totals.tolist()
    ph = -float(u[0]) / LN10
    rows, ion_rows, sys_tpl = _templates(st)
    # a fixed gas exchanges material: then a system's total is what is there at equilibrium
    denominator = list(totals)
    if st.fixed:
        amounts_arr = state.amounts if state.amounts.size else np.zeros(len(st.solids))
        there = (c_arr @ st.nu + amounts_arr @ st.sol_a).tolist() if st.solids else (c_arr @ st.nu).tolist()
        for col in np.nonzero(st.supplied)[0]:
            denominator[col] = there[col] if there[col] > 0 else totals[col]
    species: list[Species] = []
    for r, name, sys_name, protons, z, holds, ions, col in rows:
        frac = None
        if col >= 0:
            tot = denominator[col]
            frac = min(c_raw[r] / tot, 1.0) if tot > 0 else 0.0
        species.append(Species(name, sys_name, protons, z, c[r], gamma[r], frac, holds, ions))
    mdl = st.model
    ionic = state.ionic
    for ion, total in mixture.strong_ions():
        r = ion_rows.get(ion.name)
        if r is not None:
            species.append(Species(ion.name, "strong", 0, ion.charge, c[r], gamma[r], None))
        else:
            lg = 0.0 if mdl.ideal else -a * ion.charge ** 2 * mdl.d1(ionic, b, ion.ion_size_a)
            species.append(Species(ion.name, "strong", 0, ion.charge, float(total), 10.0 ** lg, None))

    amounts = state.amounts.tolist() if state.amounts.size else []
    gas_uptake = {}
    for k, g in enumerate(st.fixed):
        gas_uptake[g] = -float(state.eq_mult[k]) if state.eq_mult.size > k else 0.0
    zero = zero_comp.tolist()
    systems_out: list[SystemState] = []
    held = (c_arr @ st.nu).tolist()                  # dissolved amount of every component
    for sys_, col, holders, own, solids in sys_tpl:
        dissolved = held[col]
        precip = math.fsum(n * amounts[q] for q, n, _ in solids) if amounts else 0.0
        added = 0.0 if zero[col] else totals[col]
        total = dissolved + precip if st.fixed else added
        free = math.fsum([c[r] for r in own])
        dist = [(name, n * c[r] / total if total > 0 else 0.0) for r, n, name in holders]
        dist += [(name, n * amounts[q] / total if total > 0 else 0.0) for q, n, name in solids
                 if amounts and amounts[q] > 0]
        dist.sort(key=lambda t_: -t_[1])
        systems_out.append(SystemState(sys_.name, total, dissolved, free, tuple(dist), sys_.is_metal))

    solids_out = []
    if st.solids:
        si = (st.sol_a @ u / LN10 - st.value_at("sol_logk", t)).tolist()
        ksp = st.value_at("sol_ksp", t).tolist()
        allowed = st.sol_allowed.tolist()
        for q, so in enumerate(st.solids):
            amt = amounts[q] if amounts else 0.0
            s_i = si[q]
            if amt > 0 and abs(s_i) < 1e-9:
                s_i = 0.0
            solids_out.append(SolidState(so.name, so.formula, s_i, ksp[q], amt, allowed[q]))

    gases_out = []
    if st.gases:
        kh = st.value_at("gas_kh", t)
        lnk = LN10 * prob.log_k()
        fixed_p = dict(zip(st.fixed, prob.pressures.tolist()))
        for g, ga in enumerate(st.gases):
            r = st.gas_row[g]
            if g in fixed_p:
                p_atm = fixed_p[g]
                up = gas_uptake.get(g, 0.0)
            else:
                p_atm = math.exp(float(lnk[r] + st.nu[r] @ u) - LN10 * float(kh[g]))
                up = 0.0
            gases_out.append(GasState(ga.name, p_atm, g in fixed_p, c[r], up, ga.exposure_limit_ppm))

    alkalinity = float(c_arr @ st.alk_level)
    # charge balance, summed from species charges (the reported balance error)
    q_all = float(c_arr @ st.z) + prob.inert_q
    message = ("converged" if state.converged else
               f"not converged after {state.iterations} iterations (relative balance error {state.residual:.1e})")
    eq = Equilibrium(mixture=mixture, pH=ph, pOH=pkw - ph, pKw=pkw, ionic_strength=ionic,
                     converged=state.converged, balance_error=q_all, iterations=state.iterations,
                     message=message, species=tuple(species), systems=tuple(systems_out),
                     solids=tuple(solids_out), gases=tuple(gases_out), alkalinity=alkalinity)
    object.__setattr__(eq, "_state", state)
    object.__setattr__(eq, "_problem", prob)
    object.__setattr__(eq, "warnings", tuple(warnings_for(eq, prob)))
    object.__setattr__(eq, "cautions", tuple(cautions_for(eq)))
    return eq


# --------------------------------------------------------------------------
# derivatives at the solution (implicit-function theorem)
# --------------------------------------------------------------------------

def derivatives(eq: Equilibrium, d_totals=None, d_inert_i: float = 0.0, d_lnk=None) -> np.ndarray:
    """Change of (u, I) per unit change of one parameter, at the solution of ``eq``.

    ``d_totals`` (nc,): change of each component total; ``d_inert_i``: of
    the inert ionic strength; ``d_lnk`` (ns,): of each species' ln K.
    Returns (nc + 1,): du (ln free activities) then dI.  Exact for the model
    (activity corrections, present solids and fixed gases included).
    """
    prob: Problem = eq._problem  # type: ignore[attr-defined]
    state: _State = eq._state    # type: ignore[attr-defined]
    st = prob.structure
    inp = kernel_inputs(prob)
    res = K.Result(u=state.u[None], ionic=np.array([state.ionic]), lng=state.lng[None], conc=state.conc[None],
                   amounts=state.amounts[None] if state.amounts.size else np.zeros((1, len(st.solids))),
                   eq_mult=state.eq_mult[None] if state.eq_mult.size else np.zeros((1, inp.eq_rows.shape[0])),
                   converged=np.array([state.converged]), residual=np.array([state.residual]), iterations=0)
    dt = None if d_totals is None else np.asarray(d_totals, dtype=float)[None]
    dl = None if d_lnk is None else np.asarray(d_lnk, dtype=float)[None]
    y = K.sensitivity(inp, res, dt, np.array([d_inert_i]), None, dl)[0]
    return y[:st.n_components + 1]


def buffer_capacity_at(source: Equilibrium | Mixture) -> float:
    """Buffer capacity of a mixture at its own pH, mol/(L·pH).

    β = dC_b/dpH for a strong monovalent base (inert counter-ion) added
    without change of volume, exact for the model (activity corrections,
    complexes, solids that stay saturated and fixed gases included): the
    implicit-function theorem at the solved state.  It agrees with
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
    nc = source._problem.structure.n_components  # type: ignore[attr-defined]
    d_t = np.zeros(nc)
    d_t[0] = -1.0                 # base removes protons from the H+ total
    du = derivatives(source, d_t, 0.5)
    dph = -du[0] / LN10
    return float(1.0 / dph) if dph != 0 else math.inf


def species_label(system: AcidBaseSystem, k: int) -> str:
    """Generic label for a species of a custom system with no names given."""
    return f"{system.name} ({charge_label(system.charge_of(k)) or '0'})"


__all__ = ["Tableau", "assemble", "buffer_capacity_at", "derivatives", "kernel_inputs", "run_kernel", "solve",
           "state_of", "tableau", "water_constants"]

# keep names used elsewhere importable
_ = (Complex, Ion, T_REF_C)
