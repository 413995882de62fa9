r"""Likelihoods of a study's data for a model: Gaussian or Student-t, known or fitted noise.

For data point *i* of observable *o* with prediction :math:`\mu_i(\theta)` the standard
deviation is

.. math:: s_i = \sqrt{\sigma_o^2 + (\rho_o\,\mu_i)^2}

with an absolute noise level :math:`\sigma_o` and, with the proportional option, a
relative level :math:`\rho_o` (the "combined additive and proportional" error model,
common practice in pharmacometrics and analytical chemistry). Either may be known
(a number) or fitted (a noise parameter named ``sigma_<observable>`` /
``rel_sigma_<observable>``, sampled in log space).

Gaussian:

.. math:: \log p(y_i) = -\tfrac12 r_i^2 - \log s_i - \tfrac12 \log 2\pi,\quad r_i = (y_i-\mu_i)/s_i

Student-t with :math:`\nu` degrees of freedom and scale :math:`s_i` (robust to
outliers; Lange, Little and Taylor, "Robust statistical modeling using the t
distribution", J. Am. Stat. Assoc. 84 (1989) 881):

.. math:: \log p(y_i) = \log\Gamma(\tfrac{\nu+1}2) - \log\Gamma(\tfrac\nu2)
          - \tfrac12\log(\nu\pi) - \log s_i - \tfrac{\nu+1}2 \log(1 + r_i^2/\nu)

Every function takes a batch of free vectors ``u`` (m, q) and calls the model once.

Default priors of fitted noise levels (a mechfit convention): log-uniform between
1e-6 and 10 times the scale of the observable (the largest absolute measured value);
relative levels log-uniform between 1e-4 and 1.

Examples
--------
>>> import numpy as np
>>> from mechfit.infer.observations import ModelFunction, Observations
>>> from mechfit.infer.parameters import Parameter, Parameters
>>> from mechfit.infer.priors import LogUniform
>>> t = np.linspace(0, 4, 5)
>>> obs = Observations.single(t, 2.0 * np.exp(-t))
>>> model = ModelFunction(("A", "k"), lambda x: x[:, :1] * np.exp(-x[:, 1:] * t))
>>> pars = Parameters((Parameter("A", 1.0, LogUniform(0.1, 10), "log"),
...                    Parameter("k", 1.0, LogUniform(0.01, 100), "log")))
>>> lik = Likelihood(model, obs, pars, ErrorModel(sigma=0.1))
>>> u = lik.parameters.free_vector({"A": 2.0, "k": 1.0})
>>> round(float(lik.log_likelihood(u)[0]), 4)
6.9182
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from scipy.special import gammaln

from mechfit.errors import IntegrationFailure
from mechfit.infer.errors import LikelihoodError
from mechfit.infer.observations import ModelFunction, Observations
from mechfit.infer.parameters import Parameter, Parameters
from mechfit.infer.priors import LogUniform

DISTRIBUTIONS = ("normal", "student_t")


@dataclass(frozen=True)
class ErrorModel:
    """The noise of one observable.

    Parameters
    ----------
    distribution
        ``"normal"`` or ``"student_t"``.
    sigma
        Known absolute standard deviation (scale for Student-t), or ``None`` to fit it.
    proportional
        Add a part proportional to the prediction (see the module docs).
    relative
        Known relative level when ``proportional``; ``None`` to fit it.
    nu
        Degrees of freedom of the Student-t (4 is a common robust choice; Lange et al. 1989).
    """

    distribution: str = "normal"
    sigma: float | None = None
    proportional: bool = False
    relative: float | None = None
    nu: float = 4.0

    def __post_init__(self) -> None:
        if self.distribution not in DISTRIBUTIONS:
            raise LikelihoodError(f"error model: distribution must be one of {DISTRIBUTIONS}, "
                                  f"got {self.distribution!r}")
        if self.sigma is not None and not self.sigma >= 0:
            raise LikelihoodError(f"error model: sigma must be >= 0, got {self.sigma!r}")
        if self.relative is not None and not self.relative >= 0:
            raise LikelihoodError(f"error model: relative must be >= 0, got {self.relative!r}")
        if not self.nu > 0:
            raise LikelihoodError(f"error model: nu must be > 0, got {self.nu!r}")
        if not self.proportional and self.sigma == 0:
            raise LikelihoodError("error model: sigma = 0 needs the proportional option")

    def describe(self) -> dict:
        return {"distribution": self.distribution, "sigma": self.sigma,
                "proportional": self.proportional, "relative": self.relative,
                "nu": self.nu if self.distribution == "student_t" else None}


def noise_parameter_names(observable: str) -> tuple[str, str]:
    """Names of the absolute and relative noise parameters of an observable."""
    return f"sigma_{observable}", f"rel_sigma_{observable}"


class Likelihood:
    """The log-likelihood of ``observations`` under ``model`` and an error model.

    Parameters
    ----------
    model
        The model function (predictions of every data point).
    observations
        The data.
    parameters
        The model's parameters; noise parameters for fitted noise levels are added
        with default priors unless present already.
    errors
        One :class:`ErrorModel` for all observables, or a mapping observable name ->
        ErrorModel.

    Attributes
    ----------
    parameters
        The full collection (model and noise parameters) the free vector ``u`` refers to.
    """

    def __init__(
        self,
        model: ModelFunction,
        observations: Observations,
        parameters: Parameters,
        errors: ErrorModel | Mapping[str, ErrorModel] = ErrorModel(),  # noqa: B008
    ) -> None:
        self.model = model
        self.observations = observations
        names = observations.observable_names
        if isinstance(errors, ErrorModel):
            errors = {o: errors for o in names}
        unknown = sorted(set(errors) - set(names))
        missing = [o for o in names if o not in errors]
        if unknown or missing:
            raise LikelihoodError(
                "error models must name the observables "
                f"({', '.join(names)})"
                + (f"; unknown {', '.join(unknown)}" if unknown else "")
                + (f"; missing {', '.join(missing)}" if missing else ""))
        self.errors = {o: errors[o] for o in names}
        missing_model = [p for p in model.parameter_names if p not in parameters]
        if missing_model:
            raise LikelihoodError("the model needs parameters the collection lacks: "
                                  + ", ".join(missing_model))
        y = observations.values
        for o_index, o in enumerate(names):
            err = self.errors[o]
            scale = float(np.max(np.abs(y[observations.observable == o_index]), initial=0.0))
            scale = scale if scale > 0 else 1.0
            a_name, r_name = noise_parameter_names(o)
            if err.sigma is None and a_name not in parameters:
                parameters = parameters.add(Parameter(
                    a_name, 0.05 * scale, LogUniform(1e-6 * scale, 10 * scale), "log",
                    kind="noise", note="default: log-uniform 1e-6..10 x data scale"))
            if err.proportional and err.relative is None and r_name not in parameters:
                parameters = parameters.add(Parameter(
                    r_name, 0.05, LogUniform(1e-4, 1.0), "log", kind="noise",
                    note="default: log-uniform 1e-4..1"))
        self.parameters = parameters
        self._index()

    # ---- bookkeeping -----------------------------------------------------------------
    def _index(self) -> None:
        p = self.parameters
        self.model_columns = np.array([p.index(n) for n in self.model.parameter_names], int)
        obs = self.observations
        self._absolute: list[tuple[int | None, float]] = []
        self._relative: list[tuple[int | None, float]] = []
        noise_names = set()
        for o in obs.observable_names:
            err = self.errors[o]
            a_name, r_name = noise_parameter_names(o)
            if err.sigma is None:
                self._absolute.append((p.index(a_name), 0.0))
                noise_names.add(a_name)
            else:
                self._absolute.append((None, float(err.sigma)))
            if err.proportional:
                if err.relative is None:
                    self._relative.append((p.index(r_name), 0.0))
                    noise_names.add(r_name)
                else:
                    self._relative.append((None, float(err.relative)))
            else:
                self._relative.append((None, 0.0))
        free = p.free_names
        self.noise_free = np.array([j for j, n in enumerate(free) if n in noise_names], int)
        self.model_free = np.array([j for j, n in enumerate(free) if n not in noise_names], int)
        self.proportional = any(e.proportional for e in self.errors.values())
        codes = [1 if self.errors[o].distribution == "student_t" else 0
                 for o in obs.observable_names]
        self._student = np.array(codes, bool)[obs.observable]
        self._nu = np.array([self.errors[o].nu for o in obs.observable_names])[obs.observable]

    def with_parameters(self, parameters: Parameters) -> Likelihood:
        """The same likelihood over a changed parameter collection (e.g. one value fixed)."""
        return Likelihood(self.model, self.observations, parameters, self.errors)

    @property
    def n_data(self) -> int:
        return self.observations.n

    # ---- predictions and noise -----------------------------------------------------
    def predict(self, x: np.ndarray) -> np.ndarray:
        """Predictions (m, n) from natural vectors (m, P); failed rows are NaN."""
        columns = x[:, self.model_columns]
        try:
            with np.errstate(all="ignore"):
                mu = np.asarray(self.model.predict(columns), dtype=float)
        except IntegrationFailure:
            if columns.shape[0] == 1:
                return np.full((1, self.n_data), np.nan)
            return np.vstack([self.predict(x[i:i + 1]) for i in range(x.shape[0])])
        if mu.shape != (x.shape[0], self.n_data):
            raise LikelihoodError(
                f"the model returned shape {mu.shape}; expected {(x.shape[0], self.n_data)} "
                "(parameter sets x data points)")
        return mu

    def noise_levels(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Absolute and relative levels per observable, each (m, O)."""
        m = x.shape[0]

        def levels(spec):
            return np.column_stack([x[:, i] if i is not None else np.full(m, v)
                                    for i, v in spec])

        return levels(self._absolute), levels(self._relative)

    def standard_deviation(self, x: np.ndarray, mu: np.ndarray) -> np.ndarray:
        """s_i for every row and point, (m, n)."""
        sigma, rel = self.noise_levels(x)
        o = self.observations.observable
        s = np.sqrt(sigma[:, o] ** 2 + (rel[:, o] * mu) ** 2)
        known = self.observations.sigma
        return s if known is None else np.where(np.isfinite(known), known, s)

    def pointwise_from_prediction(self, x: np.ndarray, mu: np.ndarray) -> np.ndarray:
        """Pointwise log-likelihood (m, n) given natural values and predictions."""
        with np.errstate(all="ignore"):
            s = self.standard_deviation(x, mu)
            r = (self.observations.values - mu) / s
            normal = -0.5 * r**2 - np.log(s) - 0.5 * math.log(2 * math.pi)
            if self._student.any():
                nu = self._nu
                student = (gammaln((nu + 1) / 2) - gammaln(nu / 2) - 0.5 * np.log(nu * np.pi)
                           - np.log(s) - (nu + 1) / 2 * np.log1p(r**2 / nu))
                out = np.where(self._student, student, normal)
            else:
                out = normal
        out[~np.isfinite(out)] = -np.inf
        return out

    # ---- the public batch functions --------------------------------------------------
    def pointwise(self, u: np.ndarray) -> np.ndarray:
        """Pointwise log-likelihood, (m, n), for free vectors ``u`` (m, q)."""
        x = self.parameters.natural(u)
        return self.pointwise_from_prediction(x, self.predict(x))

    def log_likelihood(self, u: np.ndarray) -> np.ndarray:
        """Total log-likelihood, (m,)."""
        return _total(self.pointwise(u))

    def by_run(self, pointwise: np.ndarray) -> np.ndarray:
        """Sum pointwise values (..., n) over the points of each run -> (..., n_runs)."""
        runs = len(self.observations.run_names)
        out = np.zeros((*pointwise.shape[:-1], runs))
        for r in range(runs):
            out[..., r] = pointwise[..., self.observations.run == r].sum(axis=-1)
        return out

    def log_posterior(self, u: np.ndarray) -> np.ndarray:
        """Log prior + log-likelihood, (m,); the model is called only where the prior is finite.

        This is the function the sampler calls (``vectorize=True``).
        """
        u = np.atleast_2d(u)
        lp = self.parameters.log_prior(u)
        ok = np.isfinite(lp)
        out = np.full(u.shape[0], -np.inf)
        if ok.any():
            out[ok] = lp[ok] + self.log_likelihood(u[ok])
        out[~np.isfinite(out)] = -np.inf
        return out

    def simulate(self, u: np.ndarray, rng: np.random.Generator) -> np.ndarray:
        """Replicate data (m, n) from the observation model at ``u`` (posterior predictive)."""
        x = self.parameters.natural(u)
        mu = self.predict(x)
        s = self.standard_deviation(x, mu)
        z = rng.standard_normal(mu.shape)
        if self._student.any():
            t = rng.standard_t(np.broadcast_to(self._nu, mu.shape))
            z = np.where(self._student, t, z)
        return mu + s * z

    # ---- pieces the optimiser needs ----------------------------------------------------
    def prediction_and_jacobian(self, u: np.ndarray, *, search: bool = False
                                ) -> tuple[np.ndarray, np.ndarray | None]:
        """Predictions (m, n) and d prediction / d u (m, n, q), or None without sensitivities.

        ``search=True`` takes the model's cheaper search sensitivities when it has them
        (for search directions only, never for the reported covariance).
        """
        x = self.parameters.natural(u)
        if self.model.sensitivities is None:
            return self.predict(x), None
        sens = self.model.sensitivities
        if search and self.model.search_sensitivities is not None:
            sens = self.model.search_sensitivities
        mu, dmu_dx = sens(x[:, self.model_columns])
        dx_du = self.parameters.natural_jacobian(u)[:, self.model_columns, :]
        return np.asarray(mu, float), np.einsum("mnp,mpq->mnq", dmu_dx, dx_du)

    def information_weights(self, x: np.ndarray, mu: np.ndarray) -> np.ndarray:
        """Expected Fisher information per point about mu_i, (m, n).

        Gaussian: 1/s^2 + 2 (ds/dmu)^2 / s^2; Student-t: (nu+1)/((nu+3) s^2) (Lange et al. 1989).
        """
        s = self.standard_deviation(x, mu)
        _, rel = self.noise_levels(x)
        rho = rel[:, self.observations.observable]
        if self.observations.sigma is not None:
            rho = np.where(np.isfinite(self.observations.sigma), 0.0, rho)
        ds = rho**2 * mu / s
        gaussian = 1.0 / s**2 + 2.0 * ds**2 / s**2
        student = (self._nu + 1) / ((self._nu + 3) * s**2)
        return np.where(self._student, student, gaussian)


def _total(pointwise: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        total = pointwise.sum(axis=-1)
    total[~np.isfinite(total)] = -np.inf
    return total
