"""Errors of the report writers."""

from __future__ import annotations

from mechfit.errors import MechfitError


class ReportError(MechfitError):
    """Report data that cannot be drawn or written (names the field and what was expected)."""


class ReportExistsError(ReportError):
    """The output folder already holds report files and ``overwrite`` was not given.

    Attributes
    ----------
    paths
        The report files found in the folder.
    """

    def __init__(self, message: str, paths: tuple[str, ...] = ()) -> None:
        self.paths = paths
        super().__init__(message)
