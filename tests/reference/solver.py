"""An independent, high-precision equilibrium solver for a :class:`~tests.reference.spec.Spec`.

Written to be obviously correct rather than fast.  It shares no code with
``chem`` except the properties of water (Kw(T) and the Debye–Hückel A(T),
B(T) of :mod:`chem.water`, tested on their own against published data) and
the ion sizes of the strong ions in ``chem/data/ions.toml``.

Model
-----
Components are H+, the fully deprotonated species of every acid–base system
(a metal ion is a system without a pKa, so its one species) and every
strong ion.  A species s has stoichiometry ν_sj in the components and a
formation constant K_s(T) on the activity scale, so with u_j = ln a_j

    c_s = K_s · exp(Σ_j ν_sj u_j) / γ_s.

At fixed activity coefficients the mass balances Σ_s ν_sj c_s = T_j are
the stationarity conditions of the strictly convex function

    f(u) = Σ_s c_s(u) − Σ_j T_j u_j,

so the equilibrium is its unique minimiser.  A solid p present in the flask
fixes a linear combination of the u (its saturation index is 0), and a gas
held at a pressure fixes the activity of its dissolved species; both are
linear equalities A u = b, and the minimiser of f on that affine set has
Lagrange multipliers that are exactly the amounts of the solids and
(negated) the uptakes from the gases.  The equalities are eliminated
exactly (rational row reduction), leaving an unconstrained convex problem
in the free u, solved by coordinate-wise bracketed line searches and then
damped Newton with a backtracking line search (both converge for a strictly
convex function that grows in every direction).

Which solids are present is found by trying sets of solids until one
satisfies the equilibrium conditions: every present solid has an amount
≥ 0 and every absent allowed solid a saturation index ≤ 0.  At fixed
activity coefficients this is the optimality condition of a convex
programme (minimise f subject to SI_p ≤ 0), so the set that satisfies it
gives the one equilibrium; the order of the trials only changes the
running time.

The ionic strength is a fixed point I = ½ Σ z² c(I), found by fixed-point
iteration with Aitken extrapolation.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from fractions import Fraction
from itertools import combinations
from pathlib import Path

import mpmath as mp

import chem
from chem import water

from .spec import STRONG_REAGENTS, Spec

#: Working precision, decimal digits.
DPS = 50
T0_K = "298.15"
R_J = "8.314462618"     # J/(K·mol), CODATA 2018 exact value of R
KELVIN = "273.15"
#: Ion sizes for the extended Debye–Hückel model, Å (H+ and OH- as the brief of the model says;
#: strong ions from chem/data/ions.toml; everything else 4.0 unless its entry gives one).
H_SIZE, OH_SIZE, DEFAULT_SIZE = "9.0", "3.5", "4.0"


class ReferenceError(Exception):
    """The reference could not solve a mixture (it never returns an unconverged answer)."""


def strong_ions() -> dict[str, tuple[int, float]]:
    """Charge and ion size (Å) of every strong ion of ``chem/data/ions.toml``."""
    path = Path(chem.__file__).resolve().parent / "data" / "ions.toml"
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    return {e["name"]: (int(e["charge"]), float(e.get("ion_size_A", 4.0))) for e in data["ion"]}


# ---------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------
@dataclass(frozen=True)
class RSpecies:
    name: str
    kind: str            # "water", "system", "strong", "complex"
    system: str | None   # the system of a system species
    charge: int
    conc: mp.mpf
    gamma: mp.mpf
    protons: int | None
    """Dissociable protons still bound (system species); None for complexes."""
    units: dict[str, int] | None
    """Units of each system a complex holds; None for other species."""


@dataclass(frozen=True)
class RSystem:
    name: str
    total: mp.mpf
    dissolved: mp.mpf
    free: mp.mpf


@dataclass(frozen=True)
class RSolid:
    name: str
    saturation_index: mp.mpf
    log_k: mp.mpf
    amount: mp.mpf
    allowed: bool
    capacity: mp.mpf
    """Largest amount the totals allow (for tolerances)."""


@dataclass(frozen=True)
class RGas:
    name: str
    pressure: mp.mpf
    dissolved: mp.mpf
    uptake: mp.mpf
    fixed: bool


@dataclass(frozen=True)
class Result:
    pH: mp.mpf
    ionic_strength: mp.mpf
    species: dict[str, RSpecies]
    systems: dict[str, RSystem]
    solids: dict[str, RSolid]
    gases: dict[str, RGas]
    mass_residual: mp.mpf
    """Largest |dissolved + precipitated − total| over the components, relative to its scale."""
    charge_residual: mp.mpf
    """|Σ z c| relative to Σ |z| c."""
    solid_set: tuple[str, ...]


# ---------------------------------------------------------------------------
# Building the tableau from the spec
# ---------------------------------------------------------------------------
@dataclass
class _Sp:
    name: str
    kind: str
    system: str | None
    charge: int
    nu: dict[int, int]
    lnk: mp.mpf
    size: mp.mpf
    protons: int | None = 0
    units: dict[str, int] | None = None


def _ln_k(log_k25, dh_kj, dcp_j, T):
    """ln K at T (K) by van 't Hoff from log10 K at 25 °C, ΔH (kJ/mol) and ΔCp (J/(K·mol))."""
    T0, R = mp.mpf(T0_K), mp.mpf(R_J)
    lnk = mp.mpf(log_k25) * mp.log(10)
    if dh_kj is not None:
        lnk -= mp.mpf(dh_kj) * 1000 / R * (1 / T - 1 / T0)
    if dcp_j is not None:
        lnk += mp.mpf(dcp_j) / R * (T0 / T - 1 + mp.log(T / T0))
    return lnk


