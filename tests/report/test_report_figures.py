"""Figure functions: the numbers they draw, checked against references outside mechfit."""

import numpy as np
import pytest
from matplotlib.collections import PolyCollection
from matplotlib.patches import Rectangle
from scipy import constants, stats

from mechfit import parse_mechanism
from mechfit.mechanism import species_step_graph
from mechfit.report import (
    ObservableSeries,
    ReportError,
    RunFit,
    TemperatureDependence,
)
from mechfit.report.figures.canvas import figure_to_png, figure_to_svg
from mechfit.report.figures.network import plot_network
from mechfit.report.figures.posterior import plot_pair, posterior_draws
from mechfit.report.figures.predictive import (
    plot_predictive_bands,
    plot_residuals,
    predictive_quantiles,
)
from mechfit.report.figures.rate_law import RateLawTypesetError, plot_rate_law
from mechfit.report.figures.temperature import plot_coordinates, plot_temperature_dependence
from mechfit.report.figures.weights import plot_model_weights


def _run(name, n_obs=2, n_t=8):
    t = np.linspace(0.0, 10.0, n_t)
    series = []
    for j in range(n_obs):
        mean = np.exp(-(j + 1) * 0.2 * t)
        draws = mean[None, :] * np.linspace(0.9, 1.1, 21)[:, None]
        series.append(ObservableSeries(f"X{j}", t, mean * 1.01, predictive_draws=draws,
                                       fitted=mean))
    return RunFit(name, series, temperature=300.0)


def test_predictive_quantiles_match_the_normal_distribution():
    # Pointwise bands of normal draws sit at mu + z sigma with z = 0.6745 and 1.9600, the
    # standard normal quantiles (Abramowitz & Stegun, Handbook of Mathematical Functions,
    # 1964, Table 26.5); scipy.stats.norm is the reference library.
    rng = np.random.default_rng(3)
    draws = rng.normal(2.0, 0.5, size=(200_000, 2))
    q = predictive_quantiles(draws)
    for key, p in (("low95", 0.025), ("low50", 0.25), ("median", 0.5), ("high50", 0.75),
                   ("high95", 0.975)):
        assert q[key] == pytest.approx(2.0 + 0.5 * stats.norm.ppf(p), abs=0.01)
    assert stats.norm.ppf(0.975) == pytest.approx(1.9600, abs=1e-4)


def test_one_panel_per_run_and_observable_with_bands_around_the_median():
    runs = [_run("r1"), _run("r2"), _run("r3")]
    fig = plot_predictive_bands(runs)
    assert len(fig.axes) == 6
    titles = [ax.get_title(loc="left") for ax in fig.axes]
    assert titles[0] == "r1: X0  (300.00 K)" and titles[-1] == "r3: X1  (300.00 K)"
    ax = fig.axes[0]
    bands = [c for c in ax.collections if isinstance(c, PolyCollection)]
    assert len(bands) == 2  # 95% and 50%
    median = ax.lines[0].get_ydata()
    outer = bands[0].get_paths()[0].vertices
    assert outer[:, 1].min() <= median.min() and outer[:, 1].max() >= median.max()
    assert figure_to_png(fig, dpi=30).startswith(b"\x89PNG")


def test_residual_panels_show_observed_minus_fitted():
    run = _run("r1", n_obs=1)
    fig = plot_residuals([run])
    points = fig.axes[0].lines[-1].get_ydata()
    series = run.series[0]
    np.testing.assert_allclose(points, series.observed - series.fitted)


def test_residuals_fall_back_to_the_predictive_median():
    t = np.array([0.0, 1.0, 2.0])
    draws = np.array([[0.0, 1.0, 2.0], [0.0, 3.0, 4.0], [0.0, 2.0, 3.0]])
    s = ObservableSeries("A", t, np.array([0.0, 2.5, 3.0]), predictive_draws=draws)
    np.testing.assert_allclose(s.residuals, [0.0, 0.5, 0.0])


def test_bad_series_shapes_name_the_field():
    with pytest.raises(ReportError, match="observable 'A': observed has 2 values"):
        ObservableSeries("A", [0.0, 1.0, 2.0], [1.0, 2.0], fitted=[1.0, 2.0, 3.0])
    with pytest.raises(ReportError, match=r"predictive_draws must have shape \(draws, 3\)"):
        ObservableSeries("A", [0.0, 1.0, 2.0], [1.0, 2.0, 3.0],
                         predictive_draws=np.ones((4, 2)))
    with pytest.raises(ReportError, match="give predictive_draws or fitted"):
        ObservableSeries("A", [0.0], [1.0])


def test_eyring_plot_line_gives_the_activation_parameters():
    # Eyring: ln(k/T) = ln(k_B/h) + dS/R - dH/(R T); ln(k_B/h) = 23.760 with k_B/h in
    # 1/(K s) (Espenson, Chemical Kinetics and Reaction Mechanisms, 2nd ed., 1995, sec. 7.3;
    # recalled from memory), CODATA constants from scipy.constants.
    dH, dS = 85e3, -30.0
    T = np.linspace(280.0, 340.0, 7)
    k = constants.k * T / constants.h * np.exp(dS / constants.R - dH / (constants.R * T))
    series = TemperatureDependence("k", T, k[None, :] * np.array([[0.98], [1.0], [1.02]]),
                                   kind="eyring")
    x, y = plot_coordinates(series)
    slope, intercept = np.polyfit(x / 1000.0, np.median(y, axis=0), 1)
    assert -slope * constants.R == pytest.approx(dH, rel=1e-9)
    assert intercept - dS / constants.R == pytest.approx(23.760, abs=5e-4)
    fig = plot_temperature_dependence([series])
    assert fig.axes[0].get_ylabel() == "ln(k/T)"


