"""Prior distributions of parameters and the default bounds of rate constants.

A prior is a probability density on the parameter's *natural* value (a rate constant
in the study's units, an order, an extinction coefficient). The sampler works in a
transformed space (log for rate constants, see :mod:`mechfit.infer.parameters`);
the change-of-variables term is added there, not here.

Kinds
-----
``LogUniform(low, high)``
    density proportional to 1/x on [low, high]: uniform in log x. The default for rate
    constants (scale invariant: no decade is preferred over another).
``LogNormal(median, sigma)``
    log x is normal with mean ln(median) and standard deviation ``sigma`` (natural-log
    units): "known to within a factor exp(sigma)".
``Normal(mean, sd)``
    a normal density; for positive parameters truncated at zero.
``Uniform(low, high)``
    a flat density on [low, high].
``Fixed(value)``
    not a distribution: the parameter is held at ``value``.

Default bounds of rate constants (common practice)
--------------------------------------------------
The upper bound of a bimolecular constant is the diffusion limit in water,
about 1e10 M^-1 s^-1 (Smoluchowski encounter rate 8RT/(3 eta) = 7.4e9 M^-1 s^-1 for water at
298.15 K, eta = 0.890 mPa s; "about 1e10" is common practice). The upper bound of
a first-order constant is the Eyring frequency k_B T / h (6.2e12 s^-1 at 298.15 K), the rate of
a step with no barrier at all (common practice). Constants of higher order get the
bimolecular bound per extra concentration (a mechfit convention; a true termolecular
encounter is rarer still). The lower bound of every order is 1e-10 M^(1-n) s^-1: a step that
slow converts about 0.3 % of its reactant in a year (a mechfit convention, not a physical
limit; give a prior in the study to change it). Zero-order constants get bounds of
1e-12 to 1e2 M s^-1 (a mechfit convention).

All bounds are given in M and s and converted to the study's units by
:func:`rate_constant_bounds`.

Examples
--------
>>> p = LogUniform(1e-3, 1e3)
>>> round(float(p.logpdf(1.0)), 6)
-2.625792
>>> LogNormal(2.0, 0.1).interval(0.5)[0] < 2.0 < LogNormal(2.0, 0.1).interval(0.5)[1]
True
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np
from scipy import constants, stats

from mechfit.infer.errors import ParameterError

#: diffusion limit of a bimolecular step in water, M^-1 s^-1 (common practice, see module docs)
DIFFUSION_LIMIT_WATER = 1e10
#: slowest rate constant of the default priors, M^(1-n) s^-1 (a mechfit convention)
SLOWEST_RATE_CONSTANT = 1e-10
#: default temperature of the first-order bound when a study gives none, K
STANDARD_TEMPERATURE = 298.15


def eyring_frequency(temperature: float) -> float:
    """k_B T / h in s^-1: the first-order rate constant of a barrier-free step.

    Eyring, J. Chem. Phys. 3 (1935) 107 (transition-state theory, transmission coefficient 1).

    >>> f"{eyring_frequency(298.15):.4e}"
    '6.2124e+12'
    """
    return constants.k * temperature / constants.h


def rate_constant_bounds(
    order: int,
    temperature: float = STANDARD_TEMPERATURE,
    concentration_unit: float = 1.0,
    time_unit: float = 1.0,
) -> tuple[float, float]:
    """Default (low, high) bounds of a rate constant of reaction ``order`` in the study's units.

    Parameters
    ----------
    order
        Sum of the reactant coefficients of the reaction direction (1: first order,
        2: bimolecular...).
    temperature
        The highest temperature of the study in K (the first-order bound grows with T).
    concentration_unit, time_unit
        The study's units in mol/L and s (mM -> 1e-3, min -> 60).

    Notes
    -----
    A constant of order n in M^(1-n) s^-1 becomes ``k * c_u**(n-1) * t_u`` in units of
    c_u^(1-n) t_u^-1.

    Examples
    --------
    >>> rate_constant_bounds(2)
    (1e-10, 10000000000.0)
    >>> rate_constant_bounds(2, concentration_unit=1e-3)[1]
    10000000.0
    """
    if order == 0:
        low, high = 1e-12, 1e2
    elif order == 1:
        low, high = SLOWEST_RATE_CONSTANT, eyring_frequency(temperature)
    else:
        low, high = SLOWEST_RATE_CONSTANT, DIFFUSION_LIMIT_WATER
    scale = concentration_unit ** (order - 1) * time_unit
    return low * scale, high * scale


@dataclass(frozen=True)
class Prior:
    """Base class: a density on the natural value of one parameter."""

    def distribution(self) -> stats.rv_continuous:  # pragma: no cover - overridden
        raise NotImplementedError

    @property
    def kind(self) -> str:
        return type(self).__name__

    def logpdf(self, x: np.ndarray | float) -> np.ndarray:
        """Log density at natural values ``x`` (``-inf`` outside the support)."""
        return self.distribution().logpdf(x)

    def sample(self, rng: np.random.Generator, size: int) -> np.ndarray:
        """``size`` independent draws."""
        return np.asarray(self.distribution().rvs(size=size, random_state=rng), dtype=float)

    def quantile(self, q: np.ndarray | float) -> np.ndarray:
        """The inverse distribution function (maps a unit-cube design into the prior)."""
        return self.distribution().ppf(q)

    def interval(self, mass: float) -> tuple[float, float]:
        """The central interval holding ``mass`` of the prior."""
        low, high = self.distribution().interval(mass)
        return float(low), float(high)

    @property
    def support(self) -> tuple[float, float]:
        low, high = self.distribution().support()
        return float(low), float(high)

    def describe(self) -> dict:
        """A JSON-safe description."""
        out = {"kind": self.kind}
        out.update({f.name: float(getattr(self, f.name)) for f in fields(self)})
        return out

    def text(self) -> str:
        args = ", ".join(f"{getattr(self, f.name):.4g}" for f in fields(self))
        return f"{self.kind}({args})"


def _check_order(name: str, low: float, high: float) -> None:
    if not (math.isfinite(low) and math.isfinite(high) and low < high):
        raise ParameterError(f"{name} prior needs finite low < high, got {low!r}, {high!r}")


@dataclass(frozen=True)
class LogUniform(Prior):
    """Density proportional to 1/x on [low, high] (0 < low < high)."""

    low: float
    high: float

    def __post_init__(self) -> None:
        _check_order("log-uniform", self.low, self.high)
        if self.low <= 0:
            raise ParameterError(f"log-uniform prior needs low > 0, got {self.low!r}")

    def distribution(self):
        return stats.loguniform(self.low, self.high)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            out = -np.log(x) - math.log(math.log(self.high / self.low))
        return np.where((x >= self.low) & (x <= self.high), out, -np.inf)


@dataclass(frozen=True)
class Uniform(Prior):
    """Flat density on [low, high]."""

    low: float
    high: float

    def __post_init__(self) -> None:
        _check_order("uniform", self.low, self.high)

    def distribution(self):
        return stats.uniform(loc=self.low, scale=self.high - self.low)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        inside = (x >= self.low) & (x <= self.high)
        return np.where(inside, -math.log(self.high - self.low), -np.inf)


@dataclass(frozen=True)
class LogNormal(Prior):
    """ln x ~ Normal(ln median, sigma); ``sigma`` in natural-log units."""

    median: float
    sigma: float

    def __post_init__(self) -> None:
        if not (self.median > 0 and self.sigma > 0):
            raise ParameterError(
                f"log-normal prior needs median > 0 and sigma > 0, got {self.median!r}, "
                f"{self.sigma!r}")

    def distribution(self):
        return stats.lognorm(s=self.sigma, scale=self.median)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = (np.log(x) - math.log(self.median)) / self.sigma
            out = -0.5 * z**2 - np.log(x) - math.log(self.sigma * math.sqrt(2 * math.pi))
        return np.where(x > 0, out, -np.inf)


@dataclass(frozen=True)
class Normal(Prior):
    """Normal(mean, sd); with ``positive=True`` truncated to x > 0."""

    mean: float
    sd: float
    positive: bool = False

    def __post_init__(self) -> None:
        if not (self.sd > 0 and math.isfinite(self.mean)):
            raise ParameterError(f"normal prior needs sd > 0, got {self.sd!r}")

    def distribution(self):
        if self.positive:
            return stats.truncnorm(-self.mean / self.sd, np.inf, loc=self.mean, scale=self.sd)
        return stats.norm(loc=self.mean, scale=self.sd)

    def logpdf(self, x):
        x = np.asarray(x, dtype=float)
        z = (x - self.mean) / self.sd
        out = -0.5 * z**2 - math.log(self.sd * math.sqrt(2 * math.pi))
        if self.positive:
            out = np.where(x > 0, out - float(stats.norm.logsf(-self.mean / self.sd)), -np.inf)
        return out

    def describe(self) -> dict:
        return {"kind": "Normal", "mean": float(self.mean), "sd": float(self.sd),
                "positive": bool(self.positive)}

    def text(self) -> str:
        return f"Normal({self.mean:.4g}, {self.sd:.4g}{', x > 0' if self.positive else ''})"


@dataclass(frozen=True)
class Fixed(Prior):
    """The parameter is held at ``value`` (not sampled, not fitted)."""

    value: float

    def logpdf(self, x):
        return np.where(np.asarray(x) == self.value, 0.0, -np.inf)

    def sample(self, rng, size):
        return np.full(size, float(self.value))

    def quantile(self, q):
        return np.full(np.shape(q), float(self.value))

    def interval(self, mass):
        return float(self.value), float(self.value)

    @property
    def support(self):
        return float(self.value), float(self.value)


def prior_from_spec(spec: dict, *, positive: bool = False, where: str = "prior") -> Prior:
    """Build a prior from a plain mapping such as a study file's table.

    Accepted: ``{"kind": "lognormal", "median": m, "sigma": s}``,
    ``{"kind": "normal", "mean": m, "sd": s}``, ``{"kind": "uniform", "low": a, "high": b}``,
    ``{"kind": "loguniform", "low": a, "high": b}``, ``{"kind": "fixed", "value": v}``.

    >>> prior_from_spec({"kind": "lognormal", "median": 2.0, "sigma": 0.5}).text()
    'LogNormal(2, 0.5)'
    """
    kinds = {"lognormal": (LogNormal, ("median", "sigma")),
             "normal": (Normal, ("mean", "sd")),
             "uniform": (Uniform, ("low", "high")),
             "loguniform": (LogUniform, ("low", "high")),
             "fixed": (Fixed, ("value",))}
    kind = str(spec.get("kind", "")).lower().replace("-", "").replace("_", "")
    if kind not in kinds:
        raise ParameterError(
            f"{where}: unknown prior kind {spec.get('kind')!r}; expected one of "
            + ", ".join(sorted(kinds)))
    cls, fields = kinds[kind]
    missing = [f for f in fields if f not in spec]
    extra = [k for k in spec if k not in (*fields, "kind")]
    if missing or extra:
        raise ParameterError(
            f"{where}: a {kind} prior takes {', '.join(fields)}"
            + (f"; missing {', '.join(missing)}" if missing else "")
            + (f"; unknown {', '.join(extra)}" if extra else ""))
    try:
        values = [float(spec[f]) for f in fields]
    except (TypeError, ValueError) as err:
        raise ParameterError(f"{where}: prior values must be numbers ({err})") from None
    if cls is Normal:
        return Normal(*values, positive=positive)
    return cls(*values)
