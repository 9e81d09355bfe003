"""The compiled single-point iteration (chem/_speciate.c) against the numpy kernel it mirrors.

The compiled iteration is a fast path for ``solve`` (a batch of one): it takes the same Newton
steps as ``chem._kernel._iterate``.  These tests compare the two step by step at random points
of random mixtures (same start, one and three steps: same u, ionic strength, working set and
multipliers), and whole solves with and without it; the reference-solver tests in
tests/reference check the answers themselves.
"""

from __future__ import annotations

import os
import shutil
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import chem
from chem import _kernel as K
from chem import _native
from chem._solver import kernel_inputs
from chem.problem import compile
from tests.reference.spec import to_toml
from tests.reference.strategies import full_specs

PRESETS = sorted((Path(__file__).resolve().parents[2] / "presets").glob("*.toml"))
needs_native = pytest.mark.skipif(not _native.available, reason="the compiled iteration is not built here")
SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                              HealthCheck.data_too_large])


def test_the_compiled_iteration_is_built_where_a_c_compiler_is():
    """An install on a machine with a C compiler builds it (hatch_build.py); unset, solves are slower."""
    if shutil.which("cc") is None and shutil.which("gcc") is None:
        pytest.skip("no C compiler on this machine: the numpy iteration is used")
    if os.environ.get("PROTOMIX_NATIVE", "1").strip().lower() in ("0", "no", "off", "false"):
        pytest.skip("PROTOMIX_NATIVE=0: the numpy iteration is asked for")
    assert _native.available, "chem/_speciate.so was not built (pip install -e . builds it)"


@contextmanager
def numpy_iteration():
    """Solves inside run without the compiled iteration (the numpy one)."""
    saved = _native.available
    _native.available = False
    try:
        yield
    finally:
        _native.available = saved


def _problem(spec, precipitate: bool):
    mix = chem.loads_preset(to_toml(spec), "case.toml")
    if not precipitate and mix.precipitate:
        mix = chem.Mixture(mix.ingredients, temperature_c=mix.temperature_c, activity=mix.activity,
                           title=mix.title, gases=mix.gases, precipitate=False)
    return compile(mix)


@contextmanager
def _conditioning():
    """Record the condition number of every Newton system the numpy iteration solves inside."""
    seen: list[float] = []
    plain = np.linalg.solve

    def spy(a, b):
        seen.append(float(np.max(np.linalg.cond(a))))
        return plain(a, b)

    np.linalg.solve = spy
    try:
        yield seen
    finally:
        np.linalg.solve = plain


def _numpy_steps(inp, u, ionic, active, steps, freeze):
    """``steps`` numpy iterations, and the worst condition number of the systems they solved."""
    with _conditioning() as seen:
        u_, i_, a_, le, ls, _, its = K._iterate(inp, np.arange(1), u.copy(), ionic.copy(), active.copy(),
                                                 freeze_ionic=freeze, max_iter=steps)
    return (u_[0], float(i_[0]), a_[0], le[0], ls[0]), max(seen, default=1.0)


@needs_native
@SETTINGS
@given(spec=full_specs, steps=st.sampled_from([1, 3]), shift=st.floats(-3.0, 3.0), freeze=st.booleans(),
       precipitate=st.booleans())
def test_the_same_newton_steps_as_the_numpy_iteration(spec, steps, shift, freeze, precipitate):
    prob = _problem(spec, precipitate)
    inp = kernel_inputs(prob)
    u0, i0 = K.crude_start(inp)
    u0 = u0 + shift * np.linspace(-1.0, 1.0, u0.shape[1])[None]      # a random point away from the start
    u0 = K._make_feasible(inp, np.arange(1), u0)
    active = np.zeros((1, inp.sol_a.shape[0]), dtype=bool)
    want, cond = _numpy_steps(inp, u0, i0, active, steps, freeze)
    # Two correct eliminations of one system agree to about cond × 1e-16 and no better: far from the
    # answer (seen: a crude start under a hydrolysing trivalent ion) the scaled system can be near
    # singular (cond 6e13, both solutions 0.2 % off the exact one).  Compare where the systems are
    # well posed; the whole-solve tests below cover the rest.
    assume(cond < 1e8)
    got = _native.iterate(inp, u0[0], float(i0[0]), active[0], freeze_ionic=freeze, max_iter=steps,
                          cap_i=float(K._ionic_cap(inp, np.arange(1))[0]))
    assert got is not None
    u, ionic, act, lam_e, lam_s, status, its = got
    if status == -2:                       # singular system: the numpy iteration's least squares takes over
        return
    assert np.array_equal(act, want[2])
    # the two solve the same linear systems with different pivoting: they agree to the systems'
    # conditioning, which at a random point far from the answer can be poor (seen: 9e-7 in ln a
    # with molar free ions; the H+ row is the charge balance, whose molar terms cancel to leave
    # ~1e-9 M of H+: 3e-6 there).  A wrong term in either makes differences of order one.
    np.testing.assert_allclose(u[1:], want[0][1:], rtol=1e-8, atol=1e-5)
    assert u[0] == pytest.approx(want[0][0], abs=1e-4)
    assert ionic == pytest.approx(want[1], rel=1e-7, abs=1e-15)
    scale = np.abs(inp.totals[0]).max()
    # multipliers far from the answer can be large (seen: a fixed gas taking up 3348 mol/L at a random
    # point) and carry the conditioning in full (seen: 1.5e-6 relative at cond < 1e8)
    np.testing.assert_allclose(lam_e, want[3], rtol=1e-5, atol=1e-9 * scale)
    np.testing.assert_allclose(lam_s, want[4], rtol=1e-5, atol=1e-9 * scale)


