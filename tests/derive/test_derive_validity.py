"""Validity of approximations: Jacobian time scales and deviation from the full model.

The reference integrations use scipy's solve_ivp (a general-purpose library), not
mechfit's simulator.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy
from scipy.integrate import solve_ivp

from mechfit import parse_mechanism
from mechfit.derive import (
    DerivationError,
    algebraic_values,
    largest_relative_deviation,
    mass_action_model,
    steady_state_model,
    time_scale_separation,
)
from mechfit.mechanism.symbols import concentration, initial_concentration, rate_constant

ENZYME = parse_mechanism("bind: E + S <=> ES @ k1, k_1\ncat: ES -> E + P @ k2")
VALUES = {"k1": 100.0, "k_1": 1.0, "k2": 1.0}


def _integrate(model, y0, values, initial, t):
    subs = {rate_constant(k): v for k, v in values.items()}
    subs |= {initial_concentration(s): v for s, v in initial.items()}
    for s in model.mechanism.species:
        subs.setdefault(initial_concentration(s), 0.0)
    xs = [concentration(s) for s in model.state]
    f = sympy.lambdify(xs, [e.xreplace(subs) for e in model.rhs], modules="numpy")
    sol = solve_ivp(lambda _t, y: f(*y), (t[0], t[-1]), y0, t_eval=t, method="LSODA",
                    rtol=1e-10, atol=1e-13)
    assert sol.success
    return {s: sol.y[i] for i, s in enumerate(model.state)}


def _deviation(e0, s0):
    t = np.linspace(0.0, 30.0 / (VALUES["k2"] * min(1.0, e0 / s0 * 10)), 400)
    full = mass_action_model(ENZYME)
    initial = {"E": e0, "S": s0}
    f = _integrate(full, [initial.get(s, 0.0) for s in full.state], VALUES, initial, t)
    red = steady_state_model(ENZYME)
    r = _integrate(red, [initial.get(s, 0.0) for s in red.state], VALUES, initial, t)
    # the state species (S, P) are what the variant predicts over the whole run
    return largest_relative_deviation(f, r)


def test_algebraic_forms_follow_the_full_model_after_the_transient():
    e0, s0 = 1e-3, 1.0
    t = np.linspace(0.0, 300.0, 300)
    full = mass_action_model(ENZYME)
    initial = {"E": e0, "S": s0}
    f = _integrate(full, [initial.get(s, 0.0) for s in full.state], VALUES, initial, t)
    red = steady_state_model(ENZYME)
    r = _integrate(red, [initial.get(s, 0.0) for s in red.state], VALUES, initial, t)
    alg = algebraic_values(red, r, VALUES, initial)
    assert set(alg) == {"E", "ES"}
    late = t > 1.0  # after the initial (pre-steady-state) transient, 1/(k1[S]0) ~ 0.01
    for s in ("E", "ES"):
        dev, _ = largest_relative_deviation({s: f[s][late]}, {s: alg[s][late]})
        assert dev < 5e-3
    np.testing.assert_allclose(alg["E"] + alg["ES"], e0, rtol=1e-12)


def test_deviation_small_when_enzyme_is_scarce_and_large_when_not():
    # Segel and Slemrod, SIAM Review 31 (1989) 446: the steady-state approximation
    # holds when [E]0/([S]0 + Km) << 1. Here Km = 0.02.
    small, _ = _deviation(1e-3, 1.0)
    large, _ = _deviation(1.0, 1.0)
    assert small < 2e-3
    assert large > 0.05


def test_time_scale_separation_tracks_the_same_criterion():
    red = steady_state_model(ENZYME)
    scarce = time_scale_separation(red, VALUES, {"E": 1e-3, "S": 1.0})
    plenty = time_scale_separation(red, VALUES, {"E": 1.0, "S": 1.0})
    assert scarce.fast_modes == 1
    assert scarce.separated() and scarce.separation > 100 * plenty.separation
    assert len(scarce.rates) == 2  # four species, two conservation laws
    assert scarce.summary()["separated"] is True


def test_full_model_has_no_fast_modes():
    t = time_scale_separation(mass_action_model(ENZYME), VALUES, {"E": 1e-3, "S": 1.0})
    assert t.fast_modes == 0 and np.isnan(t.separation)
    assert t.summary()["separation"] is None


def test_missing_rate_constant_is_named():
    with pytest.raises(DerivationError, match="k2"):
        time_scale_separation(steady_state_model(ENZYME), {"k1": 1.0, "k_1": 1.0}, {"S": 1.0})


def test_chain_rate_law_matches_a_scipy_integration_of_the_full_scheme():
    # the derived H2 + Br2 law (Bodenstein-Lind form, see test_derive_textbook) against
    # the full mass-action scheme integrated with scipy (LSODA) at invented constants:
    # once the radicals are in steady state the two rates of HBr formation agree
    m = parse_mechanism("init: Br2 + M <=> 2 Br + M @ k1, k_1\n"
                        "prop: Br + H2 <=> HBr + H @ k2, k_2\n"
                        "prop2: H + Br2 -> HBr + Br @ k3\n")
    values = {"k1": 1e-3, "k_1": 1e6, "k2": 10.0, "k_2": 5.0, "k3": 1e3}
    from mechfit.derive import derive_rate_law
    law = derive_rate_law(steady_state_model(m, ["Br", "H"]), "HBr")
    full = mass_action_model(m)
    t = np.array([0.0, 50.0, 200.0, 800.0])
    initial = {"Br2": 1.0, "M": 1.0, "H2": 1.0}
    traj = _integrate(full, [initial.get(s, 0.0) for s in full.state], values, {}, t)
    hbr_rate = dict(zip(full.state, full.rhs, strict=True))["HBr"]
    consts = {rate_constant(k): v for k, v in values.items()}
    for i in (1, 2, 3):
        point = {concentration(s): traj[s][i] for s in full.state} | consts
        exact = float(hbr_rate.xreplace(point))
        derived = float(law.rate.xreplace(point))
        assert derived == pytest.approx(exact, rel=1e-3)
    assert traj["HBr"][-1] > 0.1  # the run got somewhere