def _add(nu_a: dict[int, int], nu_b: dict[int, int], k: int) -> dict[int, int]:
    out = dict(nu_a)
    for j, v in nu_b.items():
        out[j] = out.get(j, 0) + k * v
    return {j: v for j, v in out.items() if v != 0}


class _Problem:
    """Components, species, solids and gases of a spec at its temperature."""

    def __init__(self, spec: Spec):
        self.spec = spec
        ions = strong_ions()
        T = mp.mpf(spec.temperature_c) + mp.mpf(KELVIN)
        ln10 = mp.log(10)
        self.A = mp.mpf(float(water.debye_huckel_a(spec.temperature_c)))
        self.B = mp.mpf(float(water.debye_huckel_b(spec.temperature_c)))
        ln_kw = -mp.mpf(float(water.pkw(spec.temperature_c))) * ln10

        systems = {s.name: s for s in spec.systems}
        fixed = {f.name: f for f in spec.fixed}
        gas_defs = {g.name: g for g in spec.gases}
        owner = {sp: s.name for s in spec.systems for sp in s.species}

        # Totals from the ingredients
        t_h = mp.mpf(0)
        sys_total: dict[str, mp.mpf] = {}
        ion_total: dict[str, mp.mpf] = {}
        for name, conc in spec.ingredients:
            c = mp.mpf(conc)
            if name in systems:
                s = systems[name]
                sys_total[name] = sys_total.get(name, mp.mpf(0)) + c
                t_h += c * s.protons
                counter = s.counter_ions
            else:
                counter = STRONG_REAGENTS[name]
            for ion, n in counter:
                if ion == "H+":
                    t_h += c * n
                elif ion == "OH-":
                    t_h -= c * n
                else:
                    ion_total[ion] = ion_total.get(ion, mp.mpf(0)) + c * n
        # A fixed gas brings its species' system in even without an ingredient
        for f in spec.fixed:
            sys_name = owner[gas_defs[f.name].species]
            sys_total.setdefault(sys_name, mp.mpf(0))

        self.components = ["H+"]
        self.totals = [t_h]
        self.species: list[_Sp] = [
            _Sp("H+", "water", None, 1, {0: 1}, mp.mpf(0), mp.mpf(H_SIZE)),
            _Sp("OH-", "water", None, -1, {0: -1}, ln_kw, mp.mpf(OH_SIZE)),
        ]
        self.system_comp: dict[str, int] = {}
        for s in spec.systems:
            if s.name not in sys_total:
                continue
            j = len(self.components)
            self.components.append(s.species[-1])
            self.totals.append(sys_total[s.name])
            self.system_comp[s.name] = j
            n = len(s.pka)
            ln_ka = [_ln_k(-p, None if s.dh_kj is None else s.dh_kj[i],
                           None if s.dcp_j is None or s.dh_kj is None else s.dcp_j[i], T)
                     for i, p in enumerate(s.pka)]
            size = mp.mpf(s.ion_size if s.ion_size is not None else DEFAULT_SIZE)
            for k, sp_name in enumerate(s.species):
                # species[k] = L + (n - k) H+, ln β = −Σ ln Ka of the last n − k steps
                nu = {j: 1}
                if n - k:
                    nu[0] = n - k
                self.species.append(_Sp(sp_name, "system", s.name, s.charge(k), nu,
                                        -mp.fsum(ln_ka[k:]), size, protons=n - k))
        for ion, total in ion_total.items():
            if total == 0:
                continue
            j = len(self.components)
            self.components.append(ion)
            self.totals.append(total)
            z, size = ions[ion]
            self.species.append(_Sp(ion, "strong", None, z, {j: 1}, mp.mpf(0), mp.mpf(size)))
        by_name = {sp.name: sp for sp in self.species}

        def expand(reaction):
            """Stoichiometry, ln K part and charge of a combination of species; None if one is absent."""
            nu, lnk, z = {}, mp.mpf(0), 0
            for name, k in reaction:
                sp = by_name.get(name)
                if sp is None:
                    return None
                nu = _add(nu, sp.nu, k)
                lnk += k * sp.lnk
                z += k * sp.charge
            return nu, lnk, z

        comp_system = {j: name for name, j in self.system_comp.items()}
        for c in spec.complexes:
            got = expand(c.reaction)
            if got is None:
                continue
            nu, lnk, z = got
            size = mp.mpf(c.ion_size if c.ion_size is not None else DEFAULT_SIZE)
            units = {comp_system[j]: v for j, v in nu.items() if j in comp_system}
            self.species.append(_Sp(c.name, "complex", None, z, nu, lnk + _ln_k(c.log_k, c.dh_kj, None, T), size,
                                    protons=None, units=units))
        by_name = {sp.name: sp for sp in self.species}

        # Solids: w·u = ln Ksp(T) − Σ k ln K_species at saturation
        allowed = spec.precipitate
        self.solids = []            # (name, w, rhs, ln_ksp, allowed)
        for s in spec.solids:
            got = expand(s.reaction)
            if got is None:
                continue
            w, lnk_parts, z = got
            assert z == 0, f"solid {s.name} is not neutral"
            ln_ksp = _ln_k(s.log_k, s.dh_kj, None, T)
            ok = allowed is True or (not isinstance(allowed, bool) and s.name in allowed)
            self.solids.append((s.name, w, ln_ksp - lnk_parts, ln_ksp, ok))
        # Gases: the dissolved species' activity is K_H p when held at p
        self.gases = []             # (name, species index, ln K_H, fixed pressure or None)
        for g in spec.gases:
            if g.species not in by_name:
                continue
            idx = next(i for i, sp in enumerate(self.species) if sp.name == g.species)
            f = fixed.get(g.name)
            self.gases.append((g.name, idx, _ln_k(g.log_k, g.dh_kj, None, T),
                               None if f is None else mp.mpf(f.pressure_atm)))
        for f in spec.fixed:
            assert any(g[0] == f.name for g in self.gases), f"fixed gas {f.name} is not defined"

    # -- activity ------------------------------------------------------------
    def ln_gamma(self, z: int, size, ionic):
        model = self.spec.activity
        if model == "ideal" or z == 0:
            return mp.mpf(0)
        si = mp.sqrt(ionic)
        if model == "davies":
            lg = -self.A * z * z * (si / (1 + si) - mp.mpf("0.3") * ionic)
        elif model == "extended-dh":
            lg = -self.A * z * z * si / (1 + self.B * size * si)
        else:
            raise ValueError(model)
        return lg * mp.log(10)


