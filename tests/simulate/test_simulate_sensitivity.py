"""Forward sensitivities against central finite differences of the solution."""

from __future__ import annotations

import numpy as np
import pytest

from mechfit import parse_mechanism
from mechfit.derive.model import KineticModel
from mechfit.mechanism import symbols
from mechfit.simulate import Simulator

ENZYME = "E + S <=> ES @ k1, k_1\nES -> E + P @ k2"
TIMES = np.linspace(0.0, 4.0, 9)


def _finite_difference(sim, initial, k, direction, step=1e-5):
    """Central difference of the concentrations along one direction (ln p for positive
    parameters, p for real ones, [X]0 for initial concentrations)."""
    n_par = len(sim.parameters)
    plus_k, minus_k = k.copy(), k.copy()
    plus_y, minus_y = initial.copy(), initial.copy()
    if direction < n_par and sim.tables.log_scale[direction]:
        plus_k[direction] *= np.exp(step)
        minus_k[direction] *= np.exp(-step)
    elif direction < n_par:
        plus_k[direction] += step
        minus_k[direction] -= step
    else:
        plus_y[direction - n_par] += step
        minus_y[direction - n_par] -= step
    up = sim.solve(TIMES, plus_y, plus_k).concentrations[0]
    down = sim.solve(TIMES, minus_y, minus_k).concentrations[0]
    return (up - down) / (2 * step)


def _check(sim, initial, k):
    res = sim.solve(TIMES, initial, k, sensitivities=True)
    assert res.ok.all(), res.reason
    n_dir = res.sensitivities.shape[-1]
    assert n_dir == len(sim.parameters) + len(sim.species)
    for q in range(n_dir):
        fd = _finite_difference(sim, initial, k, q)
        scale = max(np.abs(fd).max(), 1e-3)
        assert np.abs(res.sensitivities[0, :, :, q] - fd).max() <= 2e-6 * scale, \
            res.sensitivity_names[q]
    return res


def test_mass_action_sensitivities():
    sim = Simulator(parse_mechanism(ENZYME), rtol=1e-10, atol=1e-14, method="rosenbrock")
    res = _check(sim, np.array([1.0, 10.0, 0.2, 0.1]), np.array([10.0, 1.0, 2.0]))
    assert res.sensitivity_names == ("ln k1", "ln k_1", "ln k2", "[E]0", "[S]0", "[ES]0",
                                     "[P]0")
    # at t = 0 the sensitivity to [S]0 is the unit vector
    assert res.sensitivities[0, 0, :, 4].tolist() == [0.0, 1.0, 0.0, 0.0]


def test_empirical_law_sensitivities_with_order_parameter():
    """An empirical law with a real-valued order a: free names of a law are real
    parameters (sensitivity per unit value); the mass-action constant k2 is positive
    (sensitivity per unit ln k2)."""
    sim = Simulator(parse_mechanism("A + B -> P @ rate = k*[A]^a*[B]\nP -> Q @ k2"),
                    rtol=1e-10, atol=1e-14)
    assert sim.parameters == ("k2", "a", "k")
    assert sim.tables.log_scale.tolist() == [True, False, False]
    res = _check(sim, np.array([1.0, 1.5, 0.1, 0.05]), np.array([0.3, 1.5, 0.8]))
    assert res.sensitivity_names[:3] == ("ln k2", "a", "k")


def _michaelis_menten_qssa():
    """The Briggs-Haldane steady-state model built by hand: state (S, P); ES and E
    algebraic with the total enzyme [E]0 (G. E. Briggs and J. B. S. Haldane, Biochem.
    J. 19 (1925) 338)."""
    mech = parse_mechanism(ENZYME)
    s, e0 = symbols.concentration("S"), symbols.initial_concentration("E")
    k1, km1, k2 = (symbols.rate_constant(n) for n in ("k1", "k_1", "k2"))
    km = (km1 + k2) / k1
    es = e0 * s / (km + s)
    v = k2 * es
    return KineticModel(name="steady-state ES", mechanism=mech, state=("S", "P"),
                        rhs=(-v, v), algebraic={"ES": es, "E": e0 - es},
                        parameters=("k1", "k_1", "k2"))


def test_reduced_model_sensitivities_include_total_enzyme():
    sim = Simulator(_michaelis_menten_qssa(), rtol=1e-10, atol=1e-14)
    res = _check(sim, np.array([0.01, 1.0, 0.01, 0.1]), np.array([10.0, 1.0, 2.0]))
    # [E]0 enters only through the algebraic expressions and the rate
    assert np.abs(res.sensitivities[0, -1, :, 3]).max() > 0.1


@pytest.mark.parametrize("method", ["auto", "rosenbrock"])
def test_first_order_sensitivities(method):
    """Sensitivities of a first-order network (integrated forward-sensitivity system;
    the exact solution is not used when sensitivities are asked for)."""
    sim = Simulator(parse_mechanism("A -> B @ ka\nB -> C @ kb"), rtol=1e-10, atol=1e-14,
                    method=method)
    res = _check(sim, np.array([1.0, 0.2, 0.1]), np.array([1.3, 0.4]))
    ka, t = 1.3, TIMES
    # d[A]/d ln ka = -ka t exp(-ka t) (differentiating the Atkins solution, see
    # test_simulate_reference)
    assert np.allclose(res.sensitivities[0, :, 0, 0], -ka * t * np.exp(-ka * t), atol=1e-8)
