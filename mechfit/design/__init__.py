"""Choosing the next experiment: discrimination (Box–Hill) and precision (D-optimal)."""

from mechfit.design.criteria import box_hill, d_optimal, predictive_moments
from mechfit.design.search import Proposal, greedy_runs, search
from mechfit.design.space import DesignSpace, DesignSpaceError, Variable

__all__ = ["DesignSpace", "DesignSpaceError", "Proposal", "Variable", "box_hill", "d_optimal",
           "greedy_runs", "predictive_moments", "search"]
