"""What a report holds: plain dataclasses that the writers read and never recompute.

The ranking, the fits and the posteriors are computed elsewhere (``mechfit.compare``,
``mechfit.infer``); the caller copies their results into these containers, and
:func:`mechfit.report.write_report` turns them into HTML, Markdown and JSON. Arrays are
numpy arrays; a posterior is an :class:`arviz.InferenceData`; a network is the
networkx graph of :func:`mechfit.mechanism.species_step_graph`.

Units: temperatures in K, energies in J/mol, times and concentrations in the units
named by :class:`StudyRanges` (shown as given).

Examples
--------
>>> import numpy as np
>>> series = ObservableSeries("P", time=np.array([0.0, 1.0, 2.0]),
...                           observed=np.array([0.0, 0.4, 0.7]),
...                           fitted=np.array([0.0, 0.5, 0.7]))
>>> series.residuals.round(2).tolist()
[0.0, -0.1, 0.0]
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from mechfit.report.errors import ReportError


def _vector(value, name: str) -> np.ndarray:
    out = np.asarray(value, dtype=float)
    if out.ndim != 1:
        raise ReportError(f"{name}: expected a 1-d array, got shape {out.shape}")
    return out


@dataclass
class StudyRanges:
    """The conditions a study covered; the cautions quote them.

    Attributes
    ----------
    concentrations
        Species -> (lowest, highest) initial concentration over the runs.
    temperatures
        (lowest, highest) run temperature in K, or ``None`` when not recorded.
    times
        (earliest, latest) observation time, or ``None``.
    n_runs
        Number of runs.
    concentration_unit, time_unit
        Units the numbers above are in (shown as given).

    Examples
    --------
    >>> r = StudyRanges.from_runs({"r1": {"A": 0.1, "B": 0.2}, "r2": {"A": 0.3, "B": 0.2}},
    ...                           temperatures={"r1": 298.15, "r2": 308.15})
    >>> r.concentrations["A"], r.temperatures, r.temperature_varies
    ((0.1, 0.3), (298.15, 308.15), True)
    """

    concentrations: dict[str, tuple[float, float]]
    temperatures: tuple[float, float] | None = None
    times: tuple[float, float] | None = None
    n_runs: int = 0
    concentration_unit: str = "mol/L"
    time_unit: str = "s"

    @classmethod
    def from_runs(
        cls,
        initial: Mapping[str, Mapping[str, float]],
        *,
        temperatures: Mapping[str, float] | None = None,
        times: Mapping[str, Any] | None = None,
        concentration_unit: str = "mol/L",
        time_unit: str = "s",
    ) -> StudyRanges:
        """Ranges from per-run initial concentrations, temperatures (K) and time arrays."""
        conc: dict[str, tuple[float, float]] = {}
        for run in initial.values():
            for species, value in run.items():
                lo, hi = conc.get(species, (np.inf, -np.inf))
                conc[species] = (min(lo, float(value)), max(hi, float(value)))
        temps = None
        if temperatures:
            values = [float(t) for t in temperatures.values()]
            temps = (min(values), max(values))
        span = None
        if times:
            flat = np.concatenate([np.ravel(np.asarray(t, dtype=float)) for t in times.values()])
            span = (float(flat.min()), float(flat.max()))
        return cls(conc, temps, span, len(initial), concentration_unit, time_unit)

    @property
    def temperature_varies(self) -> bool:
        """True when the runs span more than 0.05 K."""
        return self.temperatures is not None and (
            self.temperatures[1] - self.temperatures[0] > 0.05)


@dataclass
class RankingRow:
    """One candidate's line in the ranking table (the keys of ``mechfit rank --json``).

    ``extra`` holds further columns (label -> number or text), e.g. ``{"AIC": 12.3,
    "dAICc": 0.0}``; they are shown after the fixed columns in the order given.
    """

    name: str
    variant: str
    n_parameters: int
    log_likelihood_max: float
    aicc: float
    bic: float
    elpd_loo: float | None = None
    elpd_loo_se: float | None = None
    weight: float | None = None
    verdict: str = ""
    verdict_reason: str = ""
    extra: dict[str, float | str] = field(default_factory=dict)


@dataclass
class ParameterRow:
    """One fitted parameter: posterior median and HDI, maximum-likelihood value and SE."""

    name: str
    median: float | None = None
    hdi_low: float | None = None
    hdi_high: float | None = None
    mle: float | None = None
    mle_se: float | None = None
    unit: str = ""
    note: str = ""


@dataclass
class ObservableSeries:
    """Data and predictions for one observable of one run.

    Attributes
    ----------
    observable
        Name of the observed quantity (a species or a signal).
    time, observed
        Observation times and observed values (same length).
    prediction_time, predictive_draws
        Time grid and posterior predictive draws on it, shape (draws, len(grid));
        both optional (no band is drawn without them). ``prediction_time`` defaults
        to ``time``.
    fitted
        Best-fit (maximum-likelihood) prediction at ``time``; residuals are
        ``observed - fitted``. Without it the median of the draws, interpolated to
        ``time``, is used.
    unit
        Unit of the observable.
    """

    observable: str
    time: np.ndarray
    observed: np.ndarray
    prediction_time: np.ndarray | None = None
    predictive_draws: np.ndarray | None = None
    fitted: np.ndarray | None = None
    unit: str = ""

    def __post_init__(self) -> None:
        where = f"observable {self.observable!r}"
        self.time = _vector(self.time, f"{where}: time")
        self.observed = _vector(self.observed, f"{where}: observed")
        if self.observed.shape != self.time.shape:
            raise ReportError(f"{where}: observed has {self.observed.size} values but time "
                              f"has {self.time.size}")
        if self.fitted is not None:
            self.fitted = _vector(self.fitted, f"{where}: fitted")
            if self.fitted.shape != self.time.shape:
                raise ReportError(f"{where}: fitted has {self.fitted.size} values but time "
                                  f"has {self.time.size}")
        if self.predictive_draws is not None:
            draws = np.asarray(self.predictive_draws, dtype=float)
            grid = self.time if self.prediction_time is None else _vector(
                self.prediction_time, f"{where}: prediction_time")
            if draws.ndim != 2 or draws.shape[1] != grid.size:
                raise ReportError(f"{where}: predictive_draws must have shape (draws, "
                                  f"{grid.size}), got {draws.shape}")
            self.predictive_draws = draws
            self.prediction_time = grid
        elif self.fitted is None:
            raise ReportError(f"{where}: give predictive_draws or fitted (or both)")

    @property
    def residuals(self) -> np.ndarray:
        """Observed minus fitted values at the observation times."""
        if self.fitted is not None:
            return self.observed - self.fitted
        median = np.median(self.predictive_draws, axis=0)
        return self.observed - np.interp(self.time, self.prediction_time, median)


@dataclass
class RunFit:
    """One run: its name, temperature (K, optional) and every observed series."""

    run: str
    series: list[ObservableSeries]
    temperature: float | None = None


@dataclass
class ResidualDiagnostic:
    """Tests for structure in one run's residuals (computed by ``mechfit.compare``)."""

    run: str
    observable: str
    runs_test_p: float | None = None
    lag1_autocorrelation: float | None = None
    durbin_watson: float | None = None
    structured: bool = False
    note: str = ""


