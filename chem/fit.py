"""Fitting a measured titration through the full equilibrium model.

A chemist titrates a sample with a titrant and records pH against volume.
:func:`fit_titration` finds the values of chosen parameters that make the
model's curve match the measured one in the least-squares sense:

* ``amount:INGREDIENT`` — the ingredient's amount in the sample (mol/L);
* ``pKa:SYSTEM:STEP`` — the step's thermodynamic pKa at 25 °C and I = 0
  (step counted from 1, the first proton);
* ``titrant`` — the titrant stock's concentration (mol/L);
* ``offset`` — a constant offset of the electrode: measured = true + offset.

Each point is the sample diluted by the titrant added, V0/(V0+V), plus the
titrant at c_t·V/(V0+V) — the same mixtures :func:`chem.curves.titration`
solves — at the point's temperature, with the preset's activity model.  All
points are solved together by the batch kernel, warm-started from the
previous evaluation.  The Jacobian is analytic: the implicit-function
theorem at the solved points gives dpH/dθ for every parameter in one linear
solve per point (a pKa shifts the ln K of the species that carry it, and of
complexes, solids and gases written with them; an amount or the titrant
shifts the component totals and the inert ionic strength).

Standard errors and correlations come from the Jacobian J at the optimum,
cov = s²(JᵀJ)⁻¹ with s² = Σr²/(N − p) the residual variance.  A parameter the
data cannot determine (a column of J that is zero, or one that is a
combination of others) is refused with a message naming it.

Gran functions (Gran 1952) give an end point from the measured points alone,
independent of the model, as a cross-check for titrations with a strong acid
or strong base.
"""

from __future__ import annotations

import csv
import io
import math
import unicodedata
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Sequence

import numpy as np

from . import _kernel as K
from ._sens import columns_rhs, constant_derivatives, shift_inputs, solve_columns
from ._solver import kernel_inputs, run_kernel
from .curves import CurveError, EquivalencePoint, _equivalence_points, _Family, _peak_indices, ingredient_index
from .errors import ChemError, ModelError
from .library import normalise
from .model import AcidBaseSystem, Ingredient, Mixture, Reagent, format_molar
from .problem import LN10
from .units import MAX_CONC

__all__ = ["FitError", "FitParameter", "FitResult", "FittedValue", "GranEstimate", "TitrationData",
           "fit_titration", "gran_end_points", "parse_parameter", "parse_titration", "read_titration"]

#: Largest data file read, bytes (a titration has tens to thousands of points).
MAX_FILE_BYTES = 5_000_000
#: Most data rows accepted.
MAX_ROWS = 100_000
#: Columns of a data file (matched without regard to case).
VOLUME_COLUMN, PH_COLUMN, TEMPERATURE_COLUMN = "volume_mL", "pH", "temperature_c"
#: A parameter is undetermined when the smallest singular value of the
#: column-normalised Jacobian falls below this fraction of the largest
#: (a correlation closer to ±1 than about 1 − 1e-13).
SINGULAR = 1e-7
#: A column of the Jacobian (pH per unit of the parameter's scale) below this
#: at every point: the parameter does not act on the curve at all.
NO_EFFECT = 1e-9
#: Points of the fitted curve searched for equivalence points.
EP_GRID = 401
#: Gran regions as fractions of the way to the rough end point (common practice:
#: the buffer region short of the end point, far enough on that a weak acid's own
#: dissociation is small beside the base added, and clear excess beyond it).
GRAN_BEFORE = (0.5, 0.95)
GRAN_AFTER = 1.1
#: Smallest steepness of a rough end point of the measured curve, as a fraction of the steepest.
GRAN_PEAK = 0.25

_UNITS = {"amount": "mol/L", "pKa": "", "titrant": "mol/L", "offset": "pH"}


class FitError(ChemError):
    """Measured data or fit settings that cannot be used (one-line message)."""


def clean_text(text: str, limit: int = 40) -> str:
    """``text`` from an untrusted file, safe to show: control and format characters replaced, clipped."""
    out = "".join("?" if unicodedata.category(ch)[0] == "C" else ch for ch in str(text))
    return out if len(out) <= limit else out[:limit - 1] + "…"


# --------------------------------------------------------------------------
# data
# --------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class TitrationData:
    """Measured points: titrant volume added (mL), pH read, and optionally the temperature (°C)."""

    volume_mL: np.ndarray
    pH: np.ndarray
    temperature_c: np.ndarray | None = None
    """Per point (NaN where the file left the cell empty: the preset's temperature), or None."""
    label: str = "data"
    """Where the data came from (a file name), cleaned for display."""

    def __post_init__(self) -> None:
        v = np.array(self.volume_mL, dtype=float)
        ph = np.array(self.pH, dtype=float)
        t = None if self.temperature_c is None else np.array(self.temperature_c, dtype=float)
        if v.ndim != 1 or ph.shape != v.shape or (t is not None and t.shape != v.shape):
            raise FitError(f"{self.label}: volumes, pH and temperatures must be equally long lists")
        if v.size == 0:
            raise FitError(f"{self.label}: no data rows")
        if not (np.all(np.isfinite(v)) and np.all(np.isfinite(ph))):
            raise FitError(f"{self.label}: volumes and pH must be finite numbers")
        if np.any(v < 0):
            raise FitError(f"{self.label}: volumes cannot be negative")
        if v.size > 1 and np.any(np.diff(v) <= 0):
            i = int(np.nonzero(np.diff(v) <= 0)[0][0])
            raise FitError(f"{self.label}: volumes must increase from point to point "
                           f"(point {i + 2}: {v[i + 1]:g} mL after {v[i]:g} mL)")
        if np.any(ph < -2) or np.any(ph > 16):
            raise FitError(f"{self.label}: pH values must lie between -2 and 16")
        if t is not None:
            known = t[np.isfinite(t)]
            if np.any(known < 0) or np.any(known > 100):
                raise FitError(f"{self.label}: temperatures must lie between 0 and 100 °C")
        for name, arr in (("volume_mL", v), ("pH", ph), ("temperature_c", t)):
            if arr is not None:
                arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    def __len__(self) -> int:
        return int(self.volume_mL.size)

    @property
    def last_volume_L(self) -> float:
        """The largest titrant volume measured, L."""
        return float(self.volume_mL[-1]) / 1000.0

    def temperatures(self, default: float) -> np.ndarray:
        """Temperature of every point, °C (``default`` where the data give none)."""
        if self.temperature_c is None:
            return np.full(len(self), float(default))
        return np.where(np.isfinite(self.temperature_c), self.temperature_c, float(default))