# ---------------------------------------------------------------------------
# Exact elimination of the equality constraints
# ---------------------------------------------------------------------------
class _Frame:
    """u = e0 + E z: the affine set A u = b with the pivot components eliminated exactly."""

    def __init__(self, rows: list[dict[int, int]], rhs: list, n: int, species: list[_Sp]):
        m = len(rows)
        a = [[Fraction(r.get(j, 0)) for j in range(n)] for r in rows]
        comb = [[Fraction(int(i == k)) for k in range(m)] for i in range(m)]   # a = comb · A
        pivots: list[int] = []
        order = list(range(n - 1, 0, -1)) + [0]      # keep H+ free when possible
        for r in range(m):
            col = next((c for c in order if c not in pivots and a[r][c] != 0), None)
            if col is None:
                raise ValueError("dependent constraints")
            p = a[r][col]
            a[r] = [v / p for v in a[r]]
            comb[r] = [v / p for v in comb[r]]
            for i in range(m):
                if i != r and a[i][col] != 0:
                    f = a[i][col]
                    a[i] = [x - f * y for x, y in zip(a[i], a[r])]
                    comb[i] = [x - f * y for x, y in zip(comb[i], comb[r])]
            pivots.append(col)
        self.pivots = pivots
        self.free = [j for j in range(n) if j not in pivots]
        self.rows, self.n = rows, n
        self.b = [mp.fsum(comb[r][i] * rhs[i] for i in range(m) if comb[r][i] != 0) for r in range(m)]
        # E[j] as {free index k: coefficient} (exact), e0[j]
        self.E: list[dict[int, Fraction]] = [dict() for _ in range(n)]
        self.e0 = [mp.mpf(0)] * n
        for k, j in enumerate(self.free):
            self.E[j] = {k: Fraction(1)}
        for r, p in enumerate(pivots):
            self.E[p] = {k: -a[r][j] for k, j in enumerate(self.free) if a[r][j] != 0}
            self.e0[p] = self.b[r]
        # reduced stoichiometry m_s = ν_s E (sparse) and offsets ν_s · e0
        self.m: list[list[tuple[int, mp.mpf]]] = []
        self.offset: list = []
        for sp in species:
            acc: dict[int, Fraction] = {}
            for j, v in sp.nu.items():
                for k, e in self.E[j].items():
                    acc[k] = acc.get(k, Fraction(0)) + v * e
            self.m.append([(k, mp.mpf(v.numerator) / v.denominator) for k, v in acc.items() if v != 0])
            self.offset.append(mp.fsum(v * self.e0[j] for j, v in sp.nu.items()))
        self.by_var: list[list[tuple[int, mp.mpf]]] = [[] for _ in self.free]
        for s, ms in enumerate(self.m):
            for k, v in ms:
                self.by_var[k].append((s, v))

    def u_of(self, z) -> list:
        return [self.e0[j] + mp.fsum(mp.mpf(e.numerator) / e.denominator * z[k] for k, e in self.E[j].items())
                for j in range(self.n)]

    def reduced_totals(self, totals) -> list:
        out = [mp.mpf(0)] * len(self.free)
        for j, t in enumerate(totals):
            for k, e in self.E[j].items():
                out[k] += mp.mpf(e.numerator) / e.denominator * t
        return out


