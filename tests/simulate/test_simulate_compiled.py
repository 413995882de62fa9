"""The compiled library's boundary: arrays are checked before C sees them, calls from
several threads at once give the answers of calls one after another, a failing system
leaves its neighbours alone, and a missing or stale library is reported clearly."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest
import sympy

from mechfit import parse_mechanism
from mechfit.derive import reduced_model
from mechfit.simulate import SimulationInputError, Simulator, compiled
from mechfit.simulate.bdf import solve_mass_action_bdf
from mechfit.simulate.integrator import (
    STATUS_NOT_FINITE,
    STATUS_STEP_CAP,
    STATUS_STEP_TOO_SMALL,
)
from mechfit.simulate.kernel import build_tables
from mechfit.simulate.program import ProgramBuilder, evaluate

ENZYME = "E + S <=> ES @ k1, k_1\nES -> E + P @ k2"


def _bdf_arrays(n_sys=2, n_t=3, n=4, n_par=3):
    """Valid arguments of solve_mass_action_bdf for the enzyme mechanism."""
    return dict(
        times=np.tile(np.linspace(0.5, 2.0, n_t), (n_sys, 1)),
        counts=np.full(n_sys, n_t, dtype=np.int64),
        y0=np.tile([1.0, 5.0, 0.0, 0.0], (n_sys, 1)),
        params=np.tile([10.0, 1.0, 2.0], (n_sys, 1)),
        rtol=np.full(n_sys, 1e-8), atol=np.full((n_sys, n), 1e-12), max_steps=10_000,
        out=np.full((n_sys, n_t, n), np.nan), status=np.zeros(n_sys, dtype=np.int64),
        steps=np.zeros(n_sys, dtype=np.int64), t_end_reached=np.zeros(n_sys))


def test_valid_direct_call_solves():
    tables = Simulator(parse_mechanism(ENZYME)).tables
    args = _bdf_arrays()
    solve_mass_action_bdf(tables, **args)
    assert args["status"].tolist() == [0, 0]
    assert np.all(np.isfinite(args["out"]))
    assert np.allclose(args["out"][:, :, 1:].sum(axis=2), 5.0, rtol=1e-10)


@pytest.mark.parametrize("name, bad, message", [
    ("counts", np.full(2, 3, dtype=np.int32), "counts must be a numpy array of int64"),
    ("y0", np.ones((2, 4), dtype=np.float32), "initial state must be a numpy array of float64"),
    ("times", np.asfortranarray(np.ones((2, 3))), "times must be C-contiguous"),
    ("atol", np.full((2, 3), 1e-12), r"atol must have shape \(2, 4\)"),
    ("params", [[10.0, 1.0, 2.0]] * 2, "parameters must be a numpy array of float64"),
    ("status", np.zeros(2), "status must be a numpy array of int64"),
    ("counts", np.array([3, 4], dtype=np.int64), "counts must be between 0 and 3"),
])
def test_bad_arrays_are_refused_before_the_call(name, bad, message):
    tables = Simulator(parse_mechanism(ENZYME)).tables
    args = _bdf_arrays()
    args[name] = bad
    with pytest.raises(SimulationInputError, match=message):
        solve_mass_action_bdf(tables, **args)
    assert np.isnan(args["out"]).all()          # nothing was computed


def test_read_only_output_is_refused():
    tables = Simulator(parse_mechanism(ENZYME)).tables
    args = _bdf_arrays()
    args["out"].flags.writeable = False
    with pytest.raises(SimulationInputError, match="out is written into"):
        solve_mass_action_bdf(tables, **args)


def test_bdf_refuses_program_tables():
    sim = Simulator(reduced_model(parse_mechanism(ENZYME), steady=["ES"]))
    with pytest.raises(SimulationInputError, match="plain mass-action tables only"):
        solve_mass_action_bdf(sim.tables, **_bdf_arrays())


def test_inconsistent_tables_are_refused():
    from dataclasses import replace
    tables = Simulator(parse_mechanism(ENZYME)).tables
    stoich, ridx, rord, rcnt, rpar, rfac = tables.mass_action
    wrong = ridx.copy()
    wrong[0, 0] = 7                                  # no species 7
    broken = replace(tables, mass_action=(stoich, wrong, rord, rcnt, rpar, rfac))
    with pytest.raises(SimulationInputError, match="the mass-action tables"):
        solve_mass_action_bdf(broken, **_bdf_arrays())


def test_program_evaluation_is_checked():
    a, k = sympy.Symbol("A", positive=True), sympy.Symbol("k", positive=True)
    builder = ProgramBuilder(state={"A": 0}, parameters={"k": 0}, initial={})
    start, end = builder.add(k * a**2 + a)
    ops, args, consts = builder.arrays()
    stack = np.zeros(builder.max_depth)
    assert evaluate(ops, args, consts, start, end, np.array([2.0]), np.array([3.0]),
                    np.zeros(0), stack) == 14.0
    with pytest.raises(SimulationInputError, match="does not fit"):     # y too short
        evaluate(ops, args, consts, start, end, np.zeros(0), np.array([3.0]), np.zeros(0),
                 stack)
    with pytest.raises(SimulationInputError, match="does not fit"):     # stack too small
        evaluate(ops, args, consts, start, end, np.array([2.0]), np.array([3.0]),
                 np.zeros(0), np.zeros(0))
    with pytest.raises(SimulationInputError, match="y must be a numpy array of float64"):
        evaluate(ops, args, consts, start, end, np.array([2]), np.array([3.0]), np.zeros(0),
                 stack)


def test_public_solve_refuses_non_numbers():
    sim = Simulator(parse_mechanism(ENZYME))
    with pytest.raises(SimulationInputError, match="initial must be numbers"):
        sim.solve(np.array([1.0]), ["a", "b", "c", "d"], np.ones(3))
    with pytest.raises(SimulationInputError, match="times must be numbers"):
        sim.solve(["soon"], np.ones(4), np.ones(3))
    with pytest.raises(SimulationInputError, match="rtol must be one positive number"):
        sim.solve(np.array([1.0]), np.ones(4), np.ones(3), rtol=0.0)


def _batch(n_sys, seed):
    rng = np.random.default_rng(seed)
    initial = np.column_stack([rng.uniform(0.01, 0.1, n_sys), rng.uniform(0.5, 5.0, n_sys),
                               np.zeros(n_sys), np.zeros(n_sys)])
    k = np.exp(rng.normal(np.log([100.0, 10.0, 5.0]), 0.5, (n_sys, 3)))
    return initial, k


@pytest.mark.parametrize("kind", ["bdf", "rosenbrock-sensitivities", "program"])
def test_threads_at_once_match_one_after_another(kind):
    """ctypes releases the GIL and the C code keeps no state between calls: four batches
    solved in four threads at once give bit-for-bit the answers of solving them in turn."""
    mech = parse_mechanism(ENZYME)
    model = reduced_model(mech, steady=["ES"]) if kind == "program" else mech
    sim = Simulator(model, rtol=1e-8)
    sens = kind == "rosenbrock-sensitivities"
    times = np.linspace(0.0, 20.0, 12)
    batches = [_batch(12, seed) for seed in range(4)]

    def solve(batch):
        res = sim.solve(times, *batch, sensitivities=sens)
        return res.concentrations, res.sensitivities, res.steps

    alone = [solve(b) for b in batches]
    with ThreadPoolExecutor(max_workers=4) as pool:
        together = list(pool.map(solve, batches))
    for (c1, s1, n1), (c2, s2, n2) in zip(alone, together, strict=True):
        assert np.array_equal(c1, c2, equal_nan=True)
        assert n1.tolist() == n2.tolist()
        if sens:
            assert np.array_equal(s1, s2, equal_nan=True)


@pytest.mark.parametrize("method", ["bdf", "rosenbrock"])
def test_failing_system_leaves_neighbours_alone(method):
    """X + X -> 3 X (dX/dt = k X^2) blows up at t = 1/(k [X]0); the middle system of the
    batch does so before its last output time and its neighbours do not."""
    sim = Simulator(parse_mechanism("2 X -> 3 X @ k\nX -> Y @ kd"), rtol=1e-8,
                    max_steps=2000, method=method)
    k = np.array([[0.1, 0.5], [5.0, 0.01], [0.2, 0.3]])
    t = np.linspace(0.0, 3.0, 7)
    res = sim.solve(t, np.array([1.0, 0.0]), k)
    assert res.ok.tolist() == [True, False, True]
    assert res.status[1] in (STATUS_STEP_CAP, STATUS_STEP_TOO_SMALL, STATUS_NOT_FINITE)
    alone = sim.solve(t, np.array([1.0, 0.0]), k[[0, 2]])
    assert np.array_equal(res.concentrations[[0, 2]], alone.concentrations)
    assert res.steps[[0, 2]].tolist() == alone.steps.tolist()


def test_many_species_use_the_general_copy_of_the_bdf():
    """The BDF is compiled once per number of species up to 8 and once for any number;
    a chain of ten first-order steps (more than 8 species) against its exact solution."""
    mech = parse_mechanism("\n".join(f"A{i} -> A{i + 1} @ k{i}" for i in range(9)))
    k = np.linspace(0.5, 2.0, 9)
    y0 = np.zeros(10)
    y0[0] = 1.0
    t = np.linspace(0.0, 6.0, 13)
    exact = Simulator(mech).solve(t, y0, k)
    bdf = Simulator(mech, rtol=1e-10, atol=1e-15, method="bdf").solve(t, y0, k)
    assert exact.method == ["eigen"] and bdf.method == ["bdf"]
    assert np.allclose(bdf.concentrations, exact.concentrations, rtol=1e-6, atol=1e-12)


def test_missing_library_says_how_to_build_it(monkeypatch):
    monkeypatch.setattr(compiled, "_library", None)
    monkeypatch.setattr(compiled, "_candidates", lambda: [])
    with pytest.raises(compiled.CompiledLibraryError, match=r"pip install -e \."):
        compiled.library()


def test_library_is_found_beside_the_package_or_installed():
    paths = compiled._candidates()
    assert paths and all("_native." in p for p in paths)


def test_library_built_from_other_sources_is_refused(monkeypatch):
    """A source checkout whose C files were edited since the build."""
    monkeypatch.setattr(compiled, "_library", None)
    monkeypatch.setattr(compiled, "source_fingerprint", lambda: "0" * 64)
    with pytest.raises(compiled.CompiledLibraryError, match="built from other sources than"):
        compiled.library()


def test_library_with_another_layout_is_refused(monkeypatch):
    monkeypatch.setattr(compiled, "_library", None)
    monkeypatch.setattr(compiled, "LAYOUT_VERSION", compiled.LAYOUT_VERSION + 1)
    with pytest.raises(compiled.CompiledLibraryError, match="built from other sources"):
        compiled.library()


def test_tables_are_read_only():
    """The compiled side keeps pointers into the tables: they cannot be changed."""
    tables = build_tables(Simulator(parse_mechanism(ENZYME)).model)
    with pytest.raises(ValueError, match="read-only"):
        tables.mass_action[0][0, 0] = 3.0