def read_titration(path) -> TitrationData:
    """Read a measured titration from a CSV file (see :func:`parse_titration`)."""
    p = Path(path)
    label = clean_text(p.name, 60)
    try:
        size = p.stat().st_size
        if size > MAX_FILE_BYTES:
            raise FitError(f"{label}: larger than {MAX_FILE_BYTES // 1_000_000} MB; not a titration file")
        raw = p.read_bytes()
    except FileNotFoundError:
        raise FitError(f"{label}: no such file") from None
    except IsADirectoryError:
        raise FitError(f"{label}: is a folder, not a data file") from None
    except OSError as exc:
        raise FitError(f"{label}: cannot read ({exc.strerror})") from None
    return parse_titration(raw, label)


def parse_titration(raw: bytes | str, label: str = "data") -> TitrationData:
    """Measured points from CSV text.

    The first line that is not blank and not a ``#`` comment is the header; it
    must name ``volume_mL`` and ``pH`` (any case); ``temperature_c`` is read
    when present (an empty cell: the preset's temperature); other columns are
    ignored.  Cells are separated by commas (or semicolons, or tabs, when the
    header has no comma).  Every error names the row and the column.
    """
    label = clean_text(label, 60)
    if isinstance(raw, bytes):
        if len(raw) > MAX_FILE_BYTES:
            raise FitError(f"{label}: larger than {MAX_FILE_BYTES // 1_000_000} MB; not a titration file")
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError:
            raise FitError(f"{label}: not UTF-8 text") from None
    else:
        text = raw[1:] if raw.startswith("\ufeff") else raw
    lines = text.splitlines()
    header_at = next((i for i, line in enumerate(lines) if line.strip() and not line.lstrip().startswith("#")),
                     None)
    if header_at is None:
        raise FitError(f"{label}: empty; expected a header row naming {VOLUME_COLUMN} and {PH_COLUMN}")
    head = lines[header_at]
    delim = "," if "," in head else ";" if ";" in head else "\t" if "\t" in head else ","
    names = [c.strip() for c in next(csv.reader([head], delimiter=delim))]
    keys = [n.casefold() for n in names]
    seen = set()
    for k, n in zip(keys, names):
        if k in seen and k in (VOLUME_COLUMN.casefold(), PH_COLUMN.casefold(), TEMPERATURE_COLUMN.casefold()):
            raise FitError(f"{label}: column '{clean_text(n)}' appears twice in the header")
        seen.add(k)

    def column(name: str, required: bool) -> int | None:
        try:
            return keys.index(name.casefold())
        except ValueError:
            if required:
                shown = ", ".join(clean_text(n, 20) for n in names[:8]) or "nothing"
                raise FitError(f"{label}: no '{name}' column in the header (it names: {shown})") from None
            return None

    iv, iph, it = column(VOLUME_COLUMN, True), column(PH_COLUMN, True), column(TEMPERATURE_COLUMN, False)
    vols, phs, temps = [], [], []
    reader = csv.reader(io.StringIO("\n".join(lines[header_at + 1:])), delimiter=delim)
    for offset, row in enumerate(reader):
        line_no = header_at + 2 + offset
        if not row or all(not c.strip() for c in row) or row[0].lstrip().startswith("#"):
            continue
        if len(vols) >= MAX_ROWS:
            raise FitError(f"{label}: more than {MAX_ROWS} data rows")

        def cell(idx: int, name: str, allow_empty: bool = False) -> float:
            if idx >= len(row):
                raise FitError(f"{label}: row {line_no}: no {name} cell")
            text_ = row[idx].strip()
            if not text_ and allow_empty:
                return math.nan
            try:
                value = float(text_)
            except ValueError:
                raise FitError(f"{label}: row {line_no}, column {name}: '{clean_text(text_)}' is not a number") \
                    from None
            if not math.isfinite(value):
                raise FitError(f"{label}: row {line_no}, column {name}: '{clean_text(text_)}' is not a finite number")
            return value

        vols.append(cell(iv, VOLUME_COLUMN))
        phs.append(cell(iph, PH_COLUMN))
        if it is not None:
            temps.append(cell(it, TEMPERATURE_COLUMN, allow_empty=True))
    if not vols:
        raise FitError(f"{label}: no data rows under the header")
    return TitrationData(np.array(vols), np.array(phs), np.array(temps) if it is not None else None, label)


