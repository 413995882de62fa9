"""Inference: parameters and priors, likelihoods, maximum likelihood, posterior sampling.

Public surface
--------------
:class:`Parameters` / :class:`Parameter` (values, priors, fixed flags, ties, log
space), the priors (:class:`LogUniform`, :class:`LogNormal`, :class:`Normal`,
:class:`Uniform`, :class:`Fixed`), :class:`Observations` and :class:`ModelFunction`
(the interface to data and simulator), :class:`ErrorModel` and :class:`Likelihood`,
:func:`maximum_likelihood` and :func:`profile_likelihood`, :func:`sample_posterior`
(and the generator :func:`sample_steps`), :func:`inference_data`,
:func:`write_inference_data` / :func:`read_inference_data`,
:func:`analyse_identifiability`, :func:`summarise_parameters` and
:func:`derived_quantities`; :func:`fit_study` (a study and a model variant, end to end)
and its :class:`StudyFit`. The statistics are described in ``docs/inference.md``.
"""

from mechfit.infer.diagnostics import Convergence, judge
from mechfit.infer.errors import FitFailure, LikelihoodError, ParameterError
from mechfit.infer.fit import StudyFit, fit_study
from mechfit.infer.identifiability import Identifiability, analyse_identifiability
from mechfit.infer.inference_data import (
    ResultExistsError,
    inference_data,
    read_inference_data,
    write_inference_data,
)
from mechfit.infer.likelihood import ErrorModel, Likelihood
from mechfit.infer.observations import ModelFunction, Observations
from mechfit.infer.optimize import (
    MaximumLikelihood,
    ProfileLikelihood,
    maximum_likelihood,
    profile_likelihood,
)
from mechfit.infer.parameters import Parameter, Parameters
from mechfit.infer.priors import (
    Fixed,
    LogNormal,
    LogUniform,
    Normal,
    Prior,
    Uniform,
    prior_from_spec,
    rate_constant_bounds,
)
from mechfit.infer.sampling import (
    Posterior,
    SamplingProgress,
    SamplingSettings,
    sample_posterior,
    sample_steps,
)
from mechfit.infer.summaries import (
    Summary,
    derived_quantities,
    derived_quantity,
    half_life,
    summarise_draws,
    summarise_parameters,
)

__all__ = [
    "Convergence", "ErrorModel", "FitFailure", "Fixed", "Identifiability", "Likelihood",
    "LikelihoodError", "LogNormal", "LogUniform", "MaximumLikelihood", "ModelFunction",
    "Normal", "Observations", "Parameter", "ParameterError", "Parameters", "Posterior",
    "Prior", "ProfileLikelihood", "ResultExistsError", "SamplingProgress",
    "SamplingSettings", "StudyFit", "Summary", "Uniform", "analyse_identifiability",
    "derived_quantities", "derived_quantity", "fit_study", "half_life", "inference_data",
    "judge", "maximum_likelihood", "prior_from_spec", "profile_likelihood",
    "rate_constant_bounds", "read_inference_data", "sample_posterior", "sample_steps",
    "summarise_draws", "summarise_parameters", "write_inference_data",
]
