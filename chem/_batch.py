"""Vectorised solver kernel: many related mixtures (a sweep, a titration) in one call.

Same equations as the scalar kernel in :mod:`chem._solver`, with a leading
batch axis P on every array:

1. A two-dimensional Newton iteration on (x, I), x = log10 a(H+), with the
   analytic Jacobian of the charge balance F(x, I) and of the ionic-strength
   residual G(x, I) = I_computed - I.  Species are stored flat (no padding)
   and the per-system moments come from one matrix product, so an iteration
   costs a handful of array operations however many systems there are.
2. Points that Newton has not settled (rare: extreme activity corrections)
   go to the safeguarded solve: at fixed activity coefficients the balance
   is strictly increasing in x, so Newton kept inside a bracket (bisection
   whenever a step leaves it) cannot fail; the ionic strength is iterated
   around it.

The result also carries the Jacobian at the solution, so derivatives of the
equilibrium with respect to the amounts (buffer capacity, the slope of a
titration curve) follow exactly by the implicit-function theorem.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import water
from ._solver import _LN10, _X_HI, _X_LO, SIZE_H, SIZE_OH, _Layout

_sum = np.add.reduce
_max = np.maximum.reduce


# --------------------------------------------------------------------------
# result
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class _Batch:
    """Result arrays of the kernel for P points (S systems, M padded species)."""

    x: np.ndarray          # log10 a(H+), (P,)
    ionic: np.ndarray      # mol/L, (P,)
    alpha: np.ndarray      # fraction of each species in its system (P, S, M)
    lg: np.ndarray         # log10 γ of system species (P, S, M)
    lg_h: np.ndarray       # (P,)
    lg_oh: np.ndarray      # (P,)
    residual: np.ndarray   # charge balance, mol/L (P,)
    scale: np.ndarray      # sum of |charge terms| (P,)
    converged: np.ndarray  # (P,) bool
    iterations: int
    h: np.ndarray          # [H+], mol/L (P,)
    oh: np.ndarray         # [OH-], mol/L (P,)
    zbar: np.ndarray       # mean charge of each system's species (P, S) = dF/dC_s
    z2bar: np.ndarray      # mean squared charge (P, S); dG/dC_s = z2bar / 2
    fx: np.ndarray         # dF/dx at the solution (P,)
    fi: np.ndarray         # dF/dI
    gx: np.ndarray         # dG/dx
    gi: np.ndarray         # dG/dI

    def sensitivity(self, d_totals, d_q, d_i) -> np.ndarray:
        """Change of x = log10 a(H+) per unit change of the amounts.

        Parameters
        ----------
        d_totals : array_like, (P, S)
            Change of each system's total, mol/L per unit of the parameter.
        d_q : array_like, (P,)
            Change of the strong ions' net charge, mol/L per unit.
        d_i : array_like, (P,)
            Change of the strong ions' ionic-strength contribution, mol/L per unit.

        Returns
        -------
        ndarray, (P,)
            dx per unit of the parameter (dpH = -dx), from the implicit-function
            theorem on the charge balance and the ionic-strength equation; exact
            for the model, activity corrections included.
        """
        d_totals = np.asarray(d_totals, dtype=float)
        d_f = _sum(self.zbar * d_totals, axis=1) + d_q
        d_g = 0.5 * _sum(self.z2bar * d_totals, axis=1) + d_i
        det = self.fx * self.gi - self.fi * self.gx
        return -(d_f * self.gi - d_g * self.fi) / det


# --------------------------------------------------------------------------
# activity terms
# --------------------------------------------------------------------------

def _d_terms(model: str, ionic: np.ndarray, sizes, b: np.ndarray):
    """D(I) and dD/dI in log10 γ = -A z² D(I) for ions of the given sizes.

    ``ionic`` and ``b`` have shape (n,); ``sizes`` is a scalar or (S,).
    Returns arrays of shape (n,) for a scalar size, else (n, S).
    """
    si = np.sqrt(np.maximum(ionic, 0.0))
    sf = np.sqrt(np.maximum(ionic, 1e-16))
    if np.ndim(sizes):
        si, sf, ionic_, b = si[:, None], sf[:, None], ionic[:, None], b[:, None]
    else:
        ionic_ = ionic
    if model == "davies":
        d = si / (1.0 + si) - 0.3 * ionic_
        dp = 1.0 / (2.0 * sf * (1.0 + sf) ** 2) - 0.3
    else:   # extended Debye–Hückel
        ba = b * sizes
        d = si / (1.0 + ba * si)
        dp = 1.0 / (2.0 * sf * (1.0 + ba * sf) ** 2)
    if np.ndim(sizes) and model == "davies":
        d, dp = d[:, :1], dp[:, :1]
    return d, dp


class _Flat:
    """The species of a layout stored flat, with the matrix that sums per-system moments."""

    def __init__(self, lay: _Layout):
        s_idx, m_idx = np.nonzero(lay.mask)
        self.s_idx, self.m_idx = s_idx, m_idx
        self.n_sys = s = lay.mask.shape[0]
        j = lay.j[s_idx, m_idx]
        z = lay.z[s_idx, m_idx]
        z2 = z * z
        self.jln = j * _LN10
        self.z2 = z2
        # charge of each system's fully deprotonated form: z = c + j
        self.c = lay.z[:, 0] - lay.j[:, 0]
        cols = (np.ones_like(j), j, j * j, z2, j * z2, z2 * z2)
        self.moments = np.zeros((s_idx.size, 6 * s))
        for k, col in enumerate(cols):
            self.moments[np.arange(s_idx.size), k * s + s_idx] = col


# --------------------------------------------------------------------------
# kernel
# --------------------------------------------------------------------------

def solve_batch(lay: _Layout, log_beta: np.ndarray, totals: np.ndarray, q_strong: np.ndarray,
                i_strong: np.ndarray, t_c: np.ndarray, model: str, *, tol: float = 1e-13,
                max_iter: int = 200, x0: np.ndarray | None = None) -> _Batch:
    """Solve P independent acid–base mixtures sharing one layout.

    Parameters
    ----------
    lay : _Layout
        The acid–base systems (shared by every point).
    log_beta : ndarray, (P, S, M)
        Formation constants at I = 0 and each point's temperature (-inf where padded).
    totals : ndarray, (P, S)
        Total concentration of each system, mol/L.
    q_strong : ndarray, (P,)
        Net charge of the strong ions, mol/L.
    i_strong : ndarray, (P,)
        Ionic-strength contribution of the strong ions, mol/L.
    t_c : float or ndarray, (P,)
        Temperature, °C.
    model : str
        Activity model name ("ideal", "davies", "extended-dh").
    tol : float, optional
        Convergence tolerance on x in the safeguarded stage.
    max_iter : int, optional
        Cap on iterations of the safeguarded stage.
    x0 : ndarray, optional
        Starting values of x (default -7).

    Returns
    -------
    _Batch
        Every point's x, ionic strength, fractions, activity coefficients,
        residual, convergence flag and the Jacobian at the solution.
    """
    log_beta = np.asarray(log_beta, dtype=float)
    p = log_beta.shape[0]
    totals = np.asarray(totals, dtype=float).reshape(p, -1)
    q_strong = np.broadcast_to(np.asarray(q_strong, dtype=float), (p,))
    i_strong = np.broadcast_to(np.asarray(i_strong, dtype=float), (p,))
    t_c = np.broadcast_to(np.asarray(t_c, dtype=float), (p,))
    consts = _Constants(lay, model, t_c)
    z2_max = np.where(lay.mask, lay.z * lay.z, 0.0).max(axis=1)
    i_cap = 2.0 * (i_strong + totals @ z2_max) + 1.0

    if x0 is None:
        x = np.full(p, -7.0)
    else:
        x = np.clip(np.asarray(x0, dtype=float), _X_LO, _X_HI) * np.ones(p)
    ionic = i_strong.copy()
    converged = np.zeros(p, dtype=bool)
    iterations = 0

    # Stage 1: two-dimensional Newton on (x, I), all points at once; points
    # leave the working set as they converge.
    flat = _Flat(lay)
    lb_flat = log_beta[:, flat.s_idx, flat.m_idx] * _LN10
    act = np.arange(p)
    sub = None
    for _ in range(min(40, max_iter)):
        iterations += 1
        if sub is None or sub[0].size != act.size:
            sub = (act, lb_flat[act], totals[act], q_strong[act], i_strong[act], consts.take(act), i_cap[act])
        _, lbs, tot, q, i_s, cst, cap = sub
        xa, ia = x[act], ionic[act]
        f, g, fx, fi, gx, gi = _joint(flat, cst, lbs, tot, q, i_s, xa, ia)
        det = fx * gi - fi * gx
        with np.errstate(all="ignore"):
            dx = (f * gi - g * fi) / det
            d_i = (fx * g - gx * f) / det
        ok = np.isfinite(dx) & np.isfinite(d_i)
        dx = np.clip(np.where(ok, dx, 0.0), -2.0, 2.0)
        d_i = np.where(ok, d_i, 0.0)
        x_new = np.clip(xa - dx, _X_LO, _X_HI)
        i_new = ia - d_i
        i_new = np.where(i_new > 0.1 * ia, i_new, np.where(ia > 0, 0.1 * ia, i_s))
        i_new = np.minimum(i_new, cap)
        x[act] = x_new
        ionic[act] = i_new
        done = ok & (np.abs(dx) < 1e-10) & (np.abs(d_i) <= 1e-11 * i_new + 1e-16)
        converged[act[done]] = True
        act = act[ok & ~done]
        if act.size == 0:
            break

    # Stage 2: the safeguarded solve for whatever Newton did not settle.
    rest = np.nonzero(~converged)[0]
    if rest.size:
        xr, ir, conv_r, it = _safeguarded(lay, consts.take(rest), log_beta[rest], totals[rest],
                                          q_strong[rest], i_strong[rest], x[rest], ionic[rest],
                                          i_cap[rest], model, tol, max_iter)
        x[rest], ionic[rest], converged[rest] = xr, ir, conv_r
        iterations += it

    return _final(lay, consts, log_beta, totals, q_strong, i_strong, x, ionic, converged, iterations, model)


class _Constants:
    """Per-point water and Debye–Hückel constants, and the activity model."""

    def __init__(self, lay: _Layout | None, model: str, t_c: np.ndarray, *, arrays=None):
        self.model = model
        self.ideal = model == "ideal"
        if arrays is not None:
            self.pkw, self.a, self.b, self.sizes = arrays
            return
        self.pkw = np.asarray(water.pkw(t_c), dtype=float)
        self.a = np.asarray(water.debye_huckel_a(t_c), dtype=float)
        self.b = np.asarray(water.debye_huckel_b(t_c), dtype=float)
        self.sizes = lay.size[:, 0]

    def take(self, idx) -> "_Constants":
        return _Constants(None, self.model, None,
                          arrays=(self.pkw[idx], self.a[idx], self.b[idx], self.sizes))

    def terms(self, ionic):
        """(A·D per system (n,S) or (n,1), ln10·A·D' likewise, water's A·D and ln10·A·D' for H+ and OH-)."""
        n = ionic.shape[0]
        if self.ideal:
            zero, zero2 = np.zeros(n), np.zeros((n, 1))
            return zero2, zero2, zero, zero, zero, zero
        a = self.a
        d_s, dp_s = _d_terms(self.model, ionic, self.sizes, self.b)
        d_h, dp_h = _d_terms(self.model, ionic, SIZE_H, self.b)
        d_oh, dp_oh = _d_terms(self.model, ionic, SIZE_OH, self.b)
        al = _LN10 * a
        return (a[:, None] * d_s, al[:, None] * dp_s, a * d_h, a * d_oh, al * dp_h, al * dp_oh)


def _joint(flat: _Flat, cst: _Constants, lb_ln, tot, q, i_s, x, ionic):
    """Charge balance F, ionic-strength residual G and their partial derivatives (flat layout)."""
    ad_s, dd_s, ad_h, ad_oh, dh, doh = cst.terms(ionic)
    s = flat.n_sys
    if s:
        ad_flat = ad_s[:, flat_sys_index(flat, ad_s.shape[1])]
        w = lb_ln + (_LN10 * ad_flat) * flat.z2 + flat.jln * x[:, None]
        e = np.exp(w)
        mom = (e @ flat.moments).reshape(-1, 6, s)
        s0 = mom[:, 0]
        jbar = mom[:, 1] / s0
        z2bar = mom[:, 3] / s0
        var_j = np.maximum(mom[:, 2] / s0 - jbar * jbar, 0.0)
        cov = mom[:, 4] / s0 - jbar * z2bar
        var_z2 = np.maximum(mom[:, 5] / s0 - z2bar * z2bar, 0.0)
        f_sys = _sum(tot * (flat.c + jbar), axis=1)
        fx_sys = _sum(tot * var_j, axis=1)
        fi_sys = _sum(tot * dd_s * cov, axis=1)
        ez2 = _sum(tot * z2bar, axis=1)
        gx_sys = _sum(tot * cov, axis=1)
        gi_sys = _sum(tot * dd_s * var_z2, axis=1)
    else:
        f_sys = fx_sys = fi_sys = ez2 = gx_sys = gi_sys = 0.0
    hc = np.exp(_LN10 * (x + ad_h))
    ohc = np.exp(_LN10 * (-cst.pkw - x + ad_oh))
    f = q + f_sys + hc - ohc
    fx = _LN10 * (fx_sys + hc + ohc)
    fi = fi_sys + dh * hc - doh * ohc
    g = i_s + 0.5 * (ez2 + hc + ohc) - ionic
    gx = 0.5 * _LN10 * (gx_sys + hc - ohc)
    gi = 0.5 * (gi_sys + dh * hc + doh * ohc) - 1.0
    return f, g, fx, fi, gx, gi


def flat_sys_index(flat: _Flat, width: int):
    """Column of a per-system array (width S, or 1 when shared) for each flat species."""
    return flat.s_idx if width > 1 else np.zeros_like(flat.s_idx)


# --------------------------------------------------------------------------
# padded evaluation (stable for any x) and the safeguarded stage
# --------------------------------------------------------------------------

def _padded(lay: _Layout, cst: _Constants, log_beta, totals, q, x, ionic):
    """Everything at (x, I) on the padded layout, with shifted exponents (never overflows)."""
    ad_s, dd_s, ad_h, ad_oh, dh, doh = cst.terms(ionic)
    z, jj = lay.z, lay.j
    z2 = z * z
    lg = -ad_s[:, :, None] * z2
    w = log_beta - lg + jj * x[:, None, None]
    e = np.power(10.0, w - _max(w, axis=2, keepdims=True))
    alpha = e / _sum(e, axis=2, keepdims=True)
    jbar = _sum(alpha * jj, axis=2)
    zbar = _sum(alpha * z, axis=2)
    z2bar = _sum(alpha * z2, axis=2)
    dj = jj - jbar[:, :, None]
    dz2 = z2 - z2bar[:, :, None]
    var_j = _sum(alpha * dj * dj, axis=2)
    cov = _sum(alpha * dj * dz2, axis=2)
    var_z2 = _sum(alpha * dz2 * dz2, axis=2)
    lg_h, lg_oh = -ad_h, -ad_oh
    hc = np.power(10.0, x - lg_h)
    ohc = np.power(10.0, -cst.pkw - x - lg_oh)
    f = q + _sum(totals * zbar, axis=1) + hc - ohc
    fx = _LN10 * (_sum(totals * var_j, axis=1) + hc + ohc)
    fi = _sum(totals * dd_s * cov, axis=1) + dh * hc - doh * ohc
    ez2 = _sum(totals * z2bar, axis=1)
    gx = 0.5 * _LN10 * (_sum(totals * cov, axis=1) + hc - ohc)
    gi = 0.5 * (_sum(totals * dd_s * var_z2, axis=1) + dh * hc + doh * ohc) - 1.0
    return dict(alpha=alpha, lg=lg, lg_h=lg_h, lg_oh=lg_oh, hc=hc, ohc=ohc, zbar=zbar, z2bar=z2bar,
                f=f, fx=fx, fi=fi, ez2=ez2, gx=gx, gi=gi)


def _safeguarded(lay, cst, log_beta, totals, q, i_s, x, ionic, i_cap, model, tol, max_iter):
    """Bracketed Newton at fixed activity coefficients, inside the ionic-strength fixed point."""
    n = x.size
    x = x.copy()
    ionic = ionic.copy()
    converged = np.zeros(n, dtype=bool)
    iterations = 0
    for outer in range(60):
        def balance(xv, ionic_now=ionic):
            return _padded(lay, cst, log_beta, totals, q, xv, ionic_now)

        lo = np.full(n, _X_LO)
        hi = np.full(n, _X_HI)
        for _ in range(8):   # widen the bracket if needed (extreme activity coefficients)
            bad_lo = balance(lo)["f"] > 0
            bad_hi = balance(hi)["f"] < 0
            if not (bad_lo.any() or bad_hi.any()):
                break
            lo = np.where(bad_lo, lo - 10.0, lo)
            hi = np.where(bad_hi, hi + 10.0, hi)
        x = np.clip(x, lo, hi)
        inner_ok = np.zeros(n, dtype=bool)
        while iterations < max_iter:
            iterations += 1
            ev = balance(x)
            f = ev["f"]
            lo = np.where(f < 0, x, lo)
            hi = np.where(f > 0, x, hi)
            with np.errstate(all="ignore"):
                newton = x - f / ev["fx"]
            out = ~np.isfinite(newton) | (newton <= lo) | (newton >= hi)
            x_new = np.where(out, 0.5 * (lo + hi), newton)
            dx = np.abs(x_new - x)
            inner_ok = (dx <= tol * (1.0 + np.abs(x))) | (f == 0) | (hi - lo <= 4e-16 * (1.0 + np.abs(x)))
            x = np.where(f == 0, x, x_new)
            if inner_ok.all():
                break
        ev = balance(x)
        new_i = i_s + 0.5 * (ev["ez2"] + ev["hc"] + ev["ohc"])
        if model == "ideal":
            return x, new_i, inner_ok, iterations
        i_ok = np.abs(new_i - ionic) <= 1e-10 * new_i + 1e-15
        converged = inner_ok & i_ok
        if converged.all() or iterations >= max_iter:
            break
        new_i = np.minimum(new_i, i_cap)
        ionic = np.where(i_ok, ionic, new_i if outer < 30 else 0.5 * (ionic + new_i))
    return x, ionic, converged, iterations


def _final(lay, consts, log_beta, totals, q, i_s, x, ionic, converged, iterations, model) -> _Batch:
    ev = _padded(lay, consts, log_beta, totals, q, x, ionic)
    hc, ohc, alpha = ev["hc"], ev["ohc"], ev["alpha"]
    if model == "ideal":
        # γ = 1 does not depend on I; report the ionic strength the ions make.
        ionic = i_s + 0.5 * (ev["ez2"] + hc + ohc)
    scale = hc + ohc + _sum(totals * _sum(alpha * np.abs(lay.z), axis=2), axis=1) + np.abs(q) + i_s
    for arr in (x, ionic, converged):
        arr.setflags(write=False)
    return _Batch(x=x, ionic=ionic, alpha=alpha, lg=ev["lg"], lg_h=ev["lg_h"], lg_oh=ev["lg_oh"],
                  residual=ev["f"], scale=scale, converged=converged, iterations=iterations,
                  h=hc, oh=ohc, zbar=ev["zbar"], z2bar=ev["z2bar"], fx=ev["fx"], fi=ev["fi"],
                  gx=ev["gx"], gi=ev["gi"])