# --------------------------------------------------------------------------
# parameters
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class FitParameter:
    """One quantity the fit may vary."""

    name: str
    """As the user wrote it (``amount:acetic acid``, ``pKa:acetate:1``, ``titrant``, ``offset``)."""
    kind: str
    """"amount", "pKa", "titrant" or "offset"."""
    index: int | None = None
    """Ingredient index (amount) or system index in the fit's structure (pKa)."""
    step: int | None = None
    """0-based dissociation step (pKa)."""
    system: AcidBaseSystem | None = None

    @property
    def unit(self) -> str:
        return _UNITS[self.kind]


def _find_system(name: str, mixture: Mixture, titrant: Reagent | None) -> AcidBaseSystem:
    key = normalise(name)
    systems = [s for s, _ in mixture.systems()]
    if titrant is not None:
        systems += [s for s, _ in titrant.systems if s not in systems]
    for s in systems:
        if key in {normalise(s.name), *(normalise(a) for a in s.aliases)}:
            return s
    reagents = [i.reagent for i in mixture.ingredients] + ([titrant] if titrant is not None else [])
    for r in reagents:
        names = {normalise(r.name), *(normalise(a) for a in r.aliases)}
        if r.formula:
            names.add(normalise(r.formula))
        if key in names and len(r.systems) == 1:
            return r.systems[0][0]
    known = ", ".join(s.name for s in systems if s.steps) or "none"
    raise FitError(f"--vary pKa:{clean_text(name)}: no acid–base system of that name in the sample or the "
                   f"titrant (systems: {known})")


def parse_parameter(text: str, mixture: Mixture, titrant: Reagent | None = None) -> FitParameter:
    """Read one ``--vary`` entry: ``amount:INGREDIENT``, ``pKa:SYSTEM:STEP``, ``titrant`` or ``offset``."""
    if not isinstance(text, str) or not text.strip():
        raise FitError("--vary: give amount:INGREDIENT, pKa:SYSTEM:STEP, titrant or offset")
    raw = text.strip()
    kind, _, rest = raw.partition(":")
    kind_key = kind.strip().casefold()
    if kind_key in ("titrant", "offset") and not rest:
        return FitParameter(text, kind_key)
    if kind_key == "amount" and rest.strip():
        try:
            idx = ingredient_index(mixture, rest.strip())
        except CurveError as exc:
            raise FitError(f"--vary {clean_text(raw, 60)}: {exc}") from None
        return FitParameter(text, "amount", index=idx)
    if kind_key == "pka" and rest.strip():
        sys_name, sep, step_text = rest.rpartition(":")
        if not sep or not sys_name.strip():
            raise FitError(f"--vary {clean_text(raw, 60)}: write pKa:SYSTEM:STEP, e.g. pKa:acetate:1")
        try:
            step = int(step_text.strip())
        except ValueError:
            raise FitError(f"--vary {clean_text(raw, 60)}: the step must be a whole number from 1 "
                           f"(got '{clean_text(step_text)}')") from None
        sys_ = _find_system(sys_name.strip(), mixture, titrant)
        if not 1 <= step <= sys_.steps:
            raise FitError(f"--vary {clean_text(raw, 60)}: {sys_.name} has "
                           f"{sys_.steps} step{'s' * (sys_.steps != 1)}; use a step from 1 to {sys_.steps}"
                           if sys_.steps else f"--vary {clean_text(raw, 60)}: {sys_.name} binds no proton")
        return FitParameter(text, "pKa", step=step - 1, system=sys_)
    raise FitError(f"--vary {clean_text(raw, 60)}: not a parameter; use amount:INGREDIENT, pKa:SYSTEM:STEP, "
                   "titrant or offset")


# --------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------

@dataclass(frozen=True)
class FittedValue:
    name: str
    value: float
    stderr: float | None
    """Standard error (None when the points leave no degree of freedom)."""
    unit: str
    start: float


@dataclass(frozen=True)
class GranEstimate:
    """An end point from a Gran function of the measured points (independent of the model)."""

    branch: str
    """"before" (short of the end point) or "after" (titrant in excess)."""
    function: str
    """The Gran function used, e.g. "V·10^-pH"."""
    volume_mL: float
    sd_mL: float
    """Standard error of the intercept, from the straight-line fit."""
    points: int
    r2: float


@dataclass(frozen=True, eq=False)
class FitResult:
    """The outcome of :func:`fit_titration`. Read ``converged`` before trusting the numbers."""

    converged: bool
    message: str
    parameters: tuple[FittedValue, ...]
    correlation: np.ndarray
    rms_pH: float
    residuals: np.ndarray
    """Measured minus fitted pH at every point."""
    fitted_pH: np.ndarray
    """The fitted curve at every point, on the electrode's scale (true pH + offset)."""
    data: TitrationData
    dof: int
    evaluations: int
    equivalence_points: tuple[EquivalencePoint, ...]
    gran: tuple[GranEstimate, ...]
    mixture: Mixture | None
    """The fitted sample (amounts and constants as fitted), or None when it cannot be written."""
    titrant: Reagent
    titrant_conc: float
    """mol/L, as fitted (or as given)."""
    sample_volume_L: float
    notes: tuple[str, ...] = ()
    offset: float = 0.0

    def __post_init__(self) -> None:
        for name in ("correlation", "residuals", "fitted_pH"):
            getattr(self, name).setflags(write=False)

    def value(self, name: str) -> FittedValue:
        for p in self.parameters:
            if p.name == name:
                return p
        raise KeyError(name)

    def to_dict(self) -> dict:
        """The JSON object of ``protomix fit --json``."""
        def num(x):
            return None if x is None or not math.isfinite(x) else float(x)

        return {
            "converged": bool(self.converged),
            "message": self.message,
            "parameters": [{"name": p.name, "value": num(p.value), "stderr": num(p.stderr), "unit": p.unit,
                            "start": num(p.start)} for p in self.parameters],
            "rms_pH": num(self.rms_pH),
            "points": len(self.data),
            "residuals": [num(r) for r in self.residuals],
            "correlation": [[num(c) for c in row] for row in self.correlation],
            "degrees_of_freedom": self.dof,
            "evaluations": self.evaluations,
            "data": [{"volume_mL": num(v), "pH": num(m), "fitted_pH": num(f)}
                     for v, m, f in zip(self.data.volume_mL, self.data.pH, self.fitted_pH)],
            "equivalence_points": [{"volume_mL": num(e.volume_mL), "pH": num(e.pH),
                                    "pH_measured_scale": num(e.pH + self.offset)}
                                   for e in self.equivalence_points],
            "gran": [{"branch": g.branch, "function": g.function, "volume_mL": num(g.volume_mL),
                      "sd_mL": num(g.sd_mL), "points": g.points, "r2": num(g.r2)} for g in self.gran],
            "titrant": {"name": self.titrant.name, "conc_M": num(self.titrant_conc)},
            "sample_volume_mL": num(self.sample_volume_L * 1000.0),
            "notes": list(self.notes),
        }


