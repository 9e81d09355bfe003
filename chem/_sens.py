"""Derivatives of a solved problem with respect to its constants and amounts, many at once.

Every formation constant of the tableau is a sum of the constants a chemist
tabulates: a system species' log β is a sum of stepwise pKa, a complex's
log K (from the components) adds the log K of the species it is written
with, a solid's b_p subtracts them, and a fixed gas's equality carries its
Henry constant and its dissolved species' log K.  All of these are linear in
the tabulated 25 °C values, at every temperature (van 't Hoff only adds a
term that does not depend on them), and the conversion of quotients stated
at an ionic strength only adds a shift.  So

    log10 K(T) = log10 K(T)|nominal + D · Δθ

exactly, with D a constant matrix of the structure (:func:`constant_derivatives`).
A change Δθ of the constants is therefore a shift of the kernel's inputs
(:func:`shift_inputs`), and the derivatives of the solution with respect to
θ come from the implicit-function theorem, one linear solve for all
constants at once (:func:`solve_columns`).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from . import _kernel as K
from .model import AcidBaseSystem, Complex, Ion
from .problem import LN10, Structure

#: Standard uncertainty assumed for a pKa whose source states none (pH units).
#: Critically selected pKa at 25 °C and I = 0 typically agree between
#: compilations within a few hundredths (common practice).
DEFAULT_PKA_SD = 0.02
#: Standard uncertainty assumed for the log K of a complex, solid or gas whose
#: source states none: formation constants and solubility products typically
#: scatter by about a tenth of a log unit between studies (common practice).
DEFAULT_LOG_K_SD = 0.1


class Constant(NamedTuple):
    """A tabulated constant of a compiled mixture."""

    key: str
    """"pKa:SYSTEM:STEP" (step from 1), "logK:COMPLEX", "logKsp:SOLID" or "logKH:GAS"."""
    kind: str
    """"pKa", "complex", "solid" or "gas"."""
    owner: object
    step: int | None
    """0-based dissociation step of a pKa (None otherwise)."""
    value: float
    """The value as tabulated (25 °C; I = 0 unless the owner states an ionic strength)."""
    sd: float
    """Standard uncertainty: the source's, or the stated default."""
    sd_stated: bool
    """True when the source gives ``sd``; False when it is the default."""


class ConstantDerivatives(NamedTuple):
    """d log10 K / d θ for every row of a structure, one column per constant."""

    constants: tuple[Constant, ...]
    species: np.ndarray
    """(species, constants)."""
    solids: np.ndarray
    """(solids, constants): of b_p / ln 10 = log Ksp − Σ n_r log K_r."""
    gases: np.ndarray
    """(gases, constants): of log10 K_H."""

    def column(self, key: str) -> int:
        for k, c in enumerate(self.constants):
            if c.key == key:
                return k
        raise KeyError(key)


