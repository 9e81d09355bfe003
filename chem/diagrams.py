"""Speciation across pH: distribution (fraction vs pH) and log C vs pH.

These diagrams hold the ionic strength fixed (at the value of the solved
mixture unless given), so each species' conditional constants are fixed and
the fractions are explicit functions of pH; no root finding is needed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import water
from ._solver import SIZE_H, SIZE_OH, layout_for
from .water import LN10
from .activity import log_gamma
from .model import AcidBaseSystem, Mixture


@dataclass(frozen=True)
class Diagram:
    """Curves over a pH grid: ``series`` maps a species name to an array."""

    ph: np.ndarray
    series: dict[str, np.ndarray]
    systems: dict[str, tuple[str, ...]]
    """System name -> its species names, in ``series``."""
    ionic_strength: float
    temperature_c: float

    def __post_init__(self) -> None:
        self.ph.setflags(write=False)
        for arr in self.series.values():
            if arr.base is not None:
                arr.base.setflags(write=False)
            arr.setflags(write=False)


def default_grid(points: int = 400) -> np.ndarray:
    """pH from 0 to 14 with ``points`` points (common practice range)."""
    return np.linspace(0.0, 14.0, points)


def _fractions_all(systems: tuple[AcidBaseSystem, ...], ph: np.ndarray, t_c: float, model: str,
                   ionic: float) -> np.ndarray:
    """Fractions of every species of every system, shape (points, systems, width).

    One padded computation for all systems (padding gives fraction 0).
    """
    lay = layout_for(systems)
    a = float(water.debye_huckel_a(t_c))
    b = float(water.debye_huckel_b(t_c))
    lg = log_gamma(model, lay.z * lay.z, lay.size, ionic, a, b)
    base = lay.log_beta(t_c)[0] - lg                        # (S, M)
    w = base[None, :, :] - lay.j[None, :, :] * ph[:, None, None]
    w -= w.max(axis=2, keepdims=True)
    e = np.exp(w * LN10)
    e /= e.sum(axis=2, keepdims=True)
    return e


def distribution(mixture: Mixture, ph=None, *, ionic_strength: float | None = None,
                 systems: tuple[str, ...] | None = None) -> Diagram:
    """Fraction of each species of each system vs pH.

    Parameters
    ----------
    mixture : Mixture
        Supplies the systems, temperature and activity model.
    ph : array_like, optional
        pH grid (default 0..14, 400 points).
    ionic_strength : float, optional
        Ionic strength (mol/L) at which activity coefficients are taken;
        default 0 (thermodynamic constants).
    systems : tuple of str, optional
        Only these systems (default: all in the mixture).
    """
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    ionic = 0.0 if ionic_strength is None else float(ionic_strength)
    chosen = tuple(s for s, _ in mixture.systems() if systems is None or s.name in systems)
    frac = _fractions_all(chosen, ph, mixture.temperature_c, mixture.activity, ionic)
    series: dict[str, np.ndarray] = {}
    owners: dict[str, tuple[str, ...]] = {}
    for i, sys_ in enumerate(chosen):
        for k, name in enumerate(sys_.species):
            series[name] = frac[:, i, k]
        owners[sys_.name] = sys_.species
    return Diagram(ph.copy(), series, owners, ionic, mixture.temperature_c)


def log_concentrations(mixture: Mixture, ph=None, *, ionic_strength: float | None = None,
                       floor: float = -14.0) -> Diagram:
    """log10 of each species' concentration (mol/L) vs pH, with H+ and OH-.

    Values below ``floor`` are clipped to it so plots stay readable.
    """
    ph = np.asarray(default_grid() if ph is None else ph, dtype=float)
    ionic = 0.0 if ionic_strength is None else float(ionic_strength)
    t = mixture.temperature_c
    a = float(water.debye_huckel_a(t))
    b = float(water.debye_huckel_b(t))
    lg_h = float(log_gamma(mixture.activity, 1.0, SIZE_H, ionic, a, b))
    lg_oh = float(log_gamma(mixture.activity, 1.0, SIZE_OH, ionic, a, b))
    pkw = float(water.pkw(t))
    series: dict[str, np.ndarray] = {
        "H+": np.maximum(-ph - lg_h, floor),
        "OH-": np.maximum(ph - pkw - lg_oh, floor),
    }
    owners: dict[str, tuple[str, ...]] = {"water": ("H+", "OH-")}
    pairs = tuple((s, c) for s, c in mixture.systems() if c > 0)
    frac = _fractions_all(tuple(s for s, _ in pairs), ph, t, mixture.activity, ionic)
    with np.errstate(divide="ignore"):
        logc = np.maximum(np.log10(frac * np.array([c for _, c in pairs])[None, :, None]), floor)
    for i, (sys_, _total) in enumerate(pairs):
        for k, name in enumerate(sys_.species):
            series[name] = logc[:, i, k]
        owners[sys_.name] = sys_.species
    return Diagram(ph.copy(), series, owners, ionic, t)
