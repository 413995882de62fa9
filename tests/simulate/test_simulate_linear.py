"""The exact solution of first-order networks and its automatic choice of method."""

from __future__ import annotations

import numpy as np

from mechfit import parse_mechanism
from mechfit.simulate import Simulator


def test_equal_constants_use_the_matrix_exponential():
    """A -> I -> P with ka = kb: K is defective; [I] = [A]0 k t exp(-k t) (the limit
    ka -> kb of the consecutive-reaction solution, Atkins and de Paula, Physical
    Chemistry, 9th ed., 2010, section 21.4; recalled from memory)."""
    sim = Simulator(parse_mechanism("A -> I @ ka\nI -> P @ kb"))
    t = np.linspace(0.0, 6.0, 13)
    res = sim.solve(t, np.array([1.0, 0.0, 0.0]), np.array([[0.8, 0.8], [0.8, 0.3]]))
    assert res.method == ["expm", "eigen"]
    assert np.allclose(res.concentration("I", 0), 0.8 * t * np.exp(-0.8 * t), rtol=1e-12,
                       atol=1e-15)
    assert np.allclose(res.concentrations[:, :, :].sum(axis=2), 1.0, rtol=1e-12)


def test_cycle_with_complex_eigenvalues_matches_integrator():
    """A -> B -> C -> A with unequal constants has complex eigenvalues; the exact
    solution must agree with the integrated one."""
    mech = parse_mechanism("A -> B @ k1\nB -> C @ k2\nC -> A @ k3")
    k = np.array([1.0, 1.2, 0.9])
    w = np.linalg.eigvals(np.array([[-1.0, 0, 0.9], [1.0, -1.2, 0], [0, 1.2, -0.9]]))
    assert np.abs(w.imag).max() > 0.1
    t = np.linspace(0.0, 10.0, 21)
    exact = Simulator(mech).solve(t, np.array([1.0, 0.0, 0.0]), k)
    integrated = Simulator(mech, rtol=1e-11, atol=1e-15, method="rosenbrock").solve(
        t, np.array([1.0, 0.0, 0.0]), k)
    assert exact.method == ["eigen"]
    assert np.allclose(exact.concentrations, integrated.concentrations, rtol=1e-8,
                       atol=1e-12)


def test_exact_path_flags_bad_systems_and_keeps_ragged_times():
    sim = Simulator(parse_mechanism("A <=> B @ kf, kr"))
    res = sim.solve([np.array([0.0, 1.0]), np.array([2.0]), np.array([1.0, 2.0, 3.0])],
                    np.array([1.0, 0.0]), np.array([[1.0, 1.0], [-1.0, 1.0], [2.0, 0.5]]))
    assert res.ok.tolist() == [True, False, True]
    assert "kf" in res.reason[1]
    assert res.counts.tolist() == [2, 1, 3]
    assert np.isnan(res.concentrations[0, 2]).all()
    a = res.concentration("A", 2)
    assert np.allclose(a, (0.5 + 2.0 * np.exp(-2.5 * np.array([1.0, 2.0, 3.0]))) / 2.5)
