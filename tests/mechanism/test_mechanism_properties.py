"""Property tests: generated mechanisms round-trip through to_text; arbitrary text raises only
mechfit's own errors. The slow-marked variants run 10,000 examples each."""

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from mechfit import MechfitError, parse_mechanism
from mechfit.mechanism import parse_expression

NAMES = ["Xa", "Yq", "Zc", "Qd", "Wn", "Vm", "Rt", "Tq"]  # none parses as a formula


@st.composite
def side(draw):
    n = draw(st.integers(0, 2))
    names = draw(st.lists(st.sampled_from(NAMES), min_size=n, max_size=n, unique=True))
    return [(draw(st.integers(1, 3)), s) for s in names]


def side_text(terms):
    return " + ".join(s if c == 1 else f"{c} {s}" for c, s in terms) if terms else "0"


@st.composite
def mechanism_text(draw):
    lines = []
    n_steps = draw(st.integers(1, 6))
    fixed: dict[str, float] = {}
    for i in range(n_steps):
        left, right = draw(side()), draw(side())
        if not left and not right:
            left = [(1, NAMES[i % len(NAMES)])]
        reversible = draw(st.booleans())
        label = f"s{i}: " if draw(st.booleans()) else ""
        law = (not reversible) and draw(st.integers(0, 5)) == 0
        if law:
            sp = (left or right)[0][1]
            expr = draw(st.sampled_from([f"q{i}*[{sp}]", f"q{i}*[{sp}]^a{i}/(1 + b{i}*[{sp}])",
                                         f"q{i}*exp(-e{i}/2)*[{sp}]^2"]))
            lines.append(f"{label}{side_text(left)} -> {side_text(right)} @ rate = {expr}")
            continue
        names = []
        for d in ("f", "r") if reversible else ("f",):
            name = draw(st.sampled_from([f"k{d}{i}", f"k{d}{i}", "kshared" if d == "f" else
                                         f"k{d}{i}"]))
            if name in names:
                name = f"k{d}{i}x"
            text = name
            if draw(st.integers(0, 3)) == 0:
                text = f"{draw(st.sampled_from(['2', '0.5', '3']))}*{name}"
            if draw(st.integers(0, 3)) == 0:
                value = fixed.setdefault(name, draw(st.sampled_from([1.0, 2.5e3, 0.04, 7.0])))
                text += f" = {value!r}"
            names.append(text)
        arrow = "<=>" if reversible else "->"
        lines.append(f"{label}{side_text(left)} {arrow} {side_text(right)} @ {', '.join(names)}")
    return "\n".join(lines) + "\n"


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mechanism_text())
def test_generated_mechanisms_round_trip(text):
    m = parse_mechanism(text)
    again = parse_mechanism(m.to_text())
    assert again == m
    assert again.to_text() == m.to_text()


ALPHABET = st.sampled_from(list("AB2 0+-<=>@,:*/^()[]#kx_.e\n\tsteadyfastmade-ofrate→⇌!?"))


@settings(max_examples=300, deadline=None)
@given(st.text(ALPHABET, max_size=60))
def test_arbitrary_text_raises_only_mechfit_errors(text):
    try:
        parse_mechanism(text)
    except MechfitError:
        pass


@settings(max_examples=200, deadline=None)
@given(st.text(ALPHABET, max_size=40))
def test_arbitrary_expressions_raise_only_mechfit_errors(text):
    try:
        parse_expression(text)
    except MechfitError:
        pass


@pytest.mark.slow
@settings(max_examples=10_000, deadline=None, suppress_health_check=list(HealthCheck))
@given(mechanism_text())
def test_generated_mechanisms_round_trip_10000(text):
    m = parse_mechanism(text)
    assert parse_mechanism(m.to_text()) == m


@pytest.mark.slow
@settings(max_examples=10_000, deadline=None)
@given(st.text(ALPHABET, max_size=80))
def test_arbitrary_text_10000(text):
    try:
        parse_mechanism(text)
    except MechfitError:
        pass
