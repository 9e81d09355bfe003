"""The compiled single-point Newton iteration (``_speciate.c``), loaded with ctypes.

``hatch_build.py`` compiles ``chem/_speciate.c`` into ``chem/_speciate.so`` when
protomix is installed and a C compiler is there; without it (or with
``PROTOMIX_NATIVE=0`` in the environment) :data:`available` is false and the
kernel runs its numpy iteration, which does the same steps for a batch.
"""

from __future__ import annotations

import ctypes
import os
from pathlib import Path

import numpy as np

_LIB_NAME = "_speciate.so"
#: The activity models the compiled iteration knows, by name.
_MODELS = {"ideal": 0, "davies": 1, "extended-dh": 2}


def _load():
    if os.environ.get("PROTOMIX_NATIVE", "1").strip().lower() in ("0", "no", "off", "false"):
        return None
    path = Path(__file__).with_name(_LIB_NAME)
    if not path.is_file():
        return None
    try:
        fn = ctypes.CDLL(str(path)).pm_iterate_packed
    except (OSError, AttributeError):
        return None
    p, i, d = ctypes.c_void_p, ctypes.c_int, ctypes.c_double
    fn.argtypes = [i, i, i, i, p, p, p,        # ns, nc, ne, nq, nu, z2, size
                   i, d, d, d, i, d,            # model, a, b, inert_i, charge_balance, inert_q
                   i, i, d, i, i, p]            # counter_row, freeze_ionic, cap_i, max_iter, presweep, buffer
    fn.restype = i
    return fn


_FN = _load()
available = _FN is not None
_STATIC: dict = {}


def knows(model) -> bool:
    """Whether the compiled iteration has this activity model."""
    return getattr(model, "name", "") in _MODELS


def ready(model) -> bool:
    """Whether single solves with this activity model run the compiled iteration."""
    return available and knows(model)


def _static(nu: np.ndarray, z2: np.ndarray, size: np.ndarray):
    """Contiguous copies of the structure's arrays and their addresses (kept per structure)."""
    hit = _STATIC.get(id(nu))
    if hit is not None and hit[0] is nu and hit[1] is z2 and hit[2] is size:
        return hit[3]
    arrays = tuple(np.ascontiguousarray(x, dtype=float) for x in (nu, z2, size))
    entry = (arrays, tuple(x.ctypes.data for x in arrays))
    if len(_STATIC) > 256:
        _STATIC.clear()
    _STATIC[id(nu)] = (nu, z2, size, entry)
    return entry


def iterate(inp, u: np.ndarray, ionic: float, active: np.ndarray, *, freeze_ionic: bool, max_iter: int,
            cap_i: float, presweep: bool = False):
    """The kernel's Newton iteration for the single point of ``inp`` (see ``_kernel._iterate``).

    Returns ``(u, ionic, active, lam_e, lam_s, status, iterations)`` with
    status 1 converged, 0 not within ``max_iter``, -1 gave up on the ionic
    strength, -2 a singular Newton system, -3 out of memory; or ``None``
    when the compiled iteration cannot take this problem.  ``presweep``
    first runs log-ratio sweeps from a crude start (no solid may form).
    """
    if _FN is None or not knows(inp.model):
        return None
    ns, nc = inp.nu.shape
    ne = inp.eq_rows.shape[0]
    nq = inp.sol_a.shape[0]
    _, (p_nu, p_z2, p_size) = _static(inp.nu, inp.z2, inp.size)
    charge = inp.z_comp is not None
    parts = [inp.lnk[0], inp.totals[0], inp.z_comp if charge else np.zeros(nc)]
    if ne:
        parts += [inp.eq_rows.ravel(), inp.eq_rhs[0]]
    if nq:
        parts += [inp.sol_a.ravel(), inp.sol_b[0], inp.allowed[0]]
    parts += [u, (ionic,)]
    if nq:
        parts.append(active)
    parts.append(np.zeros(ne + nq + 1))
    buf = np.concatenate(parts, dtype=float)
    status = _FN(ns, nc, ne, nq, p_nu, p_z2, p_size,
                 _MODELS[inp.model.name], float(inp.a[0]), float(inp.b[0]), float(inp.inert_i[0]),
                 int(charge), float(inp.inert_q[0]) if charge else 0.0,
                 -1 if inp.counter_row is None else int(inp.counter_row), int(freeze_ionic), float(cap_i),
                 int(max_iter), int(presweep), buf.ctypes.data)
    o = ns + 2 * nc + ne * nc + ne + nq * nc + 2 * nq
    u_out = buf[o:o + nc]
    o += nc
    i_out = float(buf[o])
    o += 1
    act = buf[o:o + nq] != 0.0
    o += nq
    lam_e = buf[o:o + ne]
    lam_s = buf[o + ne:o + ne + nq]
    return u_out, i_out, act, lam_e, lam_s, int(status), int(buf[o + ne + nq])
