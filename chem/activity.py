"""Activity-coefficient models.

Each model gives log10 γ for an ion of charge ``z`` (and ion-size parameter
``a`` in ångström) at ionic strength ``I`` (mol/L, taken equal to mol/kg in
dilute solution); neutral species have γ = 1 in every model.

* ``"ideal"``: γ = 1.
* ``"davies"``: Davies (1962), *Ion Association*, eq. for log γ with the
  0.3·I term:  log γ = -A z² (√I/(1+√I) - 0.3 I).
* ``"extended-dh"``: extended Debye–Hückel,
  log γ = -A z² √I / (1 + B a √I), ion sizes from Kielland (1937).

A and B depend on temperature (see :mod:`chem.water`).  Every model is a
small object with the same three methods, so the solver never branches on
the model's name: ``d(I, B, size)`` is D in log10 γ = -A z² D(I),
``dd(I, B, size)`` its derivative dD/dI.
"""

from __future__ import annotations

import math

import numpy as np


class ActivityModel:
    """log10 γ = -A z² D(I; B, size)."""

    name = ""
    valid_up_to = 0.0
    """Ionic strength (mol/L) up to which the model is usually trusted."""
    size_dependent = False
    ideal = False

    def d(self, ionic, b, size):
        raise NotImplementedError

    def dd(self, ionic, b, size):
        raise NotImplementedError

    def log_gamma(self, z2, size, ionic, a, b):
        """log10 γ for ions with squared charge ``z2`` and size ``size`` (Å); arguments broadcast."""
        return -a * z2 * self.d(ionic, b, size)

    # plain-float versions of d and dd for the scalar fast path
    def d1(self, ionic: float, b: float, size: float) -> float:
        return float(self.d(ionic, b, size))

    def dd1(self, ionic: float, b: float, size: float) -> float:
        return float(self.dd(ionic, b, size))


class Ideal(ActivityModel):
    name = "ideal"
    valid_up_to = 1e-3
    ideal = True

    def d(self, ionic, b, size):
        return np.zeros(np.broadcast_shapes(np.shape(ionic), np.shape(size)))

    def dd(self, ionic, b, size):
        return np.zeros(np.broadcast_shapes(np.shape(ionic), np.shape(size)))

    def d1(self, ionic, b, size):
        return 0.0

    def dd1(self, ionic, b, size):
        return 0.0


class Davies(ActivityModel):
    name = "davies"
    valid_up_to = 0.5

    def d(self, ionic, b, size):
        si = np.sqrt(np.maximum(ionic, 0.0))
        return si / (1.0 + si) - 0.3 * ionic

    def dd(self, ionic, b, size):
        sf = np.sqrt(np.maximum(ionic, 1e-16))
        return 1.0 / (2.0 * sf * (1.0 + sf) ** 2) - 0.3

    def d1(self, ionic, b, size):
        si = math.sqrt(ionic) if ionic > 0 else 0.0
        return si / (1.0 + si) - 0.3 * ionic

    def dd1(self, ionic, b, size):
        sf = math.sqrt(max(ionic, 1e-16))
        return 1.0 / (2.0 * sf * (1.0 + sf) ** 2) - 0.3


class ExtendedDebyeHuckel(ActivityModel):
    name = "extended-dh"
    valid_up_to = 0.1
    size_dependent = True

    def d(self, ionic, b, size):
        si = np.sqrt(np.maximum(ionic, 0.0))
        return si / (1.0 + b * size * si)

    def dd(self, ionic, b, size):
        sf = np.sqrt(np.maximum(ionic, 1e-16))
        return 1.0 / (2.0 * sf * (1.0 + b * size * sf) ** 2)

    def d1(self, ionic, b, size):
        si = math.sqrt(ionic) if ionic > 0 else 0.0
        return si / (1.0 + b * size * si)

    def dd1(self, ionic, b, size):
        sf = math.sqrt(max(ionic, 1e-16))
        return 1.0 / (2.0 * sf * (1.0 + b * size * sf) ** 2)


#: The models by name, in the order the explorer cycles through them.
MODEL_OBJECTS: dict[str, ActivityModel] = {m.name: m for m in (Ideal(), Davies(), ExtendedDebyeHuckel())}
MODELS = tuple(MODEL_OBJECTS)

#: Upper end of ionic strength (mol/L) where each model is usually trusted
#: (common practice: Davies to about 0.5 M, extended Debye–Hückel to about
#: 0.1 M; the ideal model only for very dilute solutions, about 1 mM).
VALID_UP_TO = {name: m.valid_up_to for name, m in MODEL_OBJECTS.items()}


def model(name: str) -> ActivityModel:
    """The activity model called ``name``."""
    try:
        return MODEL_OBJECTS[name]
    except KeyError:
        raise ValueError(f"unknown activity model {name!r}") from None


def log_gamma(name: str, z2, size, ionic_strength, a, b):
    """log10 γ for ions with squared charge ``z2`` and size ``size`` (Å) under model ``name``.

    ``ionic_strength``, ``a`` and ``b`` may be arrays shaped to broadcast
    against ``z2`` (e.g. one value per batch point with trailing axes).
    """
    m = model(name)
    if m.ideal:
        return np.zeros(np.broadcast_shapes(np.shape(z2), np.shape(ionic_strength)))
    return m.log_gamma(z2, size, ionic_strength, a, b)
