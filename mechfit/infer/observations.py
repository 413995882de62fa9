"""The two things inference needs from the outside: the data and a model function.

:class:`Observations` is every measured value of a study flattened into one vector,
with, per point, its observable, its run and its time, plus the run conditions.

:class:`ModelFunction` maps a batch of natural parameter vectors to the predicted
value of every data point, in the same order: ``predict(x)`` with ``x`` of shape
``(m, P)`` (columns in ``parameter_names`` order) returns shape ``(m, n)``. A model
that can also give d prediction / d parameter (forward sensitivities of the
simulator, or a closed-form derivative) supplies ``sensitivities(x)`` returning
``(prediction (m, n), jacobian (m, n, P))``; the least-squares search then uses it
as its Jacobian. A failed prediction (integration failure) is NaN or inf in its row.

Examples
--------
>>> import numpy as np
>>> t = np.array([0.0, 1.0, 2.0])
>>> obs = Observations.single(t, np.array([1.0, 0.37, 0.14]))
>>> decay = ModelFunction(("A", "k"), lambda x: x[:, :1] * np.exp(-x[:, 1:] * t))
>>> decay.predict(np.array([[1.0, 1.0]])).round(3)
array([[1.   , 0.368, 0.135]])
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import numpy as np

from mechfit.infer.errors import LikelihoodError


@dataclass(frozen=True)
class Observations:
    """Measured values of a study as one flat vector.

    Attributes
    ----------
    values
        The measured values, shape (n,).
    observable, run
        Integer index of each point into ``observable_names`` / ``run_names``.
    time
        The time of each point (NaN where a point has no time, e.g. an initial rate).
    observable_names, run_names
        Names, in index order.
    conditions
        Run conditions, name -> array of shape (n_runs,) (initial concentrations,
        temperature...). Stored as ``constant_data`` in the InferenceData.
    units
        Unit text per quantity (``{"time": "min", "concentration": "mM"}``), for reports.
    sigma
        Known standard deviation of each point (NaN where the observable's error model
        applies), or ``None``. Known values take precedence over the error model.
    """

    values: np.ndarray
    observable: np.ndarray
    run: np.ndarray
    time: np.ndarray
    observable_names: tuple[str, ...]
    run_names: tuple[str, ...]
    conditions: Mapping[str, np.ndarray] = field(default_factory=dict)
    units: Mapping[str, str] = field(default_factory=dict)
    sigma: np.ndarray | None = None

    def __post_init__(self) -> None:
        values = np.asarray(self.values, dtype=float).ravel()
        n = values.size
        for name in ("observable", "run"):
            a = np.asarray(getattr(self, name), dtype=int).ravel()
            if a.size != n:
                raise LikelihoodError(f"observations: {name} has {a.size} entries, values {n}")
            object.__setattr__(self, name, a)
        time = np.asarray(self.time, dtype=float).ravel()
        if time.size != n:
            raise LikelihoodError(f"observations: time has {time.size} entries, values {n}")
        if n == 0:
            raise LikelihoodError("observations: no data points")
        if not np.all(np.isfinite(values)):
            bad = int(np.flatnonzero(~np.isfinite(values))[0])
            raise LikelihoodError(f"observations: value {bad} is not a finite number")
        if self.observable.max() >= len(self.observable_names) or self.observable.min() < 0:
            raise LikelihoodError("observations: observable index out of range")
        if self.run.max() >= len(self.run_names) or self.run.min() < 0:
            raise LikelihoodError("observations: run index out of range")
        conditions = {}
        for key, val in dict(self.conditions).items():
            arr = np.asarray(val)
            if arr.shape[:1] != (len(self.run_names),):
                raise LikelihoodError(
                    f"observations: condition {key!r} needs one value per run "
                    f"({len(self.run_names)}), got shape {arr.shape}")
            conditions[key] = arr
        if self.sigma is not None:
            sigma = np.asarray(self.sigma, dtype=float).ravel()
            if sigma.size != n:
                raise LikelihoodError(f"observations: sigma has {sigma.size} entries, values {n}")
            if np.any(sigma[np.isfinite(sigma)] <= 0):
                raise LikelihoodError("observations: known standard deviations must be > 0")
            object.__setattr__(self, "sigma", sigma if np.isfinite(sigma).any() else None)
        object.__setattr__(self, "values", values)
        object.__setattr__(self, "time", time)
        object.__setattr__(self, "observable_names", tuple(self.observable_names))
        object.__setattr__(self, "run_names", tuple(self.run_names))
        object.__setattr__(self, "conditions", conditions)
        object.__setattr__(self, "units", dict(self.units))

    @classmethod
    def single(cls, time: np.ndarray, values: np.ndarray, observable: str = "y",
               run: str = "run1") -> Observations:
        """One run with one observable."""
        values = np.asarray(values, dtype=float)
        return cls(values, np.zeros(values.size, int), np.zeros(values.size, int),
                   np.asarray(time, dtype=float), (observable,), (run,))

    @property
    def n(self) -> int:
        return int(self.values.size)

    def count(self, observable: int) -> int:
        """Number of points of one observable."""
        return int(np.count_nonzero(self.observable == observable))


@dataclass(frozen=True)
class ModelFunction:
    """Predictions for a batch of parameter vectors (see the module docs).

    Attributes
    ----------
    parameter_names
        Names of the columns of ``x`` the model takes.
    predict
        ``x (m, P) -> prediction (m, n)``.
    sensitivities
        Optional ``x (m, P) -> (prediction (m, n), d prediction / d x (m, n, P))``.
    search_sensitivities
        Optional cheaper, less accurate ``sensitivities`` (a simulator model's at a looser
        integration tolerance) for the search directions of a least-squares search;
        ``sensitivities`` when not given.
    """

    parameter_names: tuple[str, ...]
    predict: Callable[[np.ndarray], np.ndarray]
    sensitivities: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]] | None = None
    search_sensitivities: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]] | None = None

    def __call__(self, x: np.ndarray) -> np.ndarray:
        return self.predict(x)
