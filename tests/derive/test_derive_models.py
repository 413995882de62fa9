"""Mass-action ODEs, Jacobians, and the KineticModel contract of reduced variants."""

from __future__ import annotations

import numpy as np
import pytest
import sympy

from mechfit import parse_mechanism
from mechfit.derive import (
    DerivationError,
    derive_rate_law,
    derive_variants,
    mass_action_model,
    reduced_model,
    steady_state_model,
)
from mechfit.derive import steady_state as ss
from mechfit.mechanism.symbols import concentration, initial_concentration, rate_constant


def test_mass_action_convention_and_jacobian():
    # IUPAC Gold Book, "rate of reaction": rate of an elementary step is k times the
    # product of reactant concentrations to their coefficients; d[X]/dt = sum nu v.
    m = parse_mechanism("r: 2 A + B <=> C @ k1, k_1\nC -> 0 @ k2")
    model = mass_action_model(m)
    a, b, cc = (concentration(x) for x in "ABC")
    k1, km1, k2 = (rate_constant(x) for x in ("k1", "k_1", "k2"))
    v = k1 * a**2 * b - km1 * cc
    assert model.rhs == (-2 * v, -v, v - k2 * cc)
    jac = model.jacobian()
    assert jac[0, 0] == -4 * k1 * a * b
    assert jac[2, 2] == -km1 - k2
    assert model.mass_action


def test_empirical_step_in_the_ode():
    m = parse_mechanism("A + B -> P @ rate = k*[A]^a*[B]")
    model = mass_action_model(m)
    assert not model.mass_action
    k, a = sympy.Symbol("k", real=True), sympy.Symbol("a", real=True)
    assert model.rhs[-1] == k * concentration("A") ** a * concentration("B")


def _allowed_symbols(model):
    mech = model.mechanism
    names = set(model.state) | set(model.parameters)
    names |= {initial_concentration(s).name for s in mech.species}
    return names