def _minimise(frame: _Frame, lnk_eff: list, totals_r: list, z: list, tol) -> list:
    """Minimise Σ_s exp(a_s + m_s·z) − T_r·z over z; returns the minimiser."""
    a = [lnk_eff[s] + frame.offset[s] for s in range(len(lnk_eff))]
    nvar = len(z)
    z = list(z)

    def conc(zz):
        return [mp.exp(a[s] + mp.fsum(v * zz[k] for k, v in ms)) for s, ms in enumerate(frame.m)]

    # 1. coordinate sweeps with bracketed 1-D solves of ∂f/∂z_k = 0 (monotone in z_k)
    c = conc(z)
    for _sweep in range(20):
        biggest = mp.mpf(0)
        for k in range(nvar):
            terms = [(c[s], v) for s, v in frame.by_var[k]]

            def d1(t, terms=terms, k=k):
                return mp.fsum(v * cs * mp.exp(v * t) for cs, v in terms) - totals_r[k]

            def d2(t, terms=terms):
                return mp.fsum(v * v * cs * mp.exp(v * t) for cs, v in terms)

            t = _root_1d(d1, d2)
            if t != 0:
                for s, v in frame.by_var[k]:
                    c[s] *= mp.exp(v * t)
                z[k] += t
            biggest = max(biggest, abs(t))
        if biggest < 2:        # orders of magnitude settled: Newton takes over
            break

    # 2. damped Newton on the whole reduced problem
    def objective(cc, zz):
        return mp.fsum(cc) - mp.fsum(t * x for t, x in zip(totals_r, zz))

    c = conc(z)
    for _it in range(300):
        g = [mp.fsum(v * c[s] for s, v in frame.by_var[k]) - totals_r[k] for k in range(nvar)]
        scale = [mp.fsum(abs(v) * c[s] for s, v in frame.by_var[k]) + abs(totals_r[k]) for k in range(nvar)]
        if all(abs(gk) <= tol * sk for gk, sk in zip(g, scale)):
            return z
        H = [[mp.mpf(0)] * nvar for _ in range(nvar)]
        for s, ms in enumerate(frame.m):
            for k1, v1 in ms:
                row, cv = H[k1], c[s] * v1
                for k2, v2 in ms:
                    row[k2] += cv * v2
        # symmetric diagonal scaling keeps the system well conditioned when the c_s span many decades
        d = [1 / mp.sqrt(H[k][k]) for k in range(nvar)]
        scaled = _gauss([[H[i][j] * d[i] * d[j] for j in range(nvar)] for i in range(nvar)],
                        [-g[i] * d[i] for i in range(nvar)])
        step = [scaled[i] * d[i] for i in range(nvar)]
        slope = mp.fsum(g[k] * step[k] for k in range(nvar))
        f0 = objective(c, z)
        noise = mp.mpf(10) ** (-DPS + 8) * (mp.fsum(c) + mp.fsum(abs(t * x) for t, x in zip(totals_r, z)))
        alpha = mp.mpf(1)
        while True:
            z_new = [z[k] + alpha * step[k] for k in range(nvar)]
            c_new = conc(z_new)
            if objective(c_new, z_new) <= f0 + mp.mpf("1e-4") * alpha * slope + noise:
                break
            alpha /= 2
            if alpha < mp.mpf(2) ** -80:
                raise ReferenceError("line search failed")
        z, c = z_new, c_new
    raise ReferenceError("Newton did not converge")


