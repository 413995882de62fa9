"""Accuracy of the simulator against published reference values and textbook solutions."""

from __future__ import annotations

import numpy as np
import pytest

from mechfit import load_mechanism, parse_mechanism
from mechfit.mechanism import conservation_laws
from mechfit.simulate import Simulator

ROOT = __import__("pathlib").Path(__file__).resolve().parents[2]


def test_robertson_reference_values():
    """Robertson's stiff problem against its published reference solution.

    H. H. Robertson (1966), "The solution of a set of reaction rate equations", in
    J. Walsh (ed.), Numerical Analysis: An Introduction, Academic Press, 178-182;
    reference values at t = 40 as tabulated with the standard stiff test problems
    (E. Hairer and G. Wanner, Solving Ordinary Differential Equations II, 2nd ed.,
    Springer 1996, section IV.10), and at t = 1e11 from the Test Set for IVP
    Solvers (F. Mazzia and F. Iavernaro, University of Bari, problem ROBER). All
    values recalled from memory; they are also cross-checked against scipy's Radau
    at tight tolerance below.
    """
    mech = load_mechanism(ROOT / "mechanisms" / "classic" / "robertson.mech")
    sim = Simulator(mech, rtol=1e-9, atol=1e-16, max_steps=100_000)
    k = sim.parameter_vector({})
    res = sim.solve(np.array([0.0, 40.0, 1e11]), np.array([1.0, 0.0, 0.0]), k)
    assert res.ok.all(), res.reason
    assert res.method == ["bdf"]
    a, b, c = (res.concentration(s) for s in ("A", "B", "C"))
    assert a[1] == pytest.approx(0.7158270687193510, rel=1e-8)
    assert b[1] == pytest.approx(0.9185534764557256e-05, rel=1e-6)
    assert c[1] == pytest.approx(0.2841637457458934, rel=1e-8)
    assert a[2] == pytest.approx(0.2083340149701255e-07, rel=1e-5)
    assert c[2] == pytest.approx(0.9999999791665050, rel=1e-10)
    # a stiff solver: an explicit method would need ~1e11 / 1e-4 steps here
    assert res.steps[0] < 20_000


def test_robertson_agrees_with_scipy_radau():
    """The same problem against scipy.integrate.solve_ivp(method="Radau") (E. Hairer
    and G. Wanner's RADAU5 method as implemented in scipy) at tight tolerance."""
    from scipy.integrate import solve_ivp

    def rhs(_t, y):
        return [-0.04 * y[0] + 1e4 * y[1] * y[2],
                0.04 * y[0] - 1e4 * y[1] * y[2] - 3e7 * y[1] ** 2,
                3e7 * y[1] ** 2]

    times = np.array([0.4, 4.0, 40.0, 400.0, 4000.0])
    ref = solve_ivp(rhs, (0, times[-1]), [1.0, 0, 0], method="Radau", t_eval=times,
                    rtol=1e-12, atol=1e-18).y.T
    mech = load_mechanism(ROOT / "mechanisms" / "classic" / "robertson.mech")
    sim = Simulator(mech, rtol=1e-9, atol=1e-16)
    res = sim.solve(times, np.array([1.0, 0.0, 0.0]), sim.parameter_vector({}))
    assert np.allclose(res.concentrations[0], ref, rtol=1e-6, atol=1e-14)


def _consecutive(ka, kb, t):
    """A -> I -> P, [A]0 = 1: P. Atkins and J. de Paula, Physical Chemistry, 9th ed.,
    Oxford University Press (2010), section 21.4 'Consecutive elementary reactions'
    (recalled from memory)."""
    a = np.exp(-ka * t)
    i = ka / (kb - ka) * (np.exp(-ka * t) - np.exp(-kb * t))
    p = 1.0 + (ka * np.exp(-kb * t) - kb * np.exp(-ka * t)) / (kb - ka)
    return np.column_stack([a, i, p])


@pytest.mark.parametrize("method", ["auto", "rosenbrock", "bdf"])
def test_consecutive_first_order_analytic(method):
    sim = Simulator(parse_mechanism("A -> I @ ka\nI -> P @ kb"), rtol=1e-10, atol=1e-16,
                    method=method)
    t = np.linspace(0.0, 8.0, 33)
    res = sim.solve(t, np.array([1.0, 0.0, 0.0]), np.array([1.3, 0.4]))
    assert res.ok.all()
    assert res.method[0] == ("eigen" if method == "auto" else method)
    assert np.allclose(res.concentrations[0], _consecutive(1.3, 0.4, t),
                       rtol=1e-8 if method != "bdf" else 1e-7, atol=1e-12)