# --------------------------------------------------------------------------
# the model
# --------------------------------------------------------------------------

class _Model:
    """The titration model at the measured points (and, for the fitted curve, at any volumes)."""

    def __init__(self, mixture: Mixture, data: TitrationData, titrant: Reagent, c_t: float, v0: float,
                 params: Sequence[FitParameter]):
        self.mixture = mixture
        self.params = tuple(params)
        self.v0 = v0
        self.c_t0 = c_t
        self.amount_idx = [p.index for p in params if p.kind == "amount"]
        varied = set(self.amount_idx)
        fixed = tuple(ing for i, ing in enumerate(mixture.ingredients) if i not in varied)
        parts = [fixed] + [(mixture.ingredients[i].with_conc(1.0),) for i in self.amount_idx] + \
            [(Ingredient(titrant, 1.0),)]
        self.fam = _Family(mixture.with_ingredient(Ingredient(titrant, 0.0)), parts)
        self.st = self.fam.st
        self.der = constant_derivatives(self.st)
        self.pka_cols = []
        for p in params:
            if p.kind == "pKa":
                self.pka_cols.append(self.der.column(f"pKa:{p.system.name}:{p.step + 1}"))
        self.data_v = data.volume_mL / 1000.0
        self.data_t = data.temperatures(mixture.temperature_c)
        self.x0 = np.array([self._start(p) for p in params])
        self.data_inp = self._base(self.data_t)
        self.start = None

    def _start(self, p: FitParameter) -> float:
        if p.kind == "amount":
            return float(self.mixture.ingredients[p.index].conc)
        if p.kind == "titrant":
            return float(self.c_t0)
        if p.kind == "offset":
            return 0.0
        st = self.st
        s = st.systems.index(p.system)
        rows = st.sys_rows[s]
        lk = st.logk.log_k25
        return float(lk[rows[p.step]] - lk[rows[p.step + 1]])     # thermodynamic (I = 0) at 25 °C

    def _base(self, temps: np.ndarray):
        n = temps.size
        inp = kernel_inputs(self.fam.prob, t_c=temps, totals=np.ones((n, self.st.n_components)),
                            inert_i=np.zeros(n), inert_q=np.zeros(n))
        return inp, inp.lnk.copy(), inp.sol_b.copy(), inp.eq_rhs.copy()

    def values(self, x) -> dict[str, float]:
        out = {"titrant": self.c_t0, "offset": 0.0}
        amounts = []
        for p, v in zip(self.params, x):
            if p.kind == "amount":
                amounts.append(v)
            elif p.kind in ("titrant", "offset"):
                out[p.kind] = float(v)
        out["amounts"] = amounts
        return out

    def weights(self, x, v: np.ndarray) -> np.ndarray:
        vals = self.values(x)
        f = self.v0 / (self.v0 + v)
        g = v / (self.v0 + v)
        cols = [f] + [f * a for a in vals["amounts"]] + [vals["titrant"] * g]
        return np.column_stack(cols)

    def d_weights_dv(self, x, v: np.ndarray) -> np.ndarray:
        """d weights / dV per litre of titrant."""
        vals = self.values(x)
        df = -self.v0 / (self.v0 + v) ** 2
        dg = self.v0 / (self.v0 + v) ** 2
        return np.column_stack([df] + [df * a for a in vals["amounts"]] + [vals["titrant"] * dg])

    def prepare(self, x, v: np.ndarray, base) -> K.Inputs:
        inp, lnk, sol_b, eq_rhs = base
        w = self.weights(x, v)
        tot, _ = self.fam.totals(w)
        inp.totals = tot
        inp.inert_i = w @ self.fam.inert_i
        if inp.inert_q is not None:                 # the kernel closes the charge balance with it
            inp.inert_q = w @ self.fam.inert_q
        inp.lnk, inp.sol_b, inp.eq_rhs = lnk, sol_b, eq_rhs
        if self.pka_cols:
            delta = np.array([x[k] - self.x0[k] for k, p in enumerate(self.params) if p.kind == "pKa"])
            shift_inputs(inp, self.st, self.der, self.pka_cols, delta)
        return inp

    def solve(self, x, v: np.ndarray, base, start=None) -> tuple[K.Inputs, K.Result]:
        inp = self.prepare(x, v, base)
        if start is not None:
            res = run_kernel(self.fam.prob, inp, u0=start[0], i0=start[1])
            if bool(np.all(res.converged)):
                return inp, res
        res = run_kernel(self.fam.prob, inp)
        return inp, res

    def jacobian(self, x, v: np.ndarray, inp: K.Inputs, res: K.Result) -> np.ndarray:
        """d pH_measured / dθ at every point, (P, parameters)."""
        p_n = v.size
        k_n = len(self.params)
        nc = self.st.n_components
        f = self.v0 / (self.v0 + v)
        g = v / (self.v0 + v)
        solver_cols = [k for k, p in enumerate(self.params) if p.kind != "offset"]
        out = np.zeros((p_n, k_n))
        if solver_cols:
            m = len(solver_cols)
            d_tot = np.zeros((p_n, nc, m))
            d_in = np.zeros((p_n, m))
            d_lnk = np.zeros((p_n, self.st.n_species, m))
            nq = len(self.st.solids)
            d_sol = np.zeros((p_n, nq, m)) if nq else None
            ne = inp.eq_rows.shape[0]
            d_eq = np.zeros((p_n, ne, m)) if ne else None
            amount_part = 0
            pka_n = 0
            fam = self.fam
            for c, k in enumerate(solver_cols):
                p = self.params[k]
                if p.kind == "amount":
                    amount_part += 1
                    d_tot[:, :, c] = f[:, None] * fam.tot[amount_part][None, :]
                    d_in[:, c] = f * fam.inert_i[amount_part]
                elif p.kind == "titrant":
                    d_tot[:, :, c] = g[:, None] * fam.tot[-1][None, :]
                    d_in[:, c] = g * fam.inert_i[-1]
                else:
                    col = self.pka_cols[pka_n]
                    pka_n += 1
                    d_lnk[:, :, c] = LN10 * self.der.species[:, col][None, :]
                    if nq:
                        d_sol[:, :, c] = LN10 * self.der.solids[:, col][None, :]
                    if self.st.fixed:
                        for kk, gg in enumerate(self.st.fixed):
                            d_eq[:, kk, c] = LN10 * (self.der.gases[gg, col]
                                                     - self.der.species[self.st.gas_row[gg], col])
            rhs = columns_rhs(inp, res, d_totals=d_tot, d_inert_i=d_in, d_lnk=d_lnk, d_sol_b=d_sol, d_eq_rhs=d_eq)
            y = solve_columns(inp, res, rhs)
            out[:, solver_cols] = -y[:, 0, :] / LN10
        for k, p in enumerate(self.params):
            if p.kind == "offset":
                out[:, k] = 1.0
        return out

    def offset(self, x) -> float:
        return self.values(x)["offset"]


