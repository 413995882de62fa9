"""Choosing the next experiment: discrimination (Box–Hill) and precision (D-optimal)."""

from mechfit.design.criteria import box_hill, d_optimal, predictive_moments
from mechfit.design.predict import (
    DesignInputError,
    FittedCandidate,
    PlannedRun,
    load_candidates,
    predict_runs,
)
from mechfit.design.proposal import DesignProblem, DesignResult, DesignSettings, propose
from mechfit.design.search import Proposal, greedy_runs, search
from mechfit.design.space import DesignSpace, DesignSpaceError, Variable
from mechfit.design.suggestions import design_suggestions

__all__ = ["DesignInputError", "DesignProblem", "DesignResult", "DesignSettings", "DesignSpace",
           "DesignSpaceError", "FittedCandidate", "PlannedRun", "Proposal", "Variable",
           "box_hill", "d_optimal", "design_suggestions", "greedy_runs", "load_candidates",
           "predict_runs", "predictive_moments", "propose", "search"]
