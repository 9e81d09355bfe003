"""Activity-coefficient models.

Each model gives log10 γ for an ion of charge ``z`` (and ion-size parameter
``a`` in ångström) at ionic strength ``I`` (mol/L, taken equal to mol/kg in
dilute solution).

* ``"ideal"``: γ = 1.
* ``"davies"``: Davies (1962), *Ion Association*, eq. for log γ with the
  0.3·I term:  log γ = -A z² (√I/(1+√I) - 0.3 I).
* ``"extended-dh"``: extended Debye–Hückel,
  log γ = -A z² √I / (1 + B a √I), ion sizes from Kielland (1937).

A and B depend on temperature (see :mod:`chem.water`).
"""

from __future__ import annotations

import numpy as np

MODELS = ("ideal", "davies", "extended-dh")

#: Upper end of ionic strength (mol/L) where each model is usually trusted
#: (common practice: Davies to about 0.5 M, extended Debye–Hückel to about
#: 0.1 M; the ideal model only for very dilute solutions, about 1 mM).
VALID_UP_TO = {"ideal": 1e-3, "davies": 0.5, "extended-dh": 0.1}


def log_gamma(model: str, z2, size, ionic_strength, a, b):
    """log10 γ for ions with squared charge ``z2`` and size ``size`` (Å).

    ``ionic_strength``, ``a`` and ``b`` may be arrays shaped to broadcast
    against ``z2`` (e.g. one value per batch point with trailing axes).
    """
    if model == "ideal":
        return np.zeros(np.broadcast_shapes(np.shape(z2), np.shape(ionic_strength)))
    sqrt_i = np.sqrt(np.maximum(ionic_strength, 0.0))
    if model == "davies":
        return -a * z2 * (sqrt_i / (1.0 + sqrt_i) - 0.3 * ionic_strength)
    if model == "extended-dh":
        return -a * z2 * sqrt_i / (1.0 + b * size * sqrt_i)
    raise ValueError(f"unknown activity model {model!r}")
