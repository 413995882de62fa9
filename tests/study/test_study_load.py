"""Loading valid studies: tables, replicates, units, nuisance parameters, laws, priors."""

import dataclasses
import json
import textwrap

import numpy as np
import pytest
import sympy

from mechfit import parse_mechanism
from mechfit.mechanism import symbols
from mechfit.study import load_study


def write(folder, study, **tables):
    for name, text in tables.items():
        (folder / name.replace("_csv", ".csv")).write_text(textwrap.dedent(text))
    path = folder / "study.toml"
    path.write_text(textwrap.dedent(study))
    return path


BASIC = """\
    title = "basic (invented data)"
    units = { concentration = "mM", time = "min", temperature = "degC" }

    [observable.P]
    kind = "concentration"
    sigma = 0.2

    [observable.A300]
    kind = "expression"
    expression = "eps_A*[A] + eps_P*[P] + base"
    fixed = { eps_A = 40 }
    fitted = ["eps_P", "base"]

    [[run]]
    name = "r1"
    temperature = 25
    initial = { A = 10, C = 0.5 }
    table = "r1.csv"
    """


def test_times_values_and_missing_cells(tmp_path):
    # the second column is in seconds (its own unit overrides the study's minutes)
    r1 = """\
        # invented data
        time / s, P / uM, A300, P_sd / uM
        0, , 0.45,
        30, 500, , 30
        60, 900, 0.30, 40
        """
    study = load_study(write(tmp_path, BASIC, r1_csv=r1))
    run = study.run("r1")
    np.testing.assert_allclose(run.times, [0.0, 30.0, 60.0])
    p = run.series["P"]
    # 500 uM = 5e-4 mol/L; 900 uM = 9e-4 mol/L; sd 30 uM = 3e-5 mol/L
    np.testing.assert_allclose(p.values, [5e-4, 9e-4])
    np.testing.assert_allclose(p.sigma, [3e-5, 4e-5])
    np.testing.assert_array_equal(p.index, [1, 2])
    np.testing.assert_array_equal(p.lines, [4, 5])
    a = run.series["A300"]
    np.testing.assert_allclose(a.values, [0.45, 0.30])
    np.testing.assert_array_equal(a.index, [0, 2])
    assert a.sigma is None
    assert run.initial == {"A": 0.01, "C": 0.0005}
    assert run.temperature == pytest.approx(298.15)
    assert run.n_points == 4
    # the fixed absorptivity is substituted, the fitted ones remain
    obs = study.observables["A300"]
    assert {s.name for s in obs.expression.free_symbols} == {"A", "P", "eps_P", "base"}
    # read-only arrays and frozen objects
    with pytest.raises(ValueError):
        p.values[0] = 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        run.name = "x"
    with pytest.raises(TypeError):
        run.initial["A"] = 1.0


def test_replicates(tmp_path):
    r1 = """\
        time / min, replicate, P / mM
        1, a, 1.0
        2, a, 2.0
        1, b, 1.1
        2, b, 2.1
        3, b, 2.9
        """
    study = load_study(write(tmp_path, BASIC, r1_csv=r1))
    run = study.run("r1")
    s = run.series["P"]
    np.testing.assert_allclose(run.times, [60.0, 120.0, 180.0])
    np.testing.assert_allclose(s.times, [60, 60, 120, 120, 180])
    np.testing.assert_array_equal(s.replicate, [0, 1, 0, 1, 1])
    np.testing.assert_array_equal(s.index, [0, 0, 1, 1, 2])
    np.testing.assert_allclose(s.values, [1e-3, 1.1e-3, 2e-3, 2.1e-3, 2.9e-3])
    assert s.replicates == 2


LONG = """\
    title = "long table (invented data)"
    units = { concentration = "M", time = "h", temperature = "K" }
    table = "all.csv"
    temperature = 300

    [observable.X]
    kind = "conversion"
    species = "A"
    unit = "%"

    [observable.Y]
    kind = "yield"
    species = "P"
    of = "A"
    ratio = 2

    [[run]]
    name = "a"
    initial = { A = 1.0 }
    time_offset = { value = 0, sd = 0.01 }

    [[run]]
    name = "b"
    temperature = 310
    initial = { A = 2.0, B = 0.5 }
    time_offset = 0.05
    initial_scale = { sd = 0.02, species = ["A"] }
    """


