"""An independent reference for titration curves: closed-form charge balances solved with mpmath.

Nothing here calls protomix's solver. For the ideal model (activity = concentration),
a sample of V0 mL holding a monoprotic acid HA (c_a, Ka) and a strong acid (c_s) is
titrated with V mL of a strong base (c_b). With C = c_a·V0/(V0+V), S = c_s·V0/(V0+V) and
B = c_b·V/(V0+V), the charge balance h + B = Kw/h + C·Ka/(Ka + h) + S is the cubic

    h³ + (Ka + B − S) h² + (Ka (B − S) − Kw − C Ka) h − Kw Ka = 0,

whose one positive root is found at 40 digits.
"""

from __future__ import annotations

import mpmath as mp
import numpy as np

#: pKw of water at 25 °C and 0.1 MPa: IAPWS R11-07 (Bandura & Lvov 2006, J. Phys. Chem. Ref.
#: Data 35, 15), 13.995 to the three decimals usually quoted (from memory); the value below is
#: that formulation evaluated to more digits, so that reference and model share water's
#: constant and differ only in how the equations are solved (after the end point a 0.0005
#: difference in pKw moves a fitted concentration by 0.1 %).
PKW_25 = 13.994523616692963


def weak_acid_curve(c_acid: float, pka: float, c_base: float, v0_ml: float, v_ml, *, c_strong: float = 0.0,
                    pkw: float = PKW_25) -> np.ndarray:
    """pH at each titrant volume (mL) of the ideal titration described in the module docstring.

    ``c_acid = 0`` gives a strong acid (``c_strong``) titrated with a strong base.
    """
    with mp.workdps(40):
        ka = mp.mpf(10) ** (-mp.mpf(pka))
        kw = mp.mpf(10) ** (-mp.mpf(pkw))
        out = []
        for v in np.asarray(v_ml, dtype=float):
            tot = mp.mpf(v0_ml) + mp.mpf(v)
            c = mp.mpf(c_acid) * v0_ml / tot
            s = mp.mpf(c_strong) * v0_ml / tot
            b = mp.mpf(c_base) * mp.mpf(v) / tot
            coeffs = [1, ka + b - s, ka * (b - s) - kw - c * ka, -kw * ka]
            roots = mp.polyroots(coeffs, maxsteps=400, extraprec=200)
            h = max(r.real for r in roots if abs(mp.im(r)) < mp.mpf(10) ** -30 and r.real > 0)
            out.append(float(-mp.log10(h)))
    return np.array(out)
