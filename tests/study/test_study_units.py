"""Unit conversions of study files, checked against values computed by hand.

Each test shows the hand calculation in a comment. Exact definitions used: 1 M =
1 mol/L; 1 min = 60 s; 1 h = 3600 s; T/K = t/degC + 273.15 (SI Brochure, 9th ed.,
2019, sec. 2.3.1 and table 8); 1 kJ = 1000 J; 1 mL = 1e-3 L.
"""

import numpy as np
import pytest

from mechfit.errors import StudyError
from mechfit.study.units import canonical_factor, display, parse_unit, to_canonical


def test_concentrations_by_hand():
    # 25 mM = 25 * 1e-3 mol/L = 0.025 mol/L
    assert to_canonical(25.0, "mM", "concentration") == pytest.approx(0.025, rel=1e-15)
    # 350 uM = 350 * 1e-6 mol/L = 3.5e-4 mol/L (both 'uM' and 'µM' accepted)
    assert to_canonical(350.0, "uM", "concentration") == pytest.approx(3.5e-4, rel=1e-15)
    assert to_canonical(350.0, "µM", "concentration") == pytest.approx(3.5e-4, rel=1e-15)
    # 0.2 M = 0.2 mol/L; 5 mmol/L = 0.005 mol/L
    assert to_canonical(0.2, "M", "concentration") == pytest.approx(0.2, rel=1e-15)
    assert to_canonical(5.0, "mmol/L", "concentration") == pytest.approx(0.005, rel=1e-15)


def test_times_by_hand():
    # 2.5 min = 2.5 * 60 s = 150 s; 1.5 h = 1.5 * 3600 s = 5400 s
    assert to_canonical(2.5, "min", "time") == pytest.approx(150.0, rel=1e-15)
    assert to_canonical(1.5, "h", "time") == pytest.approx(5400.0, rel=1e-15)
    got = to_canonical(np.array([0.0, 0.5, 12.0]), "min", "time")
    np.testing.assert_allclose(got, [0.0, 30.0, 720.0], rtol=1e-15)


def test_temperatures_by_hand():
    # 25 degC = 25 + 273.15 K = 298.15 K; -40 degC = 233.15 K; '°C' spelling too
    assert to_canonical(25.0, "degC", "temperature") == pytest.approx(298.15, abs=1e-12)
    assert to_canonical(-40.0, "°C", "temperature") == pytest.approx(233.15, abs=1e-12)
    assert to_canonical(310.0, "K", "temperature") == 310.0


def test_energies_volumes_heat_flows_by_hand():
    # 75.3 kJ/mol = 75300 J/mol
    assert to_canonical(75.3, "kJ/mol", "energy") == pytest.approx(75300.0, rel=1e-15)
    # 1 kcal/mol = 4184 J/mol (thermochemical calorie, 4.184 J)
    assert to_canonical(1.0, "kcal/mol", "energy") == pytest.approx(4184.0, rel=1e-12)
    # 50 mL = 0.05 L; 12 mW = 0.012 W
    assert to_canonical(50.0, "mL", "volume") == pytest.approx(0.05, rel=1e-15)
    assert to_canonical(12.0, "mW", "heat_flow") == pytest.approx(0.012, rel=1e-15)
    # an initial rate of 3 mM/min = 3e-3 mol/L / 60 s = 5e-5 mol/(L s)
    assert to_canonical(3.0, "mM/min", "rate") == pytest.approx(5e-5, rel=1e-15)


def test_rate_constant_units_by_hand():
    # k = 1 /(mM min): 1 / (1e-3 mol/L * 60 s) = 1000/60 L/(mol s) = 16.667 L/(mol s)
    factor, unit = canonical_factor("1/(mM*min)")
    assert unit == "L/(mol*s)"
    assert factor == pytest.approx(1000.0 / 60.0, rel=1e-15)
    # k = 2 /h: 2 / 3600 s = 5.556e-4 /s
    factor, unit = canonical_factor("1/h")
    assert unit == "1/s" and 2 * factor == pytest.approx(2 / 3600, rel=1e-15)
    # third order: 1 L^2/(mmol^2 s) = 1e6 L^2/(mol^2 s)
    factor, unit = canonical_factor("L^2/(mmol^2*s)")
    assert unit == "L^2/(mol^2*s)" and factor == pytest.approx(1e6, rel=1e-12)
    # an absorptivity in L/(mmol cm) for a 1 cm cell is 1000 L/mol per cm:
    # 1 L/(mmol cm) = 1000 L/mol / (0.1 dm) = 1e4 dm^2/mol
    factor, unit = canonical_factor("L/(mmol*cm)")
    assert unit == "dm^2/mol" and factor == pytest.approx(1e4, rel=1e-12)
    # percent: 1 % = 0.01
    assert canonical_factor("%") == (pytest.approx(0.01, rel=1e-15), "1")


def test_wrong_kind_and_unknown_units():
    with pytest.raises(StudyError, match="'g' is not a unit of time"):
        parse_unit("g", "time", where="s.toml: units.time")
    with pytest.raises(StudyError, match="unknown unit 'furlongs_per_zork'"):
        parse_unit("furlongs_per_zork", "time")
    with pytest.raises(StudyError, match="offset unit"):
        canonical_factor("degC")


def test_display():
    assert display("millimolar") == "mM"
    assert display("minute") == "min"
