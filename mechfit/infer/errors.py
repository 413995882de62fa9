"""Errors raised by the inference code (all derive from :class:`mechfit.errors.MechfitError`)."""

from __future__ import annotations

from mechfit.errors import MechfitError


class ParameterError(MechfitError):
    """A parameter specification that cannot be used: unknown name, bad bounds or prior.

    ``names`` lists the offending parameter names so callers can point at them.
    """

    def __init__(self, message: str, names: tuple[str, ...] = ()) -> None:
        self.names = tuple(names)
        super().__init__(message)


class LikelihoodError(MechfitError):
    """Data and model that do not fit together (shape, observable, error-model mismatch)."""


class FitFailure(MechfitError):
    """No start of the maximum-likelihood search reached a finite optimum."""

    exit_code = 1
