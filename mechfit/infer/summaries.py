"""Per-parameter summaries and derived quantities with posterior uncertainty.

Every function here works on an :class:`arviz.InferenceData` written by
:mod:`mechfit.infer.inference_data` (so it works as well on a netCDF file read
back later). A summary gives the posterior median and the 95 % highest-density
interval (:func:`arviz.hdi`), with the maximum-likelihood value and its asymptotic
standard error when the fit is recorded.

Derived quantities are computed draw by draw, so their intervals carry the full
posterior uncertainty (correlations included):

* a rate constant at chosen temperatures, through the study's temperature law
  (:class:`mechfit.study.temperature.TemperatureLaw`);
* Ea, ΔH‡, ΔS‡ and ΔG‡ at 298.15 K (Eyring equation, transmission coefficient 1,
  standard state 1 mol/L), with the formulas of :mod:`mechfit.study.temperature`;
* the equilibrium constant K = k_forward / k_reverse of each two-way step;
* half-lives.

The temperature formulas are those of :mod:`mechfit.study.temperature` (reused, not
repeated here).
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from mechfit.infer.diagnostics import arviz
from mechfit.infer.errors import ParameterError

HDI_PROB = 0.95
STANDARD_TEMPERATURE = 298.15


@dataclass(frozen=True)
class Summary:
    """Posterior median, 95 % HDI and, when known, the MLE and its standard error."""

    name: str
    median: float
    hdi_low: float
    hdi_high: float
    mle: float | None = None
    se: float | None = None
    unit: str = ""

    def summary(self) -> dict:
        """The JSON object of ``mechfit fit --json`` for one parameter."""
        return {"median": self.median, "hdi_low": self.hdi_low, "hdi_high": self.hdi_high,
                "mle": self.mle, "se": self.se}

    def text(self) -> str:
        mle = "" if self.mle is None else f"   MLE {self.mle:.5g} ± {self.se:.2g}"
        unit = f" {self.unit}" if self.unit else ""
        return (f"{self.name:<14} {self.median:>12.5g}  [{self.hdi_low:.5g}, "
                f"{self.hdi_high:.5g}]{unit}{mle}")


def summarise_draws(name: str, draws: np.ndarray, *, mle: float | None = None,
                    se: float | None = None, unit: str = "",
                    hdi_prob: float = HDI_PROB) -> Summary:
    """Median and HDI of draws of shape (chain, draw) or flat.

    Examples
    --------
    >>> draws = np.random.default_rng(0).normal(5.0, 1.0, size=(4, 5000))
    >>> s = summarise_draws("x", draws)
    >>> round(s.median, 1), round(s.hdi_low, 1), round(s.hdi_high, 1)
    (5.0, 3.1, 7.0)
    """
    az = arviz()
    flat = np.asarray(draws, dtype=float).ravel()
    flat = flat[np.isfinite(flat)]
    if flat.size < 2:
        return Summary(name, math.nan, math.nan, math.nan, mle, se, unit)
    low, high = az.hdi(flat, hdi_prob=hdi_prob)
    return Summary(name, float(np.median(flat)), float(low), float(high), mle, se, unit)


def posterior_values(idata) -> dict[str, np.ndarray]:
    """Draws of every parameter by name, (chain, draw); fixed ones broadcast from constant_data."""
    post = idata.posterior
    out = {n: np.asarray(post[n].values) for n in post.data_vars}
    shape = next(iter(out.values())).shape if out else (1, 1)
    if hasattr(idata, "constant_data"):
        for n in idata.constant_data.data_vars:
            if n.startswith("fixed_"):
                value = float(idata.constant_data[n].values.ravel()[0])
                out[n[len("fixed_"):]] = np.full(shape, value)
    return out


def maximum_likelihood_record(idata) -> dict:
    """The maximum-likelihood summary stored in the posterior attributes ({} if none)."""
    text = idata.posterior.attrs.get("maximum_likelihood")
    return json.loads(text) if text else {}


def summarise_parameters(idata, *, names: Sequence[str] | None = None,
                         units: Mapping[str, str] | None = None) -> dict[str, Summary]:
    """A :class:`Summary` of each parameter in the posterior (or of ``names``)."""
    values = posterior_values(idata)
    record = maximum_likelihood_record(idata).get("parameters", {})
    units = dict(units or {})
    chosen = list(names) if names is not None else list(idata.posterior.data_vars)
    out = {}
    for n in chosen:
        if n not in values:
            raise ParameterError(f"no posterior draws for {n!r}", (n,))
        rec = record.get(n, {})
        out[n] = summarise_draws(n, values[n], mle=rec.get("mle"), se=rec.get("se"),
                                 unit=units.get(n, ""))
    return out


def derived_quantity(idata, name: str, function: Callable[[dict], np.ndarray], *,
                     unit: str = "") -> Summary:
    """Summary of ``function(values)`` evaluated on every draw (values: name -> array)."""
    with np.errstate(all="ignore"):
        draws = np.asarray(function(posterior_values(idata)), dtype=float)
    return summarise_draws(name, draws, unit=unit)


def half_life(rate_constant, order: float = 1.0, initial=None, coefficient: float = 1.0):
    """Time for a reactant to fall to half its initial concentration.

    For ``d[A]/dt = -nu k [A]^n`` (rate convention of :mod:`mechfit.derive.model`):
    ``ln 2 / (nu k)`` for n = 1, and ``(2^(n-1) - 1) / ((n-1) nu k [A]0^(n-1))`` otherwise
    (integrated rate laws; Laidler, *Chemical Kinetics*, 3rd ed., 1987, ch. 2).

    Examples
    --------
    >>> round(float(half_life(0.1)), 4)
    6.9315
    >>> float(half_life(2.0, order=2, initial=0.5))
    1.0
    """
    k = np.asarray(rate_constant, dtype=float) * coefficient
    if order == 1:
        return math.log(2.0) / k
    if initial is None:
        raise ParameterError(f"a half-life of order {order} needs the initial concentration")
    n = float(order)
    return (2.0 ** (n - 1) - 1) / ((n - 1) * k * np.asarray(initial, float) ** (n - 1))


def equilibrium_constants(mechanism) -> dict[str, tuple[str, float, str, float]]:
    """Two-way mass-action steps -> (forward name, factor, reverse name, factor)."""
    out = {}
    for step in mechanism.steps:
        if step.reversible and step.law is None:
            out[step.label] = (step.forward.name, step.forward.factor,
                               step.reverse.name, step.reverse.factor)
    return out


def derived_quantities(
    idata,
    *,
    mechanism=None,
    laws: Mapping | None = None,
    temperatures: Sequence[float] = (),
    half_lives: Mapping[str, tuple[float, float | None]] | None = None,
    standard_temperature: float = STANDARD_TEMPERATURE,
) -> dict[str, Summary]:
    """The usual derived quantities of a kinetic fit, each with its posterior summary.

    Parameters
    ----------
    idata
        The posterior.
    mechanism
        For the equilibrium constants of two-way steps (``K_<step>``).
    laws
        Rate-constant name -> :class:`mechfit.study.temperature.TemperatureLaw`. For each:
        ``k(T)`` at ``temperatures`` (``<k>@<T>K``), and ``Ea``, ``dH``, ``dS`` and ``dG`` of
        activation at ``standard_temperature`` (a ``"constant"`` law gives ``dG`` only).
    half_lives
        Rate-constant name -> (order, initial concentration or None): ``t_half_<k>``.
    """
    from mechfit.study import temperature as tl

    values = posterior_values(idata)
    out: dict[str, Summary] = {}
    T0 = float(standard_temperature)

    def add(name, draws, unit):
        with np.errstate(all="ignore"):
            out[name] = summarise_draws(name, np.asarray(draws, float), unit=unit)

    laws = dict(laws or {})
    for const, law in laws.items():
        names = law.parameter_names
        if not all(n in values for n in names):
            continue
        v = {n: values[n] for n in names}
        for T in temperatures:
            add(f"{const}@{T:g}K", law.rate_constant(v, float(T)), "canonical k")
        k0 = law.rate_constant(v, T0)
        if law.kind == "arrhenius":
            ea = v[f"Ea_{const}"]
            prefactor = tl.arrhenius_prefactor(v[const], ea, law.reference_temperature)
            dh, ds = tl.eyring_from_arrhenius(ea, prefactor, T0)
        elif law.kind == "eyring":
            dh, ds = v[f"dH_{const}"], v[f"dS_{const}"]
            ea = dh + tl.GAS_CONSTANT * T0
        else:
            ea = dh = ds = None
        if ea is not None:
            add(f"Ea_{const}", ea, "J/mol")
            add(f"dH_{const}", dh, "J/mol")
            add(f"dS_{const}", ds, "J/(mol K)")
        add(f"dG_{const}@{T0:g}K", tl.gibbs_energy_of_activation(k0, T0), "J/mol")
    if mechanism is not None:
        for label, (kf, ff, kr, fr) in equilibrium_constants(mechanism).items():
            if kf in values and kr in values:
                add(f"K_{label}", ff * values[kf] / (fr * values[kr]), "canonical")
            elif kf in laws and kr in laws:
                vf = {n: values[n] for n in laws[kf].parameter_names if n in values}
                vr = {n: values[n] for n in laws[kr].parameter_names if n in values}
                if (len(vf) == len(laws[kf].parameter_names)
                        and len(vr) == len(laws[kr].parameter_names)):
                    add(f"K_{label}@{T0:g}K", ff * laws[kf].rate_constant(vf, T0)
                        / (fr * laws[kr].rate_constant(vr, T0)), "canonical")
    for const, (order, initial) in (half_lives or {}).items():
        if const in values:
            add(f"t_half_{const}", half_life(values[const], order, initial), "s")
    return out