def _gauss(a: list[list], b: list) -> list:
    """Solve a x = b by Gaussian elimination with partial pivoting (a and b are copied)."""
    n = len(b)
    a = [list(row) + [bi] for row, bi in zip(a, b)]
    for col in range(n):
        piv = max(range(col, n), key=lambda r: abs(a[r][col]))
        if a[piv][col] == 0:
            raise ReferenceError("singular Newton system")
        a[col], a[piv] = a[piv], a[col]
        prow = a[col]
        for r in range(col + 1, n):
            f = a[r][col] / prow[col]
            if f:
                row = a[r]
                for k in range(col, n + 1):
                    row[k] -= f * prow[k]
    x = [mp.mpf(0)] * n
    for r in range(n - 1, -1, -1):
        x[r] = (a[r][n] - mp.fsum(a[r][k] * x[k] for k in range(r + 1, n))) / a[r][r]
    return x


def _root_1d(d1, d2):
    """The root of an increasing function ``d1`` (derivative ``d2``), to about 1e-4."""
    f0 = d1(mp.mpf(0))
    if f0 == 0:
        return mp.mpf(0)
    direction = -1 if f0 > 0 else 1
    lo_hi = [mp.mpf(0), None]
    step = mp.mpf(1)
    while True:
        t = direction * step
        if (d1(t) > 0) != (f0 > 0):
            lo_hi[1] = t
            break
        lo_hi[0] = t
        step *= 2
        if step > 1e5:
            raise ReferenceError("1-D bracket not found (a balance cannot be met)")
    lo, hi = sorted(lo_hi)          # d1(lo) < 0 < d1(hi)
    t = (lo + hi) / 2
    for _ in range(200):
        val = d1(t)
        if val > 0:
            hi = t
        else:
            lo = t
        slope = d2(t)
        t_new = t - val / slope if slope > 0 else (lo + hi) / 2
        if not lo < t_new < hi:
            t_new = (lo + hi) / 2
        if abs(t_new - t) < mp.mpf("1e-4"):
            return t_new
        t = t_new
    return t


# ---------------------------------------------------------------------------
# The full solve
# ---------------------------------------------------------------------------
def solve(spec: Spec, *, dps: int = DPS) -> Result:
    """Solve ``spec`` to about ``dps - 12`` significant digits."""
    with mp.workdps(dps):
        return _Solver(_Problem(spec), dps).run()