def constant_derivatives(st: Structure) -> ConstantDerivatives:
    """The constants of ``st`` and the (exact, constant) derivatives of every log K by each (cached)."""
    hit = st.cache.get("constant_derivatives")
    if hit is not None:
        return hit
    consts: list[Constant] = []
    for sys_ in st.systems:
        for k, p in enumerate(sys_.pka):
            stated = sys_.pka_sd is not None
            consts.append(Constant(f"pKa:{sys_.name}:{k + 1}", "pKa", sys_, k, float(p),
                                   float(sys_.pka_sd[k]) if stated else DEFAULT_PKA_SD, stated))
    n_pka = len(consts)
    for kind, prefix, items in (("complex", "logK", st.complexes), ("solid", "logKsp", st.solids),
                                ("gas", "logKH", st.gases)):
        for item in items:
            stated = item.log_k_sd is not None
            consts.append(Constant(f"{prefix}:{item.name}", kind, item, None, float(item.log_k),
                                   float(item.log_k_sd) if stated else DEFAULT_LOG_K_SD, stated))
    nk = len(consts)
    ns = st.n_species
    d_sp = np.zeros((ns, nk))
    col = 0
    for s, sys_ in enumerate(st.systems):
        rows = st.sys_rows[s]
        for k in range(sys_.steps):
            for j in range(k + 1):          # log β_j = Σ_{i ≥ j} pKa_i: species j ≤ k carry pKa_k
                d_sp[rows[j], col] = 1.0
            col += 1
    sys_index = {id(s): i for i, s in enumerate(st.systems)}
    cx_row = {info.name: r for r, info in enumerate(st.species) if info.kind == "complex"}

    def term(own, name: str) -> np.ndarray:
        if own is None or isinstance(own, Ion):
            return np.zeros(nk)
        if isinstance(own, AcidBaseSystem):
            i = sys_index.get(id(own))
            if i is None:                   # an equal system object from elsewhere
                i = st.systems.index(own)
            return d_sp[st.sys_rows[i][own.species.index(name)]]
        if isinstance(own, Complex):
            return d_sp[cx_row[own.name]]
        return np.zeros(nk)

    def summed(item) -> np.ndarray:
        out = np.zeros(nk)
        for own, (name, coeff) in zip(item.owners, item.reaction):
            out = out + coeff * term(own, name)
        return out

    base = n_pka
    for q, cx in enumerate(st.complexes):
        row = cx_row[cx.name]
        d_sp[row] = summed(cx)
        d_sp[row, base + q] += 1.0
    base += len(st.complexes)
    d_sol = np.zeros((len(st.solids), nk))
    for q, so in enumerate(st.solids):
        d_sol[q] = -summed(so)
        d_sol[q, base + q] += 1.0
    base += len(st.solids)
    d_gas = np.zeros((len(st.gases), nk))
    for g in range(len(st.gases)):
        d_gas[g, base + g] = 1.0
    for arr in (d_sp, d_sol, d_gas):
        arr.setflags(write=False)
    out = ConstantDerivatives(tuple(consts), d_sp, d_sol, d_gas)
    st.cache["constant_derivatives"] = out
    return out


def _eq_rows_of(st: Structure, der: ConstantDerivatives, cols) -> np.ndarray:
    """d e_k / d θ (ln units) of the fixed-gas equalities: ln K_H − ln K of the dissolved species."""
    out = np.zeros((len(st.fixed), len(cols)))
    for k, g in enumerate(st.fixed):
        out[k] = LN10 * (der.gases[g, cols] - der.species[st.gas_row[g], cols])
    return out


def shift_inputs(inp: K.Inputs, st: Structure, der: ConstantDerivatives, cols, delta) -> None:
    """Shift ``inp`` in place as if constants ``cols`` changed by ``delta`` ((k,) or (P, k))."""
    cols = list(cols)
    if not cols:
        return
    d = np.asarray(delta, dtype=float)
    inp.lnk = inp.lnk + LN10 * (d @ der.species[:, cols].T)
    if st.solids:
        inp.sol_b = inp.sol_b + LN10 * (d @ der.solids[:, cols].T)
    if st.fixed:
        e = _eq_rows_of(st, der, cols)                         # (fixed, k)
        shift = d @ e.T
        ne = inp.eq_rows.shape[0]
        pad = np.zeros(shift.shape[:-1] + (ne,))
        pad[..., :len(st.fixed)] = shift
        inp.eq_rhs = inp.eq_rhs + pad


