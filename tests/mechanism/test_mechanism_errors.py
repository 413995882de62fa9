"""Bad steps text: every error names file, line and column, shows the line with a caret,
and says what was expected."""

import pytest

from mechfit import parse_mechanism
from mechfit.errors import ExpressionError, MechanismSyntaxError, SourceError, UnbalancedStepError

# (text, expected fragment of the message, line, column)
CASES = {
    "unknown arrow =>": ("A => B @ k1", "unknown arrow '=>'", 1, 3),
    "unknown arrow <->": ("A <-> B @ k1, k2", "unknown arrow '<->'", 1, 3),
    "unknown arrow =": ("A = B", "unknown arrow '='", 1, 3),
    "missing left side": ("-> B @ k1", "missing a side", 1, 1),
    "missing right side": ("A -> @ k1", "missing a side: expected a species (or 0 for nothing) "
                           "before '@'", 1, 6),
    "missing right side at end": ("A ->", "before the end of the line", 1, 5),
    "zero coefficient": ("0 A -> B", "coefficient '0' is not allowed", 1, 1),
    "negative coefficient": ("-2 A -> B", "coefficient '-2' is not allowed", 1, 1),
    "non-integer coefficient": ("1.5 A -> B", "coefficient '1.5' is not allowed", 1, 1),
    "exponent coefficient": ("1e1 A -> B", "coefficient '1e1' is not allowed", 1, 1),
    "number alone": ("A -> 2", "a number alone is not a species", 1, 7),
    "nothing with a species": ("0 + A -> B", "'0' (nothing) must stand alone", 1, 1),
    "nothing on both sides": ("0 -> 0", "both sides are '0'", 1, 3),
    "duplicate label": ("s1: A -> B @ k1\ns1: B -> C @ k2",
                        "duplicate label 's1': already used on line 1", 2, 1),
    "reverse constant on a one-way step": ("A -> B @ k1, k_1",
                                           "one-way step ('->') takes one rate constant", 1, 14),
    "missing reverse constant": ("A <=> B @ k1", "needs a forward and a reverse constant", 1, 13),
    "three constants": ("A <=> B @ k1, k2, k3", "found a third, 'k3'", 1, 19),
    "same forward and reverse": ("A <=> B @ k1, k1", "'k1' is both", 1, 15),
    "fixed with two values": ("A -> B @ k1 = 2\nB -> C @ k1 = 3",
                              "'k1' is fixed to 2 on line 1 and to 3 here", 2, 15),
    "fixed value zero": ("A -> B @ k1 = 0", "fixed value of 'k1' must be positive", 1, 15),
    "factor zero": ("A -> B @ 0*k1", "factor '0' must be positive", 1, 10),
    "steady on unknown species": ("A -> B @ k1\nB -> C @ k2\nsteady: X",
                                  "steady: unknown species 'X'", 3, 9),
    "steady on a non-intermediate": ("A -> B @ k1\nB -> C @ k2\nsteady: A",
                                     "'A' is not an intermediate", 3, 9),
    "fast on unknown step": ("A <=> B @ k1, k_1\nfast: nope", "fast: unknown step 'nope'", 2, 7),
    "fast on a one-way step": ("a: A -> B @ k1\nfast: a", "step 'a' is one-way", 2, 7),
    "fast step number out of range": ("A <=> B @ k1, k_1\nfast: 7", "unknown step '7'", 2, 7),
    "made-of unknown species": ("A -> B @ k1\nmade-of: Q = A", "made-of: unknown species 'Q'",
                                2, 10),
    "made-of twice": ("A -> B @ k1\nmade-of: A = B\nmade-of: A = B",
                      "'A' already has a composition (line 2)", 3, 10),
    "made-of circle": ("X -> Y @ k1\nmade-of: X = Y\nmade-of: Y = X", "in a circle", 2, 10),
    "empty file": ("", "no steps found", 1, 1),
    "only comments": ("# nothing\n\n   # still nothing", "no steps found", 1, 1),
    "bad number": ("A -> B @ k1 = 1.2.3", "bad number '1.2.3'", 1, 15),
    "not a number": ("A -> B @ k1 = abc", "expected a number", 1, 15),
    "unclosed bracket in a law": ("A -> P @ rate = k*[A", "unclosed '['", 1, 21),
    "unclosed parenthesis in a law": ("A -> P @ rate = k*([A] + 1", "unclosed '('", 1, 27),
    "unknown function in a law": ("A -> P @ rate = foo([A])", "unknown function 'foo'", 1, 17),
    "law on a two-way step": ("A <=> P @ rate = k*[A]", "needs a one-way step", 1, 11),
    "initial concentration in a law": ("A -> P @ rate = k*[A]0", "initial concentration", 1, 21),
    "bare species name in a law": ("A -> P @ rate = k*A", "write [A] for its concentration",
                                   1, 19),
    "default name collides": ("A -> B @ k2\nB -> C", "defaults to 'k2'", 2, 1),
    "species named like a constant": ("k1 -> B @ k1", "both a species and a rate constant",
                                      1, 11),
    "missing plus": ("A B -> C @ k1", "expected '+', '->' or '<=>' before 'B'", 1, 3),
    "dangling plus": ("A + -> B @ k1", "missing a side", 1, 5),
    "stray character": ("A -> B ! @ k1", "unexpected character '!'", 1, 8),
    "nothing after @": ("A -> B @", "the line ends too early", 1, 9),
    "empty directive": ("A -> B @ k1\nsteady:", "steady: expected a species after ':'", 2, 8),
    "label without a step": ("lbl:", "expected a step after the label", 1, 5),
    "unbalanced elements": ("H2 + O2 -> H2O @ k1", "unbalanced step '1'", 1, 9),
    "unbalanced charge": ("Fe+3 + e- -> Fe+3 @ k1", "charge 2 vs 3", 1, 11),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_bad_input_names_position_and_expectation(name):
    text, fragment, line, column = CASES[name]
    with pytest.raises(SourceError) as info:
        parse_mechanism(text, file="bad.mech")
    err = info.value
    assert fragment in err.message, err.message
    assert (err.line, err.column) == (line, column), str(err)
    rendered = str(err).splitlines()
    assert rendered[0].startswith(f"bad.mech:{line}:{column}: ")
    # the offending line is shown, with a caret under the column
    source_line = (text.splitlines() or [""])[line - 1]
    assert rendered[1] == "  " + source_line
    assert rendered[2] == "  " + " " * (column - 1) + "^"


def test_at_least_25_distinct_bad_inputs():
    assert len({text for text, *_ in CASES.values()}) >= 25


def test_error_classes():
    with pytest.raises(UnbalancedStepError):
        parse_mechanism("H2 + O2 -> H2O @ k1")
    with pytest.raises(ExpressionError):
        parse_mechanism("A -> P @ rate = foo([A])")
    with pytest.raises(MechanismSyntaxError):
        parse_mechanism("A => B")


def test_error_keeps_the_comment_in_the_shown_line():
    with pytest.raises(SourceError) as info:
        parse_mechanism("A => B   # typo here", file="c.mech")
    assert "# typo here" in str(info.value).splitlines()[1]