# --------------------------------------------------------------------------
# the fit
# --------------------------------------------------------------------------

def _scale(params: Sequence[FitParameter], x0: np.ndarray) -> np.ndarray:
    """A natural size of each parameter: relative for amounts and the titrant, 1 pH unit otherwise."""
    return np.array([max(abs(v), 1e-12) if p.kind in ("amount", "titrant") else 1.0 for p, v in zip(params, x0)])


def _undetermined(jac: np.ndarray, params: Sequence[FitParameter], scale: np.ndarray) -> str | None:
    """A message naming a parameter the Jacobian cannot determine, or None."""
    js = jac * scale[None, :]
    norms = np.sqrt(np.sum(js * js, axis=0))
    for k, p in enumerate(params):
        if not norms[k] > NO_EFFECT:
            return (f"the data cannot determine {p.name}: it does not change the computed pH at any "
                    "measured point")
    if len(params) < 2:
        return None
    jn = js / norms[None, :]
    _, s, vt = np.linalg.svd(jn, full_matrices=False)
    if s[-1] < SINGULAR * s[0]:
        null = np.abs(vt[-1])
        order = np.argsort(-null)
        a, b = params[order[0]].name, params[order[1]].name
        return (f"the data cannot determine {a}: its effect on the curve cannot be told apart from "
                f"that of {b} (singular Jacobian); fix one of them")
    return None


