"""Observables as expressions of a kinetic model: derivatives, heat flow, reduced models."""

import pytest
import sympy

from mechfit import parse_mechanism
from mechfit.derive.model import KineticModel, mass_action_model
from mechfit.errors import StudyError
from mechfit.mechanism import symbols
from mechfit.study import VOLUME, build_observable, observable_expression

c = symbols.concentration
k = symbols.rate_constant


def make(name, spec):
    return build_observable(name, spec, file="s.toml", units={"concentration": "mM",
                                                              "time": "min"})


def test_initial_rate_is_the_model_derivative():
    mech = parse_mechanism("A + B -> P @ k1\nP -> Q @ k2")
    model = mass_action_model(mech)
    v = make("v0", {"kind": "initial_rate", "species": "P"})
    assert sympy.expand(observable_expression(v, model)
                        - (k("k1") * c("A") * c("B") - k("k2") * c("P"))) == 0
    w = make("w0", {"kind": "initial_rate", "species": "A", "direction": "consumption"})
    assert sympy.expand(observable_expression(w, model) - k("k1") * c("A") * c("B")) == 0
    # the default unit is the study's concentration over its time: mM/min
    assert v.unit == "(mM)/(min)" and v.canonical_unit == "mol/(L*s)"
    assert v.to_canonical(6.0) == pytest.approx(6e-3 / 60)


def test_initial_rate_on_a_steady_state_model_gives_michaelis_menten():
    """Michaelis & Menten (1913); Briggs & Haldane (1925) steady state.

    With E eliminated by E = E0 - ES and ES at steady state, d[P]/dt at t = 0 is
    k2 E0 S / (Km + S) with Km = (k_1 + k2)/k1.
    """
    mech = parse_mechanism("E + S <=> ES @ k1, k_1\nES -> E + P @ k2")
    e0 = symbols.initial_concentration("E")
    km = (k("k_1") + k("k2")) / k("k1")
    es = e0 * c("S") / (km + c("S"))
    rhs_s = -k("k1") * (e0 - es) * c("S") + k("k_1") * es
    model = KineticModel(name="qssa", mechanism=mech, state=("S", "P"),
                         rhs=(rhs_s, k("k2") * es),
                         algebraic={"ES": es, "E": e0 - es},
                         parameters=("k1", "k_1", "k2"))
    v = make("v0", {"kind": "initial_rate", "species": "P"})
    got = observable_expression(v, model)
    assert sympy.simplify(got - k("k2") * e0 * c("S") / (km + c("S"))) == 0
    # a concentration of an eliminated species is replaced by its expression
    obs = make("ES", {"kind": "concentration"})
    assert sympy.simplify(observable_expression(obs, model) - es) == 0


def test_heat_flow_is_minus_volume_times_enthalpy_times_net_rate():
    mech = parse_mechanism("bind: A + B <=> C @ k1, k_1\nout: C -> P @ k2")
    model = mass_action_model(mech)
    q = build_observable("q", {"kind": "heat_flow", "steps": {"bind": "dH_bind", "out": -50}},
                         file="s.toml", units={"energy": "kJ/mol"})
    got = observable_expression(q, model)
    dh = symbols.parameter("dH_bind")
    want = -VOLUME * (dh * (k("k1") * c("A") * c("B") - k("k_1") * c("C"))
                      + sympy.Float(-50000.0) * k("k2") * c("C"))
    assert sympy.expand(got - want) == 0
    # exothermic steps (dH < 0) release heat: a positive heat flow
    values = {VOLUME: 0.05, dh: -80e3, k("k1"): 2.0, k("k_1"): 0.1, k("k2"): 0.5,
              c("A"): 0.1, c("B"): 0.1, c("C"): 0.01}
    # -0.05 L * (-80e3 J/mol * (2*0.01 - 0.001) + -50e3 * 0.005) mol/(L s)
    #   = -0.05 * (-1520 - 250) = 88.5 W
    assert float(got.subs(values)) == pytest.approx(88.5)
    bad = build_observable("q", {"kind": "heat_flow", "steps": {"nope": -10}},
                           file="s.toml", units={})
    with pytest.raises(StudyError, match="has no step 'nope'"):
        observable_expression(bad, model)


def test_beer_lambert_with_fixed_and_fitted_absorptivities():
    obs = make("A405", {"kind": "expression", "expression": "e1*[S] + e2*[P] + b",
                        "fixed": {"e1": 15}, "fitted": ["e2", "b"], "sigma": 0.004})
    model = mass_action_model(parse_mechanism("S -> P @ k1"))
    got = observable_expression(obs, model)
    e2, b = symbols.parameter("e2"), symbols.parameter("b")
    assert sympy.expand(got - (15 * c("S") + e2 * c("P") + b)) == 0
    assert obs.parameters == ("e2", "b")
    assert obs.noise.kind == "known" and obs.noise.sigma == 0.004
    fitted = make("A2", {"kind": "expression", "expression": "e*[S]", "fitted": ["e"]})
    assert fitted.parameters == ("e", "sigma_A2")


def test_known_sigma_is_converted_to_canonical_units():
    # 0.5 mM = 5e-4 mol/L
    obs = make("P", {"kind": "concentration", "sigma": 0.5})
    assert obs.noise.sigma == pytest.approx(5e-4)


def test_observable_errors_name_the_field():
    with pytest.raises(StudyError, match=r"s\.toml: observable\.x: fixed\.e must be a finite"):
        make("x", {"kind": "expression", "expression": "e*[S]", "fixed": {"e": "big"}})
    with pytest.raises(StudyError, match=r"observable\.x: e2 declared but not used"):
        make("x", {"kind": "expression", "expression": "e*[S]", "fitted": ["e", "e2"]})
    with pytest.raises(StudyError, match=r"observable\.x: sigma must be a positive number"):
        make("x", {"kind": "concentration", "sigma": -1})
    with pytest.raises(StudyError, match=r"observable\.x: unknown key\(s\) expresion"):
        make("x", {"kind": "expression", "expresion": "e*[S]"})
    with pytest.raises(StudyError, match=r"observable\.x\.unit: 'min' is not a unit of "
                                         r"concentration"):
        make("x", {"kind": "concentration", "unit": "min"})