def test_arrhenius_plot_slope_is_minus_ea_over_r():
    T = np.linspace(290.0, 330.0, 9)
    ea = 55e3
    k = 1e9 * np.exp(-ea / (constants.R * T))
    fig = plot_temperature_dependence([TemperatureDependence("k2", T, k[None, :])])
    line = fig.axes[0].lines[0]
    slope = np.polyfit(line.get_xdata() / 1000.0, line.get_ydata(), 1)[0]
    assert -slope * constants.R == pytest.approx(ea, rel=1e-9)
    with pytest.raises(ReportError, match="kind must be"):
        TemperatureDependence("k", T, k[None, :], kind="linear")
    with pytest.raises(ReportError, match="mix of Arrhenius and Eyring"):
        plot_temperature_dependence([TemperatureDependence("a", T, k[None, :]),
                                     TemperatureDependence("b", T, k[None, :], kind="eyring")])


def test_network_draws_every_species_and_step_and_marks_two_way_steps():
    mech = parse_mechanism("add: Cat + ArBr -> CatAr @ k1\nbind: CatAr + Am <=> CatArAm @ k2, k_2"
                           "\nout: CatArAm -> Cat + Prod @ k3\ndim: 2 Cat <=> Cat2 @ k4, k_4")
    graph = species_step_graph(mech)
    fig = plot_network(graph)
    ax = fig.axes[0]
    texts = {t.get_text() for t in ax.texts}
    assert set(mech.species) <= texts
    assert {"add", "bind", "out", "dim"} <= texts
    assert "2" in texts  # coefficient of 2 Cat
    arrows = [a for a in ax.texts if hasattr(a, "arrow_patch") and a.arrow_patch is not None]
    assert len(arrows) == graph.number_of_edges()
    two_way = [a for a in arrows if a.arrowprops["arrowstyle"] == "<|-|>"]
    assert len(two_way) == 5  # bind: 3 edges, dim: 2 edges
    hollow = [ln for ln in ax.lines if ln.get_markerfacecolor() == "white"]
    assert len(hollow) == 2
    with pytest.raises(ReportError, match="species_step_graph"):
        import networkx as nx
        plot_network(nx.path_graph(3, create_using=nx.DiGraph))


def test_pair_plot_from_inference_data(invented_report):
    posterior = invented_report.candidates[0].posterior
    fig = plot_pair(posterior, ["k_ref", "Ea", "sigma"])
    assert len(fig.axes) == 6  # lower triangle with the diagonal
    assert fig.axes[-1].get_xlabel() == "sigma"
    draws = posterior_draws(posterior, ["Ea"])["Ea"]
    assert draws.size == 300  # 2 chains x 150 draws pooled
    with pytest.raises(ReportError, match="no parameter 'k9'"):
        plot_pair(posterior, ["k9"])


def test_weight_bars_have_the_weights_as_lengths():
    fig = plot_model_weights({"Akaike": {"a": 0.6, "b": 0.4}, "stacking": {"a": 0.9, "b": 0.1}})
    bars = sorted((round(p.get_y(), 3), p.get_width()) for p in fig.axes[0].patches
                  if isinstance(p, Rectangle))
    assert sorted(w for _, w in bars) == pytest.approx([0.1, 0.4, 0.6, 0.9])
    with pytest.raises(ReportError, match="weights lie between 0 and 1"):
        plot_model_weights({"Akaike": {"a": 1.4}})


def test_rate_law_svg_is_paths_only_and_bad_latex_is_reported():
    svg = figure_to_svg(plot_rate_law(r"v = \frac{k_{1} [\mathrm{A}]}{1 + K [\mathrm{B}]}"))
    assert "<path" in svg and "<text" not in svg
    assert "<image" not in svg and "@import" not in svg and "font-face" not in svg
    with pytest.raises(RateLawTypesetError, match="cannot be typeset"):
        plot_rate_law(r"\frac{a}{")
    with pytest.raises(RateLawTypesetError, match="empty"):
        plot_rate_law("  ")


def test_pair_plot_reads_a_saved_posterior_and_names_a_bad_file(invented_report, tmp_path):
    path = tmp_path / "posterior.nc"
    invented_report.candidates[0].posterior.to_netcdf(str(path))
    fig = plot_pair(path, ["k_ref", "Ea"])
    assert len(fig.axes) == 3
    broken = tmp_path / "broken.nc"
    broken.write_text("not netCDF")
    with pytest.raises(ReportError, match="broken.nc"):
        plot_pair(broken)
    with pytest.raises(ReportError, match="missing.nc"):
        plot_pair(tmp_path / "missing.nc")


def test_pair_plot_says_when_parameters_are_left_out():
    rng = np.random.default_rng(5)
    draws = {f"p{i}": rng.normal(i, 1.0, 100) for i in range(8)}
    fig = plot_pair(draws)
    assert len(fig.axes) == 21  # 6 x 7 / 2
    assert fig.get_suptitle() == "first 6 of 8 parameters"
