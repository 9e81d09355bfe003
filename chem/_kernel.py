"""The equilibrium solver: one set of equations with a batch axis.

Given a compiled :class:`~chem.problem.Structure` (stoichiometry ν, charges,
sizes) and, per point, ln K, totals T, Debye–Hückel A and B, the kernel finds
u = ln(free component activities) and the ionic strength I.

At fixed activity coefficients the equilibrium minimises the strictly convex

    f(u) = Σ_s c_s(u) − Σ_j T_j u_j,      c_s = exp(ln K_s − ln γ_s + ν_s·u),

whose gradient is the mass-balance residual Σ_s ν_sj c_s − T_j and whose
Hessian Σ_s c_s ν_s ν_sᵀ is positive definite.  Solids are linear
inequalities A_p·u ≤ b_p (saturation index ≤ 0) and fixed gases (or a pH
held by a pH-stat) linear equalities E_k·u = e_k; their Lagrange multipliers
are the amounts precipitated and taken up.  The iteration is a primal
active-set Newton method:

* the Newton step solves the KKT system of the working set (active solids
  and equalities) — it keeps the equalities and active solids exactly;
* the step is limited so that no inactive solid becomes supersaturated (the
  first one it would cross joins the working set — so the working set never
  holds more independent constraints than there are components: the phase
  rule), and shortened by backtracking until f decreases (Armijo);
* when the step vanishes, an active solid with a negative amount leaves.

The ionic strength is updated from the species after every step (fast; the
usual case converges in a handful of steps); points that do not settle go
to a nested scheme that cannot cycle: the inner solve at fixed I to
convergence, and I from a bracketed (Illinois) root search of
R(I) = I_computed(I) − I, which is positive at 0 and negative at the cap.

Every array carries a leading batch axis P, so one call solves a whole
titration or sweep, and ``solve`` is a batch of one.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .limits import PINNED_ACTIVITY_MAX

_LN10 = math.log(10.0)
#: Largest change of any ln activity in one Newton step (about 3.5 decades).
STEP_MAX = 8.0
#: Newton steps below this (ln units) are converged (the next would be ~1e-18).
STEP_TOL = 1e-9
_EXP_MAX = 690.0


@dataclass
class Inputs:
    """Everything the kernel needs, per point where it varies (leading axis P)."""

    nu: np.ndarray          # (ns, nc)
    z2: np.ndarray          # (ns,)
    size: np.ndarray        # (ns,)
    model: object           # ActivityModel
    lnk: np.ndarray         # (P, ns) natural-log formation constants, I = 0
    totals: np.ndarray      # (P, nc)
    a: np.ndarray           # (P,) Debye–Hückel A
    b: np.ndarray           # (P,) Debye–Hückel B
    inert_i: np.ndarray     # (P,) ionic strength of inert ions
    eq_rows: np.ndarray     # (ne, nc) equality constraints E u = e
    eq_rhs: np.ndarray      # (P, ne)
    sol_a: np.ndarray       # (nq, nc)
    sol_b: np.ndarray       # (P, nq)
    allowed: np.ndarray     # (P, nq) bool: which solids may form
    fixed_ionic: np.ndarray | None = None   # (P,) hold I at these values (no self-consistency)
    w_hess: np.ndarray | None = None        # (ns, nc·nc) ν_sj·ν_sk: the Hessian is c @ w_hess
    z_comp: np.ndarray | None = None        # (nc,) charge of each component; with inert_q, the charge balance
    inert_q: np.ndarray | None = None       # (P,) net charge of the inert ions
    counter_row: int | None = None
    """An equality row whose multiplier is strong acid/base added with a monovalent counter-ion (pH-stat)."""

    @property
    def points(self) -> int:
        return self.lnk.shape[0]


@dataclass
class Result:
    u: np.ndarray           # (P, nc)
    ionic: np.ndarray       # (P,)
    lng: np.ndarray         # (P, ns) natural-log activity coefficients
    conc: np.ndarray        # (P, ns)
    amounts: np.ndarray     # (P, nq) solid amounts (0 when absent)
    eq_mult: np.ndarray     # (P, ne) multipliers of the equalities
    converged: np.ndarray   # (P,)
    residual: np.ndarray    # (P,) largest relative mass-balance residual
    iterations: int


# --------------------------------------------------------------------------
# pieces
# --------------------------------------------------------------------------

def ln_gamma(inp: Inputs, idx, ionic: np.ndarray) -> np.ndarray:
    """Natural-log activity coefficients (len(idx), ns) at ionic strengths ``ionic``."""
    mdl = inp.model
    if mdl.ideal:
        return np.zeros((ionic.shape[0], inp.z2.shape[0]))
    a = inp.a[idx][:, None]
    if mdl.size_dependent:
        d = mdl.d(ionic[:, None], inp.b[idx][:, None], inp.size[None, :])
    else:
        d = mdl.d(ionic, None, None)[:, None]
    return -_LN10 * a * inp.z2[None, :] * d


def d_ln_gamma(inp: Inputs, idx, ionic: np.ndarray) -> np.ndarray:
    """d ln γ / dI, shaped (len(idx), ns)."""
    mdl = inp.model
    if mdl.ideal:
        return np.zeros((ionic.shape[0], inp.z2.shape[0]))
    a = inp.a[idx][:, None]
    if mdl.size_dependent:
        dd = mdl.dd(ionic[:, None], inp.b[idx][:, None], inp.size[None, :])
    else:
        dd = mdl.dd(ionic, None, None)[:, None]
    return -_LN10 * a * inp.z2[None, :] * dd


def concentrations(inp: Inputs, idx, u: np.ndarray, lng: np.ndarray) -> np.ndarray:
    lnc = inp.lnk[idx] - lng + u @ inp.nu.T
    np.minimum(lnc, _EXP_MAX, out=lnc)
    return np.exp(lnc)


def ionic_of(inp: Inputs, idx, conc: np.ndarray, eq_mult: np.ndarray | None = None) -> np.ndarray:
    """The ionic strength the species (and inert ions, and a pH-stat's counter-ion) make."""
    i = 0.5 * (conc @ inp.z2) + inp.inert_i[idx]
    if inp.counter_row is not None and eq_mult is not None and eq_mult.shape[1]:
        i = i + 0.5 * np.abs(eq_mult[:, inp.counter_row])
    return i


def _objective(inp: Inputs, idx, u, lng) -> tuple[np.ndarray, np.ndarray]:
    c = concentrations(inp, idx, u, lng)
    return c.sum(axis=1) - np.einsum("pj,pj->p", inp.totals[idx], u), c


def _kkt_step(inp: Inputs, idx, u, c, active, joint=None, ionic=None, lam_prev=None):
    """Newton direction d, ionic-strength step dI and multipliers (λ of equalities, λ of solids).

    Solves [[H, Cᵀ], [C, 0]] [d; λ] = [−g; r] with H = Σ c ν νᵀ, C the
    equality rows and the active solids' rows, r their residuals; inactive
    solids get an identity row (λ = 0).  Where ``joint`` is set, the ionic
    strength is an unknown too, with its own equation I_computed − I = 0 and
    d ln γ/dI in the mass balances (Newton on the whole system, quadratic
    near the solution); elsewhere its row is the identity (dI = 0).  Rows and
    columns are scaled by the diagonal of H so components from 1e-200 to
    10 M sit in one system.
    """
    nu = inp.nu
    p = u.shape[0]
    nc = nu.shape[1]
    ne = inp.eq_rows.shape[0]
    nq = inp.sol_a.shape[0]
    g = c @ nu - inp.totals[idx]
    if inp.w_hess is not None:
        hess = (c @ inp.w_hess).reshape(p, nc, nc)
    else:
        hess = np.matmul(nu.T, c[:, :, None] * nu[None, :, :])
    diag = np.einsum("pjj->pj", hess)
    # scale by the diagonal, but never beyond a trillionth of the component's total: a component held
    # entirely in a solid has almost no free species, and an unbounded scale would swamp its row
    floor = np.maximum(1e-12 * np.abs(inp.totals[idx]), 1e-300)
    s = 1.0 / np.sqrt(np.maximum(diag, floor))
    ji = 1 if joint is not None and joint.any() else 0
    o = nc + ji                                      # first multiplier column
    n = o + ne + nq
    k = np.zeros((p, n, n))
    k[:, :nc, :nc] = hess * s[:, :, None] * s[:, None, :]
    k[:, np.arange(nc), np.arange(nc)] += 1e-14
    rhs = np.zeros((p, n))
    rhs[:, :nc] = -g * s
    if ne:
        e = inp.eq_rows[None, :, :] * s[:, None, :]              # (p, ne, nc)
        norm = 1.0 / np.maximum(np.linalg.norm(e, axis=2), 1e-300)
        e = e * norm[:, :, None]
        k[:, o:o + ne, :nc] = e
        k[:, :nc, o:o + ne] = np.transpose(e, (0, 2, 1))
        rhs[:, o:o + ne] = (inp.eq_rhs[idx] - u @ inp.eq_rows.T) * norm
    else:
        norm = np.zeros((p, 0))
    if nq:
        a = inp.sol_a[None, :, :] * s[:, None, :]                # (p, nq, nc)
        qn = 1.0 / np.maximum(np.linalg.norm(a, axis=2), 1e-300)
        a = a * qn[:, :, None] * active[:, :, None]
        k[:, o + ne:, :nc] = a
        k[:, :nc, o + ne:] = np.transpose(a, (0, 2, 1))
        ii = np.arange(o + ne, n)
        k[:, ii, ii] = np.where(active, 0.0, 1.0)
        rhs[:, o + ne:] = np.where(active, (inp.sol_b[idx] - u @ inp.sol_a.T) * qn, 0.0)
    else:
        qn = np.zeros((p, 0))
    if ji:
        jm = joint[:, None]
        dlng = d_ln_gamma(inp, idx, ionic)                        # (p, ns)
        cz = c * inp.z2
        k[:, :nc, nc] = np.where(jm, ((c * -dlng) @ nu) * s, 0.0)
        k[:, nc, :nc] = np.where(jm, 0.5 * (cz @ nu) * s, 0.0)
        k[:, nc, nc] = np.where(joint, 0.5 * (cz * -dlng).sum(axis=1) - 1.0, 1.0)
        # the pH-stat's counter-ion enters through its multiplier's column below (the system
        # solves for the new multiplier itself, not a change of it)
        counter = inp.counter_row is not None and ne and lam_prev is not None and lam_prev.shape[1]
        i_comp = ionic_of(inp, idx, c, None)
        rhs[:, nc] = np.where(joint, -(i_comp - ionic), 0.0)
        if counter:
            mu = lam_prev[:, inp.counter_row]
            k[:, nc, o + inp.counter_row] = np.where(joint, np.where(mu >= 0, 0.5, -0.5)
                                                     * norm[:, inp.counter_row], 0.0)
    if inp.z_comp is not None and nc > 1:
        # The H+ row is replaced by the charge balance (row H + Σ_j z_j·row j, the same equations since
        # every reagent is neutral), computed from the species' charges directly: no cancellation of
        # large proton totals, so the charge balance closes to round-off of the charges it carries.
        zc = inp.z_comp
        q = c @ (nu @ zc) + inp.inert_q[idx]
        mix_row = (s[:, :1] / s[:, 1:]) * zc[None, 1:]            # (p, nc-1)
        k[:, 0, :] += np.einsum("pj,pjk->pk", mix_row, k[:, 1:nc, :])
        rhs[:, 0] = -s[:, 0] * q
    try:
        if p == 1:          # a single system: the plain solve skips the batched gufunc's set-up (~30 µs)
            sol = np.linalg.solve(k[0], rhs[0])[None]
        else:
            sol = np.linalg.solve(k, rhs[:, :, None])[:, :, 0]
    except np.linalg.LinAlgError:
        sol = _lstsq(k, rhs)
    d = sol[:, :nc] * s
    d_i = sol[:, nc] if ji else np.zeros(p)
    lam_e = sol[:, o:o + ne] * norm
    lam_s = np.where(active, sol[:, o + ne:] * qn, 0.0) if nq else np.zeros((p, 0))
    return d, d_i, lam_e, lam_s, g


def _lstsq(k: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    out = np.empty_like(rhs)
    for i in range(k.shape[0]):
        try:
            out[i] = np.linalg.solve(k[i], rhs[i])
        except np.linalg.LinAlgError:
            out[i] = np.linalg.lstsq(k[i], rhs[i], rcond=None)[0]
    return out


def _max_step(inp: Inputs, idx, u, d, active):
    """Largest α ≤ 1 keeping every inactive allowed solid at SI ≤ 0, and which solid blocks (or -1)."""
    p = u.shape[0]
    if not inp.sol_a.shape[0]:
        return np.ones(p), np.full(p, -1)
    ad = d @ inp.sol_a.T
    slack = inp.sol_b[idx] - u @ inp.sol_a.T
    cand = (~active) & inp.allowed[idx] & (ad > 1e-300)
    with np.errstate(divide="ignore", invalid="ignore"):
        alpha = np.where(cand, np.maximum(slack, 0.0) / ad, np.inf)
    best = alpha.min(axis=1)
    # solids that block within round-off of each other (symmetric ones do): the first of them, so that
    # the choice does not hang on the last bit of the step (the compiled iteration chooses the same)
    j = np.argmax(alpha <= best[:, None] * (1.0 + 1e-9), axis=1)
    block = np.where(best < 1.0, j, -1)
    return np.minimum(best, 1.0), block


# --------------------------------------------------------------------------
# the iteration
# --------------------------------------------------------------------------

def _subset(inp: Inputs, w: np.ndarray) -> Inputs:
    """The inputs of the points ``w`` only (one copy per change of the working set)."""
    if w.size == inp.points and (w.size == 0 or (w[0] == 0 and w[-1] == w.size - 1)):
        return inp
    return replace(inp, lnk=inp.lnk[w], totals=inp.totals[w], a=inp.a[w], b=inp.b[w], inert_i=inp.inert_i[w],
                   eq_rhs=inp.eq_rhs[w], sol_b=inp.sol_b[w], allowed=inp.allowed[w],
                   fixed_ionic=None if inp.fixed_ionic is None else inp.fixed_ionic[w],
                   inert_q=None if inp.inert_q is None else inp.inert_q[w])


def _iterate(inp: Inputs, idx: np.ndarray, u: np.ndarray, ionic: np.ndarray, active: np.ndarray,
             *, freeze_ionic: bool, max_iter: int):
    """Newton iterations for the points ``idx``; returns (u, ionic, active, lam_e, lam_s, converged, its)."""
    p = idx.size
    ne = inp.eq_rows.shape[0]
    nq = inp.sol_a.shape[0]
    lam_e = np.zeros((p, ne))
    lam_s = np.zeros((p, nq))
    converged = np.zeros(p, dtype=bool)
    work = np.arange(p)                     # positions still iterating
    its = 0
    update_i = not freeze_ionic and not inp.model.ideal
    # damping of the ionic-strength update: halved each time the update changes sign
    omega = np.ones(p)
    last_di = np.zeros(p)
    gave_up = np.zeros(p, dtype=bool)
    near_prev = np.zeros(p, dtype=bool)
    last_step = np.full(p, np.inf)
    cap_i = _ionic_cap(inp, idx)
    base = _subset(inp, idx)
    sub, sub_work = base, work
    local = np.arange(p)
    abs_nu = np.abs(inp.nu)
    for its in range(1, max_iter + 1):
        if sub_work is not work:
            sub, sub_work = _subset(base, work), work
            local = np.arange(work.size)
        uw, iw, aw = u[work], ionic[work], active[work]
        tot = sub.totals
        lng = ln_gamma(sub, local, iw)
        c = concentrations(sub, local, uw, lng)
        f0 = c.sum(axis=1) - (tot * uw).sum(axis=1)
        joint = near_prev[work] if update_i else None
        d, d_i, le, ls, g = _kkt_step(sub, local, uw, c, aw, joint, iw, lam_e[work] if ne else None)
        # step length: cap, blocking solids, Armijo backtracking on f
        big = np.abs(d).max(axis=1)
        cap = np.minimum(1.0, STEP_MAX / np.maximum(big, 1e-300))
        if nq:
            amax, block = _max_step(sub, local, uw, d, aw)
            alpha = np.minimum(cap, amax)
        else:
            alpha = cap
        slope = (g * d).sum(axis=1)
        scale = c.sum(axis=1) + np.abs((tot * uw).sum(axis=1)) + 1e-300
        trust = (slope < 0) & (np.abs(slope) > 1e-13 * scale)
        if joint is not None:
            trust &= ~joint                   # whole-system Newton steps near the solution: taken as they are
        u_new = uw + alpha[:, None] * d
        c_new = concentrations(sub, local, u_new, lng)
        if trust.any():
            f1 = c_new.sum(axis=1) - (tot * u_new).sum(axis=1)
            bad = trust & ~(f1 <= f0 + 1e-4 * alpha * slope)
            for _ in range(50):
                if not bad.any():
                    break
                alpha = np.where(bad, 0.5 * alpha, alpha)
                b_idx = np.nonzero(bad)[0]
                u_try = uw[b_idx] + alpha[b_idx, None] * d[b_idx]
                c_try = concentrations(sub, local[b_idx], u_try, lng[b_idx])
                f1b = c_try.sum(axis=1) - (tot[b_idx] * u_try).sum(axis=1)
                ok = f1b <= f0[b_idx] + 1e-4 * alpha[b_idx] * slope[b_idx]
                u_new[b_idx] = u_try
                c_new[b_idx] = c_try
                bad[b_idx[ok]] = False
                if np.all(alpha[b_idx] * big[b_idx] < 1e-14):
                    bad[b_idx] = False
        if nq:
            blocked = (block >= 0) & (alpha >= amax * (1 - 1e-12)) & (amax < cap)
            if blocked.any():
                rows = np.nonzero(blocked)[0]
                aw[rows, block[rows]] = True
        u[work] = u_new
        # converged: a full Newton step below 1e-9, or one below 1e-7 that no longer shrinks (the
        # answer is then set to round-off: a charge balance of molar ions around 1e-7 M of H+)
        step_now = alpha * big
        # a component almost wholly held in solids moves its free amount by a step that no longer
        # changes any balance: weigh each component's step by its free share of its total
        held = c @ abs_nu
        share = held / np.maximum(held + np.abs(tot), 1e-300)
        impact = alpha * (np.abs(d) * np.maximum(share, 1e-12)).max(axis=1)
        small = (alpha == 1.0) & ((step_now < STEP_TOL) | (impact < STEP_TOL)
                                  | ((step_now < 1e-7) & (step_now > 0.1 * last_step[work])))
        last_step[work] = step_now
        if ne:
            lam_e[work] = le
        if nq:
            lam_s[work] = ls
        # ionic strength from the new species (lagged activity coefficients), once the balances are
        # within a per cent: far from the solution the species are no guide to it
        if update_i:
            r = g
            if ne:
                r = r + le @ inp.eq_rows
            if nq:
                r = r + ls @ inp.sol_a
            rel = (np.abs(r) / np.maximum(c @ abs_nu + np.abs(tot), 1e-300)).max(axis=1)
            # once close, stay with the whole-system step (an ionic-strength update itself moves the
            # balances by a per cent or so; losing the joint step then would cost every other step)
            near = (rel < 1e-2) | (near_prev[work] & (rel < 0.3))
            i_new = ionic_of(sub, local, c_new, le)
            if sub.fixed_ionic is not None:
                i_new = sub.fixed_ionic
            i_new = np.where(np.isfinite(i_new), i_new if inp.counter_row is not None
                             else np.minimum(i_new, cap_i[work]), iw)
            delta = np.where(near, i_new - iw, 0.0)
            flip = delta * last_di[work] < 0
            om = np.where(flip, 0.5 * omega[work], np.minimum(1.0, omega[work] * 1.25))
            omega[work] = om
            last_di[work] = np.where(near, delta, last_di[work])
            lagged = iw + om * delta
            jw = joint & near
            stepped = np.maximum(iw + alpha * d_i, 0.1 * iw)
            if inp.counter_row is None:
                stepped = np.minimum(stepped, cap_i[work])
            ionic[work] = np.where(jw, stepped, lagged)
            gave_up[work] = (om < 1.0 / 256) & ~jw
            di = np.where(jw, np.abs(alpha * d_i) + np.abs(i_new - stepped), np.where(near, np.abs(delta), np.inf))
            near_prev[work] = near
            done = small & (di <= 2e-14 * np.maximum(ionic[work], 1e-300) + 1e-18)
        else:
            done = small
        # at the working set's optimum: release an active solid with a negative amount
        if nq:
            floor = -1e-14 * np.maximum(np.abs(tot).max(axis=1), 1e-300)
            neg = done & np.any(aw & (ls < floor[:, None]), axis=1)
            if neg.any():
                rows = np.nonzero(neg)[0]
                worst = np.argmin(np.where(aw[rows], ls[rows], np.inf), axis=1)
                aw[rows, worst] = False
                done &= ~neg
            active[work] = aw
        if done.all() and not gave_up[work].any():
            converged[work] = True
            break
        converged[work[done]] = True
        keep = ~done & ~gave_up[work]
        if not keep.all():
            work = work[keep]
        if work.size == 0:
            break
    return u, ionic, active, lam_e, lam_s, converged, its


_PINNED: dict = {}


def _pinned(eq_rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Components whose ln activity the equalities fix by themselves: (columns, W) with u[cols] = rhs @ W."""
    key = (eq_rows.shape, eq_rows.tobytes())
    hit = _PINNED.get(key)
    if hit is None:
        nc = eq_rows.shape[1]
        cols, ws = [], []
        for j in range(1, nc):              # column 0 (H+) is pinned only by a held pH, always a real value
            e = np.zeros(nc)
            e[j] = 1.0
            w, *_ = np.linalg.lstsq(eq_rows.T, e, rcond=None)
            if np.allclose(eq_rows.T @ w, e, atol=1e-10):
                cols.append(j)
                ws.append(w)
        hit = (np.array(cols, dtype=int), np.array(ws).T if ws else np.zeros((eq_rows.shape[0], 0)))
        if len(_PINNED) > 64:
            _PINNED.clear()
        _PINNED[key] = hit
    return hit


def beyond_solution(inp: Inputs) -> np.ndarray:
    """(P,) bool: points where the equalities alone pin a free activity above :data:`PINNED_ACTIVITY_MAX`.

    A solid held in excess at a held pH fixes its metal's free activity
    (tenorite at pH 2: about 4000 mol/L of Cu2+); no amount of iterating
    finds a solution there, so such points are reported unconverged at once.
    """
    p = inp.points
    if not inp.eq_rows.shape[0]:
        return np.zeros(p, dtype=bool)
    cols, w = _pinned(inp.eq_rows)
    if not cols.size:
        return np.zeros(p, dtype=bool)
    with np.errstate(invalid="ignore"):
        return np.any(inp.eq_rhs @ w > math.log(PINNED_ACTIVITY_MAX), axis=1)


def solve(inp: Inputs, u0: np.ndarray, i0: np.ndarray, *, max_iter: int = 200,
          active0: np.ndarray | None = None, crude: bool = False) -> Result:
    """Solve every point of ``inp`` from the starting values ``u0`` (P, nc) and ``i0`` (P,).

    Points :func:`beyond_solution` flags are not iterated: they come back
    unconverged with NaN concentrations.  ``crude`` says the start is
    :func:`crude_start` (the compiled iteration then sweeps first).
    """
    beyond = beyond_solution(inp)
    if beyond.any():
        return _solve_within(inp, u0, i0, max_iter, active0, beyond)
    return _solve(inp, u0, i0, max_iter=max_iter, active0=active0, crude=crude)


def _solve_within(inp: Inputs, u0, i0, max_iter, active0, beyond) -> Result:
    p = inp.points
    nq, ne, ns = inp.sol_a.shape[0], inp.eq_rows.shape[0], inp.nu.shape[0]
    u = np.array(u0, dtype=float, copy=True)
    ionic = np.array(i0, dtype=float, copy=True)
    conc = np.full((p, ns), np.nan)
    lng = np.full((p, ns), np.nan)
    amounts = np.zeros((p, nq))
    eq_mult = np.full((p, ne), np.nan)
    conv = np.zeros(p, dtype=bool)
    resid = np.full(p, np.inf)
    its = 0
    ok = np.nonzero(~beyond)[0]
    if ok.size:
        sub = _solve(_subset(inp, ok), u[ok], ionic[ok], max_iter=max_iter,
                     active0=None if active0 is None else np.asarray(active0)[ok])
        u[ok], ionic[ok], conc[ok], lng[ok] = sub.u, sub.ionic, sub.conc, sub.lng
        amounts[ok], eq_mult[ok], conv[ok], resid[ok] = sub.amounts, sub.eq_mult, sub.converged, sub.residual
        its = sub.iterations
    ionic[beyond] = np.nan
    u[beyond] = np.nan
    return Result(u=u, ionic=ionic, lng=lng, conc=conc, amounts=amounts, eq_mult=eq_mult, converged=conv,
                  residual=resid, iterations=its)


def _solve(inp: Inputs, u0: np.ndarray, i0: np.ndarray, *, max_iter: int = 200,
           active0: np.ndarray | None = None, crude: bool = False) -> Result:
    p = inp.points
    idx = np.arange(p)
    u = np.array(u0, dtype=float, copy=True)
    ionic = np.array(i0, dtype=float, copy=True)
    if inp.fixed_ionic is not None:
        ionic = np.array(inp.fixed_ionic, dtype=float, copy=True)
    nq = inp.sol_a.shape[0]
    active = np.zeros((p, nq), dtype=bool) if active0 is None else np.array(active0, dtype=bool)
    full = inp
    keep = inp.allowed.any(axis=0) if nq else np.zeros(0, dtype=bool)
    if nq and not keep.all():
        # only solids that may form enter the iteration (the others are reported by their SI alone)
        inp = replace(inp, sol_a=inp.sol_a[keep], sol_b=inp.sol_b[:, keep], allowed=inp.allowed[:, keep])
        active = active[:, keep]
    u = _make_feasible(inp, idx, u)
    freeze = inp.fixed_ionic is not None
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        # with the ionic strength free the nested search backs this stage up; without, it has it all
        budget = min(max_iter, 60) if not (freeze or inp.model.ideal) else max_iter
        one = _native_iterate(inp, u, ionic, active, freeze, budget, crude) if p == 1 else None
        if one is not None:
            u, ionic, active, lam_e, lam_s, conv, its = one
        else:
            u, ionic, active, lam_e, lam_s, conv, its = _iterate(inp, idx, u, ionic, active,
                                                                  freeze_ionic=freeze, max_iter=budget)
        iterations = its
        rest = np.nonzero(~conv)[0]
        if rest.size and not freeze and not inp.model.ideal and max_iter > budget:
            u_r, i_r, a_r, le_r, ls_r, c_r, its2 = _nested(inp, rest, u[rest], ionic[rest], active[rest],
                                                             20 * max_iter)
            u[rest], ionic[rest], active[rest] = u_r, i_r, a_r
            lam_e[rest], lam_s[rest] = le_r, ls_r
            conv[rest] = c_r
            iterations += its2
        res = _final(inp, idx, u, ionic, active, lam_e, lam_s, conv, iterations)
    if inp is not full:
        amounts = np.zeros((p, nq))
        amounts[:, keep] = res.amounts
        res.amounts = amounts
    return res


def crude_start(inp: Inputs, h_fixed: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Starting values for one point: every component free at its total, pH 7 (or the held pH), and
    the ionic strength of the totals as free ions."""
    tot = inp.totals[0]
    u = np.where(tot > 0, np.log(np.maximum(tot, 1e-300)), -50.0)
    u[0] = -7.0 * _LN10 if h_fixed is None else h_fixed
    if inp.fixed_ionic is not None:
        i0 = float(inp.fixed_ionic[0])
    else:
        i0 = float(inp.inert_i[0]) + 0.5 * float(np.abs(tot[1:]).sum()) + 1e-7
    return u[None], np.array([i0])


def _native_iterate(inp: Inputs, u, ionic, active, freeze: bool, budget: int, crude: bool = False):
    """:func:`_iterate` for a batch of one by the compiled iteration (:mod:`chem._native`), or None.

    None when there is no compiled iteration, or when its Newton system was
    singular (the numpy iteration then solves by least squares from the start).
    """
    from . import _native

    if not _native.available:
        return None
    got = _native.iterate(inp, u[0], float(ionic[0]), active[0], freeze_ionic=freeze, max_iter=budget,
                          cap_i=float(_ionic_cap(inp, np.arange(1))[0]), presweep=crude)
    if got is None or got[5] == -2:
        return None
    u1, i1, a1, le, ls, status, its = got
    return (u1[None], np.array([i1]), a1[None], le[None], ls[None], np.array([status == 1]), its)


def _nested(inp: Inputs, idx, u, ionic, active, budget: int):
    """Inner solve at fixed I, outer bracketed search on R(I) = I_computed − I (cannot cycle)."""
    n = idx.size
    cap = _ionic_cap(inp, idx)
    lo, r_lo = np.zeros(n), np.full(n, np.nan)
    hi, r_hi = np.full(n, np.inf), np.full(n, np.nan)
    last = np.zeros(n)
    conv = np.zeros(n, dtype=bool)
    lam_e = np.zeros((n, inp.eq_rows.shape[0]))
    lam_s = np.zeros((n, inp.sol_a.shape[0]))
    used = 0
    ionic = np.minimum(ionic, cap)
    for _ in range(80):
        u, _, active, lam_e, lam_s, inner_ok, its = _iterate(inp, idx, u, ionic.copy(), active,
                                                             freeze_ionic=True, max_iter=200)
        used += its
        lng = ln_gamma(inp, idx, ionic)
        c = concentrations(inp, idx, u, lng)
        new_i = ionic_of(inp, idx, c, lam_e)
        r = new_i - ionic
        conv = inner_ok & (np.abs(r) <= 1e-11 * np.maximum(new_i, 1e-300) + 1e-18)
        if conv.all() or used >= budget:
            break
        up, down = r > 0, r < 0
        r_hi = np.where(up & (last > 0), 0.5 * r_hi, r_hi)     # Illinois modification
        r_lo = np.where(down & (last < 0), 0.5 * r_lo, r_lo)
        lo, r_lo = np.where(up, ionic, lo), np.where(up, r, r_lo)
        hi, r_hi = np.where(down, ionic, hi), np.where(down, r, r_hi)
        last = np.where(up, 1.0, np.where(down, -1.0, last))
        if inp.counter_row is not None:
            # a pH-stat adds as much acid or base as the pH needs: its counter-ion has no bound
            # from the totals, so the ceiling grows when the search presses against it
            cap = np.where(up & (ionic >= cap * (1 - 1e-12)) & (cap < 1e3), 2.0 * cap, cap)
        secant = (lo * r_hi - hi * r_lo) / (r_hi - r_lo)
        bracketed = np.isfinite(hi)
        fixed = np.minimum(new_i, cap)
        step = np.where(bracketed, np.where(np.isfinite(secant) & (secant > lo) & (secant < hi), secant,
                                            0.5 * (lo + hi)),
                        np.maximum(fixed, ionic))
        ionic = np.where(conv, ionic, step)
    return u, ionic, active, lam_e, lam_s, conv, used


def _ionic_cap(inp: Inputs, idx) -> np.ndarray:
    """No ionic strength can exceed this.

    A species holds at most T_j/ν_sj of any component j in it, so charging
    each species to one of its components bounds ½ Σ z² c by ½ Σ_j T_j M_j;
    H+ and OH- are bounded by the proton total and the strong base, both
    within |T_H| plus the other totals' protons (and 1 M covers pure water).
    """
    nu = inp.nu
    weight = cap_weights(nu, inp.z2)
    hmax = float(np.abs(nu[:, 0]).max(initial=1.0))
    if len(idx) == 1:                                               # one point: plain floats
        t = np.abs(inp.totals[idx[0]])
        tw = float(t @ weight)
        ts = float(t.sum())
        cap = 1.1 * (float(inp.inert_i[idx[0]]) + 0.5 * tw + float(t[0]) + hmax * (ts - float(t[0])) + 1.0)
        return np.array([cap + 1e-6])
    tot = np.abs(inp.totals[idx])                                  # (P, nc)
    water = tot[:, 0] + hmax * tot[:, 1:].sum(axis=1) + 1.0
    return 1.1 * (inp.inert_i[idx] + 0.5 * tot @ weight + water) + 1e-6


_CAP_WEIGHTS: dict = {}


def cap_weights(nu: np.ndarray, z2: np.ndarray) -> np.ndarray:
    """Per component: Σ z_s²/ν_sj over the species charged to it (see :func:`_ionic_cap`); cached per table."""
    key = (id(nu), nu.shape)
    hit = _CAP_WEIGHTS.get(key)
    if hit is not None and hit[0] is nu:
        return hit[1]
    weight = np.zeros(nu.shape[1])
    for r in range(2, nu.shape[0]):
        pos = np.nonzero(nu[r, 1:] > 0)[0]
        if pos.size:
            j = 1 + pos[0]
            weight[j] += z2[r] / nu[r, j]
    if len(_CAP_WEIGHTS) > 256:
        _CAP_WEIGHTS.clear()
    _CAP_WEIGHTS[key] = (nu, weight)
    return weight


def _make_feasible(inp: Inputs, idx, u: np.ndarray) -> np.ndarray:
    """Satisfy the equalities exactly and every allowed solid's SI ≤ 0, moving non-H components only where possible."""
    ne = inp.eq_rows.shape[0]
    nc = inp.nu.shape[1]
    pinned = np.zeros(nc, dtype=bool)
    if ne:
        # the smallest change of the non-H components in the equalities (H only for a row that holds
        # nothing else, such as a pH-stat's); a gas bringing in several components shares it out
        e = inp.eq_rows
        cols = np.any(e[:, 1:] != 0, axis=0)
        use = np.concatenate([[False], cols])
        h_only = ~np.any(e[:, 1:] != 0, axis=1)
        if h_only.any():
            use[0] = True
        sub = e[:, use]
        resid = inp.eq_rhs[idx] - u @ e.T
        u = u.copy()
        # weighted by the inverse of each component's total: the correction goes to the components a gas
        # supplies (totals near zero, free amounts unknown), not to those the ingredients fix
        winv = 1.0 / np.maximum(np.abs(inp.totals[idx][:, use]), 1e-250)       # (P, k)
        winv /= winv.max(axis=1, keepdims=True)
        for i in range(u.shape[0]) if u.shape[0] <= 64 else ():
            m = (sub * winv[i]) @ sub.T
            try:
                u[i, use] += winv[i] * (sub.T @ np.linalg.solve(m, resid[i]))
            except np.linalg.LinAlgError:
                u[i, use] += np.linalg.lstsq(sub, resid[i], rcond=None)[0]
        if u.shape[0] > 64:
            m = np.einsum("kj,pj,lj->pkl", sub, winv, sub)
            try:
                lam = np.linalg.solve(m, resid[:, :, None])[:, :, 0]
            except np.linalg.LinAlgError:
                lam = np.stack([np.linalg.lstsq(m[i], resid[i], rcond=None)[0] for i in range(m.shape[0])])
            u[:, use] += winv * (lam @ sub)
        pinned |= np.any(e != 0, axis=0)
    nq = inp.sol_a.shape[0]
    if nq:
        free = ~pinned
        free[0] = False
        a = inp.sol_a
        viol = u @ a.T - inp.sol_b[idx]
        viol = np.where(inp.allowed[idx], viol, -np.inf)
        weight = a @ free.astype(float)
        with np.errstate(divide="ignore", invalid="ignore"):
            need = np.where(viol > 0, (viol + 1e-6) / np.where(weight > 0, weight, np.nan), 0.0)
        shift = np.nanmax(np.where(np.isfinite(need), need, 0.0), axis=1) if nq else 0.0
        if np.any(shift > 0):
            u = u.copy()
            u[:, free] -= shift[:, None]
    return u


def _final(inp: Inputs, idx, u, ionic, active, lam_e, lam_s, conv, iterations) -> Result:
    lng = ln_gamma(inp, idx, ionic)
    c = concentrations(inp, idx, u, lng)
    nq_ = inp.sol_a.shape[0]
    if nq_ and active.any():
        # put every present solid exactly on SI = 0: the smallest shift of u weighted by each component's
        # free amount (so it lands on trace components, whose rows the last Newton step resolved least)
        u = u.copy()
        weight = np.maximum(c @ (inp.nu * inp.nu), 1e-300)             # (P, nc): Hessian diagonal
        for i in np.nonzero(active.any(axis=1))[0]:
            rows = np.nonzero(active[i])[0]
            a = inp.sol_a[rows]
            r = inp.sol_b[idx[i], rows] - a @ u[i]
            if np.all(np.abs(r) < 1e-14):
                continue
            winv = 1.0 / weight[i]
            m = (a * winv) @ a.T
            try:
                u[i] += winv * (a.T @ np.linalg.solve(m, r))
            except np.linalg.LinAlgError:
                pass
        c = concentrations(inp, idx, u, lng)
    if inp.model.ideal:
        ionic = ionic_of(inp, idx, c, lam_e)
    nq = inp.sol_a.shape[0]
    ne = inp.eq_rows.shape[0]
    # multipliers at the final point by least squares: g + Eᵀλ_e + A_Wᵀλ_s = 0
    g = c @ inp.nu - inp.totals[idx]
    scale = c @ np.abs(inp.nu) + np.abs(inp.totals[idx])
    if ne or nq:
        lam_e, lam_s = _multipliers(inp, g, active, 1.0 / np.maximum(scale, 1e-300))
    amounts = np.where(active, np.maximum(lam_s, 0.0), 0.0) if nq else np.zeros((u.shape[0], 0))
    resid = g.copy()
    if ne:
        resid += lam_e @ inp.eq_rows
    if nq:
        resid += amounts @ inp.sol_a
        scale = scale + amounts @ np.abs(inp.sol_a)
    rel = np.max(np.abs(resid) / np.maximum(scale, 1e-300), axis=1)
    return Result(u=u, ionic=ionic, lng=lng, conc=c, amounts=amounts, eq_mult=lam_e, converged=conv,
                  residual=rel, iterations=iterations)


def _multipliers(inp: Inputs, g: np.ndarray, active: np.ndarray, weight: np.ndarray):
    """Least-squares multipliers of the equalities and active solids at the solution.

    Minimises ‖W(g + Eᵀλ_e + A_Wᵀλ_s)‖ with W the inverse balance scale of
    each component (so trace components count as much as major ones).
    """
    p = g.shape[0]
    ne = inp.eq_rows.shape[0]
    nq = inp.sol_a.shape[0]
    cmat = np.vstack([inp.eq_rows, inp.sol_a])                       # (m, nc)
    mask = np.concatenate([np.ones((p, ne), dtype=bool), active], axis=1)
    cm = cmat[None, :, :] * mask[:, :, None] * weight[:, None, :]   # (p, m, nc)
    normal = np.matmul(cm, np.transpose(cm, (0, 2, 1)))
    m = ne + nq
    normal[:, np.arange(m), np.arange(m)] += np.where(mask, 0.0, 1.0)
    rhs = -np.einsum("pmj,pj->pm", cm, g * weight)
    try:
        lam = np.linalg.solve(normal, rhs[:, :, None])[:, :, 0]
    except np.linalg.LinAlgError:
        lam = _lstsq(normal, rhs)
    lam = np.where(mask, lam, 0.0)
    return lam[:, :ne], lam[:, ne:]


# --------------------------------------------------------------------------
# starting values
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class Layout:
    """Each system's species rows padded to a common width (for the acid–base starting values)."""

    rows: np.ndarray        # (S, M) species rows, 0 where padded
    mask: np.ndarray        # (S, M)
    j: np.ndarray           # (S, M) bound protons (ν_H)
    comp: np.ndarray        # (S,) component column
    ion_cols: np.ndarray    # component columns of reactive strong ions
    ion_rows: np.ndarray    # their species rows
    oh_row: int = 1


def make_layout(nu: np.ndarray, sys_rows, sys_comp, ion_cols, ion_rows) -> Layout:
    s = len(sys_rows)
    m = max((len(r) for r in sys_rows), default=1)
    rows = np.zeros((s, m), dtype=int)
    mask = np.zeros((s, m), dtype=bool)
    for k, r in enumerate(sys_rows):
        rows[k, :len(r)] = r
        mask[k, :len(r)] = True
    j = np.where(mask, nu[rows, 0], 0.0)
    return Layout(rows, mask, j, np.array(sys_comp, dtype=int), np.array(ion_cols, dtype=int),
                  np.array(ion_rows, dtype=int))


def starting_values(inp: Inputs, lay: Layout, *, h_fixed: np.ndarray | None = None,
                    sweeps: int = 12, x_tol: float = 1e-7) -> tuple[np.ndarray, np.ndarray]:
    """Starting u and I: the acid–base equilibrium with complexes left out, then a few
    log-ratio sweeps that let the complexes take their share of each component.

    ``h_fixed`` gives u_H where a pH-stat holds it.
    """
    p = inp.points
    idx = np.arange(p)
    tot = inp.totals
    zc = np.sqrt(inp.z2)
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        # a first ionic strength: every component as its free species
        base_rows = lay.rows[np.arange(lay.rows.shape[0]), lay.mask.sum(axis=1) - 1] if lay.rows.size else \
            np.zeros(0, dtype=int)
        i0 = inp.inert_i + 0.5 * (tot[:, lay.comp] @ inp.z2[base_rows] if base_rows.size else 0.0)
        if lay.ion_cols.size:
            i0 = i0 + 0.5 * tot[:, lay.ion_cols] @ inp.z2[lay.ion_rows]
        if inp.fixed_ionic is not None:
            i0 = np.array(inp.fixed_ionic, dtype=float)
        u = np.zeros((p, inp.nu.shape[1]))
        x = None
        for _ in range(1):     # one pass: the Newton iteration corrects the ionic strength quadratically
            lng = ln_gamma(inp, idx, i0)
            x = _acid_base_x(inp, lay, lng, h_fixed, x, x_tol)
            u[:, 0] = x
            if lay.rows.size:
                w = (inp.lnk[:, lay.rows] - lng[:, lay.rows] + lay.j[None] * x[:, None, None])
                w = np.where(lay.mask[None], w, -np.inf)
                top = w.max(axis=2)
                lse = top + np.log(np.exp(w - top[:, :, None]).sum(axis=2))
                u[:, lay.comp] = np.log(tot[:, lay.comp]) - lse
            if lay.ion_cols.size:
                u[:, lay.ion_cols] = np.log(tot[:, lay.ion_cols]) + lng[:, lay.ion_rows]
            if inp.fixed_ionic is not None or inp.model.ideal:
                break
            # the ionic strength of these species alone (complexes are not yet in balance)
            c = concentrations(inp, idx, u, lng)
            plain = np.zeros(inp.nu.shape[0], dtype=bool)
            plain[:2] = True
            plain[lay.rows[lay.mask]] = True
            if lay.ion_rows.size:
                plain[lay.ion_rows] = True
            i0 = 0.5 * (c[:, plain] @ inp.z2[plain]) + inp.inert_i
        # complexes: damped log-ratio updates of each non-H component
        nu = inp.nu
        comps = np.ones(nu.shape[1], dtype=bool)
        comps[0] = False
        comps &= ~np.any(inp.eq_rows != 0, axis=0) if inp.eq_rows.size else True
        if sweeps and nu.shape[0] > 2 + lay.mask.sum() + lay.ion_cols.size:
            pos = np.where(nu > 0, nu, 0.0)
            h_free = h_fixed is None and not (inp.eq_rows.size and np.any(inp.eq_rows[:, 0] != 0))
            pos2 = pos * pos
            nu_h = nu[:, 0]
            nu_h2 = nu_h * nu_h
            for sweep in range(sweeps):
                c = concentrations(inp, idx, u, lng)
                m = c @ pos
                nbar = np.maximum((c @ pos2) / np.maximum(m, 1e-300), 1.0)
                step = np.log(tot / np.maximum(m, 1e-300)) / nbar
                step = np.clip(np.where(np.isfinite(step), step, 0.0), -200.0, 200.0)
                u[:, comps] += step[:, comps]
                moved = np.abs(step[:, comps]).max() if comps.any() else 0.0
                if h_free:
                    # complexes bind and release protons: settle u_H on the proton balance with the
                    # other components held (it rises strictly with u_H), a few Newton steps
                    for _ in range(3):
                        c = concentrations(inp, idx, u, lng)
                        du = np.clip(-(c @ nu_h - tot[:, 0]) / np.maximum(c @ nu_h2, 1e-300), -4.0, 4.0)
                        du = np.where(np.isfinite(du), du, 0.0)
                        u[:, 0] += du
                        moved = max(moved, float(np.abs(du).max()))
                if moved < 0.05:       # close enough for Newton: stop sweeping
                    break
            if inp.fixed_ionic is None and not inp.model.ideal:
                c = concentrations(inp, idx, u, lng)
                i_all = ionic_of(inp, idx, c)
                ok = np.isfinite(i_all) & (i_all > 0)
                i0 = np.where(ok, np.minimum(i_all, _ionic_cap(inp, idx)), i0)
        del zc
    return u, i0


def _acid_base_x(inp: Inputs, lay: Layout, lng: np.ndarray, h_fixed, x0=None, tol: float = 1e-7) -> np.ndarray:
    """u_H of the acid–base equilibrium at fixed γ (complexes left out): Newton with limited steps
    kept inside a bracket (the proton balance rises strictly with u_H); points leave as they settle."""
    p = inp.points
    if h_fixed is not None:
        return np.asarray(h_fixed, dtype=float) * np.ones(p)
    t_h_all = inp.totals[:, 0]
    lnk_oh_all = inp.lnk[:, lay.oh_row] - lng[:, lay.oh_row]
    lng_h_all = lng[:, 0]
    if lay.rows.size:
        w0_all = np.where(lay.mask[None], inp.lnk[:, lay.rows] - lng[:, lay.rows], -np.inf)
        tot_all = inp.totals[:, lay.comp]
        jj = lay.j[None]
    x = np.full(p, -7.0 * _LN10) if x0 is None else np.array(x0, dtype=float)
    lo = np.full(p, -60.0)
    hi = np.full(p, 25.0)
    work = np.arange(p)
    for _ in range(80):
        xw = x[work]
        hc = np.exp(xw - lng_h_all[work])
        ohc = np.exp(lnk_oh_all[work] - xw)
        f = hc - ohc - t_h_all[work]
        df = hc + ohc
        if lay.rows.size:
            w = w0_all[work] + jj * xw[:, None, None]
            w -= w.max(axis=2, keepdims=True)
            e = np.exp(w)
            s0 = e.sum(axis=2)
            ej = e * jj
            m1 = ej.sum(axis=2) / s0
            m2 = (ej * jj).sum(axis=2) / s0
            tw = tot_all[work]
            f = f + (tw * m1).sum(axis=1)
            df = df + (tw * np.maximum(m2 - m1 * m1, 0.0)).sum(axis=1)
        low, high = lo[work], hi[work]
        low = np.where(f < 0, xw, low)
        high = np.where(f > 0, xw, high)
        x_new = xw + np.clip(-f / df, -3.0, 3.0)
        bad = ~np.isfinite(x_new) | (x_new <= low) | (x_new >= high)
        x_new = np.where(bad, 0.5 * (low + high), x_new)
        lo[work], hi[work] = low, high
        x[work] = x_new
        keep = np.abs(x_new - xw) >= tol
        work = work[keep]
        if work.size == 0:
            break
    return x


# --------------------------------------------------------------------------
# derivatives at the solution (implicit-function theorem)
# --------------------------------------------------------------------------

def jacobian(inp: Inputs, res: Result, idx=None) -> np.ndarray:
    """The Jacobian of the solved equations at the solution, (P, n, n).

    Unknowns, in order: u (nc), I, the equality multipliers (ne), the solid
    amounts (nq; an identity row keeps an absent solid at 0).  Equations:
    mass balances Σν c + Eᵀλ + A_Wᵀn − T, the ionic-strength equation, the
    equalities E u − e and the present solids' A_p u − b_p.
    """
    if idx is None:
        idx = np.arange(inp.points)
    nu = inp.nu
    nc = nu.shape[1]
    ne = inp.eq_rows.shape[0]
    nq = inp.sol_a.shape[0]
    p = idx.size
    n = nc + 1 + ne + nq
    c = res.conc[idx]
    jac = np.zeros((p, n, n))
    jac[:, :nc, :nc] = np.matmul(nu.T, c[:, :, None] * nu[None, :, :])
    frozen = inp.model.ideal or inp.fixed_ionic is not None
    if frozen:
        jac[:, nc, nc] = -1.0
    else:
        dlng = d_ln_gamma(inp, idx, res.ionic[idx])
        jac[:, :nc, nc] = (c * -dlng) @ nu
        jac[:, nc, :nc] = 0.5 * (c * inp.z2) @ nu
        jac[:, nc, nc] = 0.5 * np.einsum("ps,s,ps->p", c, inp.z2, -dlng) - 1.0
    if ne:
        jac[:, :nc, nc + 1:nc + 1 + ne] = inp.eq_rows.T
        jac[:, nc + 1:nc + 1 + ne, :nc] = inp.eq_rows
        if inp.counter_row is not None and not frozen:
            mu = res.eq_mult[idx, inp.counter_row]
            jac[:, nc, nc + 1 + inp.counter_row] = np.where(mu >= 0, 0.5, -0.5)   # base side at the own pH
    if nq:
        present = res.amounts[idx] > 0
        cols = nc + 1 + ne + np.arange(nq)
        jac[:, :nc, cols] = np.transpose(inp.sol_a[None] * present[:, :, None], (0, 2, 1))
        jac[:, cols, :nc] = inp.sol_a[None] * present[:, :, None]
        jac[:, cols, cols] = np.where(present, 0.0, 1.0)
    return jac


def linear_solve(jac: np.ndarray, rhs: np.ndarray, nc: int) -> np.ndarray:
    """Solve J y = rhs (P, n[, k]) with the component block scaled by its diagonal."""
    n = jac.shape[1]
    s = np.ones((jac.shape[0], n))
    d = np.abs(np.einsum("pjj->pj", jac[:, :nc, :nc]))
    s[:, :nc] = 1.0 / np.sqrt(np.maximum(d, 1e-300))
    js = jac * s[:, :, None] * s[:, None, :]
    vec = rhs.ndim == 2
    r = (rhs if not vec else rhs[:, :, None]) * s[:, :, None]
    try:
        y = np.linalg.solve(js, r)
    except np.linalg.LinAlgError:
        y = np.stack([np.linalg.lstsq(js[i], r[i], rcond=None)[0] for i in range(js.shape[0])])
    y = y * s[:, :, None]
    return y[:, :, 0] if vec else y


def sensitivity(inp: Inputs, res: Result, d_totals: np.ndarray | None = None, d_inert_i=None,
                d_eq_rhs: np.ndarray | None = None, d_lnk: np.ndarray | None = None) -> np.ndarray:
    """d(u, I, λ_e, n_solids)/dp for one parameter p at every point, (P, n).

    ``d_totals`` (P, nc): change of the component totals; ``d_inert_i`` (P,):
    of the inert ionic strength; ``d_eq_rhs`` (P, ne): of the equalities'
    right-hand sides; ``d_lnk`` (P, ns): of the species' ln K.
    """
    p = inp.points
    nc = inp.nu.shape[1]
    ne = inp.eq_rows.shape[0]
    jac = jacobian(inp, res)
    n = jac.shape[1]
    rhs = np.zeros((p, n))
    if d_totals is not None:
        rhs[:, :nc] += d_totals
    if d_inert_i is not None and not (inp.model.ideal or inp.fixed_ionic is not None):
        rhs[:, nc] -= d_inert_i
    if d_eq_rhs is not None and ne:
        rhs[:, nc + 1:nc + 1 + ne] += d_eq_rhs
    if d_lnk is not None:
        c = res.conc
        rhs[:, :nc] -= (c * d_lnk) @ inp.nu
        if not (inp.model.ideal or inp.fixed_ionic is not None):
            rhs[:, nc] -= 0.5 * (c * d_lnk) @ inp.z2
    return linear_solve(jac, rhs, nc)
