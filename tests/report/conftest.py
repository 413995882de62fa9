"""Invented report data for the report tests (every number here is invented).

Two candidates for an invented reaction A + B -> P, observed at three temperatures:
"direct" (one second-order step, the truth of the invented data) and "via I" (a
two-step path through an intermediate, fitted here as a first-order law in A, which
leaves structured residuals). Predictions are closed-form solutions, posterior draws
come from a normal approximation around the true values.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import constants

from mechfit import parse_mechanism
from mechfit.mechanism import species_step_graph
from mechfit.report import (
    CandidateReport,
    EnergyProfile,
    EnergyProfileStep,
    ObservableSeries,
    ParameterRow,
    RankingRow,
    RateLaw,
    ReportData,
    ResidualDiagnostic,
    RunFit,
    StudyRanges,
    TemperatureDependence,
    correlation_notes,
    parameter_rows,
)

T_REF = 308.15
RUNS = {  # name: (T / K, [A]0, [B]0) in mol/L, invented
    "r1": (298.15, 0.10, 0.15),
    "r2": (308.15, 0.10, 0.30),
    "r3": (318.15, 0.05, 0.15),
}


def arviz():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FutureWarning)
        import arviz as az
    return az


def second_order_product(t, k, a0, b0):
    """[P](t) for A + B -> P with rate k[A][B] and a0 != b0 (closed form)."""
    e = np.exp((b0 - a0) * k * t)
    return a0 * b0 * (e - 1.0) / (b0 * e - a0)


def rate(k_ref, ea, T):
    return k_ref * np.exp(-ea / constants.R * (1.0 / T - 1.0 / T_REF))


def _posterior(rng, n_chains=2, n_draws=150):
    k_ref = rng.lognormal(np.log(0.05), 0.04, (n_chains, n_draws))
    ea = rng.normal(62e3, 2.5e3, (n_chains, n_draws))
    sigma = np.abs(rng.normal(2e-3, 2e-4, (n_chains, n_draws)))
    return arviz().from_dict(posterior={"k_ref": k_ref, "Ea": ea, "sigma": sigma})


def _runs(rng, posterior, truth=True):
    k_ref = posterior.posterior["k_ref"].values.reshape(-1)[:80]
    ea = posterior.posterior["Ea"].values.reshape(-1)[:80]
    runs = []
    for name, (T, a0, b0) in RUNS.items():
        t = np.linspace(0.0, 900.0, 16)
        grid = np.linspace(0.0, 900.0, 60)
        k_true = rate(0.05, 62e3, T)
        observed = second_order_product(t, k_true, a0, b0) + rng.normal(0, 2e-3, t.size)
        if truth:
            draws = second_order_product(grid[None, :], rate(k_ref, ea, T)[:, None], a0, b0)
            fitted = second_order_product(t, rate(0.05, 62e3, T), a0, b0)
        else:  # first order in A only: misses the curvature
            k1 = k_true * b0 * 0.8
            draws = a0 * (1 - np.exp(-k1 * rng.lognormal(0, 0.03, (80, 1)) * grid[None, :]))
            fitted = a0 * (1 - np.exp(-k1 * t))
        draws = draws + rng.normal(0, 2e-3, draws.shape)
        runs.append(RunFit(name, [ObservableSeries("P", t, observed, prediction_time=grid,
                                                   predictive_draws=draws, fitted=fitted,
                                                   unit="mol/L")], temperature=T))
    return runs


def _diagnostics(runs, structured):
    return [ResidualDiagnostic(r.run, "P", runs_test_p=0.002 if structured else 0.41,
                               lag1_autocorrelation=0.71 if structured else -0.05,
                               durbin_watson=0.45 if structured else 2.1,
                               structured=structured) for r in runs]


def build_invented_report() -> ReportData:
    rng = np.random.default_rng(20261201)
    posterior = _posterior(rng)
    runs = _runs(rng, posterior, truth=True)
    grid = np.linspace(290.0, 325.0, 30)
    k_ref = posterior.posterior["k_ref"].values.reshape(-1)
    ea = posterior.posterior["Ea"].values.reshape(-1)
    direct = CandidateReport(
        "direct", "full",
        RankingRow("direct", "full", 3, 251.2, -495.6, -490.1, elpd_loo=246.0,
                   elpd_loo_se=6.1, weight=0.93, verdict="best supported",
                   verdict_reason="lowest AICc; residuals without structure",
                   extra={"dAICc": 0.0}),
        parameters=parameter_rows(posterior, mle={"k_ref": 0.05, "Ea": 62e3},
                                  mle_se={"k_ref": 0.002, "Ea": 2.4e3},
                                  units={"k_ref": "L/(mol s)", "Ea": "J/mol"}),
        runs=runs,
        residual_diagnostics=_diagnostics(runs, structured=False),
        posterior=posterior,
        pair_variables=["k_ref", "Ea"],
        identifiability_notes=correlation_notes(posterior, ["k_ref", "Ea"]) or [
            "k_ref and Ea are well determined by the three temperatures."],
        temperature_dependence=[TemperatureDependence(
            "k", grid, rate(k_ref[:, None], ea[:, None], grid[None, :]), kind="arrhenius",
            unit="L/(mol s)")],
        energy_profile=EnergyProfile("A + B", [
            EnergyProfileStep("couple", "P", barrier=74.5e3)], temperature=T_REF),
        rate_laws=[RateLaw("rate", r"v = k [\mathrm{A}] [\mathrm{B}]",
                           "mass action, one step")],
    )
    other_posterior = _posterior(np.random.default_rng(7))
    other_runs = _runs(rng, other_posterior, truth=False)
    via = CandidateReport(
        "via I", "steady state",
        RankingRow("via I", "steady state", 4, 190.3, -371.4, -365.0, elpd_loo=181.5,
                   elpd_loo_se=9.4, weight=0.07, verdict="fails to describe the data",
                   verdict_reason="structured residuals in every run",
                   extra={"dAICc": 124.2}),
        parameters=[ParameterRow("k1", 0.11, 0.09, 0.13, 0.112, 0.01, "L/(mol s)"),
                    ParameterRow("k_1", None, None, None, 3.0, None, "1/s",
                                 note="not identifiable"),
                    ParameterRow("k2", 5.1, 2.0, 9.7, 4.8, 2.2, "1/s")],
        runs=other_runs,
        residual_diagnostics=_diagnostics(other_runs, structured=True),
        approximation_notes=["steady state of I holds: [I] stays below 1% of [A]0."],
        energy_profile=EnergyProfile("A + B", [
            EnergyProfileStep("on", "I", barrier=70e3, equilibrium_constant=0.2),
            EnergyProfileStep("off", "P", barrier=None)], temperature=T_REF),
        rate_laws=[RateLaw("rate", r"v = \frac{k_{1} k_{2} [\mathrm{A}] [\mathrm{B}]}"
                                   r"{k_{-1} + k_{2}}", "steady state in I"),
                   RateLaw("broken", r"\frac{a}{", "deliberately malformed (test)")],
    )
    ranges = StudyRanges.from_runs(
        {n: {"A": a0, "B": b0} for n, (_, a0, b0) in RUNS.items()},
        temperatures={n: T for n, (T, _, _) in RUNS.items()},
        times={r.run: r.series[0].time for r in runs})
    networks = {
        "direct": species_step_graph(parse_mechanism("couple: A + B -> P @ k")),
        "via I": species_step_graph(parse_mechanism("on: A + B <=> I @ k1, k_1\n"
                                                    "off: I -> P @ k2")),
    }
    return ReportData(
        "A + B to P at three temperatures (invented example)", ranges, [direct, via],
        weights={"Akaike": {"direct (full)": 0.93, "via I (steady state)": 0.07},
                 "stacking": {"direct (full)": 0.98, "via I (steady state)": 0.02}},
        verdict_notes=["Not distinguishable: AICc within 2 of the best (Burnham & Anderson "
                       "2002, sec. 2.6)."],
        networks=networks, invented=True,
        invented_note="Made up for the report tests.",
        design_suggestions=["A run at [B]0 = 0.05 mol/L and 318 K would separate the two "
                            "candidates best (invented suggestion)."],
        generated="Generated by the report tests.",
    )


@pytest.fixture(scope="session")
def invented_report() -> ReportData:
    return build_invented_report()


@pytest.fixture(scope="session")
def written_report(invented_report, tmp_path_factory):
    from mechfit.report import write_report

    folder = tmp_path_factory.mktemp("report")
    return write_report(invented_report, folder, dpi=60)
