"""Priors given in a study file, parsed and checked for the inference stage to use.

A ``[prior]`` table maps a parameter name to a distribution::

    [prior]
    k1    = { distribution = "lognormal", median = 0.5, sd_log = 2.0, unit = "L/(mol*s)" }
    Ea_k1 = { distribution = "normal", mean = 60, sd = 20, unit = "kJ/mol" }
    eps_P = { distribution = "uniform", low = 0, high = 50, unit = "L/mol" }
    k_2   = { distribution = "loguniform", low = 1e-6, high = 1e2 }
    base  = { distribution = "fixed", value = 0.012 }

``unit`` (optional) is converted to canonical units (mol, L, s, J/mol, K); without it
the numbers are taken as canonical. ``sd_log`` is the standard deviation of the
natural logarithm and has no unit. Names are checked against the mechanism and the
study by :meth:`mechfit.study.Study.validate_against`.

Examples
--------
>>> p = build_prior("Ea_k1", {"distribution": "normal", "mean": 60, "sd": 20,
...                           "unit": "kJ/mol"}, file="s.toml")
>>> p.mean, p.sd
(60000.0, 20000.0)
>>> round(float(p.log_density(60000.0)), 4)
-10.8224
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from scipy import stats

from mechfit.errors import StudyError
from mechfit.study import units as unitmod

#: distribution name -> the keys it needs
DISTRIBUTIONS: dict[str, tuple[str, ...]] = {
    "lognormal": ("median", "sd_log"),
    "normal": ("mean", "sd"),
    "uniform": ("low", "high"),
    "loguniform": ("low", "high"),
    "fixed": ("value",),
}


@dataclass(frozen=True)
class Prior:
    """A prior distribution of one parameter, in canonical units.

    Attributes
    ----------
    name
        The parameter name.
    distribution
        A key of :data:`DISTRIBUTIONS`.
    median, sd_log, mean, sd, low, high, value
        The numbers of that distribution (the others are ``None``).
    unit
        The unit the file gave (for display), or ``None``.
    """

    name: str
    distribution: str
    median: float | None = None
    sd_log: float | None = None
    mean: float | None = None
    sd: float | None = None
    low: float | None = None
    high: float | None = None
    value: float | None = None
    unit: str | None = None

    @property
    def fixed(self) -> bool:
        """True for ``distribution = "fixed"``."""
        return self.distribution == "fixed"

    def frozen(self):
        """The scipy.stats frozen distribution (``None`` for a fixed value)."""
        if self.distribution == "lognormal":
            return stats.lognorm(s=self.sd_log, scale=self.median)
        if self.distribution == "normal":
            return stats.norm(loc=self.mean, scale=self.sd)
        if self.distribution == "uniform":
            return stats.uniform(loc=self.low, scale=self.high - self.low)
        if self.distribution == "loguniform":
            return stats.loguniform(self.low, self.high)
        return None

    def log_density(self, x):
        """Log prior density at ``x`` (vectorised); 0 at the value of a fixed prior."""
        dist = self.frozen()
        if dist is None:
            return np.where(np.asarray(x) == self.value, 0.0, -np.inf)
        return dist.logpdf(x)

    def summary(self) -> dict:
        """JSON-safe description (canonical numbers)."""
        keys = DISTRIBUTIONS[self.distribution]
        out = {"name": self.name, "distribution": self.distribution}
        out.update({k: getattr(self, k) for k in keys})
        if self.unit:
            out["unit_given"] = self.unit
        return out


def build_prior(name: str, spec: Mapping, *, file: str) -> Prior:
    """Build a :class:`Prior` from its entry in the ``[prior]`` table.

    Raises
    ------
    StudyError
        Naming ``file: prior.NAME`` for an unknown distribution, a missing or extra
        key, a non-finite number, ``sd <= 0`` or ``low >= high``.
    """
    where = f"{file}: prior.{name}"
    if not isinstance(spec, Mapping):
        raise StudyError(f"{where}: expected a table such as "
                         "{ distribution = \"normal\", mean = 1, sd = 0.1 }")
    dist = spec.get("distribution")
    if dist not in DISTRIBUTIONS:
        raise StudyError(f"{where}: distribution must be one of "
                         f"{', '.join(DISTRIBUTIONS)}, got {dist!r}")
    need = DISTRIBUTIONS[dist]
    extra = set(spec) - set(need) - {"distribution", "unit"}
    if extra:
        raise StudyError(f"{where}: unknown key(s) {', '.join(sorted(extra))}; a {dist} "
                         f"prior takes {', '.join(need)} (and optionally unit)")
    numbers: dict[str, float] = {}
    for key in need:
        if key not in spec:
            raise StudyError(f"{where}: a {dist} prior needs '{key}'")
        v = spec[key]
        if isinstance(v, bool) or not isinstance(v, int | float) or not math.isfinite(v):
            raise StudyError(f"{where}: {key} must be a finite number, got {v!r}")
        numbers[key] = float(v)
    unit = spec.get("unit")
    if unit is not None:
        factor, _ = unitmod.canonical_factor(unit, where=f"{where}.unit")
        for key in numbers:
            if key != "sd_log":
                numbers[key] *= factor
    if dist == "lognormal" and (numbers["median"] <= 0 or numbers["sd_log"] <= 0):
        raise StudyError(f"{where}: a lognormal prior needs median > 0 and sd_log > 0")
    if dist == "normal" and numbers["sd"] <= 0:
        raise StudyError(f"{where}: sd must be positive")
    if dist in ("uniform", "loguniform") and not numbers["low"] < numbers["high"]:
        raise StudyError(f"{where}: low must be below high")
    if dist == "loguniform" and numbers["low"] <= 0:
        raise StudyError(f"{where}: a loguniform prior needs low > 0")
    return Prior(name=name, distribution=dist, unit=unit, **numbers)
