"""Vectorised solver kernel: many related mixtures (a sweep, a titration) in one call.

Same equations as the scalar kernel in :mod:`chem._solver`, with a leading
batch axis P on every array.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import water
from ._solver import _LN10, _X_HI, _X_LO, SIZE_H, SIZE_OH, _Layout
from .activity import log_gamma

_sum = np.add.reduce
_max = np.maximum.reduce

# --------------------------------------------------------------------------
# batch kernel
# --------------------------------------------------------------------------

@dataclass
class _Batch:
    """Result arrays of the kernel for P points."""

    x: np.ndarray          # log10 a(H+), (P,)
    ionic: np.ndarray      # (P,)
    alpha: np.ndarray      # (P, S, M)
    lg: np.ndarray         # log10 γ of system species (P, S, M)
    lg_h: np.ndarray
    lg_oh: np.ndarray
    residual: np.ndarray   # charge balance, mol/L (P,)
    scale: np.ndarray      # sum of |charge terms| (P,)
    converged: np.ndarray  # (P,) bool
    iterations: int


def solve_batch(lay: _Layout, log_beta: np.ndarray, totals: np.ndarray, q_strong: np.ndarray,
                i_strong: np.ndarray, t_c: np.ndarray, model: str, *, tol: float = 1e-13,
                max_iter: int = 200, x0: np.ndarray | None = None) -> _Batch:
    """Solve P independent acid–base mixtures sharing one layout.

    Parameters
    ----------
    log_beta : (P, S, M) formation constants at I = 0 and each point's temperature.
    totals : (P, S) total concentration of each system, mol/L.
    q_strong : (P,) net charge of the strong ions, mol/L.
    i_strong : (P,) ionic-strength contribution of the strong ions, mol/L.
    t_c : (P,) temperature, °C.
    model : activity model name.
    """
    t_c = np.atleast_1d(np.asarray(t_c, dtype=float))
    p = log_beta.shape[0]
    t_c = np.broadcast_to(t_c, (p,))
    kw = 10.0 ** -water.pkw(t_c)
    a = water.debye_huckel_a(t_c)
    b = water.debye_huckel_b(t_c)
    z, jj, size = lay.z, lay.j, lay.size
    z2 = z * z
    jj2 = jj * jj
    a3, b3 = a[:, None, None], b[:, None, None]
    ideal = model == "ideal"

    def gammas(ionic):
        if ideal:
            zero = np.zeros(p)
            return np.zeros(log_beta.shape), zero, zero
        i3 = ionic[:, None, None]
        lg = log_gamma(model, z2, size, i3, a3, b3)
        lg_h = log_gamma(model, 1.0, SIZE_H, ionic, a, b)
        lg_oh = log_gamma(model, 1.0, SIZE_OH, ionic, a, b)
        return lg, lg_h, lg_oh

    def evaluate(x, base, g_h, g_oh):
        w = base + jj * x[:, None, None]
        w = w - _max(w, axis=2, keepdims=True)
        e = np.power(10.0, w)
        alpha = e / _sum(e, axis=2, keepdims=True)
        zbar = _sum(alpha * z, axis=2)
        jbar = _sum(alpha * jj, axis=2)
        var = np.maximum(_sum(alpha * jj2, axis=2) - jbar * jbar, 0.0)
        h = np.power(10.0, x)
        hc = h / g_h
        ohc = kw / (h * g_oh)
        f = hc - ohc + _sum(totals * zbar, axis=1) + q_strong
        df = _LN10 * (hc + ohc + _sum(totals * var, axis=1))
        return f, df, alpha, hc, ohc

    if x0 is None:
        x = np.full(p, -7.0)
    else:
        x = np.clip(np.asarray(x0, dtype=float).copy(), _X_LO + 1, _X_HI - 1)
    ionic = i_strong.astype(float).copy()
    iterations = 0

    # Phase 1: joint Newton on x with the ionic strength updated every step.
    if not ideal:
        for _ in range(min(40, max_iter)):
            iterations += 1
            lg, lg_h, lg_oh = gammas(ionic)
            f, df, alpha, hc, ohc = evaluate(x, log_beta - lg, 10.0 ** lg_h, 10.0 ** lg_oh)
            step = np.clip(f / df, -2.0, 2.0)
            x = np.clip(x - step, _X_LO, _X_HI)
            new_i = i_strong + 0.5 * (_sum(totals * _sum(alpha * z2, axis=2), axis=1) + hc + ohc)
            d_i = np.abs(new_i - ionic)
            ionic = new_i
            if np.all(np.abs(step) < 1e-9) and np.all(d_i <= 1e-10 * ionic + 1e-15):
                break

    # Phase 2: for fixed activity coefficients, a bracketed safeguarded Newton
    # solve (cannot fail); around it, the ionic-strength fixed point.
    converged = np.zeros(p, dtype=bool)
    for outer in range(60):
        lg, lg_h, lg_oh = gammas(ionic)
        base = log_beta - lg
        g_h, g_oh = 10.0 ** lg_h, 10.0 ** lg_oh
        lo = np.full(p, _X_LO)
        hi = np.full(p, _X_HI)
        for _ in range(8):   # widen the bracket if needed (extreme activity coefficients)
            f_lo = evaluate(lo, base, g_h, g_oh)[0]
            f_hi = evaluate(hi, base, g_h, g_oh)[0]
            bad_lo, bad_hi = f_lo > 0, f_hi < 0
            if not (bad_lo.any() or bad_hi.any()):
                break
            lo = np.where(bad_lo, lo - 10.0, lo)
            hi = np.where(bad_hi, hi + 10.0, hi)
        x = np.clip(x, lo, hi)
        inner_ok = np.zeros(p, dtype=bool)
        for _ in range(max_iter):
            iterations += 1
            f, df, alpha, hc, ohc = evaluate(x, base, g_h, g_oh)
            lo = np.where(f < 0, x, lo)
            hi = np.where(f > 0, x, hi)
            newton = x - f / df
            out = ~np.isfinite(newton) | (newton <= lo) | (newton >= hi)
            x_new = np.where(out, 0.5 * (lo + hi), newton)
            dx = np.abs(x_new - x)
            inner_ok = (dx <= tol * (1.0 + np.abs(x))) | (f == 0) | (hi - lo <= 4e-16 * (1.0 + np.abs(x)))
            x = np.where(f == 0, x, x_new)
            if inner_ok.all() or iterations >= max_iter:
                break
        f, df, alpha, hc, ohc = evaluate(x, base, g_h, g_oh)
        if ideal:
            converged = inner_ok
            break
        new_i = i_strong + 0.5 * (_sum(totals * _sum(alpha * z2, axis=2), axis=1) + hc + ohc)
        i_ok = np.abs(new_i - ionic) <= 1e-10 * new_i + 1e-15
        converged = inner_ok & i_ok
        if converged.all() or iterations >= max_iter:
            break
        ionic = np.where(i_ok, ionic, new_i if outer < 30 else 0.5 * (ionic + new_i))

    scale = hc + ohc + _sum(totals * _sum(alpha * np.abs(z), axis=2), axis=1) + np.abs(q_strong) + i_strong
    return _Batch(x=x, ionic=ionic, alpha=alpha, lg=lg, lg_h=lg_h, lg_oh=lg_oh, residual=f,
                  scale=scale, converged=converged, iterations=iterations)


