"""The report's identifiability notes read fit.json, where non-finite numbers are null."""

from mechfit.pipeline.report_inputs import identifiability_notes


def test_a_direction_with_no_finite_sd_is_called_unbounded_not_a_crash():
    # a Fisher eigenvalue of -1e-17 (round-off) gives an infinite sd, stored as null
    fit = {"identifiability": {"sloppy_directions": [
        {"combination": "Ea_kd^1", "sd_log": None},
        {"combination": "kd^1", "sd_log": 55849.3}]}}
    notes = identifiability_notes(fit)
    assert notes == [
        "poorly determined direction: Ea_kd^1 (sd of its log unbounded: the data do not "
        "determine it)",
        "poorly determined direction: kd^1 (sd of its log 5.58e+04)"]


def test_lumped_parameters_and_half_lives_with_missing_numbers():
    fit = {"identifiability": {
        "prior_dominated": ["kd"], "identifiable_combinations": ["k1^1"],
        "lumped_parameters": [{"name": "K", "expression": "k_1/k1", "median": 2.0,
                               "hdi_low": None, "hdi_high": 3.0, "determined": False}]},
        "half_conversion": [
            {"species": "Sub", "run": "r01", "median": 120.0, "hdi_low": 110.0,
             "hdi_high": None},
            {"species": "Sub", "run": "r02", "median": None, "reached": 0.25,
             "horizon": 3600.0}]}
    notes = identifiability_notes(fit)
    assert notes[0] == "kd: the posterior is no narrower than the prior"
    assert notes[1] == "identifiable combination: k1^1"
    assert notes[2] == ("lumped parameter of the rate law K = k_1/k1: median 2 (95 % HDI "
                        "not finite to 3), NOT determined")
    assert notes[3] == ("half-life of Sub under the conditions of run r01: 120 s (95 % HDI "
                        "110 to not finite)")
    assert notes[4] == ("half-life of Sub under the conditions of run r02: not reached by "
                        "25 % of the draws within 3600 s")
