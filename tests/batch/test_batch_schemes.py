"""Scheme enumeration from a base mechanism."""

import pytest

from mechfit import parse_mechanism
from mechfit.batch.schemes import enumerate_schemes
from mechfit.errors import MechanismError

BASE = """bind: E + S <=> ES @ k1, k_1
turn: ES <=> E + P @ k2, k_2 = 0.5
park: E + P <=> EP @ k3, k_3
steady: ES
fast: park
"""
EXTRAS = """die: E -> Edead @ kd
trap: ES + S <=> ESS @ k4, k_4
"""


def test_one_way_choices_and_extras_give_every_combination_with_stable_names():
    base = parse_mechanism(BASE, name="mm")
    extras = parse_mechanism(EXTRAS, name="x")
    schemes = enumerate_schemes(base, extras=extras)
    names = [s.name for s in schemes]
    # two two-way steps may become one-way (park is fast: kept), four extra subsets
    assert len(names) == 4 * 4 == len(set(names))
    assert names[0] == "mm"
    assert "mm__oneway-bind__oneway-turn__plus-die__plus-trap" in names
    again = [s.name for s in enumerate_schemes(base, extras=extras)]
    assert again == names


def test_generated_schemes_are_valid_and_keep_fixed_values_and_directives():
    base = parse_mechanism(BASE, name="mm")
    by_name = {s.name: s for s in enumerate_schemes(base)}
    m = by_name["mm__oneway-turn"].mechanism
    assert not m.step("turn").reversible and m.step("turn").reverse is None
    assert "k_2" not in m.constants  # the fixed reverse constant went with the reverse step
    assert m.steady == ("ES",) and m.fast == ("park",)
    assert by_name["mm"].mechanism.fixed == {"k_2": 0.5}


def test_max_extras_limits_the_subsets():
    base = parse_mechanism("A -> B @ k1", name="ab")
    extras = parse_mechanism("x1: B -> C @ kx\nx2: B -> D @ ky\nx3: A -> D @ kz", name="x")
    assert len(enumerate_schemes(base, extras=extras, max_extras=1)) == 4
    assert len(enumerate_schemes(base, extras=extras)) == 8


def test_extra_steps_need_labels_that_do_not_clash():
    base = parse_mechanism("bind: A -> B @ k1", name="ab")
    with pytest.raises(MechanismError, match="needs a label"):
        enumerate_schemes(base, extras=parse_mechanism("B -> C @ kx"))
    with pytest.raises(MechanismError, match="also a step of the base"):
        enumerate_schemes(base, extras=parse_mechanism("bind: B -> C @ kx"))
