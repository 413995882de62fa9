"""The :class:`Study` and its :class:`Run` objects: checked data in canonical units.

A study is what a study file and its tables say, loaded, converted and checked. It
never changes after loading. All numbers are canonical (mol/L, s, K, J/mol, L, W);
the units the file used are kept in :attr:`Study.units` for display.

Layout of a run's data, chosen so a likelihood can simulate once per run:

* :attr:`Run.times` is the sorted set of distinct times (s) at which anything was
  observed in the run; a simulator integrates to these times.
* Each observed quantity is a :class:`Series` whose ``index`` points into
  ``Run.times``; replicates are points with the same time and different
  ``replicate`` labels.
* Model time is data time plus the run's time offset (``Run.time_offset``), and the
  model's initial concentration of each species in ``Run.initial_scale.species``
  is ``scale * Run.initial[X]``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from mechfit.errors import StudyError
from mechfit.study.observables import Observable
from mechfit.study.priors import Prior
from mechfit.study.temperature import TemperatureLaw
from mechfit.study.units import to_canonical


def frozen_array(a, dtype=float) -> np.ndarray:
    """A read-only copy of ``a`` as a numpy array."""
    arr = np.array(a, dtype=dtype)
    arr.setflags(write=False)
    return arr


@dataclass(frozen=True, eq=False)
class Series:
    """The data of one observable in one run (read-only arrays, one entry per point).

    Attributes
    ----------
    observable
        The observable's name.
    times
        Data times in s (sorted; equal times belong to different replicates).
    values
        Observed values in the observable's canonical unit.
    sigma
        Known per-point standard deviations (canonical unit; NaN where the table gave
        none, so the observable's noise model applies), or ``None`` if the table has
        no ``NAME_sd`` column.
    replicate
        Replicate label of each point (0 when the table has no ``replicate`` column).
    index
        Position of each point's time in :attr:`Run.times`.
    lines
        The table line each point came from (for messages and residual listings).
    file
        The table file the points came from.
    """

    observable: str
    times: np.ndarray
    values: np.ndarray
    sigma: np.ndarray | None
    replicate: np.ndarray
    index: np.ndarray
    lines: np.ndarray
    file: str

    def __len__(self) -> int:
        return len(self.values)

    @property
    def replicates(self) -> int:
        """The number of distinct replicate labels."""
        return len(np.unique(self.replicate))


@dataclass(frozen=True)
class TimeOffset:
    """A run's time offset t0 in s: model time = data time + t0 (mixing dead time).

    ``sd`` is ``None`` for a known shift; otherwise t0 is fitted as the parameter
    ``parameter`` with a normal prior (mean ``value``, standard deviation ``sd``).
    """

    value: float
    sd: float | None
    parameter: str

    @property
    def fitted(self) -> bool:
        return self.sd is not None


@dataclass(frozen=True)
class InitialScale:
    """A fitted factor on a run's initial concentrations (stock-solution uncertainty).

    The model's initial concentration of each species in ``species`` is
    ``scale * nominal``; ``scale`` is the parameter ``parameter`` with a normal prior
    of mean 1 and standard deviation ``sd`` (a relative uncertainty).
    """

    species: tuple[str, ...]
    sd: float
    parameter: str


@dataclass(frozen=True, eq=False)
class Run:
    """One experiment: conditions and the data observed in it.

    Attributes
    ----------
    name
        The run's name (unique in the study).
    temperature
        In K.
    initial
        Species -> initial concentration in mol/L (species not listed start at 0).
    times
        Sorted distinct observation times in s.
    series
        Observable name -> :class:`Series`.
    kind
        ``"time_course"`` or ``"initial_rate"`` (one row of an initial-rate table).
    time_offset, initial_scale
        Nuisance parameters, or ``None``.
    volume
        The reaction volume in L (needed by heat-flow observables), or ``None``.
    source
        Where the run's data came from (table file name).
    """

    name: str
    temperature: float
    initial: Mapping[str, float]
    times: np.ndarray
    series: Mapping[str, Series]
    kind: str = "time_course"
    time_offset: TimeOffset | None = None
    initial_scale: InitialScale | None = None
    volume: float | None = None
    source: str = ""

    @property
    def observed(self) -> tuple[str, ...]:
        """Names of the observables with data in this run."""
        return tuple(self.series)

    @property
    def n_points(self) -> int:
        """The number of data points in the run (all observables and replicates)."""
        return sum(len(s) for s in self.series.values())

    @property
    def nuisance_parameters(self) -> tuple[str, ...]:
        """Names of the run's fitted nuisance parameters."""
        out = []
        if self.time_offset is not None and self.time_offset.fitted:
            out.append(self.time_offset.parameter)
        if self.initial_scale is not None:
            out.append(self.initial_scale.parameter)
        return tuple(out)

    def model_times(self, offset: float | None = None) -> np.ndarray:
        """``times`` plus the time offset (its fixed value, or ``offset`` if given)."""
        t0 = offset if offset is not None else (
            self.time_offset.value if self.time_offset else 0.0)
        return self.times + t0

    def initial_vector(self, species, scale: float | None = None) -> np.ndarray:
        """Initial concentrations (mol/L) in the order of ``species``, scale applied.

        ``scale`` defaults to 1 (the nominal values).
        """
        factor = 1.0 if scale is None else float(scale)
        scaled = set(self.initial_scale.species) if self.initial_scale else set()
        return np.array([self.initial.get(s, 0.0) * (factor if s in scaled else 1.0)
                         for s in species])

    def summary(self) -> dict:
        """JSON-safe description of the run."""
        out = {
            "name": self.name,
            "kind": self.kind,
            "temperature_K": self.temperature,
            "initial_mol_per_L": dict(self.initial),
            "n_times": len(self.times),
            "time_range_s": [float(self.times[0]), float(self.times[-1])],
            "points": {name: len(s) for name, s in self.series.items()},
            "replicates": {name: s.replicates for name, s in self.series.items()},
            "source": self.source,
        }
        if self.volume is not None:
            out["volume_L"] = self.volume
        if self.time_offset is not None:
            out["time_offset"] = {"value_s": self.time_offset.value,
                                  "sd_s": self.time_offset.sd,
                                  "parameter": self.time_offset.parameter}
        if self.initial_scale is not None:
            out["initial_scale"] = {"species": list(self.initial_scale.species),
                                    "sd": self.initial_scale.sd,
                                    "parameter": self.initial_scale.parameter}
        return out


@dataclass(frozen=True, eq=False)
class Study:
    """A loaded, checked study: runs, observables, temperature laws and priors.

    Build one with :func:`mechfit.study.load_study`.

    Attributes
    ----------
    title, note
        From the study file.
    path
        The study file as given.
    runs
        The runs, in file order (time-course runs, then initial-rate rows).
    observables
        Name -> :class:`~mechfit.study.observables.Observable`.
    temperature_laws
        Rate constants with a law named in the file -> :class:`TemperatureLaw`.
        Others follow :attr:`default_law` (see :meth:`temperature_law`).
    default_law
        ``"arrhenius"``, ``"eyring"`` or ``"constant"``: the law of rate constants
        not listed. Unless the file says otherwise it is ``"constant"`` when all
        runs share one temperature and ``"arrhenius"`` otherwise.
    reference_temperature
        T_ref in K for Arrhenius laws (default: ``1/T_ref`` = mean of ``1/T`` over
        the runs, which makes ``k_ref`` and ``Ea`` nearly uncorrelated).
    priors
        Parameter name -> :class:`~mechfit.study.priors.Prior`.
    units
        The display units the file used, per kind of quantity.
    warnings
        Things worth saying that are not errors.

    Examples
    --------
    >>> from mechfit.demo import study_path
    >>> from mechfit.study import load_study
    >>> study = load_study(study_path())
    >>> len(study.runs), study.temperatures
    (11, (293.15, 303.15, 313.15))
    >>> run = study.run("r05")
    >>> run.initial["Nu"], run.observed, len(run.series["Prod"])
    (0.3, ('Prod', 'A405'), 16)
    >>> study.temperature_law("k2").parameter_names
    ('k2', 'Ea_k2')
    """

    title: str
    path: str
    runs: tuple[Run, ...]
    observables: Mapping[str, Observable]
    temperature_laws: Mapping[str, TemperatureLaw]
    default_law: str
    reference_temperature: float
    priors: Mapping[str, Prior]
    units: Mapping[str, str]
    note: str = ""
    warnings: tuple[str, ...] = field(default=())

    # ---- views --------------------------------------------------------------
    def run(self, name: str) -> Run:
        """The run called ``name``."""
        for r in self.runs:
            if r.name == name:
                return r
        raise StudyError(f"{self.path}: no run '{name}'; runs: "
                         f"{', '.join(r.name for r in self.runs)}")

    @property
    def temperatures(self) -> tuple[float, ...]:
        """The distinct run temperatures in K, sorted."""
        return tuple(sorted({r.temperature for r in self.runs}))

    @property
    def n_points(self) -> int:
        """All data points of all runs."""
        return sum(r.n_points for r in self.runs)

    @property
    def species(self) -> frozenset[str]:
        """Species the study names (in initial concentrations and observables)."""
        out = set()
        for r in self.runs:
            out |= set(r.initial)
            if r.initial_scale:
                out |= set(r.initial_scale.species)
        for o in self.observables.values():
            out |= o.species
        return frozenset(out)

    def temperature_law(self, constant: str) -> TemperatureLaw:
        """The temperature law of a rate constant (listed in the file, or the default)."""
        if constant in self.temperature_laws:
            return self.temperature_laws[constant]
        ref = self.reference_temperature if self.default_law == "arrhenius" else None
        return TemperatureLaw(constant, self.default_law, ref)

    def rate_constant_laws(self, mechanism) -> dict[str, TemperatureLaw]:
        """The law of every free rate constant of ``mechanism`` (fixed ones keep their value).

        Empirical-law parameters that are not rate constants (orders) are not
        temperature dependent and have no law.
        """
        fixed = mechanism.fixed
        return {c: self.temperature_law(c) for c in mechanism.constants if c not in fixed}

    def parameter_names(self, mechanism) -> dict[str, tuple[str, ...]]:
        """All fitted parameter names for ``mechanism`` with this study, by group.

        Returns
        -------
        dict
            ``"kinetic"`` (temperature-law parameters of the free rate constants, then
            free empirical-law parameters), ``"observable"`` (absorptivities,
            baselines, enthalpies), ``"noise"`` (fitted standard deviations) and
            ``"nuisance"`` (per-run time offsets and initial scales). Parameters with
            a ``fixed`` prior are left out of every group.
        """
        fixed = {n for n, p in self.priors.items() if p.fixed}
        kinetic: list[str] = []
        for law in self.rate_constant_laws(mechanism).values():
            kinetic.extend(law.parameter_names)
        consts = set(mechanism.constants)
        kinetic.extend(p for p in mechanism.law_parameters
                       if p not in mechanism.fixed and p not in consts)
        observable: list[str] = []
        noise: list[str] = []
        for o in self.observables.values():
            if not any(o.name in r.series for r in self.runs):
                continue
            observable.extend(p for p in o.fitted if p not in observable)
            if o.noise.parameter and self._needs_fitted_sigma(o.name):
                noise.append(o.noise.parameter)
        nuisance = [p for r in self.runs for p in r.nuisance_parameters]
        groups = {"kinetic": kinetic, "observable": observable, "noise": noise,
                  "nuisance": nuisance}
        return {k: tuple(dict.fromkeys(n for n in v if n not in fixed))
                for k, v in groups.items()}

    def _needs_fitted_sigma(self, name: str) -> bool:
        for r in self.runs:
            s = r.series.get(name)
            if s is not None and (s.sigma is None or np.isnan(s.sigma).any()):
                return True
        return False

    def validate_against(self, mechanism) -> tuple[str, ...]:
        """Check the study against a mechanism; see :func:`mechfit.study.validation.validate`."""
        from mechfit.study.validation import validate

        return validate(self, mechanism)

    # ---- output -------------------------------------------------------------
    def summary(self) -> dict:
        """A JSON-safe summary: runs, points, observables, units, laws, priors."""
        return {
            "title": self.title,
            "note": self.note,
            "path": self.path,
            "units": dict(self.units),
            "n_runs": len(self.runs),
            "n_points": self.n_points,
            "temperatures_K": list(self.temperatures),
            "runs": [r.summary() for r in self.runs],
            "observables": {n: o.summary() for n, o in self.observables.items()},
            "temperature": {
                "default_law": self.default_law,
                "reference_temperature_K": self.reference_temperature,
                "laws": {c: law.summary() for c, law in self.temperature_laws.items()},
            },
            "priors": {n: p.summary() for n, p in self.priors.items()},
            "warnings": list(self.warnings),
        }

    def report(self) -> str:
        """A readable plain-text summary of the study."""
        u = self.units
        lines = [f"study: {self.title}", f"  file: {self.path}"]
        if self.note:
            lines.append(f"  note: {self.note}")
        lines.append(
            f"  units in the file: concentration {u['concentration']}, time {u['time']}, "
            f"temperature {u['temperature']} (stored as mol/L, s, K)")
        temps = ", ".join(f"{t:.2f}" for t in self.temperatures)
        lines.append(f"  {len(self.runs)} runs, {self.n_points} data points, "
                     f"temperatures (K): {temps}")
        law = self.default_law
        if law == "arrhenius":
            law += f" with T_ref = {self.reference_temperature:.2f} K"
        lines.append(f"  temperature law of rate constants: {law}")
        for c, tl in self.temperature_laws.items():
            lines.append(f"    {c}: {tl.kind}")
        lines.append("  observables:")
        for o in self.observables.values():
            shown_unit = "" if o.canonical_unit == "dimensionless" else f" {o.canonical_unit}"
            noise = (f"sigma {o.noise.sigma:g}{shown_unit} known"
                     if o.noise.kind == "known" else f"sigma fitted ({o.noise.parameter})")
            fitted = f"; fitted: {', '.join(o.fitted)}" if o.fitted else ""
            lines.append(f"    {o.name} [{o.kind}, {o.unit}] = {o.text}; {noise}{fitted}")
        lines.append("  runs:")
        width = max(len(r.name) for r in self.runs)
        c_unit = u["concentration"]
        per_unit = to_canonical(1.0, c_unit, "concentration")
        t_unit = u["time"]
        per_time = to_canonical(1.0, t_unit, "time")
        for r in self.runs:
            init = ", ".join(f"{s} {v / per_unit:.4g}" for s, v in r.initial.items())
            pts = ", ".join(f"{n} {len(s)}" for n, s in r.series.items())
            t_end = r.times[-1] / per_time
            extra = ""
            if r.time_offset is not None:
                extra += " +t0"
            if r.initial_scale is not None:
                extra += " +scale"
            lines.append(f"    {r.name:<{width}}  {r.temperature:7.2f} K  [{init}] mM  "
                         f"to {t_end:.4g} {t_unit}  points: {pts}{extra}")
        if self.priors:
            lines.append("  priors: " + ", ".join(
                f"{n} ({p.distribution})" for n, p in self.priors.items()))
        for w in self.warnings:
            lines.append(f"  note: {w}")
        return "\n".join(lines)


def freeze_mapping(d: dict) -> Mapping:
    """A read-only view of a dict (helper for the loader)."""
    return MappingProxyType(dict(d))


__all__ = ["InitialScale", "Run", "Series", "Study", "TimeOffset", "freeze_mapping",
           "frozen_array"]