def test_long_table_conversion_yield_and_nuisance(tmp_path):
    table = """\
        run, time / h, X / %, Y
        a, 0.5, 20,
        b, 0.5, 10, 0.05
        a, 1.0, 35, 0.3
        b, 1.0, 18,
        """
    study = load_study(write(tmp_path, LONG, all_csv=table))
    a, b = study.runs
    np.testing.assert_allclose(a.times, [1800.0, 3600.0])
    # 20 % = 0.2 (canonical conversions are fractions)
    np.testing.assert_allclose(a.series["X"].values, [0.2, 0.35])
    assert a.temperature == 300.0 and b.temperature == 310.0
    assert a.time_offset.fitted and a.time_offset.sd == pytest.approx(36.0)  # 0.01 h
    assert a.time_offset.parameter == "t0__a"
    assert not b.time_offset.fitted and b.time_offset.value == pytest.approx(180.0)
    np.testing.assert_allclose(b.model_times(), b.times + 180.0)
    assert b.initial_scale.species == ("A",) and b.initial_scale.parameter == "scale__b"
    np.testing.assert_allclose(b.initial_vector(["A", "B", "P"], scale=1.1), [2.2, 0.5, 0.0])
    assert a.nuisance_parameters == ("t0__a",) and b.nuisance_parameters == ("scale__b",)
    x = study.observables["X"].expression
    y = study.observables["Y"].expression
    assert str(x) == "-A/A__0 + 1"
    c, c0 = symbols.concentration, symbols.initial_concentration
    assert sympy.expand(y - 2 * (c("P") - c0("P")) / c0("A")) == 0
    mech = parse_mechanism("A -> P @ k1")
    groups = study.parameter_names(mech)
    assert groups["kinetic"] == ("k1", "Ea_k1")
    assert groups["nuisance"] == ("t0__a", "scale__b")
    assert groups["noise"] == ("sigma_X", "sigma_Y")


def test_temperature_law_defaults(tmp_path):
    one = BASIC + '\n    [[run]]\n    name = "r2"\n    temperature = 25\n' \
                  '    initial = { A = 5 }\n    table = "r1.csv"\n'
    r1 = "time / min, P / mM\n1, 1\n2, 2\n"
    study = load_study(write(tmp_path, one, r1_csv=r1))
    assert study.default_law == "constant"
    assert study.temperature_law("k1").parameter_names == ("k1",)
    several = one.replace("temperature = 25\n    initial = { A = 5 }",
                          "temperature = 45\n    initial = { A = 5 }")
    study = load_study(write(tmp_path, several, r1_csv=r1))
    assert study.default_law == "arrhenius"
    # 1/T_ref = (1/298.15 + 1/318.15)/2  ->  T_ref = 307.82 K
    assert study.reference_temperature == pytest.approx(
        1 / ((1 / 298.15 + 1 / 318.15) / 2), abs=0.005)
    law_text = several + textwrap.dedent("""\
        [temperature_law]
        default = "arrhenius"
        reference = 35
        constants = { k2 = "eyring", k3 = "constant" }
        """).replace("\n", "\n    ")
    study = load_study(write(tmp_path, law_text, r1_csv=r1))
    assert study.reference_temperature == pytest.approx(308.15)
    mech = parse_mechanism("A -> P @ k1\nP -> Q @ k2\nQ -> R @ k3\nR -> S @ k4 = 2")
    laws = study.rate_constant_laws(mech)
    assert [laws[c].kind for c in ("k1", "k2", "k3")] == ["arrhenius", "eyring", "constant"]
    assert "k4" not in laws  # fixed in the mechanism
    assert study.parameter_names(mech)["kinetic"] == (
        "k1", "Ea_k1", "dH_k2", "dS_k2", "k3")


def test_one_temperature_with_arrhenius_warns(tmp_path):
    text = BASIC + '\n    [temperature_law]\n    default = "arrhenius"\n'
    study = load_study(write(tmp_path, text, r1_csv="time / min, P / mM\n1, 1\n"))
    assert any("activation parameters cannot be determined" in w for w in study.warnings)


def test_priors_in_canonical_units(tmp_path):
    text = BASIC + textwrap.dedent("""\
        [temperature_law]
        default = "arrhenius"
        [prior]
        k1 = { distribution = "lognormal", median = 6, sd_log = 1.5, unit = "1/(mM*min)" }
        Ea_k1 = { distribution = "normal", mean = 60, sd = 15, unit = "kJ/mol" }
        eps_P = { distribution = "uniform", low = 0, high = 100, unit = "L/mol" }
        base = { distribution = "fixed", value = 0.01 }
        k_1 = { distribution = "loguniform", low = 1e-6, high = 10 }
        """).replace("\n", "\n    ")
    study = load_study(write(tmp_path, text, r1_csv="time / min, P / mM, A300\n1, 1, 0.3\n"))
    pr = study.priors
    # 6 /(mM min) = 6 * 1000/60 L/(mol s) = 100 L/(mol s)
    assert pr["k1"].median == pytest.approx(100.0) and pr["k1"].sd_log == 1.5
    assert pr["Ea_k1"].mean == pytest.approx(60e3) and pr["Ea_k1"].sd == pytest.approx(15e3)
    assert pr["base"].fixed
    assert pr["k_1"].frozen().ppf(0.5) == pytest.approx(np.sqrt(1e-6 * 10))
    mech = parse_mechanism("A + C <=> P + C @ k1, k_1")
    # base is fixed by its prior: not among the fitted observable parameters
    assert study.parameter_names(mech)["observable"] == ("eps_P",)
    assert study.validate_against(mech) == ()
    notes = study.validate_against(parse_mechanism("A + C -> P + C @ k1"))
    assert notes == ("prior for 'k_1': not a parameter of mechanism 'mechanism' with this "
                     "study",)