@pytest.mark.parametrize("method", ["auto", "rosenbrock", "bdf"])
def test_reversible_first_order_analytic(method):
    """A <=> B, [A]0 = 1, [B]0 = 0: [A] = (kr + kf exp(-(kf + kr) t)) / (kf + kr)
    (Atkins and de Paula, Physical Chemistry, 9th ed., 2010, section 21.3 'Reactions
    approaching equilibrium'; recalled from memory)."""
    kf, kr = 2.0, 0.5
    sim = Simulator(parse_mechanism("A <=> B @ kf, kr"), rtol=1e-10, atol=1e-16,
                    method=method)
    t = np.linspace(0.0, 5.0, 21)
    res = sim.solve(t, np.array([1.0, 0.0]), np.array([kf, kr]))
    expected = (kr + kf * np.exp(-(kf + kr) * t)) / (kf + kr)
    assert np.allclose(res.concentration("A"), expected, rtol=1e-7, atol=1e-13)
    assert np.allclose(res.concentration("B"), 1.0 - expected, rtol=1e-7, atol=1e-13)


@pytest.mark.parametrize("method", ["bdf", "rosenbrock"])
def test_second_order_mixed_analytic(method):
    """A + B -> P with [A]0 != [B]0: k t = ln(([B]/[B]0)/([A]/[A]0)) / ([B]0 - [A]0),
    i.e. [A] = [A]0 ([B]0 - [A]0) / ([B]0 exp(([B]0 - [A]0) k t) - [A]0) (Atkins and
    de Paula, Physical Chemistry, 9th ed., 2010, section 21.3, integrated second-order
    rate law for unequal concentrations; recalled from memory)."""
    k, a0, b0 = 0.7, 1.0, 1.6
    sim = Simulator(parse_mechanism("A + B -> P @ k"), rtol=1e-10, atol=1e-16, method=method)
    assert sim.first_order is False
    t = np.linspace(0.0, 10.0, 41)
    res = sim.solve(t, np.array([a0, b0, 0.0]), np.array([k]))
    a = a0 * (b0 - a0) / (b0 * np.exp((b0 - a0) * k * t) - a0)
    assert res.method == [method]
    assert np.allclose(res.concentration("A"), a, rtol=1e-7, atol=1e-13)
    assert np.allclose(res.concentration("B"), b0 - a0 + a, rtol=1e-7, atol=1e-13)
    assert np.allclose(res.concentration("P"), a0 - a, rtol=1e-7, atol=1e-13)


@pytest.mark.parametrize("method", ["bdf", "rosenbrock"])
@pytest.mark.parametrize("name", ["michaelis_menten", "h2_br2_chain", "competitive_inhibition",
                                  "robertson"])
def test_conservation_laws_held(name, method):
    """Linear invariants (conservation laws, common practice) hold to 1e-10 relative
    even at a loose tolerance: Rosenbrock stages are combinations of right-hand sides
    and solves with one matrix, so they preserve every linear invariant (Hairer and
    Wanner, Solving ODEs II, 1996, section IV.7); the Newton corrections of the BDF
    solve with one matrix too."""
    mech = load_mechanism(ROOT / "mechanisms" / "classic" / f"{name}.mech")
    laws = conservation_laws(mech)
    assert laws
    rng = np.random.default_rng(3)
    # outputs are clipped at 0 and a step may undershoot by at most atol, so atol is
    # set below 1e-10 of the totals
    sim = Simulator(mech, rtol=1e-5, atol=1e-12, method=method)
    n_sys = 6
    initial = rng.uniform(0.1, 2.0, (n_sys, len(mech.species)))
    k = np.exp(rng.uniform(-1, 2, (n_sys, len(sim.parameters))))
    if mech.fixed:
        k = np.repeat(sim.parameter_vector({})[None, :], n_sys, axis=0)
    res = sim.solve(np.linspace(0.0, 20.0, 40), initial, k)
    assert res.ok.all(), res.reason
    for law in laws:
        w = np.asarray(law.weights, dtype=float)
        total0 = initial @ w
        totals = res.concentrations @ w
        assert np.all(np.abs(totals - total0[:, None]) <= 1e-10 * total0[:, None])