def fit_titration(mixture: Mixture, data: TitrationData, titrant: Reagent, titrant_conc: float,
                  sample_volume_L: float, vary: Sequence[str | FitParameter], *,
                  max_evaluations: int = 200) -> FitResult:
    """Fit parameters of a titration model to measured points.

    Parameters
    ----------
    mixture : Mixture
        The sample as believed (amounts and constants are the starting
        guesses; its temperature and activity model apply).
    data : TitrationData
        Measured volumes (mL of titrant added) and pH.
    titrant : Reagent
        The reagent added.
    titrant_conc : float
        Its stock concentration, mol/L (the starting guess when ``titrant``
        is varied).
    sample_volume_L : float
        Volume of the sample titrated, L.
    vary : sequence of str
        ``amount:INGREDIENT``, ``pKa:SYSTEM:STEP``, ``titrant``, ``offset``.
    max_evaluations : int
        Cap on model evaluations.

    Returns
    -------
    FitResult
        Fitted values with standard errors, correlation matrix, residuals,
        rms residual (pH), equivalence points of the fitted curve, Gran end
        points, and the fitted sample.
    """
    from scipy.optimize import least_squares   # noqa: PLC0415 - scipy.optimize takes ~0.5 s to import

    if not isinstance(data, TitrationData):
        raise FitError("data must be a TitrationData (see chem.fit.read_titration)")
    if not isinstance(titrant, Reagent):
        raise FitError(f"titrant must be a reagent (got {titrant!r})")
    c_t = _positive(titrant_conc, "titrant concentration", MAX_CONC)
    v0 = _positive(sample_volume_L, "sample volume", 1000.0)
    params = [p if isinstance(p, FitParameter) else parse_parameter(p, mixture, titrant) for p in vary]
    if not params:
        raise FitError("nothing to fit: give at least one --vary")
    names = [p.name.strip().casefold() for p in params]
    keys = [(p.kind, p.index, p.system.name if p.system else None, p.step) for p in params]
    for i in range(len(params)):
        if keys[i] in keys[:i] or names[i] in names[:i]:
            raise FitError(f"--vary {clean_text(params[i].name, 60)} is given twice")
    n, k = len(data), len(params)
    if n < k:
        raise FitError(f"{data.label}: {n} point{'s' * (n != 1)} cannot determine {k} parameters "
                       "(need at least as many points as parameters)")
    for p in params:
        if p.kind == "amount" and not mixture.ingredients[p.index].conc > 0:
            raise FitError(f"--vary {clean_text(p.name, 60)}: give a starting amount above zero in the sample")

    model = _Model(mixture, data, titrant, c_t, v0, params)
    x0 = model.x0
    scale = _scale(params, x0)
    lo = np.array([0.0 if p.kind == "amount" else 1e-12 if p.kind == "titrant" else -3.0 if p.kind == "pKa"
                   else -3.0 for p in params])
    hi = np.array([MAX_CONC if p.kind in ("amount", "titrant") else 17.0 if p.kind == "pKa" else 3.0
                   for p in params])
    measured = data.pH
    v = model.data_v
    cache: dict = {}

    def evaluate(x):
        key = x.tobytes()
        hit = cache.get("key")
        if hit == key:
            return cache["inp"], cache["res"]
        inp, res = model.solve(x, v, model.data_inp, model.start)
        model.start = (res.u.copy(), res.ionic.copy())
        cache.update(key=key, inp=inp, res=res)
        return inp, res

    def fun(x):
        _, res = evaluate(x)
        r = -res.u[:, 0] / LN10 + model.offset(x) - measured
        return np.where(np.isfinite(r), r, 1e3)

    def jac(x):
        inp, res = evaluate(x)
        j = model.jacobian(x, v, inp, res)
        return np.where(np.isfinite(j), j, 0.0)

    j0 = jac(x0)
    why = _undetermined(j0, params, scale)
    if why:
        raise FitError(why)
    sol = least_squares(fun, x0, jac=jac, bounds=(lo, hi), x_scale=scale, method="trf", ftol=1e-12, xtol=1e-12,
                        gtol=1e-12, max_nfev=max_evaluations)
    x = sol.x
    r = fun(x)
    inp, res = evaluate(x)
    jf = jac(x)
    why = _undetermined(jf, params, scale)
    if why:
        raise FitError(why)
    dof = n - k
    ssr = float(r @ r)
    rms = math.sqrt(ssr / n)
    js = jf * scale[None, :]
    u_, s, vt = np.linalg.svd(js, full_matrices=False)
    inv = (vt.T / s ** 2) @ vt * np.outer(scale, scale)          # (JᵀJ)⁻¹ = D (JsᵀJs)⁻¹ D, J = Js D⁻¹
    if dof > 0:
        cov = inv * ssr / dof
        se = np.sqrt(np.maximum(np.diag(cov), 0.0))
    else:
        cov = inv
        se = np.full(k, np.nan)
    d = np.sqrt(np.maximum(np.diag(inv), 1e-300))
    corr = inv / np.outer(d, d)
    np.fill_diagonal(corr, 1.0)
    all_ok = bool(np.all(res.converged))
    converged = bool(sol.success) and all_ok
    notes: list[str] = []
    if not all_ok:
        bad = int((~np.asarray(res.converged)).sum())
        notes.append(f"{bad} point{'s' * (bad != 1)} of the model did not converge at the fitted values")
    at_bound = [p.name for p, xv, a, b in zip(params, x, lo, hi) if xv <= a + 1e-12 * max(1, abs(a))
                or xv >= b - 1e-12 * max(1, abs(b))]
    if at_bound:
        notes.append("at the edge of its allowed range (standard error not meaningful): " + ", ".join(at_bound))
    if dof == 0:
        notes.append("as many parameters as points: no standard errors")
    message = sol.message if converged else f"not converged: {sol.message}"
    values = tuple(FittedValue(p.name, float(xv), None if not math.isfinite(e) else float(e), p.unit, float(s0))
                   for p, xv, e, s0 in zip(params, x, se, x0))
    offset = model.offset(x)
    fitted = -res.u[:, 0] / LN10 + offset
    eqp = _fitted_end_points(model, x, data)
    gran = gran_end_points(data, v0, titrant)
    fitted_mix, mix_note = _fitted_mixture(mixture, model, values, data.label)
    if mix_note:
        notes.append(mix_note)
    c_fit = model.values(x)["titrant"]
    return FitResult(converged=converged, message=str(message), parameters=values, correlation=corr,
                     rms_pH=rms, residuals=measured - fitted, fitted_pH=fitted, data=data, dof=dof,
                     evaluations=int(sol.nfev), equivalence_points=eqp, gran=gran, mixture=fitted_mix,
                     titrant=titrant, titrant_conc=float(c_fit), sample_volume_L=v0, notes=tuple(notes),
                     offset=float(offset))