CASES = {
    "enzyme": "bind: E + S <=> ES @ k1, k_1\ncat: ES -> E + P @ k2\n",
    "inhibited": ("bind: E + S <=> ES @ k1, k_1\ncat: ES -> E + P @ k2\n"
                  "inh: E + I <=> EI @ k3, k_3\n"),
    "ozone": "split: O3 <=> O2 + O @ k1, k_1\nattack: O + O3 -> 2 O2 @ k2\n",
    "chain": ("init: Br2 + M <=> 2 Br + M @ k1, k_1\nprop: Br + H2 <=> HBr + H @ k2, k_2\n"
              "prop2: H + Br2 -> HBr + Br @ k3\n"),
    "cycle3": ("a: Cat + A <=> CatA @ k1, k_1\nb: CatA + B -> CatAB @ k2\n"
               "c: CatAB -> Cat + P @ k3\npark: Cat + B <=> CatB @ k4, k_4\n"),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_variant_contract(name):
    # every variant: state species integrated, eliminated species algebraic in state,
    # parameters and initial concentrations only
    m = parse_mechanism(CASES[name])
    models = derive_variants(m)
    assert models[0].name == "full"
    for model in models:
        assert len(model.rhs) == len(model.state)
        assert set(model.state) | set(model.algebraic) | set(model.implicit_species) \
            == set(m.species)
        allowed = _allowed_symbols(model)
        for expr in (*model.rhs, *model.algebraic.values()):
            assert {s.name for s in expr.free_symbols} <= allowed, (model.name, expr)


def test_king_altman_agrees_with_linear_solve():
    # the King-Altman sum over spanning trees (King and Altman, J. Phys. Chem. 60
    # (1956) 1375) must equal Cramer's rule / LU on the same steady-state equations
    m = parse_mechanism(CASES["cycle3"])
    ka = steady_state_model(m)
    assert any("King" in a for a in ka.assumptions)
    forms, laws = ss._eliminated(m, set(ka.eliminated))
    u = [concentration(s) for s in forms]
    odes = dict(zip(mass_action_model(m).state, mass_action_model(m).rhs, strict=True))
    eqs = [sum((w * (concentration(s) - initial_concentration(s)) for s, w in laws[0].items()),
               sympy.Integer(0))]
    eqs += [odes[s] for s in forms[1:]]
    lin = ss._linear_solve(eqs, u)
    for s in forms:
        assert sympy.cancel(ka.algebraic[s] - lin[concentration(s)]) == 0


def test_reduced_rhs_matches_full_numerically_at_the_steady_state():
    # substituting the algebraic forms back makes the eliminated balances vanish
    m = parse_mechanism(CASES["inhibited"])
    model = steady_state_model(m)
    odes = dict(zip(m.species, mass_action_model(m).rhs, strict=True))
    subs = {concentration(s): e for s, e in model.algebraic.items()}
    for s in model.algebraic:
        assert sympy.cancel(odes[s].xreplace(subs)) == 0
    total = sum(model.algebraic[s] for s in ("E", "ES", "EI"))
    assert sympy.cancel(total - sum(initial_concentration(s) for s in ("E", "ES", "EI"))) == 0


def test_no_closed_form_gives_a_numerical_variant():
    # X formed at k1[A], removed by X -> P and 5 X -> Q: k1 A - k2 X - 5 k3 X^5 = 0 is a
    # general quintic (no radical solution, Abel-Ruffini): the variant must say so and
    # hand the equation to the simulator instead of a fake closed form.
    m = parse_mechanism("A -> X @ k1\nX -> P @ k2\n5 X -> Q @ k3")
    model = steady_state_model(m, ["X"])
    assert model.numerical_steady_state
    assert model.implicit_species == ("X",)
    assert "X" not in model.algebraic
    x = concentration("X")
    (g,) = model.implicit
    assert sympy.Poly(g, x).degree() == 5
    assert any("no closed form" in a for a in model.assumptions)
    law = derive_rate_law(model, "P")
    assert not law.closed_form
    summary = law.summary()
    assert summary["rate"] is None and summary["numerical_steady_state"]
    assert summary["implicit_species"] == ["X"]
    # the implicit equation is the steady-state balance: check at a numeric root
    vals = {rate_constant("k1"): 2.0, rate_constant("k2"): 1.0, rate_constant("k3"): 0.5,
            concentration("A"): 1.0}
    poly = sympy.Poly(g.xreplace(vals), x)
    roots = [r for r in np.roots([float(c) for c in poly.all_coeffs()])
             if abs(r.imag) < 1e-12 and r.real > 0]
    assert len(roots) == 1  # Descartes: one sign change, one positive root


def test_root_choice_rejects_ambiguous_sets():
    from mechfit.derive.roots import admissible_solution
    x = sympy.Symbol("X", positive=True)
    a, b = sympy.symbols("a b", positive=True)
    # (X - a)(X - b) = 0: both roots positive, so no root can be chosen
    sol, note = admissible_solution([(x - a) * (x - b)], [x])
    assert sol is None and "2 of 2" in note


def test_bad_requests():
    m = parse_mechanism(CASES["enzyme"])
    with pytest.raises(DerivationError, match="'S' is not an intermediate"):
        reduced_model(m, steady=["S"])
    with pytest.raises(DerivationError, match="unknown species 'X'"):
        reduced_model(m, steady=["X"])
    with pytest.raises(DerivationError, match="'cat'.*one-way"):
        reduced_model(m, fast=["cat"])
    with pytest.raises(DerivationError, match="unknown step 'nope'"):
        reduced_model(m, fast=["nope"])
    with pytest.raises(DerivationError, match="eliminated in variant"):
        derive_rate_law(steady_state_model(m), "ES")
    with pytest.raises(DerivationError, match="unknown species 'Z'"):
        derive_rate_law(steady_state_model(m), "Z")
    iso = parse_mechanism("A <=> B @ k1, k_1\nB + C -> D @ k2\nE <=> F @ k3, k_3")
    with pytest.raises(DerivationError, match="involves no intermediate"):
        reduced_model(iso, fast=["3"])


def test_time_budget_falls_back_without_changing_the_value():
    import time

    from mechfit.derive.simplification import budgeted
    a, b, c, d = sympy.symbols("a b c d")
    # factor() of this polynomial takes several seconds; a 0.1 s budget must return
    # the input itself, promptly
    expr = sympy.Poly((a + b + c + d + 1) ** 10 * (a - b + 2)).as_expr()
    start = time.perf_counter()
    out = budgeted(sympy.factor, expr, 0.1)
    assert time.perf_counter() - start < 2.0
    assert out is expr
    small = (a**3 - b**3) / (a - b)
    assert budgeted(sympy.cancel, small, 5.0) == a**2 + a * b + b**2


@pytest.mark.parametrize("name", sorted(CASES))
def test_lumped_rate_gives_back_the_rate(name):
    # substituting the lumped parameters into the lumped form restores the rate law
    m = parse_mechanism(CASES[name])
    for model in derive_variants(m):
        law = derive_rate_law(model)
        if not law.closed_form:
            continue
        subs = {sympy.Symbol(p.name, real=True): p.expression for p in law.parameters}
        diff = sympy.cancel(sympy.together(law.lumped_rate.xreplace(subs) - law.rate))
        assert diff == 0, (model.name, law.lumped_rate, law.rate)
        # every lumped parameter is positive for positive constants
        for p in law.parameters:
            assert not p.expression.could_extract_minus_sign(), (model.name, p)


def test_empirical_exponent_has_no_limiting_order():
    m = parse_mechanism("A + B -> P @ rate = k*[A]^a*[B]")
    law = derive_rate_law(mass_action_model(m), "P")
    assert law.orders["A"] is None
    assert law.orders["B"] == (1, 1)
    assert law.summary()["orders"]["A"] is None


def test_text_forms():
    m = parse_mechanism(CASES["enzyme"])
    law = derive_rate_law(steady_state_model(m), "P")
    assert law.text() == "[E]0*[S]*k1*k2/(k2 + k_1 + [S]*k1)"
    assert r"k_{-1}" in law.latex() and r"[\mathrm{E}]_0" in law.latex()
    assert law.quantity == "d[P]/dt"
    assert "apparent orders" in law.report()


def test_steady_state_without_a_positive_root_is_refused():
    # Robertson's scheme (H. H. Robertson, in Numerical Analysis, Academic Press 1966;
    # recalled from memory): with A and B both in steady state the only root is
    # A = B = 0, which is not admissible
    m = parse_mechanism("A -> B @ r1\n2 B -> B + C @ r2\nB + C -> A + C @ r3")
    with pytest.raises(DerivationError, match="real and positive"):
        reduced_model(m, steady=["A", "B"])
    # B alone has one admissible root (a quadratic with one positive root)
    model = reduced_model(m, steady=["B"])
    assert "root chosen" in " ".join(model.assumptions)


def test_decaying_catalyst_is_not_a_catalyst_form():
    # Cat -> Dead is one-way: Cat + Dead is conserved but Dead never returns, so the
    # pair is not a set of interconverting catalyst forms
    m = parse_mechanism("turn: Cat + S -> Cat + P @ k1\ndecay: Cat -> Dead @ kd")
    assert ss.catalyst_laws(m) == []
    assert [v.name for v in derive_variants(m)] == ["full"]
