"""The bracketed root finder (Brent 1973, ch. 4) on problems with known roots."""

from __future__ import annotations

import math

import pytest

from chem.roots import RootError, brent

CASES = [
    (lambda x: x * x - 2.0, 0.0, 2.0, math.sqrt(2.0)),
    (lambda x: math.cos(x) - x, 0.0, 1.0, 0.7390851332151607),        # the Dottie number
    (lambda x: math.exp(x) - 10.0, -5.0, 10.0, math.log(10.0)),
    (lambda x: (x - 1.0) ** 3, -3.0, 4.0, 1.0),                          # a triple root: bisection pace
    (lambda x: 1e-300 * (x - 0.25), 0.0, 1.0, 0.25),                     # tiny values
    (lambda x: math.copysign(1.0, x - 0.3), 0.0, 1.0, 0.3),              # a step: no derivative
]


@pytest.mark.parametrize("f, a, b, root", CASES)
def test_brent_finds_known_roots(f, a, b, root):
    assert brent(f, a, b, xtol=1e-14) == pytest.approx(root, abs=1e-10)


def test_brent_counts_few_evaluations_on_a_smooth_function():
    calls = []

    def f(x):
        calls.append(x)
        return x ** 3 - 2.0 * x - 5.0          # Wallis's cubic, root 2.0945514815423265

    assert brent(f, 2.0, 3.0) == pytest.approx(2.0945514815423265, abs=1e-12)
    assert len(calls) < 15


def test_brent_refuses_a_bracket_without_a_sign_change():
    with pytest.raises(RootError):
        brent(lambda x: x * x + 1.0, -1.0, 1.0)


def test_the_recipe_designer_does_not_import_scipy_optimize():
    import subprocess
    import sys

    code = "import sys, chem.recipe; print('scipy.optimize' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