class _Solver:
    def __init__(self, prob: _Problem, dps: int):
        self.p = prob
        self.tol = mp.mpf(10) ** (-(dps - 12))
        self.frames: dict[tuple[int, ...], _Frame | None] = {}
        n = len(prob.components)
        self.u = [mp.log(t) if t > 0 else mp.log(mp.mpf("1e-10")) for t in prob.totals]
        self.u[0] = mp.log(mp.mpf("1e-7"))
        self.active: tuple[int, ...] = ()
        self.n = n

    # constraint rows: fixed gases always, then the solids of ``subset``
    def frame(self, subset: tuple[int, ...]) -> _Frame | None:
        if subset not in self.frames:
            p = self.p
            rows, rhs = [], []
            for _name, idx, ln_kh, pressure in p.gases:
                if pressure is not None:
                    sp = p.species[idx]
                    rows.append(dict(sp.nu))
                    rhs.append(ln_kh + mp.log(pressure) - sp.lnk)
            for i in subset:
                _name, w, b, _ln_ksp, _ok = p.solids[i]
                rows.append(dict(w))
                rhs.append(b)
            try:
                self.frames[subset] = _Frame(rows, rhs, self.n, p.species)
            except ValueError:
                self.frames[subset] = None
        return self.frames[subset]

    def solve_subset(self, subset, lnk_eff):
        fr = self.frame(subset)
        if fr is None:
            return None
        z0 = [self.u[j] for j in fr.free]
        z = _minimise(fr, lnk_eff, fr.reduced_totals(self.p.totals), z0, self.tol)
        u = fr.u_of(z)
        c = [mp.exp(lnk_eff[s] + mp.fsum(v * u[j] for j, v in sp.nu.items()))
             for s, sp in enumerate(self.p.species)]
        # gradient of f in the full u: dissolved − total, per component
        grad = [mp.fsum(v * c[s] for s, sp in enumerate(self.p.species) for jj, v in sp.nu.items() if jj == j)
                - self.p.totals[j] for j in range(self.n)]
        # multipliers: A^T λ = −grad on the pivot components (a square, non-singular system);
        # on the free components it holds because the reduced gradient is zero
        m = len(fr.rows)
        lam = []
        if m:
            Ap = [[mp.mpf(fr.rows[r].get(pcol, 0)) for r in range(m)] for pcol in fr.pivots]
            lam = _gauss(Ap, [-grad[pcol] for pcol in fr.pivots])
        return u, c, grad, lam

    def si(self, u, i):
        _name, w, b, _ln_ksp, _ok = self.p.solids[i]
        return (mp.fsum(v * u[j] for j, v in w.items()) - b) / mp.log(10)

    def phase_equilibrium(self, lnk_eff):
        """Try solid sets until one meets the equilibrium conditions."""
        p = self.p
        allowed = [i for i, s in enumerate(p.solids) if s[4]]
        n_gas = sum(1 for g in p.gases if g[3] is not None)
        cap = max(abs(t) for t in p.totals)
        tried = set()
        queue = [self.active]
        all_sets = [tuple(sorted(c)) for r in range(len(allowed) + 1) for c in combinations(allowed, r)]
        while True:
            while queue and queue[0] in tried:
                queue.pop(0)
            if not queue:
                rest = [s for s in all_sets if s not in tried]
                if not rest:
                    raise ReferenceError("no set of solids meets the equilibrium conditions")
                queue.append(rest[0])
            subset = queue.pop(0)
            tried.add(subset)
            got = self.solve_subset(subset, lnk_eff)
            if got is None:
                continue
            u, c, grad, lam = got
            amounts = dict(zip(subset, lam[n_gas:]))
            negative = [i for i in subset if amounts[i] < -self.tol * cap]
            over = [(self.si(u, i), i) for i in allowed if i not in subset]
            over = [(s, i) for s, i in over if s > self.tol]
            if not negative and not over:
                self.active = subset
                self.u = u
                return u, c, grad, lam, amounts
            # next guess: drop the most negative amount, else add the most supersaturated solid
            if negative:
                worst = min(negative, key=lambda i: amounts[i])
                queue.insert(0, tuple(i for i in subset if i != worst))
            else:
                queue.insert(0, tuple(sorted(subset + (max(over)[1],))))

    def state_at(self, ionic):
        p = self.p
        lng = [p.ln_gamma(sp.charge, sp.size, ionic) for sp in p.species]
        lnk_eff = [sp.lnk - g for sp, g in zip(p.species, lng)]
        u, c, grad, lam, amounts = self.phase_equilibrium(lnk_eff)
        ionic_new = mp.fsum(sp.charge ** 2 * cs for sp, cs in zip(p.species, c)) / 2
        return ionic_new, (u, c, grad, lam, amounts, lng)

    def run(self) -> Result:
        p = self.p
        if p.spec.activity == "ideal":
            ionic, state = self.state_at(mp.mpf(0))
        else:
            ionic, state = self.fixed_point()
        return self.result(ionic, state)

    def fixed_point(self):
        x0 = mp.mpf(0)
        for _ in range(200):
            x1, s0 = self.state_at(x0)
            if abs(x1 - x0) <= self.tol * x1:
                return x1, s0
            x2, s1 = self.state_at(x1)
            if abs(x2 - x1) <= self.tol * x2:
                return x2, s1
            den = x2 - 2 * x1 + x0
            acc = x0 - (x1 - x0) ** 2 / den if den != 0 else x2
            x0 = acc if acc > 0 and abs(acc - x2) < abs(x2 - x1) * 100 + abs(x2) else x2
        raise ReferenceError("ionic strength did not converge")

    def result(self, ionic, state) -> Result:
        p = self.p
        u, c, grad, lam, amounts, lng = state
        ln10 = mp.log(10)
        species = {sp.name: RSpecies(sp.name, sp.kind, sp.system, sp.charge, cs, mp.exp(g), sp.protons, sp.units)
                   for sp, cs, g in zip(p.species, c, lng)}
        # uptake from each fixed gas: grad = uptake · ν_gas, so uptake = −λ_gas
        uptake_by_comp = [mp.mpf(0)] * self.n
        gases = {}
        r = 0
        for name, idx, ln_kh, pressure in p.gases:
            sp = p.species[idx]
            act = c[idx] * mp.exp(lng[idx])
            if pressure is None:
                gases[name] = RGas(name, act / mp.exp(ln_kh), c[idx], mp.mpf(0), False)
            else:
                up = -lam[r]
                r += 1
                for j, v in sp.nu.items():
                    uptake_by_comp[j] += v * up
                gases[name] = RGas(name, pressure, c[idx], up, True)
        precip_by_comp = [mp.mpf(0)] * self.n
        solids = {}
        for i, (name, w, b, ln_ksp, ok) in enumerate(p.solids):
            amount = amounts.get(i, mp.mpf(0))
            for j, v in w.items():
                precip_by_comp[j] += v * amount
            # the largest amount the totals allow: the scarcest system or strong ion it holds
            capacity = min(((p.totals[j] + uptake_by_comp[j]) / v for j, v in w.items() if j != 0 and v > 0),
                           default=mp.mpf(0))
            solids[name] = RSolid(name, self.si(u, i), ln_ksp / ln10, amount, ok, capacity)
        # balances: dissolved + precipitated = total + uptake, for every component
        worst = mp.mpf(0)
        for j in range(self.n):
            dissolved = mp.fsum(v * c[s] for s, sp in enumerate(p.species) for jj, v in sp.nu.items() if jj == j)
            scale = mp.fsum(abs(v) * c[s] for s, sp in enumerate(p.species) for jj, v in sp.nu.items() if jj == j)
            resid = dissolved + precip_by_comp[j] - p.totals[j] - uptake_by_comp[j]
            scale += abs(p.totals[j]) + abs(precip_by_comp[j]) + abs(uptake_by_comp[j])
            worst = max(worst, abs(resid) / scale)
        charge = mp.fsum(sp.charge * cs for sp, cs in zip(p.species, c))
        charge_scale = mp.fsum(abs(sp.charge) * cs for sp, cs in zip(p.species, c))
        systems = {}
        for name, j in p.system_comp.items():
            dissolved = mp.fsum(sp.nu[j] * c[s] for s, sp in enumerate(p.species) if j in sp.nu)
            free = mp.fsum(c[s] for s, sp in enumerate(p.species) if sp.system == name)
            systems[name] = RSystem(name, p.totals[j] + uptake_by_comp[j], dissolved, free)
        return Result(pH=-u[0] / ln10, ionic_strength=ionic, species=species, systems=systems,
                      solids=solids, gases=gases, mass_residual=worst, charge_residual=abs(charge) / charge_scale,
                      solid_set=tuple(p.solids[i][0] for i in self.active))


__all__ = ["solve", "Result", "RSpecies", "RSystem", "RSolid", "RGas", "ReferenceError", "strong_ions", "DPS"]