def _positive(value, what: str, upper: float) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FitError(f"{what} must be a number (got {value!r})") from None
    if not (math.isfinite(v) and 0 < v <= upper):
        raise FitError(f"{what} must be above 0 and at most {upper:g} (got {value!r})")
    return v


def _fitted_end_points(model: _Model, x, data: TitrationData) -> tuple[EquivalencePoint, ...]:
    """Equivalence points of the fitted curve within the measured volumes (maxima of |dpH/dV|)."""
    v_lo, v_hi = float(data.volume_mL[0]) / 1000.0, float(data.volume_mL[-1]) / 1000.0
    if not v_hi > v_lo:
        return ()
    t_data = model.data_t
    mix_t = model.mixture.temperature_c

    def run(v, start=None):
        v = np.asarray(v, dtype=float)
        temps = np.interp(v, model.data_v, t_data) if len(data) > 1 else np.full(v.size, mix_t)
        base = model._base(temps)
        inp, res = model.solve(x, v, base, start)
        dw = model.d_weights_dv(x, v)
        y = solve_columns(inp, res, columns_rhs(inp, res, d_totals=(dw @ model.fam.tot)[:, :, None],
                                                 d_inert_i=(dw @ model.fam.inert_i)[:, None]))
        ph, dph = -res.u[:, 0] / LN10, -y[:, 0, 0] / LN10
        return {"pH": ph, "dpH": dph, "level": ph, "dlevel": dph, "u": res.u, "ionic": res.ionic}

    grid = np.linspace(v_lo, v_hi, EP_GRID)
    out = run(grid)
    try:
        return _equivalence_points(grid, out["dpH"] / 1000.0, out, run)
    except (ChemError, np.linalg.LinAlgError, ValueError):
        return ()


# --------------------------------------------------------------------------
# Gran functions
# --------------------------------------------------------------------------

def _line(xv: np.ndarray, yv: np.ndarray):
    """Straight line y = a + b x by least squares: (a, b, cov(a, b), r²)."""
    a_mat = np.column_stack([np.ones_like(xv), xv])
    coef, *_ = np.linalg.lstsq(a_mat, yv, rcond=None)
    resid = yv - a_mat @ coef
    dof = max(xv.size - 2, 1)
    s2 = float(resid @ resid) / dof
    cov = s2 * np.linalg.inv(a_mat.T @ a_mat)
    ss_tot = float(((yv - yv.mean()) ** 2).sum())
    r2 = 1.0 - float(resid @ resid) / ss_tot if ss_tot > 0 else 0.0
    return float(coef[0]), float(coef[1]), cov, r2


def _intercept(a: float, b: float, cov) -> tuple[float, float]:
    ve = -a / b
    var = (cov[0, 0] + ve * ve * cov[1, 1] + 2.0 * ve * cov[0, 1]) / (b * b)
    return ve, math.sqrt(max(var, 0.0))


def gran_end_points(data: TitrationData, sample_volume_L: float, titrant: Reagent) -> tuple[GranEstimate, ...]:
    """End points from Gran functions of the measured points (Gran 1952, Analyst 77, 661).

    For a strong base titrant, short of the end point V·10^-pH (a weak acid,
    whose buffer ratio is V/(Ve − V)) or (V0+V)·10^-pH (a strong acid) falls
    on a straight line through zero at the end point Ve; beyond it the excess
    base makes (V0+V)·10^pH a straight line rising from Ve.  A strong acid
    titrant mirrors these with the sign of pH reversed.  Of the two forms
    short of the end point the straighter one (higher r²) is reported.

    The regions come from the measured curve alone: the clear maxima of its
    slope ΔpH/ΔV (at least a quarter as steep as the steepest) give rough end
    points; the last one, V*, is checked.  When an
    earlier end point V1 precedes it (a polyprotic acid), the weak form uses
    V − V1 in place of V and the region short of V* starts after V1.  Points
    from 0.5 to 0.95 of the way from V1 (or 0) to V*, and beyond V* by a
    tenth of that span, are used.  An electrode offset multiplies each
    function by a constant and leaves the intercepts unchanged.  The lines
    assume constant activity coefficients and, past the end point, that
    nothing else takes up the excess titrant.  Returns () when the titrant
    is not a strong acid or base, or there are too few points.
    """
    if titrant.systems or titrant.strong_acid_equivalents == 0 or len(data) < 4:
        return ()
    sign = -1.0 if titrant.strong_acid_equivalents < 0 else 1.0      # base titrant: −pH before
    v = np.asarray(data.volume_mL, dtype=float)
    ph = np.asarray(data.pH, dtype=float)
    v0 = sample_volume_L * 1000.0
    slope = np.abs(np.diff(ph) / np.diff(v))
    mid = 0.5 * (v[1:] + v[:-1])
    # a rough end point must stand out from the valleys beside it and be at least a quarter as
    # steep as the steepest (scatter in a flat buffer region makes small false maxima)
    peaks = [i for i in (_peak_indices(slope) if slope.size >= 3 else []) if slope[i] >= GRAN_PEAK * slope.max()]
    if not peaks:
        peaks = [int(np.argmax(slope))]
    v_star = float(mid[peaks[-1]])
    v_prev = float(mid[peaks[-2]]) if len(peaks) > 1 else 0.0
    span = v_star - v_prev
    out = []
    ref = ph.mean()
    before = ((v >= v_prev + GRAN_BEFORE[0] * span) & (v <= v_prev + GRAN_BEFORE[1] * span) & (v > v_prev))
    expo = "-pH" if sign < 0 else "pH"
    if before.sum() >= 3:
        best = None
        forms = [(f"(V-V1)·10^{expo}" if v_prev else f"V·10^{expo}", (v - v_prev) * 10.0 ** (sign * (ph - ref)))]
        if not v_prev:
            forms.append((f"(V0+V)·10^{expo}", (v0 + v) * 10.0 ** (sign * (ph - ref))))
        for name, g in forms:
            a, b, cov, r2 = _line(v[before], g[before])
            if b < 0 and (best is None or r2 > best[-1]):
                best = (name, a, b, cov, r2)
        if best is not None:
            ve, sd = _intercept(*best[1:4])
            out.append(GranEstimate("before", best[0], ve, sd, int(before.sum()), best[4]))
    after = v >= v_star + (GRAN_AFTER - 1.0) * span
    if after.sum() >= 3:
        expo_a = "pH" if sign < 0 else "-pH"
        g = (v0 + v) * 10.0 ** (-sign * (ph - ref))
        a, b, cov, r2 = _line(v[after], g[after])
        if b > 0:
            ve, sd = _intercept(a, b, cov)
            out.append(GranEstimate("after", f"(V0+V)·10^{expo_a}", ve, sd, int(after.sum()), r2))
    return tuple(out)