@dataclass
class TemperatureDependence:
    """Posterior of one rate constant against temperature, for an Arrhenius or Eyring plot.

    Attributes
    ----------
    constant
        Rate-constant name.
    temperature
        Grid of temperatures in K.
    rate_draws
        Posterior draws of k on the grid, shape (draws, len(temperature)).
    kind
        ``"arrhenius"`` (ln k against 1/T) or ``"eyring"`` (ln(k/T) against 1/T).
    unit
        Unit of k (shown on the axis).
    point_temperature, point_rate
        Optional separate estimates (e.g. per-run rate constants) shown as points.
    """

    constant: str
    temperature: np.ndarray
    rate_draws: np.ndarray
    kind: str = "arrhenius"
    unit: str = ""
    point_temperature: np.ndarray | None = None
    point_rate: np.ndarray | None = None

    def __post_init__(self) -> None:
        where = f"temperature dependence of {self.constant!r}"
        if self.kind not in ("arrhenius", "eyring"):
            raise ReportError(f"{where}: kind must be 'arrhenius' or 'eyring', "
                              f"got {self.kind!r}")
        self.temperature = _vector(self.temperature, f"{where}: temperature")
        draws = np.asarray(self.rate_draws, dtype=float)
        if draws.ndim != 2 or draws.shape[1] != self.temperature.size:
            raise ReportError(f"{where}: rate_draws must have shape (draws, "
                              f"{self.temperature.size}), got {draws.shape}")
        if np.any(draws <= 0) or np.any(self.temperature <= 0):
            raise ReportError(f"{where}: rate constants and temperatures must be positive")
        self.rate_draws = draws


