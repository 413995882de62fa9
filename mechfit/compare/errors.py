"""Errors raised while comparing candidates (subclasses of `mechfit.errors.MechfitError`)."""

from __future__ import annotations

from mechfit.errors import MechfitError


class ComparisonError(MechfitError):
    """Inputs to a comparison that do not fit together (counts, shapes, names, run labels).

    ``names`` lists the offending candidates or fields so that callers can point at them.

    Examples
    --------
    >>> err = ComparisonError("n_data must exceed n_parameters + 1", names=("first order",))
    >>> err.names
    ('first order',)
    """

    def __init__(self, message: str, names: tuple[str, ...] = ()) -> None:
        self.names = tuple(names)
        super().__init__(message)
