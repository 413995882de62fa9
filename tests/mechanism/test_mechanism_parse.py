"""Parsing the steps text into a Mechanism, and writing it back."""

import sympy

from mechfit import parse_mechanism
from mechfit.mechanism import parse_expression, symbols
from mechfit.mechanism.model import Constant

DESIGN_EXAMPLE = """
# Amine coupling on a metal catalyst (invented example)
add:    Cat + ArBr -> CatAr            @ k1
bind:   CatAr + Am <=> CatArAm         @ k2, k_2
out:    CatArAm -> Cat + Prod + HBr    @ k3
park:   Cat + Am <=> CatAm             @ k4, k_4
"""


def test_species_in_order_of_first_appearance():
    m = parse_mechanism(DESIGN_EXAMPLE)
    assert m.species == ("Cat", "ArBr", "CatAr", "Am", "CatArAm", "Prod", "HBr", "CatAm")


def test_steps_stoichiometry_reversibility_labels():
    m = parse_mechanism(DESIGN_EXAMPLE)
    assert [s.label for s in m.steps] == ["add", "bind", "out", "park"]
    bind = m.step("bind")
    assert bind.reactants == (("CatAr", 1), ("Am", 1))
    assert bind.products == (("CatArAm", 1),)
    assert bind.reversible and bind.forward == Constant("k2") and bind.reverse == Constant("k_2")
    assert not m.step("out").reversible and m.step("out").reverse is None


def test_unlabelled_steps_are_numbered_and_get_default_constants():
    m = parse_mechanism("A <=> B\nB -> C")
    assert [s.label for s in m.steps] == ["1", "2"]
    assert m.constants == ("k1", "k_1", "k2")


def test_coefficients_nothing_and_merging():
    m = parse_mechanism("2 Br -> Br2 @ k5\nA -> 0 @ kd\n0 -> A @ kin\nX + X -> Y @ kx")
    assert m.steps[0].reactants == (("Br", 2),)
    assert m.steps[1].products == ()
    assert m.steps[2].reactants == ()
    assert m.steps[3].reactants == (("X", 2),)


def test_shared_names_fixed_values_and_factors():
    m = parse_mechanism("A -> B @ 2*k = 1.5\nB -> C @ k\nC <=> D @ kf, kr = 3e-2")
    assert m.constants == ("k", "kf", "kr")
    assert dict(m.fixed) == {"k": 1.5, "kr": 0.03}
    assert m.steps[0].forward == Constant("k", 2.0)
    assert m.free_parameters == ("kf",)


def test_arrows_in_unicode():
    m = parse_mechanism("A → B @ k1\nB ⇌ C @ k2, k_2")
    assert not m.steps[0].reversible and m.steps[1].reversible


def test_empirical_law_builds_sympy_without_eval():
    m = parse_mechanism("A + B -> P @ rate = k*[A]^a*[B]/(1 + K*[I])")
    law = m.steps[0].law
    A, B, I = (symbols.concentration(s) for s in "ABI")
    k, a, K = (symbols.parameter(s) for s in ("k", "a", "K"))
    assert sympy.simplify(law.sympy - k * A**a * B / (1 + K * I)) == 0
    assert m.law_parameters == ("K", "a", "k")
    assert "I" in m.species  # species used only in a law are held constant


def test_law_names_shared_with_step_constants_are_the_same_symbol():
    m = parse_mechanism("A -> B @ k1\nB -> C @ rate = k1*[B]^2")
    (sym,) = [s for s in m.steps[1].law.sympy.free_symbols if s.name == "k1"]
    assert sym == symbols.rate_constant("k1")
    assert m.law_parameters == ()


def test_directives():
    m = parse_mechanism(DESIGN_EXAMPLE + "steady: CatAr, CatArAm\nfast: park, 2\n"
                        "made-of: CatAr = Cat + ArBr")
    assert m.steady == ("CatAr", "CatArAm")
    assert m.fast == ("park", "bind")
    assert dict(m.made_of) == {"CatAr": (("Cat", 1), ("ArBr", 1))}


def test_round_trip_through_to_text():
    text = DESIGN_EXAMPLE.replace("@ k3", "@ 2*k3 = 4") + (
        "emp: A + B -> P @ rate = k*[A]^a*[B]/(1 + K*[Cat])\nsteady: CatAr\nfast: park\n")
    m = parse_mechanism(text)
    again = parse_mechanism(m.to_text())
    assert again == m
    assert again.to_text() == m.to_text()


def test_mechanism_is_immutable():
    m = parse_mechanism("A -> B @ k1")
    try:
        m.species = ("B",)
    except AttributeError:
        pass
    else:  # pragma: no cover
        raise AssertionError("Mechanism must be frozen")
    assert m.fixed.get("k1") is None
    try:
        m.fixed["k1"] = 1.0
    except TypeError:
        pass
    else:  # pragma: no cover
        raise AssertionError("fixed must be read-only")


def test_warnings_duplicate_never_consumed_molecularity():
    m = parse_mechanism("A -> B @ k1\nA -> B @ k2\n3 A -> C @ k3\nB <=> A @ k4, k_4")
    text = "\n".join(m.warnings)
    assert "repeats step '1'" in text
    assert "molecularity 3" in text and "common practice" in text
    assert "'C' is never consumed" in text


def test_formula_species_balance_is_checked_and_passes():
    m = parse_mechanism("H+ + OH- <=> H2O @ kf, kr\nFe+3 + e- -> Fe+2 @ kred\n"
                        "2 NO + O2 -> 2 NO2 @ kox\nCa(OH)2 -> Ca+2 + 2 OH- @ kdis")
    assert m.species[:3] == ("H+", "OH-", "H2O")


def test_made_of_enables_balance_of_abstract_species():
    import pytest

    from mechfit.errors import UnbalancedStepError
    good = "Cat + ArBr -> CatArBr @ k1\nmade-of: CatArBr = Cat + ArBr"
    parse_mechanism(good)
    with pytest.raises(UnbalancedStepError):
        parse_mechanism("Cat + ArBr -> CatAr @ k1\nmade-of: CatAr = Cat + Ar")


def test_expression_grammar_operators_and_functions():
    e = parse_expression("-2^2 + 3*[A]0/[B] - exp(ln(x)) + sqrt(4) + log10(100) + abs(-1)")
    x = symbols.parameter("x")
    A0 = symbols.initial_concentration("A")
    B = symbols.concentration("B")
    expected = -4 + 3 * A0 / B - x + 2 + 2 + 1
    assert sympy.simplify(e.sympy - expected) == 0
    assert e.initial == {"A"} and e.species == {"B"} and e.parameters == {"x"}
