"""Initial rates against the mass-action formula (IUPAC Gold Book, 'rate of
reaction': r = k prod [X]^nu; d[X]/dt = sum (nu_products - nu_reactants) r)."""

from __future__ import annotations

import numpy as np
from test_simulate_sensitivity import _michaelis_menten_qssa

from mechfit import parse_mechanism
from mechfit.simulate import Simulator


def test_initial_rates_match_mass_action_formula():
    mech = parse_mechanism("2 A + B -> C @ k1\nC <=> D @ k2, k_2\nA -> 0 @ 3*k3")
    sim = Simulator(mech)
    rng = np.random.default_rng(5)
    y = rng.uniform(0.1, 2.0, (7, 4))
    k = rng.uniform(0.1, 3.0, (7, 4))      # k1, k2, k_2, k3
    got = sim.initial_rates(y, k)
    a, b, c, d = y.T
    r1 = k[:, 0] * a**2 * b
    r2, r_2 = k[:, 1] * c, k[:, 2] * d
    r3 = 3 * k[:, 3] * a
    expected = np.column_stack([-2 * r1 - r3, -r1, r1 - r2 + r_2, r2 - r_2])
    assert np.allclose(got, expected, rtol=1e-14)


def test_initial_rates_of_reduced_model_use_chain_rule():
    """Briggs-Haldane: v0 = k2 [E]0 [S]0 / (Km + [S]0) (Briggs and Haldane 1925); the
    algebraic ES follows d[ES]/dt = (d ES / d S) d[S]/dt."""
    sim = Simulator(_michaelis_menten_qssa())
    k1, km1, k2, e0, s0 = 10.0, 1.0, 2.0, 0.01, 0.5
    rates = sim.initial_rates(np.array([e0, s0, 0.0, 0.0]), np.array([k1, km1, k2]))[0]
    km = (km1 + k2) / k1
    v0 = k2 * e0 * s0 / (km + s0)
    assert np.allclose(rates[[1, 3]], [-v0, v0], rtol=1e-14)
    des = e0 * km / (km + s0) ** 2 * (-v0)
    assert np.allclose(rates[[0, 2]], [-des, des], rtol=1e-12)