@dataclass
class EnergyProfileStep:
    """One step along a reaction path for the energy profile.

    Attributes
    ----------
    label
        Step label.
    state_after
        Name of the state the step leads to (e.g. ``"ES"`` or ``"E + P"``).
    barrier
        Gibbs energy of activation of the forward direction, J/mol (from a fitted
        Eyring law or a rate constant), or ``None`` when there is no estimate.
    equilibrium_constant
        K of a reversible step (standard state 1 mol/L), giving dG0 = -R T ln K.
    reaction_energy
        dG0 of the step in J/mol when known otherwise; wins over ``equilibrium_constant``.
    """

    label: str
    state_after: str
    barrier: float | None = None
    equilibrium_constant: float | None = None
    reaction_energy: float | None = None


@dataclass
class EnergyProfile:
    """A path of steps from ``start`` at ``temperature`` (K), for one candidate."""

    start: str
    steps: list[EnergyProfileStep]
    temperature: float = 298.15


@dataclass
class RateLaw:
    """A derived rate law as a LaTeX string (mathtext subset), with a short description."""

    label: str
    latex: str
    description: str = ""


@dataclass
class CandidateReport:
    """Everything the report shows about one candidate (mechanism x variant).

    Only ``name``, ``variant`` and ``ranking`` are required; sections whose data are
    missing are left out of the candidate's part of the report. ``posterior`` is an
    :class:`arviz.InferenceData`, the path of one saved as netCDF (``posterior.nc``),
    or a mapping parameter -> draws.
    """

    name: str
    variant: str
    ranking: RankingRow
    parameters: list[ParameterRow] = field(default_factory=list)
    runs: list[RunFit] = field(default_factory=list)
    residual_diagnostics: list[ResidualDiagnostic] = field(default_factory=list)
    posterior: Any = None
    pair_variables: list[str] | None = None
    identifiability_notes: list[str] = field(default_factory=list)
    approximation_notes: list[str] = field(default_factory=list)
    temperature_dependence: list[TemperatureDependence] = field(default_factory=list)
    energy_profile: EnergyProfile | None = None
    rate_laws: list[RateLaw] = field(default_factory=list)

    @property
    def key(self) -> str:
        """``name (variant)``: how the candidate is named in tables and headings."""
        return f"{self.name} ({self.variant})"


@dataclass
class ReportData:
    """The whole report: title, study ranges, candidates best first, and the extras.

    Attributes
    ----------
    title
        Heading of the report (the study's title).
    ranges
        The conditions covered, quoted by the cautions.
    candidates
        Best first, as ranked.
    weights
        Weight kind (``"Akaike"``, ``"stacking"``...) -> candidate key -> weight.
    verdict_notes
        How the verdicts were reached (thresholds and their sources), one per line.
    networks
        Mechanism name -> species-step graph.
    invented
        The data are invented (the demo): a banner and a caution say so.
    invented_note
        Where the invented data come from (one sentence).
    pair_plot_candidates
        Pair plots are drawn for this many leading candidates that carry a posterior.
    design_suggestions
        Sentences proposing the next experiments (optional section).
    extra_cautions
        Further cautions, appended after the standard ones.
    generated
        A line naming when and by what the report was made (optional).
    """

    title: str
    ranges: StudyRanges
    candidates: list[CandidateReport]
    weights: dict[str, dict[str, float]] = field(default_factory=dict)
    verdict_notes: list[str] = field(default_factory=list)
    networks: dict[str, Any] = field(default_factory=dict)
    invented: bool = False
    invented_note: str = ""
    pair_plot_candidates: int = 2
    design_suggestions: list[str] = field(default_factory=list)
    extra_cautions: list[str] = field(default_factory=list)
    generated: str = ""

    def __post_init__(self) -> None:
        if not self.candidates:
            raise ReportError("report data: candidates is empty; a report needs at least one")
        keys = [c.key for c in self.candidates]
        repeated = sorted({k for k in keys if keys.count(k) > 1})
        if repeated:
            raise ReportError(f"report data: candidates appear twice: {', '.join(repeated)}")
