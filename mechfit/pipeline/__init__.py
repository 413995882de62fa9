"""The whole job on one study: fit every candidate, rank them, build the report.

Public surface: :func:`rank_study` (and its generator :func:`rank_study_steps`),
:class:`RankSettings`, :class:`FitSettings`, :class:`StudyRanking`,
:func:`evaluate_candidate`, :func:`report_data`.
"""

from mechfit.pipeline.evaluate import CandidateOutcome, FitSettings, evaluate_candidate
from mechfit.pipeline.ranking_run import (
    Event,
    RankingFailure,
    RankSettings,
    StudyRanking,
    rank_study,
    rank_study_steps,
)

__all__ = ["CandidateOutcome", "Event", "FitSettings", "RankSettings", "RankingFailure",
           "StudyRanking", "evaluate_candidate", "rank_study", "rank_study_steps"]
