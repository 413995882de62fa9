"""Compare candidate mechanisms fitted to one study: criteria, weights, verdicts, residuals.

Public API
----------
:func:`rank_candidates` with :class:`Candidate` inputs returns a :class:`Ranking`. The
building blocks are public too: :func:`information_criteria` (AIC, AICc, BIC),
:func:`psis_loo` and :func:`waic` (points), :func:`leave_one_run_out` (runs, with exact
refits; :func:`log_predictive_density` helps write the refit callback),
:func:`akaike_weights` and :func:`predictive_weights` (stacking, pseudo-BMA),
:func:`residual_diagnostics` (runs test, lag-1 autocorrelation, Durbin-Watson) and
:func:`approximation_check`. ``docs/ranking.md`` gives every formula and its source.
"""

from mechfit.compare.approximation import ApproximationCheck, approximation_check
from mechfit.compare.criteria import InformationCriteria, information_criteria
from mechfit.compare.elpd import PredictiveDensity, difference, psis_loo, waic
from mechfit.compare.errors import ComparisonError
from mechfit.compare.ranking import (
    Candidate,
    CandidateResult,
    Ranking,
    parsimonious_choice,
    rank_candidates,
)
from mechfit.compare.residuals import (
    ResidualDiagnostics,
    RunsTest,
    SeriesDiagnostics,
    durbin_watson,
    lag1_autocorrelation,
    residual_diagnostics,
    runs_test,
)
from mechfit.compare.run_loo import (
    leave_one_run_out,
    log_predictive_density,
    run_log_likelihood,
)
from mechfit.compare.verdicts import BEST, CLEARLY_WORSE, FAILS, NOT_DISTINGUISHABLE, VERDICTS
from mechfit.compare.weights import PredictiveWeights, akaike_weights, predictive_weights

__all__ = [
    "ApproximationCheck", "approximation_check", "InformationCriteria", "information_criteria",
    "PredictiveDensity", "difference", "psis_loo", "waic", "ComparisonError", "Candidate",
    "CandidateResult", "Ranking", "rank_candidates", "parsimonious_choice",
    "ResidualDiagnostics", "RunsTest",
    "SeriesDiagnostics", "durbin_watson", "lag1_autocorrelation", "residual_diagnostics",
    "runs_test", "leave_one_run_out", "log_predictive_density", "run_log_likelihood", "BEST",
    "CLEARLY_WORSE", "FAILS",
    "NOT_DISTINGUISHABLE", "VERDICTS", "PredictiveWeights", "akaike_weights",
    "predictive_weights",
]
