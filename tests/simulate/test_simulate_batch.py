"""Batches: per-system failure flags, the step cap, ragged times, input errors."""

from __future__ import annotations

import time

import numpy as np
import pytest

from mechfit import parse_mechanism
from mechfit.derive.model import mass_action_model
from mechfit.simulate import REASONS, SimulationInputError, Simulator
from mechfit.simulate.integrator import STATUS_INVALID_INPUT, STATUS_STEP_CAP

ENZYME = "E + S <=> ES @ k1, k_1\nES -> E + P @ k2"


def test_bad_parameter_set_is_flagged_and_others_solve():
    sim = Simulator(parse_mechanism(ENZYME))
    k = np.array([[10.0, 1.0, 2.0], [-3.0, 1.0, 2.0], [np.nan, 1.0, 2.0], [8.0, 1.0, 1.0]])
    y0 = np.array([1.0, 5.0, 0.0, 0.0])
    t = np.linspace(0.0, 4.0, 9)
    res = sim.solve(t, y0, k)
    assert res.ok.tolist() == [True, False, False, True]
    assert res.status[1] == STATUS_INVALID_INPUT
    assert "k1" in res.reason[1] and "k1" in res.reason[2]
    assert np.isnan(res.concentrations[1]).all()
    alone = sim.solve(t, y0, k[[0, 3]])
    assert np.array_equal(alone.concentrations, res.concentrations[[0, 3]])
    assert res.summary()["solved"] == 2


def test_blow_up_is_flagged_not_raised():
    """X -> 2 X with rate k [X]^2 blows up at t = 1 / (k [X]0) (an empirical law)."""
    sim = Simulator(parse_mechanism("X -> 2 X @ rate = k*[X]^2"), max_steps=5000)
    res = sim.solve(np.array([0.5, 2.0]), np.array([[1.0], [1.0]]),
                    np.array([[1.0], [0.1]]))
    assert res.ok.tolist() == [False, True]
    assert res.reason[0]
    assert res.concentrations[0, 0, 0] == pytest.approx(2.0, rel=1e-5)   # 1/(1 - k t)
    assert res.concentration("X", 1) == pytest.approx([1 / 0.95, 1 / 0.8], rel=1e-5)


@pytest.mark.parametrize("method", ["bdf", "rosenbrock"])
def test_step_cap_returns_a_failure_quickly(method):
    sim = Simulator(parse_mechanism("A -> B @ r1\n2 B -> B + C @ r2\nB + C -> A + C @ r3"),
                    rtol=1e-10, atol=1e-20, max_steps=25, method=method)
    sim.solve(np.array([1e-3]), np.array([1.0, 0.0, 0.0]), np.array([0.04, 3e7, 1e4]))
    start = time.perf_counter()   # compiled code is loaded: time the capped solve only
    res = sim.solve(np.array([1e5]), np.array([1.0, 0.0, 0.0]),
                    np.array([[0.04, 3e7, 1e4], [0.04, 3e7, 1e4]]))
    assert time.perf_counter() - start < 5.0
    assert not res.ok.any()
    assert (res.status == STATUS_STEP_CAP).all()
    assert res.reason[0].startswith(REASONS[STATUS_STEP_CAP])
    assert (res.steps == 25).all()
    assert np.isnan(res.concentrations).all()


def test_ragged_times_list_and_padded():
    sim = Simulator(parse_mechanism(ENZYME))
    times = [np.array([0.0, 1.0, 2.0]), np.array([0.5, 3.0]), np.array([0.0])]
    k = np.array([10.0, 1.0, 2.0])
    y0 = np.array([1.0, 5.0, 0.0, 0.0])
    res = sim.solve(times, y0, k)
    assert res.counts.tolist() == [3, 2, 1]
    assert res.concentrations.shape == (3, 3, 4)
    assert np.isnan(res.concentrations[1, 2]).all() and np.isnan(res.times[1, 2])
    assert np.array_equal(res.concentrations[2, 0], y0)
    padded = np.array([[0.0, 1.0, 2.0], [0.5, 3.0, 0.0]])
    res2 = sim.solve(padded, y0, k, counts=[3, 2])
    assert np.allclose(res2.concentrations[1, :2], res.concentrations[1, :2], rtol=1e-12)
    shared = sim.solve(np.array([0.5, 3.0]), y0, k)
    assert np.allclose(shared.concentrations[0], res.concentrations[1, :2], rtol=1e-12)


@pytest.mark.parametrize("method", ["bdf", "rosenbrock"])
def test_each_system_has_its_own_error_control(method):
    """Stacking a fast, stiff system next to a slow one must not change the slow one's
    answer (its tolerance is not shared)."""
    sim = Simulator(parse_mechanism(ENZYME), rtol=1e-8, method=method)
    y0 = np.array([[1.0, 5.0, 0.0, 0.0], [1e-3, 5.0, 0.0, 0.0]])
    k = np.array([[1e6, 1e3, 1e4], [1.0, 1.0, 0.1]])
    t = np.linspace(0.0, 3.0, 7)
    together = sim.solve(t, y0, k)
    alone = sim.solve(t, y0[1], k[1])
    assert np.array_equal(together.concentrations[1], alone.concentrations[0])
    assert together.steps[1] == alone.steps[0]


def test_input_errors_raise_clear_messages():
    sim = Simulator(parse_mechanism(ENZYME))
    with pytest.raises(SimulationInputError, match="initial must have shape"):
        sim.solve(np.array([1.0]), np.ones(3), np.ones(3))
    with pytest.raises(SimulationInputError, match="non-decreasing"):
        sim.solve(np.array([2.0, 1.0]), np.ones(4), np.ones(3))
    with pytest.raises(SimulationInputError, match="rows"):
        sim.solve(np.array([1.0]), np.ones((2, 4)), np.ones((3, 3)))
    from mechfit.errors import MechfitError
    with pytest.raises(MechfitError, match="no value for parameter"):
        sim.parameter_vector({"k1": 1.0})


def test_mass_action_fast_path_matches_general_kernel():
    """The matrix solver and the general kernel (used for sensitivities and non-mass-
    action models) run the same RODAS4 steps: same answers to round-off."""
    mech = parse_mechanism("init: Br2 -> 2 Br @ k1\nBr + H2 -> HBr + H @ k2\n"
                           "H + Br2 -> HBr + Br @ k3\nH + HBr -> H2 + Br @ k4\n"
                           "2 Br -> Br2 @ k5")
    sim = Simulator(mech, rtol=1e-8, method="rosenbrock")
    y0 = np.array([1.0, 0.0, 1.0, 0.0, 0.0])
    k = np.array([1e-2, 5.0, 50.0, 10.0, 1e3])
    t = np.linspace(0.0, 50.0, 11)
    fast = sim.solve(t, y0, k)
    general = sim.solve(t, y0, k, sensitivities="parameters")
    assert fast.ok.all() and general.ok.all()
    assert np.allclose(fast.concentrations, general.concentrations, rtol=1e-6, atol=1e-14)
    # the program path (mass action written as laws) gives the same too
    model = mass_action_model(mech)
    from dataclasses import replace
    program = Simulator(replace(model, mass_action=False), rtol=1e-8, method="rosenbrock")
    assert program.tables.kind == 1
    assert np.allclose(program.solve(t, y0, k).concentrations, fast.concentrations,
                       rtol=1e-10, atol=1e-15)
