"""The acid–base fast path with a batch axis (titrations, sweeps and dilutions of pure acid–base mixtures).

Generated from the same :class:`~chem.problem.Structure` as the general
kernel: with no complexes, no solid that may form and no fixed gas, every
system's species are explicit in x = ln a(H+) and the ionic strength I (the
system's own mass balance fixes its component), so the whole problem is two
equations per point — the charge balance F and I_computed − I = G — solved
by a two-dimensional Newton iteration with analytic derivatives, all points
at once.  Its result is a :class:`chem._kernel.Result` like the kernel's, so
curves, derivatives and result tables do not know which path ran; points it
does not settle go to the general kernel.  A test checks its residuals and
Jacobian against the general ones.
"""

from __future__ import annotations

import numpy as np

from . import _kernel as K


def solve(inp: K.Inputs, lay: K.Layout, *, max_iter: int = 40) -> K.Result | None:
    """Solve a pure acid–base batch; None when the structure is not one (then use the kernel)."""
    nc = inp.nu.shape[1]
    if inp.eq_rows.shape[0] or (inp.allowed.size and inp.allowed.any()) or inp.z_comp is None:
        return None
    if nc != 1 + lay.comp.size + lay.ion_cols.size or inp.nu.shape[0] != 2 + int(lay.mask.sum()) + lay.ion_cols.size:
        return None                                   # complexes present
    p = inp.points
    idx = np.arange(p)
    u, ionic = K.starting_values(inp, lay, x_tol=0.05)
    tot = inp.totals
    # strong ions react with nothing here: they count as inert
    q = inp.inert_q.copy()
    i_s = inp.inert_i.copy()
    if lay.ion_cols.size:
        zi = inp.z_comp[lay.ion_cols]
        q = q + tot[:, lay.ion_cols] @ zi
        i_s = i_s + 0.5 * tot[:, lay.ion_cols] @ (zi * zi)
    rows = lay.rows
    mask = lay.mask[None]
    j = lay.j[None]
    z = np.where(lay.mask, inp.nu[rows, 1:] @ inp.z_comp[1:] + lay.j, 0.0)[None]   # species charges
    z2 = z * z
    t_s = tot[:, lay.comp][:, :, None]                                                # (P, S, 1)
    x = u[:, 0].copy()
    converged = np.zeros(p, dtype=bool)
    work = np.arange(p)
    ideal = inp.model.ideal
    its = 0
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        for its in range(1, max_iter + 1):
            w_idx = work
            xw, iw = x[w_idx], ionic[w_idx]
            lng = K.ln_gamma(inp, w_idx, iw)
            dlg = K.d_ln_gamma(inp, w_idx, iw)
            lnk = inp.lnk[w_idx]
            ws = np.where(mask, lnk[:, rows] - lng[:, rows] + j * xw[:, None, None], -np.inf)
            ws -= ws.max(axis=2, keepdims=True)
            e = np.exp(ws)
            alpha = e / e.sum(axis=2, keepdims=True)
            dl = np.where(mask, dlg[:, rows], 0.0)
            tw = t_s[w_idx]

            def mean(v):
                return (alpha * v).sum(axis=2)

            zbar, z2bar, jbar, dlbar = mean(z), mean(z2), mean(j), mean(dl)
            var_j = np.maximum(mean(j * j) - jbar * jbar, 0.0)
            cov_z2j = mean(z2 * j) - z2bar * jbar
            cov_zdl = mean(z * dl) - zbar * dlbar
            cov_z2dl = mean(z2 * dl) - z2bar * dlbar
            h = np.exp(xw - lng[:, 0])
            oh = np.exp(lnk[:, lay.oh_row] - lng[:, lay.oh_row] - xw)
            f = q[w_idx] + (tw[:, :, 0] * zbar).sum(axis=1) + h - oh
            fx = (tw[:, :, 0] * var_j).sum(axis=1) + h + oh
            g = i_s[w_idx] + 0.5 * (tw[:, :, 0] * z2bar).sum(axis=1) + 0.5 * (h + oh) - iw
            if ideal:
                dx = -f / fx
                di = g                                      # I follows the species (reported only)
            else:
                fi = -(tw[:, :, 0] * cov_zdl).sum(axis=1) - h * dlg[:, 0] + oh * dlg[:, lay.oh_row]
                gx = 0.5 * (tw[:, :, 0] * cov_z2j).sum(axis=1) + 0.5 * (h - oh)
                gi = -0.5 * (tw[:, :, 0] * cov_z2dl).sum(axis=1) - 0.5 * (h * dlg[:, 0]
                                                                        + oh * dlg[:, lay.oh_row]) - 1.0
                det = fx * gi - fi * gx
                dx = -(f * gi - g * fi) / det
                di = -(fx * g - gx * f) / det
            bad = ~(np.isfinite(dx) & np.isfinite(di))
            scale = np.minimum(1.0, 2.3 / np.maximum(np.abs(dx), 1e-300))
            dx = np.where(bad, 0.0, dx * scale)
            di = np.where(bad, 0.0, di * scale)
            x[w_idx] = xw + dx
            new_i = iw + di
            ionic[w_idx] = np.where(new_i > 0.1 * iw, new_i, 0.1 * iw)
            done = ~bad & (np.abs(dx) < 1e-11) & (np.abs(di) <= 1e-13 * np.abs(iw) + 1e-18)
            converged[w_idx[done]] = True
            work = w_idx[~done & ~bad]
            if bad.any() or work.size == 0:
                break
        # the state: every system's component from its own mass balance at the solved (x, I)
        lng = K.ln_gamma(inp, idx, ionic)
        u = np.zeros((p, nc))
        u[:, 0] = x
        if rows.size:
            ws = np.where(mask, inp.lnk[:, rows] - lng[:, rows] + j * x[:, None, None], -np.inf)
            top = ws.max(axis=2)
            u[:, lay.comp] = np.log(tot[:, lay.comp]) - (top + np.log(np.exp(ws - top[:, :, None]).sum(axis=2)))
        if lay.ion_cols.size:
            u[:, lay.ion_cols] = np.log(tot[:, lay.ion_cols]) + lng[:, lay.ion_rows]
        conc = K.concentrations(inp, idx, u, lng)
        if ideal:
            ionic = K.ionic_of(inp, idx, conc)
        resid = conc @ (inp.nu @ inp.z_comp) + inp.inert_q
        scale = np.abs(conc) @ np.abs(inp.nu @ inp.z_comp) + np.abs(inp.inert_q) + 1e-300
    return K.Result(u=u, ionic=ionic, lng=lng, conc=conc, amounts=np.zeros((p, inp.sol_a.shape[0])),
                    eq_mult=np.zeros((p, 0)), converged=converged, residual=np.abs(resid) / scale,
                    iterations=its)