# --------------------------------------------------------------------------
# the fitted sample
# --------------------------------------------------------------------------

def _fitted_mixture(mixture: Mixture, model: _Model, values: Sequence[FittedValue],
                    label: str) -> tuple[Mixture | None, str]:
    """The sample with the fitted amounts and constants, and a note when it cannot be made."""
    mix = mixture
    summary = []
    for p, fv in zip(model.params, values):
        err = "" if fv.stderr is None else f" ± {fv.stderr:.2g}"
        if p.kind == "amount":
            ing = mix.ingredients[p.index]
            mix = mix.with_replaced(p.index, ing.with_conc(fv.value, format_molar(fv.value, 6)))
            err = "" if fv.stderr is None else f" ± {fv.stderr:.2g} M"
            summary.append(f"{p.name} = {fv.value:.6g} M{err}")
        elif p.kind == "pKa":
            summary.append(f"{p.name} = {fv.value:.4f}{err}")
        else:
            summary.append(f"{p.name} = {fv.value:.5g}{err}{' mol/L' if p.kind == 'titrant' else ''}")
    pka = [(p, fv) for p, fv in zip(model.params, values) if p.kind == "pKa"]
    by_system: dict[str, list] = {}
    for p, fv in pka:
        by_system.setdefault(p.system.name, []).append((p, fv))
    for name, items in by_system.items():
        sys_ = items[0][0].system
        new_pka = list(sys_.pka)
        sds = list(sys_.pka_sd) if sys_.pka_sd is not None else None
        for p, fv in items:
            start = model.x0[model.params.index(p)]
            new_pka[p.step] = sys_.pka[p.step] + (fv.value - start)      # the stored scale (I of the source)
            if sds is not None and fv.stderr is not None:
                sds[p.step] = fv.stderr
        if sds is None and len(items) == sys_.steps and all(fv.stderr is not None for _, fv in items):
            sds = [0.0] * sys_.steps
            for p, fv in items:
                sds[p.step] = fv.stderr
        holders = [i for i, ing in enumerate(mix.ingredients) if any(s is sys_ or s == sys_
                                                                      for s, _ in ing.reagent.systems)]
        try:
            if sys_.custom:
                new_sys = replace(sys_, pka=tuple(new_pka), pka_sd=tuple(sds) if sds is not None else None)
                for i in holders:
                    r = mix.ingredients[i].reagent
                    nr = replace(r, system=None, systems=tuple((new_sys if s == sys_ else s, n) for s, n in r.systems))
                    mix = mix.with_replaced(i, replace(mix.ingredients[i], reagent=nr))
            else:
                if len(holders) != 1:
                    return None, (f"the fitted sample is not written as a preset: {len(holders)} ingredients hold "
                                  f"{sys_.name}, whose fitted pKa a preset can only carry for one")
                i = holders[0]
                r = mix.ingredients[i].reagent
                if len(r.systems) != 1 or r.units != 1:
                    return None, (f"the fitted sample is not written as a preset: {r.name} cannot carry a "
                                  "fitted pKa as a custom reagent")
                new_name = f"{r.name} (fitted)"
                new_sys = replace(sys_, name=new_name, pka=tuple(new_pka),
                                  pka_sd=tuple(sds) if sds is not None else None, custom=True, aliases=(),
                                  source=f"pKa fitted to {label} by protomix fit; other values: {sys_.name} "
                                         "from the built-in library")
                nr = Reagent(name=new_name, system=new_sys, protons=r.protons, counter_ions=r.counter_ions,
                             formula=r.formula, molar_mass=r.molar_mass, source=new_sys.source, custom=True)
                mix = mix.with_replaced(i, replace(mix.ingredients[i], reagent=nr))
                uses = [it.name for it in (*model.st.complexes, *model.st.solids, *model.st.gases)
                        if any(own is sys_ for own in it.owners)]
                if uses:
                    summary.append(f"library reactions of {sys_.name} ({', '.join(uses[:3])}) do not apply to "
                                   "the fitted copy")
        except ModelError as exc:
            return None, f"the fitted sample cannot be made: {exc}"
    note = f"Fitted by protomix fit to {label}: " + "; ".join(summary)
    notes = (mixture.notes + "\n" + note) if mixture.notes else note
    title = f"{mixture.title} (fitted)" if mixture.title else "fitted sample"
    return replace(mix, notes=notes, title=title), ""
