r"""Verdicts in plain words, and the thresholds behind them.

The ordering uses one primary criterion, the PSIS-LOO estimate of the expected log
predictive density on data points (``elpd_loo``, larger is better); AICc is the
cross-check. A candidate gets one of four verdicts:

``fails to describe the data``
    Its residuals are structured (runs test or lag-1 autocorrelation, see
    :mod:`mechfit.compare.residuals`), whatever its rank: the rate law misses a feature
    of the curves.
``best supported``
    First by ``elpd_loo`` (and residuals not structured), after the one-standard-error
    rule of :func:`mechfit.compare.ranking.parsimonious_choice`: a candidate with fewer
    parameters within one standard error of the highest elpd_loo is ranked first.
``not distinguishable from the best``
    :math:`\Delta = \mathrm{elpd}_\text{best}-\mathrm{elpd} \le 4`, or
    :math:`\Delta \le 2\,\mathrm{SE}(\Delta)`. Differences below 4 are too small for the
    standard error to be trusted (Sivula, Magnusson, Matamoros & Vehtari, "Uncertainty in
    Bayesian leave-one-out cross-validation based model comparison", arXiv:2008.10296,
    2020-2023); above that the difference is judged against its standard error (Vehtari,
    Gelman & Gabry, Stat. Comput. 27 (2017) 1413, eqs. 23-24 for the standard errors; two
    standard errors, the usual ~95% normal band, is common practice).
``clearly worse``
    :math:`\Delta > 4` and :math:`\Delta > 2\,\mathrm{SE}(\Delta)`.

AICc cross-check (Burnham & Anderson, *Model Selection and Multimodel Inference*, 2nd ed.
2002, section 2.6, p. 70, recalled from memory; restated in Burnham & Anderson,
"Multimodel inference", Sociol. Methods Res. 33 (2004) 261, pp. 270-271):
:math:`\Delta\mathrm{AICc} \le 2` substantial support, 4-7 considerably less, > 10
essentially none. When the cross-check contradicts the primary verdict (not
distinguishable by elpd_loo but ΔAICc > 10, or clearly worse by elpd_loo but
ΔAICc <= 2) the verdict follows elpd_loo and a reason says so.

Examples
--------
>>> criterion_verdict(0, elpd_difference=0.0, elpd_difference_se=0.0)
'best supported'
>>> criterion_verdict(2, elpd_difference=9.0, elpd_difference_se=6.0)
'not distinguishable from the best'
>>> criterion_verdict(3, elpd_difference=30.0, elpd_difference_se=6.0)
'clearly worse'
>>> aicc_support(5.1)
'considerably less support'
"""

from __future__ import annotations

BEST = "best supported"
NOT_DISTINGUISHABLE = "not distinguishable from the best"
CLEARLY_WORSE = "clearly worse"
FAILS = "fails to describe the data"

#: the four verdicts, from best to worst
VERDICTS = (BEST, NOT_DISTINGUISHABLE, CLEARLY_WORSE, FAILS)

#: elpd differences at or below this are small (Sivula et al. 2020)
ELPD_SMALL_DIFFERENCE = 4.0
#: differences within this many standard errors are not distinguishable (common practice)
ELPD_SE_MULTIPLE = 2.0
#: ΔAICc bands (Burnham & Anderson 2002): upper ends of substantial / considerably less
AICC_SUBSTANTIAL = 2.0
AICC_CONSIDERABLY_LESS = (4.0, 7.0)
AICC_NONE = 10.0

#: the thresholds with their sources, as written into ranking summaries
THRESHOLDS = {
    "elpd_small_difference": {
        "value": ELPD_SMALL_DIFFERENCE,
        "source": "Sivula, Magnusson, Matamoros & Vehtari, Uncertainty in Bayesian "
                  "leave-one-out cross-validation based model comparison, arXiv:2008.10296"},
    "elpd_se_multiple": {
        "value": ELPD_SE_MULTIPLE,
        "source": "Vehtari, Gelman & Gabry 2017, Stat. Comput. 27:1413, eqs. 23-24 "
                  "(two standard errors: common practice)"},
    "pareto_k_unreliable": {
        "value": 0.7, "source": "Vehtari, Gelman & Gabry 2017, Stat. Comput. 27:1413, sec. 2.1"},
    "delta_aicc_substantial": {
        "value": AICC_SUBSTANTIAL,
        "source": "Burnham & Anderson 2002, Model Selection and Multimodel Inference, 2nd ed., "
                  "sec. 2.6"},
    "delta_aicc_considerably_less": {
        "value": list(AICC_CONSIDERABLY_LESS),
        "source": "Burnham & Anderson 2002, Model Selection and Multimodel Inference, 2nd ed., "
                  "sec. 2.6"},
    "delta_aicc_essentially_none": {
        "value": AICC_NONE,
        "source": "Burnham & Anderson 2002, Model Selection and Multimodel Inference, 2nd ed., "
                  "sec. 2.6"},
}


def criterion_verdict(rank: int, *, elpd_difference: float, elpd_difference_se: float) -> str:
    """The verdict from the primary criterion alone (residuals not considered).

    Parameters
    ----------
    rank
        0 for the first candidate by ``elpd_loo``.
    elpd_difference
        elpd of the best minus elpd of this candidate (>= 0).
    elpd_difference_se
        Standard error of that difference.
    """
    if rank == 0:
        return BEST
    if (elpd_difference <= ELPD_SMALL_DIFFERENCE
            or elpd_difference <= ELPD_SE_MULTIPLE * elpd_difference_se):
        return NOT_DISTINGUISHABLE
    return CLEARLY_WORSE


def aicc_support(delta_aicc: float) -> str:
    """Burnham & Anderson's wording for a ΔAICc (the gaps 2-4 and 7-10 are named too).

    Examples
    --------
    >>> [aicc_support(d) for d in (0.0, 3.0, 8.0, 12.0)]
    ['substantial support', 'between substantial and considerably less support', \
'between considerably less and essentially no support', 'essentially no support']
    """
    low, high = AICC_CONSIDERABLY_LESS
    if delta_aicc <= AICC_SUBSTANTIAL:
        return "substantial support"
    if delta_aicc < low:
        return "between substantial and considerably less support"
    if delta_aicc <= high:
        return "considerably less support"
    if delta_aicc <= AICC_NONE:
        return "between considerably less and essentially no support"
    return "essentially no support"


def cross_check_disagrees(verdict: str, delta_aicc: float) -> bool:
    """True when ΔAICc contradicts the elpd_loo verdict.

    Examples
    --------
    >>> cross_check_disagrees(NOT_DISTINGUISHABLE, 14.0), cross_check_disagrees(CLEARLY_WORSE, 1.0)
    (True, True)
    """
    if verdict in (BEST, NOT_DISTINGUISHABLE):
        return delta_aicc > AICC_NONE
    if verdict == CLEARLY_WORSE:
        return delta_aicc <= AICC_SUBSTANTIAL
    return False
