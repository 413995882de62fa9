"""Parameter rows and identifiability notes from a posterior sample.

* The 95% highest-density interval (HDI) is the shortest interval holding 95% of the
  draws, computed with :func:`arviz.hdi` (Kruschke, *Doing Bayesian Data Analysis*,
  2nd ed., 2015, sec. 4.3.4).
* Identifiability: a pair of parameters whose posterior correlation (of the log
  values when both are positive, as rate constants are) exceeds 0.9 in size is
  determined by the data only in combination; the note names the pair
  (common practice; see e.g. Bates & Watts, *Nonlinear Regression Analysis*, 1988,
  sec. 3.5 on parameter correlation).

Examples
--------
>>> import numpy as np
>>> rng = np.random.default_rng(1)
>>> a = rng.lognormal(0.0, 0.5, 2000)
>>> draws = {"k1": a, "k_1": 3.0 * a * rng.lognormal(0.0, 0.05, 2000)}
>>> correlation_notes(draws)[0][:40]
'k1 and k_1 are strongly correlated (corr'
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from mechfit.report.data import ParameterRow
from mechfit.report.figures.posterior import arviz_module, posterior_draws

#: size of a posterior correlation above which a pair is reported
CORRELATION_THRESHOLD = 0.9


def highest_density_interval(draws, probability: float = 0.95) -> tuple[float, float]:
    """The HDI of 1-d draws (arviz.hdi).

    Examples
    --------
    >>> low, high = highest_density_interval(np.linspace(0.0, 1.0, 1001), 0.5)
    >>> round(high - low, 2)
    0.5
    """
    values = np.asarray(draws, dtype=float).reshape(-1)
    low, high = arviz_module().hdi(values, hdi_prob=probability)
    return float(low), float(high)


def parameter_rows(posterior, *, mle: Mapping[str, float] | None = None,
                   mle_se: Mapping[str, float] | None = None,
                   units: Mapping[str, str] | None = None,
                   variables: Sequence[str] | None = None,
                   probability: float = 0.95) -> list[ParameterRow]:
    """One :class:`ParameterRow` per parameter: median, HDI, and the given MLE and SE.

    ``posterior`` is InferenceData or a mapping name -> draws.
    """
    draws = posterior_draws(posterior, variables)
    mle, mle_se, units = mle or {}, mle_se or {}, units or {}
    rows = []
    for name, values in draws.items():
        low, high = highest_density_interval(values, probability)
        rows.append(ParameterRow(name, float(np.median(values)), low, high,
                                 mle.get(name), mle_se.get(name), units.get(name, "")))
    return rows


def correlation_notes(posterior, variables: Sequence[str] | None = None,
                      threshold: float = CORRELATION_THRESHOLD) -> list[str]:
    """Sentences naming the pairs of parameters with |correlation| above ``threshold``."""
    draws = posterior_draws(posterior, variables)
    names = list(draws)
    shown = {}
    for name in names:
        v = draws[name]
        shown[name] = np.log(v) if np.all(v > 0) else v
    notes = []
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            x, y = shown[a], shown[b]
            if np.std(x) == 0 or np.std(y) == 0:
                continue
            r = float(np.corrcoef(x, y)[0, 1])
            if abs(r) > threshold:
                scale = "log values" if (np.all(draws[a] > 0) and np.all(draws[b] > 0)) \
                    else "values"
                notes.append(f"{a} and {b} are strongly correlated (correlation of the "
                             f"{scale} {r:+.2f}): the data fix a combination of the two "
                             "better than either alone.")
    return notes