def _with_and_without(mix):
    """``mix`` solved with the compiled iteration and with the numpy one (both must converge)."""
    fast = chem.solve(mix)
    with numpy_iteration():
        slow = chem.solve(mix)
    assert fast.converged and slow.converged
    return fast, slow


@needs_native
@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(spec=full_specs)
def test_whole_solves_agree_with_and_without_the_compiled_iteration(spec):
    fast, slow = _with_and_without(chem.loads_preset(to_toml(spec), "case.toml"))
    assert fast.pH == pytest.approx(slow.pH, abs=1e-8)
    assert fast.ionic_strength == pytest.approx(slow.ionic_strength, rel=1e-7)
    for a, b in zip(fast.species, slow.species):
        assert a.name == b.name
        assert a.conc == pytest.approx(b.conc, rel=1e-6, abs=1e-14)
    for a, b in zip(fast.solids, slow.solids):
        assert a.amount == pytest.approx(b.amount, rel=1e-6, abs=1e-12)


@needs_native
@pytest.mark.parametrize("path", PRESETS, ids=lambda p: p.stem)
def test_shipped_presets_solve_the_same_without_the_compiled_iteration(path):
    a, b = _with_and_without(chem.load_preset(path))
    assert a.pH == pytest.approx(b.pH, abs=1e-9)
    for x, y in zip(a.solids, b.solids):
        assert x.amount == pytest.approx(y.amount, rel=1e-6, abs=1e-12)


@pytest.mark.parametrize("path", PRESETS, ids=lambda p: p.stem)
def test_single_point_inputs_are_the_general_ones(path):
    """A single solve builds its kernel inputs from a per-temperature template: the same arrays as
    the general construction (forced here by passing the temperature)."""
    from chem._solver import _single_inputs

    prob = compile(chem.load_preset(path))
    if prob.structure.fixed:
        pytest.skip("a fixed gas: single solves take the general construction")
    fast = _single_inputs(prob)
    slow = kernel_inputs(prob, t_c=prob.temperature_c)
    for name in ("nu", "z2", "size", "lnk", "totals", "a", "b", "inert_i", "eq_rows", "eq_rhs", "sol_a", "sol_b",
                 "allowed", "z_comp", "inert_q"):
        x, y = getattr(fast, name), getattr(slow, name)
        assert np.asarray(x).shape == np.asarray(y).shape, name
        np.testing.assert_array_equal(x, y, err_msg=name)
    assert fast.fixed_ionic is None and slow.fixed_ionic is None
    assert fast.counter_row is None and slow.counter_row is None


@needs_native
def test_pure_acid_base_single_solves_agree_with_the_fast_path():
    """With the compiled iteration, a pure acid–base mixture is solved by the general kernel; the
    two-unknown fast path (used without it) gives the same answer."""
    lib = chem.load_library()
    mix = chem.Mixture((chem.Ingredient(lib.reagent("tris base"), 0.05),
                        chem.Ingredient(lib.reagent("acetic acid"), 0.02),
                        chem.Ingredient(lib.reagent("sodium chloride"), 0.1)), temperature_c=37.0)
    a, b = _with_and_without(mix)
    assert a.pH == pytest.approx(b.pH, abs=1e-9)
    assert a.ionic_strength == pytest.approx(b.ionic_strength, rel=1e-9)
