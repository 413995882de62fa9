"""Equivalent schemes (same reduced rate-law structure) are merged before fitting."""

from mechfit import parse_mechanism
from mechfit.batch.equivalence import merge_equivalent, rate_law_structure
from mechfit.batch.schemes import Scheme, enumerate_schemes


def scheme(name, text):
    m = parse_mechanism(text, name=name)
    return Scheme(name, m.to_text(), m, ())


def test_michaelis_menten_with_one_way_binding_has_the_same_rate_law_form():
    """Briggs & Haldane, Biochem. J. 19 (1925) 338: the steady-state rate of
    E + S <=> ES -> E + P is k2 E0 [S] / (Km + [S]) with Km = (k_1 + k2)/k1; with the
    binding one-way, Km = k2/k1: the same form (numerator [S], denominator 1 and [S])."""
    base = parse_mechanism("bind: E + S <=> ES @ k1, k_1\nturn: ES -> E + P @ k2\n"
                           "steady: ES", name="mm")
    kind, _fixed, species, numerator, denominator = rate_law_structure(base)
    assert kind == "qssa"
    assert numerator == {(("S", 1),)} and denominator == {(), (("S", 1),)}
    kept, merged = merge_equivalent(enumerate_schemes(base))
    assert [s.name for s in kept] == ["mm"] and merged == {"mm": ["mm__oneway-bind"]}


def test_different_orders_and_extra_terms_are_kept_apart():
    schemes = [scheme("first", "A -> P @ k"), scheme("second", "2 A -> P @ k"),
               scheme("both", "one: A -> P @ k1\ntwo: 2 A -> P @ k2"),
               scheme("via", "on: A <=> I @ k1, k_1\noff: I -> P @ k2\nsteady: I"),
               scheme("first_again", "A -> P @ kx")]
    kept, merged = merge_equivalent(schemes)
    assert [s.name for s in kept] == ["first", "second", "both"]
    assert merged == {"first": ["via", "first_again"]}


def test_product_inhibition_changes_the_denominator_so_it_is_not_merged():
    """Competitive product inhibition adds a [P] term to the denominator of the
    steady-state rate (Cornish-Bowden, Fundamentals of Enzyme Kinetics, 4th ed. 2012,
    ch. 6; recalled from memory)."""
    base = parse_mechanism("bind: E + S <=> ES @ k1, k_1\nturn: ES -> E + P @ k2\n"
                           "steady: ES", name="mm")
    extras = parse_mechanism("trap: E + P <=> EP @ k3, k_3\n", name="x")
    schemes = enumerate_schemes(base, one_way=False, extras=extras)
    kept, merged = merge_equivalent(schemes)
    assert [s.name for s in kept] == ["mm", "mm__plus-trap"] and merged == {}


def test_fixed_values_and_fitted_orders_are_never_merged_with_fitted_constants():
    schemes = [scheme("free", "A -> P @ k"), scheme("fixed", "A -> P @ k = 0.02"),
               scheme("order", "A -> P @ rate = k*[A]^a"),
               scheme("order_again", "A -> P @ rate = k*[A]^a")]
    kept, merged = merge_equivalent(schemes)
    assert [s.name for s in kept] == ["free", "fixed", "order"]
    assert merged == {"order": ["order_again"]}


def test_when_the_steady_state_rate_is_degenerate_the_full_odes_are_compared():
    """Autocatalysis A + I -> 2 I, I -> P with I at steady state (and I0 = 0) gives a zero
    rate, which says nothing: the full mass-action right-hand sides decide (the same
    with other constant names; a first-order decay is different)."""
    one = scheme("one", "a: A + I -> 2 I @ k1\nb: I -> P @ k2")
    two = scheme("two", "a: A + I -> 2 I @ ka\nb: I -> P @ kb")
    three = scheme("three", "a: A -> P @ k1\nb: I -> P @ k2")
    assert rate_law_structure(one.mechanism)[0] == "full"
    assert rate_law_structure(one.mechanism) == rate_law_structure(two.mechanism)
    kept, merged = merge_equivalent([one, two, three])
    assert [s.name for s in kept] == ["one", "three"] and merged == {"one": ["two"]}