def columns_rhs(inp: K.Inputs, res: K.Result, *, d_totals=None, d_inert_i=None, d_lnk=None, d_sol_b=None,
                d_eq_rhs=None) -> np.ndarray:
    """Right-hand sides (P, n, k) of the implicit-function theorem for k parameters at once.

    Each argument gives, per point and parameter, the change of: component
    totals (P, nc, k); inert ionic strength (P, k); ln K of the species
    (P, ns, k); the solids' b (P, nq, k); the equalities' right-hand sides
    (P, ne, k).  As :func:`chem._kernel.sensitivity`, extended to many
    parameters and to the solids' constants.
    """
    p = inp.points
    nc = inp.nu.shape[1]
    ne = inp.eq_rows.shape[0]
    nq = inp.sol_a.shape[0]
    k = next(a.shape[-1] for a in (d_totals, d_inert_i, d_lnk, d_sol_b, d_eq_rhs) if a is not None)
    n = nc + 1 + ne + nq
    rhs = np.zeros((p, n, k))
    frozen = inp.model.ideal or inp.fixed_ionic is not None
    if d_totals is not None:
        rhs[:, :nc] += d_totals
    if d_inert_i is not None and not frozen:
        rhs[:, nc] -= d_inert_i
    if d_eq_rhs is not None and ne:
        rhs[:, nc + 1:nc + 1 + ne] += d_eq_rhs
    if d_lnk is not None:
        cd = res.conc[:, :, None] * d_lnk                      # (P, ns, k)
        rhs[:, :nc] -= np.einsum("sj,psk->pjk", inp.nu, cd)
        if not frozen:
            rhs[:, nc] -= 0.5 * np.einsum("s,psk->pk", inp.z2, cd)
    if d_sol_b is not None and nq:
        present = (res.amounts > 0)[:, :, None]
        rhs[:, nc + 1 + ne:] += np.where(present, d_sol_b, 0.0)
    return rhs


def solve_columns(inp: K.Inputs, res: K.Result, rhs: np.ndarray) -> np.ndarray:
    """d(u, I, λ, n)/dθ for every column of ``rhs`` (P, n, k): one factorisation per point."""
    jac = K.jacobian(inp, res)
    return K.linear_solve(jac, rhs, inp.nu.shape[1])


def constant_rhs(inp: K.Inputs, res: K.Result, st: Structure, der: ConstantDerivatives, cols) -> np.ndarray:
    """:func:`columns_rhs` for a unit change of each constant in ``cols``."""
    cols = list(cols)
    p = inp.points
    d_lnk = np.broadcast_to(LN10 * der.species[:, cols][None], (p, st.n_species, len(cols)))
    d_sol = np.broadcast_to(LN10 * der.solids[:, cols][None], (p, len(st.solids), len(cols))) if st.solids \
        else None
    d_eq = None
    ne = inp.eq_rows.shape[0]
    if st.fixed:
        e = np.zeros((ne, len(cols)))
        e[:len(st.fixed)] = _eq_rows_of(st, der, cols)
        d_eq = np.broadcast_to(e[None], (p, ne, len(cols)))
    return columns_rhs(inp, res, d_lnk=d_lnk, d_sol_b=d_sol, d_eq_rhs=d_eq)


def log_conc_derivatives(inp: K.Inputs, res: K.Result, y: np.ndarray, d_lnk=None) -> np.ndarray:
    """d ln c_s / dθ (P, ns, k) from the solution derivatives ``y`` (P, n, k).

    ln c_s = ln K_s − ln γ_s(I) + ν_s·u, so d ln c = d ln K + ν·du − (d ln γ/dI)·dI.
    """
    nc = inp.nu.shape[1]
    du = y[:, :nc]
    d_i = y[:, nc]
    out = np.einsum("sj,pjk->psk", inp.nu, du)
    if not inp.model.ideal and inp.fixed_ionic is None:
        dlng = K.d_ln_gamma(inp, np.arange(inp.points), res.ionic)      # (P, ns)
        out = out - dlng[:, :, None] * d_i[:, None, :]
    if d_lnk is not None:
        out = out + d_lnk
    return out


__all__ = ["Constant", "ConstantDerivatives", "DEFAULT_LOG_K_SD", "DEFAULT_PKA_SD", "columns_rhs", "constant_derivatives",
           "constant_rhs", "log_conc_derivatives", "shift_inputs", "solve_columns"]
