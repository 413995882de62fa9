"""Energy levels from barriers and equilibrium constants, and their honest gaps."""

import math

import pytest
from scipy import constants

from mechfit.report import EnergyProfile, EnergyProfileStep, ReportError
from mechfit.report.energetics import energy_levels, reaction_gibbs_energy
from mechfit.report.figures.energy_profile import plot_energy_profile


def test_a_factor_of_ten_in_k_is_5_7_kj_per_mol_at_25_celsius():
    # RT ln 10 = 5.708 kJ/mol = 1.364 kcal/mol at 298.15 K: the "1.36 kcal/mol per power of
    # ten" of physical organic chemistry (Anslyn & Dougherty, Modern Physical Organic
    # Chemistry, 2006, ch. 7; recalled from memory). Thermochemical calorie 4.184 J
    # (scipy.constants.calorie).
    dG = reaction_gibbs_energy(0.1, 298.15)
    assert dG == pytest.approx(5708.0, abs=1.0)
    assert dG / constants.calorie / 1e3 == pytest.approx(1.364, abs=1e-3)
    assert reaction_gibbs_energy(1.0, 350.0) == 0.0


def test_levels_follow_the_path_and_cut_after_a_one_way_step():
    T = 310.0
    profile = EnergyProfile("E + S", [
        EnergyProfileStep("bind", "ES", barrier=50e3, equilibrium_constant=20.0),
        EnergyProfileStep("iso", "EP", barrier=65e3, reaction_energy=-3e3),
        EnergyProfileStep("out", "E + P", barrier=None),
        EnergyProfileStep("re", "E + P'", barrier=40e3, equilibrium_constant=2.0),
    ], temperature=T)
    levels = energy_levels(profile)
    assert [(lv.kind, lv.name) for lv in levels] == [
        ("state", "E + S"), ("transition", "bind"), ("state", "ES"), ("transition", "iso"),
        ("state", "EP"), ("transition", "out"), ("state", "E + P"), ("transition", "re"),
        ("state", "E + P'")]
    es = -constants.R * T * math.log(20.0)
    assert levels[2].energy == pytest.approx(es)
    assert levels[3].energy == pytest.approx(es + 65e3)
    assert levels[4].energy == pytest.approx(es - 3e3)
    assert levels[5].energy is None and "no barrier estimate" in levels[5].note
    assert levels[6].segment == 1 and levels[6].energy == 0.0
    assert levels[6].reference == "E + P" and "not determined" in levels[6].note
    assert levels[7].energy == pytest.approx(40e3) and levels[7].segment == 1
    assert levels[8].energy == pytest.approx(-constants.R * T * math.log(2.0))


def test_inconsistent_barrier_is_flagged_and_bad_constants_rejected():
    levels = energy_levels(EnergyProfile("A", [
        EnergyProfileStep("up", "B", barrier=5e3, reaction_energy=20e3)]))
    assert "not consistent" in levels[1].note
    with pytest.raises(ReportError, match="must both be positive"):
        energy_levels(EnergyProfile("A", [EnergyProfileStep("s", "B", equilibrium_constant=0.0)]))


def test_profile_figure_marks_missing_barriers_and_cuts():
    profile = EnergyProfile("A + B", [
        EnergyProfileStep("on", "I", barrier=70e3, equilibrium_constant=0.2),
        EnergyProfileStep("off", "P", barrier=None)], temperature=308.15)
    fig = plot_energy_profile(profile)
    words = " ".join(t.get_text() for t in fig.axes[0].texts)
    assert "no barrier estimate" in words and "dG0 unknown" in words
    assert "on‡ 70.0" in words