RATES = """\
    title = "initial rates (invented data)"
    units = { concentration = "mM", time = "min", temperature = "degC" }
    temperature = 25

    [observable.v0]
    kind = "initial_rate"
    species = "P"
    unit = "mM/min"

    [observable.w]
    kind = "initial_rate"
    species = "A"
    direction = "consumption"
    window = 2
    sigma = 0.01

    [[initial_rates]]
    table = "rates.csv"
    name = "ir"
    initial = { E = 0.01 }

    [[initial_rates]]
    table = "windows.csv"
    """


def test_initial_rate_tables(tmp_path):
    rates = """\
        [S]0 / mM, temperature / degC, v0, v0_sd
        1, 25, 0.10, 0.01
        2, 25, 0.18, 0.01
        2, 35, 0.30,
        """
    windows = """\
        run, [A]0 / M, w / M/s
        x, 0.1, 2e-5
        x, 0.1, 2.2e-5
        """
    study = load_study(write(tmp_path, RATES, rates_csv=rates, windows_csv=windows))
    names = [r.name for r in study.runs]
    assert names == ["ir01", "ir02", "ir03", "x"]
    r = study.run("ir03")
    assert r.kind == "initial_rate" and r.temperature == pytest.approx(308.15)
    assert r.initial == {"E": 1e-5, "S": 2e-3}
    np.testing.assert_array_equal(r.times, [0.0])
    # 0.30 mM/min = 0.30e-3 mol/L / 60 s = 5e-6 mol/(L s)
    np.testing.assert_allclose(r.series["v0"].values, [5e-6])
    assert np.isnan(r.series["v0"].sigma[0])
    obs = study.observables["v0"]
    assert obs.derivative and str(obs.expression) == "P"
    x = study.run("x")
    # a 2 min window: the run is observed at t = 120 s, as ([A]0 - [A])/120 s
    np.testing.assert_array_equal(x.times, [120.0])
    assert len(x.series["w"]) == 2 and x.series["w"].replicates == 2
    w = study.observables["w"]
    assert not w.derivative and w.window == 120.0
    mech = parse_mechanism("E + S <=> ES @ k1, k_1\nES -> E + P @ k2\nA -> 0 @ k3")
    notes = study.validate_against(mech)
    assert any("v0" in n and "steady-state variant" in n for n in notes)


HEAT = """\
    title = "calorimetry (invented data)"
    units = { concentration = "mM", time = "min", temperature = "degC", volume = "mL" }
    temperature = 25

    [observable.q]
    kind = "heat_flow"
    unit = "mW"
    steps = { make = "dH_make", side = -40 }

    [[run]]
    name = "c1"
    initial = { A = 100 }
    volume = 50
    table = "c1.csv"
    """


def test_heat_flow_observable(tmp_path):
    study = load_study(write(tmp_path, HEAT, c1_csv="time / min, q\n1, 12.5\n2, 9.0\n"))
    run = study.run("c1")
    assert run.volume == pytest.approx(0.05)
    np.testing.assert_allclose(run.series["q"].values, [0.0125, 0.009])  # W
    q = study.observables["q"]
    assert q.steps == (("make", "dH_make"), ("side", -40000.0))
    assert q.fitted == ("dH_make",)
    mech = parse_mechanism("make: A -> P @ k1\nside: A -> Q @ k2")
    assert study.validate_against(mech) == ()
    assert study.parameter_names(mech)["observable"] == ("dH_make",)


def test_summary_is_json_safe_and_report_is_readable(tmp_path):
    r1 = "time / min, P / mM, A300\n0, 0, 0.4\n1, 1, 0.35\n"
    study = load_study(write(tmp_path, BASIC, r1_csv=r1))
    summary = json.loads(json.dumps(study.summary()))
    assert summary["n_runs"] == 1 and summary["n_points"] == 4
    assert summary["runs"][0]["points"] == {"P": 2, "A300": 2}
    assert summary["observables"]["A300"]["fitted"] == ["eps_P", "base"]
    text = study.report()
    assert "1 runs, 4 data points" in text
    assert "A300 [expression, 1] = eps_A*[A] + eps_P*[P] + base" in text
