"""Vectorised solver kernel: many related mixtures (a sweep, a titration) in one call.

Same equations as the scalar kernel in :mod:`chem._solver`, with a leading
batch axis P on every array:

1. A two-dimensional Newton iteration on (x, I), x = log10 a(H+), with the
   analytic Jacobian of the charge balance F(x, I) and of the ionic-strength
   residual G(x, I) = I_computed - I.  Systems are grouped by their number
   of species and laid out (species, system, point), so the per-system
   moments are sums over the first axis: no padding, one exponential per
   species and point, and a handful of array operations per iteration
   however many systems there are.
2. Points that Newton has not settled (rare: extreme activity corrections)
   go to the safeguarded solve: at fixed activity coefficients the balance
   is strictly increasing in x, so Newton kept inside a bracket (bisection
   whenever a step leaves it) cannot fail; around it, the ionic strength is
   found by a bracketed root search as well (fixed-point steps while they
   contract, then regula falsi).

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

def _d_terms(model: str, ionic, b, size):
    """D(I) and dD/dI in log10 γ = -A z² D(I); the arguments broadcast together.

    For the Davies equation D does not depend on the ion size, and the result
    has the shape of ``ionic``.
    """
    si = np.sqrt(np.maximum(ionic, 0.0))
    sf = np.sqrt(np.maximum(ionic, 1e-16))
    if model == "davies":
        return si / (1.0 + si) - 0.3 * ionic, 1.0 / (2.0 * sf * (1.0 + sf) ** 2) - 0.3
    ba = b * size     # extended Debye–Hückel
    return si / (1.0 + ba * si), 1.0 / (2.0 * sf * (1.0 + ba * sf) ** 2)


class _Constants:
    """Per-point water and Debye–Hückel constants (P,) and the activity model."""

    def __init__(self, model: str, pkw, a, b):
        self.model = model
        self.pkw, self.a, self.b = pkw, a, b

    @classmethod
    def at(cls, model: str, t_c: np.ndarray) -> "_Constants":
        return cls(model, np.asarray(water.pkw(t_c), dtype=float),
                   np.asarray(water.debye_huckel_a(t_c), dtype=float),
                   np.asarray(water.debye_huckel_b(t_c), dtype=float))

    def take(self, idx) -> "_Constants":
        return _Constants(self.model, self.pkw[idx], self.a[idx], self.b[idx])

    def terms(self, ionic, sizes, point_axis: int):
        """Activity terms at ionic strength ``ionic`` (P,).

        Returns ``(ad_s, dd_s, ad_h, dd_h, ad_oh, dd_oh)``: A·D and ln10·A·dD/dI
        of the system species, shaped to broadcast against ``sizes``, then of
        H+ and of OH- (each (P,)).  ``point_axis`` places the point axis: 0
        gives (P, 1) or (P, S) for ``sizes`` shaped (S,); 1 gives (1, P) or
        (S, P) for ``sizes`` shaped (S, 1).
        """
        n = ionic.shape[0]
        shape = (n, 1) if point_axis == 0 else (1, n)
        if self.model == "ideal":
            zero, zero_p = np.zeros(shape), np.zeros(n)
            return zero, zero, zero_p, zero_p, zero_p, zero_p
        a, al = self.a, _LN10 * self.a
        if self.model == "davies":      # one D for every ion
            d, dp = _d_terms("davies", ionic, None, None)
            ad, add = a * d, al * dp
            return ad.reshape(shape), add.reshape(shape), ad, add, ad, add
        d, dp = _d_terms(self.model, ionic.reshape(shape), self.b.reshape(shape), sizes)
        d_h, dp_h = _d_terms(self.model, ionic, self.b, SIZE_H)
        d_oh, dp_oh = _d_terms(self.model, ionic, self.b, SIZE_OH)
        return a.reshape(shape) * d, al.reshape(shape) * dp, a * d_h, al * dp_h, a * d_oh, al * dp_oh


# --------------------------------------------------------------------------
# the Newton stage: systems grouped by their number of species, arrays laid
# out (species, system, point) so that per-system sums run over the first
# axis; no padding, one exponential per species and point.
# --------------------------------------------------------------------------

class _Groups:
    """The systems of a layout grouped by species count, in a permuted order."""

    def __init__(self, lay: _Layout):
        n_species = lay.mask.sum(axis=1)
        order: list[int] = []
        self.parts = []
        for m in np.unique(n_species):
            ids = np.nonzero(n_species == m)[0]
            sl = slice(len(order), len(order) + ids.size)
            order.extend(int(i) for i in ids)
            j = lay.j[ids, :m].T[:, :, None]                    # (m, Sg, 1)
            c = (lay.z[ids, 0] - lay.j[ids, 0])[:, None]        # deprotonated charge, (Sg, 1)
            self.parts.append((sl, ids, int(m), j, c, (c + j) ** 2))
        self.order = np.array(order, dtype=int)
        self.sizes = lay.size[self.order, 0][:, None]          # (S, 1)

    def log_beta(self, log_beta: np.ndarray) -> list[np.ndarray]:
        """(P, S, M) log10 β -> per group (m, Sg, P) in natural-log units."""
        return [np.ascontiguousarray(np.transpose(log_beta[:, ids, :m], (2, 1, 0))) * _LN10
                for _, ids, m, *_ in self.parts]


def _joint(groups: _Groups, cst: _Constants, lbs, tot_t, q, i_s, x, ionic):
    """Charge balance F, ionic-strength residual G and their partial derivatives.

    ``lbs`` is :meth:`_Groups.log_beta` and ``tot_t`` the totals (S, P) in the
    groups' order.  Raw moments of the bound-proton count j give the moments
    of z = c + j.
    """
    ad_s, dd_s, ad_h, dh, ad_oh, doh = cst.terms(ionic, groups.sizes, point_axis=1)
    xl = x * _LN10
    hc = np.exp(_LN10 * (x + ad_h))
    ohc = np.exp(_LN10 * (-cst.pkw - x + ad_oh))
    f = q + hc - ohc
    fx = hc + ohc
    fi = dh * hc - doh * ohc
    ez2 = hc + ohc
    gx = hc - ohc
    gi = dh * hc + doh * ohc
    shared = ad_s.shape[0] == 1
    for (sl, _, _, j, c, z2), lb in zip(groups.parts, lbs):
        ad = ad_s if shared else ad_s[sl]
        dd = dd_s if shared else dd_s[sl]
        e = np.exp(lb + (_LN10 * ad) * z2 + j * xl)
        inv = 1.0 / _sum(e, axis=0)
        ej = e * j
        m1 = _sum(ej, axis=0) * inv
        ej *= j
        m2 = _sum(ej, axis=0) * inv
        ej *= j
        m3 = _sum(ej, axis=0) * inv
        ej *= j
        m4 = _sum(ej, axis=0) * inv
        c2 = c * c
        z2bar = c2 + 2.0 * c * m1 + m2
        var_j = np.maximum(m2 - m1 * m1, 0.0)
        cov = c2 * m1 + 2.0 * c * m2 + m3 - m1 * z2bar
        var_z2 = np.maximum(c2 * c2 + 4.0 * c2 * c * m1 + 6.0 * c2 * m2 + 4.0 * c * m3 + m4
                            - z2bar * z2bar, 0.0)
        tot = tot_t[sl]
        f = f + _sum(tot * (c + m1), axis=0)
        fx = fx + _sum(tot * var_j, axis=0)
        tc = tot * cov
        fi = fi + _sum(dd * tc, axis=0)
        gx = gx + _sum(tc, axis=0)
        ez2 = ez2 + _sum(tot * z2bar, axis=0)
        gi = gi + _sum(dd * tot * var_z2, axis=0)
    return f, i_s + 0.5 * ez2 - ionic, _LN10 * fx, fi, 0.5 * _LN10 * gx, 0.5 * gi - 1.0


# --------------------------------------------------------------------------
# kernel
# --------------------------------------------------------------------------

def solve_batch(lay: _Layout, log_beta: np.ndarray, totals: np.ndarray, q_strong: np.ndarray,
                i_strong: np.ndarray, t_c: np.ndarray, model: str, *, tol: float = 1e-13,
                max_iter: int = 200, x0: np.ndarray | None = None,
                i0: np.ndarray | None = None) -> _Batch:
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
    i0 : ndarray, optional
        Starting values of the ionic strength, mol/L (default: the strong ions').

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
    consts = _Constants.at(model, t_c)
    z2_max = np.where(lay.mask, lay.z * lay.z, 0.0).max(axis=1)
    i_cap = 2.0 * (i_strong + totals @ z2_max) + 1.0

    x = np.full(p, -7.0) if x0 is None else np.clip(np.asarray(x0, dtype=float) * np.ones(p), _X_LO, _X_HI)
    ionic = i_strong.copy() if i0 is None else np.maximum(np.asarray(i0, dtype=float) * np.ones(p), 0.0)
    converged = np.zeros(p, dtype=bool)
    iterations = 0

    # Stage 1: two-dimensional Newton on (x, I), all points at once; points
    # leave the working set as they converge.
    groups = _Groups(lay)
    lbs_all = groups.log_beta(log_beta)
    tot_all = np.ascontiguousarray(totals[:, groups.order].T)
    act = np.arange(p)
    sub = None
    for _ in range(min(40, max_iter)):
        iterations += 1
        if sub is None or sub[0].size != act.size:
            full = act.size == p
            sub = (act, lbs_all if full else [lb[:, :, act] for lb in lbs_all],
                   tot_all if full else tot_all[:, act], q_strong[act], i_strong[act],
                   consts.take(act), i_cap[act])
        _, lbs, tot, q, i_s, cst, cap = sub
        xa, ia = x[act], ionic[act]
        with np.errstate(all="ignore"):     # overflow here sends the point to stage 2
            f, g, fx, fi, gx, gi = _joint(groups, cst, lbs, tot, q, i_s, xa, ia)
            det = fx * gi - fi * gx
            dx = (f * gi - g * fi) / det
            d_i = (fx * g - gx * f) / det
        ok = np.isfinite(dx) & np.isfinite(d_i)
        dx = np.clip(np.where(ok, dx, 0.0), -2.0, 2.0)
        d_i = np.where(ok, d_i, 0.0)
        x_new = np.clip(xa - dx, _X_LO, _X_HI)
        # a Newton step that would cut I below a tenth is replaced by the
        # fixed-point value (the ionic strength the current species make)
        i_new = ia - d_i
        i_new = np.where(i_new > 0.1 * ia, i_new, np.maximum(0.1 * ia, ia + g))
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
                                          i_cap[rest], tol, max_iter)
        x[rest], ionic[rest], converged[rest] = xr, ir, conv_r
        iterations += it

    return _final(lay, consts, log_beta, totals, q_strong, i_strong, x, ionic, converged, iterations)


# --------------------------------------------------------------------------
# padded evaluation (stable for any x) and the safeguarded stage
# --------------------------------------------------------------------------

def _padded(lay: _Layout, cst: _Constants, log_beta, totals, q, x, ionic) -> dict:
    """Everything at (x, I) on the padded layout, with shifted exponents and centred
    moments (stable for any x; used by the safeguarded stage and for the final results)."""
    ad_s, dd_s, ad_h, dh, ad_oh, doh = cst.terms(ionic, lay.size[:, 0], point_axis=0)
    z, jj = lay.z, lay.j
    z2 = z * z
    lg = -ad_s[:, :, None] * z2
    w = log_beta - lg + jj * x[:, None, None]
    e = np.exp((w - _max(w, axis=2, keepdims=True)) * _LN10)     # exp is ~3x faster than power(10, .)
    alpha = e / _sum(e, axis=2, keepdims=True)
    jbar = _sum(alpha * jj, axis=2)
    zbar = _sum(alpha * z, axis=2)
    z2bar = _sum(alpha * z2, axis=2)
    dj = jj - jbar[:, :, None]
    dz2 = z2 - z2bar[:, :, None]
    var_j = _sum(alpha * dj * dj, axis=2)
    cov = _sum(alpha * dj * dz2, axis=2)
    var_z2 = _sum(alpha * dz2 * dz2, axis=2)
    hc = np.exp((x + ad_h) * _LN10)
    ohc = np.exp((-cst.pkw - x + ad_oh) * _LN10)
    f = q + _sum(totals * zbar, axis=1) + hc - ohc
    fx = _LN10 * (_sum(totals * var_j, axis=1) + hc + ohc)
    fi = _sum(totals * dd_s * cov, axis=1) + dh * hc - doh * ohc
    ez2 = _sum(totals * z2bar, axis=1)
    gx = 0.5 * _LN10 * (_sum(totals * cov, axis=1) + hc - ohc)
    gi = 0.5 * (_sum(totals * dd_s * var_z2, axis=1) + dh * hc + doh * ohc) - 1.0
    return dict(alpha=alpha, lg=lg, lg_h=-ad_h, lg_oh=-ad_oh, hc=hc, ohc=ohc, zbar=zbar, z2bar=z2bar,
                f=f, fx=fx, fi=fi, ez2=ez2, gx=gx, gi=gi)


def _safeguarded(lay, cst, log_beta, totals, q, i_s, x, ionic, i_cap, tol, max_iter):
    """Stage 2: a bracketed solve in x inside a bracketed solve in I; cannot fail.

    Inner: at fixed activity coefficients the charge balance is strictly
    increasing in x, so Newton kept inside a bracket (bisection whenever a
    step leaves it) converges.  Outer: R(I) = I_computed(x(I), I) - I is
    positive at I = 0 (water's ions alone give some ionic strength) and
    negative at the cap, so its root can be bracketed too.  The fixed-point
    step I <- I_computed is taken while it contracts quickly; after that,
    regula falsi with the Illinois modification inside the bracket.
    """
    n = x.size
    x = x.copy()
    ionic = ionic.copy()
    cap = i_cap.copy()
    lo, r_lo = np.zeros(n), np.full(n, np.nan)
    hi, r_hi = np.full(n, np.inf), np.full(n, np.nan)
    last_side = np.zeros(n)
    r_prev = np.full(n, np.inf)
    fixed_point = np.ones(n, dtype=bool)
    converged = np.zeros(n, dtype=bool)
    iterations = 0
    for _ in range(200):
        x, inner_ok, it = _bracketed_x(lay, cst, log_beta, totals, q, x, ionic, tol, max_iter - iterations)
        iterations += it
        ev = _padded(lay, cst, log_beta, totals, q, x, ionic)
        new_i = i_s + 0.5 * (ev["ez2"] + ev["hc"] + ev["ohc"])
        if cst.model == "ideal":
            return x, new_i, inner_ok, iterations
        r = new_i - ionic
        converged = inner_ok & (np.abs(r) <= 1e-10 * new_i + 1e-15)
        if converged.all() or iterations >= max_iter:
            break
        up, down = r > 0, r < 0
        # Illinois: when the same end moves twice running, halve the other end's residual
        r_hi = np.where(up & (last_side > 0), 0.5 * r_hi, r_hi)
        r_lo = np.where(down & (last_side < 0), 0.5 * r_lo, r_lo)
        lo, r_lo = np.where(up, ionic, lo), np.where(up, r, r_lo)
        hi, r_hi = np.where(down, ionic, hi), np.where(down, r, r_hi)
        last_side = np.where(up, 1.0, np.where(down, -1.0, last_side))
        fixed_point &= np.abs(r) < 0.5 * np.abs(r_prev)
        r_prev = np.abs(r)
        cap = np.where(up & (ionic >= cap), 10.0 * cap, cap)
        fixed = np.minimum(new_i, cap)
        with np.errstate(all="ignore"):
            secant = (lo * r_hi - hi * r_lo) / (r_hi - r_lo)
        bracketed = np.isfinite(hi)
        middle = np.where(bracketed, 0.5 * (lo + hi), np.minimum(np.maximum(fixed, 2.0 * ionic), cap))
        secant_ok = np.isfinite(secant) & (secant > lo) & (secant < hi)
        use_fixed = (fixed_point | ~bracketed) & (fixed > lo) & (fixed < hi)
        step = np.where(use_fixed, fixed, np.where(secant_ok, secant, middle))
        ionic = np.where(converged, ionic, step)
    return x, ionic, converged, iterations


def _bracketed_x(lay, cst, log_beta, totals, q, x, ionic, tol, budget):
    """Root of the charge balance in x at fixed activity coefficients (those of ``ionic``).

    The bracket is grown outwards from ``x`` (doubling steps), so a good
    starting value costs only a few evaluations.
    """
    def balance(xv):
        return _padded(lay, cst, log_beta, totals, q, xv, ionic)["f"]

    lo, hi = x - 0.05, x + 0.05
    width = np.full(x.size, 0.05)
    for _ in range(12):
        bad_lo = balance(lo) > 0
        bad_hi = balance(hi) < 0
        if not (bad_lo.any() or bad_hi.any()):
            break
        width *= 4.0
        lo = np.where(bad_lo, lo - width, lo)
        hi = np.where(bad_hi, hi + width, hi)
    inner_ok = np.zeros(x.size, dtype=bool)
    iterations = 0
    while iterations < max(budget, 1):
        iterations += 1
        ev = _padded(lay, cst, log_beta, totals, q, x, ionic)
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
    return x, inner_ok, iterations


def _final(lay, consts, log_beta, totals, q, i_s, x, ionic, converged, iterations) -> _Batch:
    """The result arrays at the solution, with the Jacobian there."""
    ev = _padded(lay, consts, log_beta, totals, q, x, ionic)
    hc, ohc, alpha = ev["hc"], ev["ohc"], ev["alpha"]
    if consts.model == "ideal":
        # γ = 1 does not depend on I; report the ionic strength the ions make.
        ionic = i_s + 0.5 * (ev["ez2"] + hc + ohc)
    scale = hc + ohc + _sum(totals * _sum(alpha * np.abs(lay.z), axis=2), axis=1) + np.abs(q) + i_s
    return _Batch(x=x, ionic=ionic, alpha=alpha, lg=ev["lg"], lg_h=ev["lg_h"], lg_oh=ev["lg_oh"],
                  residual=ev["f"], scale=scale, converged=converged, iterations=iterations,
                  h=hc, oh=ohc, zbar=ev["zbar"], z2bar=ev["z2bar"], fx=ev["fx"], fi=ev["fi"],
                  gx=ev["gx"], gi=ev["gi"])


def evaluate_at(lay: _Layout, log_beta: np.ndarray, totals: np.ndarray, q_strong: np.ndarray,
                t_c: np.ndarray, model: str, x: np.ndarray, ionic: np.ndarray) -> dict:
    """Charge balance, ionic-strength terms and their partial derivatives at given (x, I).

    For curves that fix the pH and solve for something else (buffer capacity).
    Returns a dict of (P,) arrays: ``f`` (charge balance, mol/L), ``fx``, ``fi``,
    ``gx``, ``gi`` (as in :class:`_Batch`), ``ez2`` (sum of C_s·mean z² over the
    systems), ``hc``/``ohc`` ([H+], [OH-]) and ``alpha`` (P, S, M).
    """
    p = log_beta.shape[0]
    consts = _Constants.at(model, np.broadcast_to(np.asarray(t_c, dtype=float), (p,)))
    q = np.broadcast_to(np.asarray(q_strong, dtype=float), (p,))
    return _padded(lay, consts, np.asarray(log_beta, dtype=float), np.asarray(totals, dtype=float), q,
                   np.asarray(x, dtype=float), np.asarray(ionic, dtype=float))
