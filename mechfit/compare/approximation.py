"""Whether a reduced variant (steady state, pre-equilibrium) is valid where the data were taken.

A reduced rate law is an approximation of the full mass-action scheme. The caller measures
how far it strays, as the largest relative deviation of the reduced model's predictions
from the full model's at the fitted parameters over the runs of the study, and says how
much it tolerates; the check only compares the two numbers, so that the ranking can flag a
reduced variant that wins outside its range of validity.

Examples
--------
>>> check = approximation_check(0.12, 0.05)
>>> check.valid
False
>>> check.describe()[:70]
'the reduced rate law deviates from the full mechanism by up to 12% (to'
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from mechfit.compare.errors import ComparisonError


@dataclass(frozen=True)
class ApproximationCheck:
    """Largest relative deviation of a reduced variant from the full model, and its tolerance.

    Attributes
    ----------
    deviation, threshold
        Both as fractions (0.05 is 5%).
    valid
        ``deviation <= threshold``.
    """

    deviation: float
    threshold: float

    @property
    def valid(self) -> bool:
        """True when the deviation stays within the tolerance."""
        return self.deviation <= self.threshold

    def describe(self) -> str:
        """One plain sentence for the report."""
        verb = "stays within" if self.valid else "deviates from"
        return (f"the reduced rate law {verb} the full mechanism by up to "
                f"{self.deviation:.0%} (tolerance {self.threshold:.0%}) under the conditions "
                "studied")

    def summary(self) -> dict:
        """JSON-safe dictionary with ``deviation``, ``threshold`` and ``valid``."""
        return {"deviation": self.deviation, "threshold": self.threshold, "valid": self.valid}


def approximation_check(deviation: float | None,
                        threshold: float | None) -> ApproximationCheck | None:
    """Build the check; ``None`` when no deviation is given (the full model, or unchecked).

    Raises
    ------
    ComparisonError
        A deviation without a threshold, or a value that is negative or not finite.

    Examples
    --------
    >>> approximation_check(None, None) is None
    True
    """
    if deviation is None:
        return None
    if threshold is None:
        raise ComparisonError("an approximation deviation needs a threshold to compare with",
                              names=("approximation_threshold",))
    for field, value in (("approximation_deviation", deviation),
                         ("approximation_threshold", threshold)):
        if not math.isfinite(float(value)) or float(value) < 0:
            raise ComparisonError(f"{field} must be a finite fraction >= 0, got {value!r}",
                                  names=(field,))
    return ApproximationCheck(float(deviation), float(threshold))
