"""Agreement with scipy's Radau (a general-purpose reference library) on generated
mechanisms: scipy.integrate.solve_ivp(method="Radau"), the implicit Runge-Kutta
method RADAU IIA of order 5 (Hairer and Wanner, Solving ODEs II, 1996, section IV.8),
run at tight tolerance. A drawn mechanism whose reference would need more than
:data:`REFERENCE_BUDGET` right-hand sides (fast oscillations or explosive growth at
this tolerance: minutes of Python callbacks) is set aside, so the test's run time
stays bounded."""

from __future__ import annotations

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, given, reject, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from mechfit import parse_mechanism
from mechfit.derive.model import mass_action_model
from mechfit.mechanism import symbols
from mechfit.simulate import Simulator

SPECIES = ("A", "B", "C", "D")
#: right-hand sides the Radau reference may use for one drawn mechanism
REFERENCE_BUDGET = 100_000


class _ReferenceTooCostly(Exception):
    pass


@st.composite
def mechanisms(draw):
    n_species = draw(st.integers(2, 4))
    names = SPECIES[:n_species]
    side = st.lists(st.sampled_from(names), min_size=1, max_size=2)
    lines = []
    for j in range(draw(st.integers(1, 4))):
        left, right = draw(side), draw(side)
        if sorted(left) == sorted(right):
            continue
        arrow = "<=>" if draw(st.booleans()) else "->"
        consts = f"kf{j}, kr{j}" if arrow == "<=>" else f"kf{j}"
        lines.append(f"{' + '.join(left)} {arrow} {' + '.join(right)} @ {consts}")
    if not lines:
        lines.append(f"{names[0]} -> {names[1]} @ kf0")
    mech = parse_mechanism("\n".join(lines))
    k = draw(st.lists(st.floats(-2.0, 2.0), min_size=len(mech.parameters),
                      max_size=len(mech.parameters)))
    y0 = draw(st.lists(st.floats(0.1, 2.0), min_size=len(mech.species),
                       max_size=len(mech.species)))
    return mech, 10.0 ** np.array(k), np.array(y0)


def _radau(mech, k, y0, times):
    model = mass_action_model(mech)
    ys = [symbols.concentration(s) for s in model.state]
    ks = [symbols.rate_constant(p) for p in model.parameters]
    rhs = sympy.lambdify((ys, ks), list(model.rhs))
    jac = sympy.lambdify((ys, ks), model.jacobian())
    calls = [0]

    def counted(_t, y):
        calls[0] += 1
        if calls[0] > REFERENCE_BUDGET:
            raise _ReferenceTooCostly
        return rhs(y, k)

    sol = solve_ivp(counted, (0.0, times[-1]), y0, method="Radau", t_eval=times,
                    rtol=1e-12, atol=1e-15, jac=lambda _t, y: jac(y, k))
    assert sol.success
    return sol.y.T


def _check(mech, k, y0):
    times = np.linspace(0.0, 5.0, 11)
    try:
        ref = _radau(mech, k, y0, times)
    except _ReferenceTooCostly:
        reject()
    for method in ("auto", "rosenbrock", "bdf"):
        sim = Simulator(mech, rtol=1e-10, atol=1e-15, method=method)
        res = sim.solve(times, y0, k)
        assert res.ok.all(), res.reason
        scale = np.abs(ref).max(axis=0)
        assert np.all(np.abs(res.concentrations[0] - ref) <= 1e-6 * np.abs(ref) + 1e-9 * scale)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mechanisms())
def test_generated_mechanisms_agree_with_radau(case):
    _check(*case)


@pytest.mark.slow
@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mechanisms())
def test_generated_mechanisms_agree_with_radau_many(case):
    _check(*case)
