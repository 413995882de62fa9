"""Tables, cautions and posterior summaries: the words and numbers the report prints."""

import numpy as np
import pytest
from scipy import stats

from mechfit.report import StudyRanges, correlation_notes, parameter_rows
from mechfit.report.cautions import cautions
from mechfit.report.posterior_summary import highest_density_interval
from mechfit.report.tables import format_number, ranking_table


@pytest.mark.parametrize(("value", "text"), [
    (0.0, "0"), (1.0, "1"), (12.345678, "12.35"), (-0.5, "-0.5"), (0.001, "0.001"),
    (0.00099, "9.900e-04"), (123456.0, "1.235e+05"), (float("nan"), "–"), (None, "–"),
    (float("inf"), "∞"), (np.float32(2.5), "2.5"), ("n/a", "n/a"),
])
def test_format_number(value, text):
    assert format_number(value) == text


def test_ranking_table_keeps_the_order_and_extra_columns(invented_report):
    table = ranking_table(invented_report.candidates)
    assert table.header[:3] == ["rank", "mechanism", "variant"]
    assert table.header[-2:] == ["dAICc", "verdict"]
    assert [r[1] for r in table.rows] == ["direct", "via I"]
    assert table.rows[0][7] == "246 (6.1)"
    assert all(len(r) == len(table.header) for r in table.rows)


def test_cautions_quote_the_ranges_passed_in():
    ranges = StudyRanges.from_runs(
        {"a": {"A": 0.02, "Cat": 0.001}, "b": {"A": 0.2, "Cat": 0.002}},
        temperatures={"a": 293.15, "b": 333.15}, times={"a": [0, 30, 60], "b": [5, 7200]},
        concentration_unit="mol/L", time_unit="s")
    text = cautions(ranges)
    assert text[0].startswith("These conclusions hold only inside the conditions studied (2 runs)")
    assert "[A]0 from 0.02 to 0.2 mol/L" in text[0]
    assert "[Cat]0 from 0.001 to 0.002 mol/L" in text[0]
    assert "293.15 K to 333.15 K (20.0 °C to 60.0 °C)" in text[0]
    assert "from 0 to 7200 s" in text[0]
    joined = " ".join(text)
    assert "plant scale, is not supported by this analysis" in joined
    assert "reaction calorimetry" in joined and "process-safety review" in joined
    assert "local codes and licensed process-safety practice" in joined
    assert "invented" not in joined
    assert "invented" in " ".join(cautions(ranges, invented=True))


def test_cautions_for_one_temperature_and_no_record():
    one = StudyRanges({"A": (0.1, 0.1)}, temperatures=(298.15, 298.15), n_runs=1)
    assert "one temperature, 298.15 K (25.0 °C)" in cautions(one)[0]
    assert "[A]0 = 0.1 mol/L" in cautions(one)[0]
    assert not one.temperature_varies
    none = StudyRanges({}, n_runs=3)
    assert "temperature not recorded" in cautions(none)[0]


def test_hdi_of_normal_draws_is_mean_plus_minus_1_96_sigma():
    # The 95% HDI of a normal distribution is its central interval mu +- 1.960 sigma
    # (Kruschke, Doing Bayesian Data Analysis, 2nd ed., 2015, sec. 4.3.4; z from
    # scipy.stats.norm, the reference library).
    rng = np.random.default_rng(11)
    draws = rng.normal(10.0, 2.0, 400_000)
    low, high = highest_density_interval(draws)
    z = stats.norm.ppf(0.975)
    assert low == pytest.approx(10.0 - 2.0 * z, abs=0.03)
    assert high == pytest.approx(10.0 + 2.0 * z, abs=0.03)


def test_parameter_rows_and_correlation_notes(invented_report):
    posterior = invented_report.candidates[0].posterior
    rows = parameter_rows(posterior, mle={"Ea": 62e3}, units={"Ea": "J/mol"},
                          variables=["Ea", "k_ref"])
    assert [r.name for r in rows] == ["Ea", "k_ref"]
    assert rows[0].hdi_low < rows[0].median < rows[0].hdi_high
    assert rows[0].mle == 62e3 and rows[1].mle is None and rows[0].unit == "J/mol"
    rng = np.random.default_rng(2)
    a = rng.normal(0.0, 1.0, 3000)
    draws = {"x": a, "y": -a + rng.normal(0, 0.05, 3000), "z": rng.normal(0, 1, 3000)}
    notes = correlation_notes(draws)
    assert len(notes) == 1 and notes[0].startswith("x and y are strongly correlated")
    assert "-1.00" in notes[0]
