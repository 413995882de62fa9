"""The exceptions of mechfit: one base class, subclasses named after what went wrong.

Every error a user can cause is a :class:`MechfitError`. Errors about a place in a
text file carry the file name, line and column and render the offending line with a
caret under the column, so that the command line can print them without a traceback::

    steps.mech:3:17: expected '->' or '<=>' after the reactants
      add:    Cat + ArBr => CatAr
                         ^
"""

from __future__ import annotations


class MechfitError(Exception):
    """Base class of every error mechfit raises for bad input or failed work.

    Examples
    --------
    >>> try:
    ...     raise MechfitError("no fit converged")
    ... except MechfitError as err:
    ...     print(err)
    no fit converged
    """

    #: exit code of the command line for this error (2: bad input, 1: the work failed)
    exit_code = 2


class SourceError(MechfitError):
    """An error at a position in a text file (file, line, column, the line's text).

    Parameters
    ----------
    message
        What is wrong and what was expected, without the position.
    file
        The file name as the user gave it (``"<text>"`` for strings).
    line, column
        1-based position; ``column`` may be ``None`` when the whole line is meant.
    text
        The offending line, shown under the message with a caret.

    Examples
    --------
    >>> err = SourceError("expected a species", file="a.mech", line=2, column=5, text="A + -> B")
    >>> print(err)
    a.mech:2:5: expected a species
      A + -> B
          ^
    """

    def __init__(
        self,
        message: str,
        *,
        file: str = "<text>",
        line: int | None = None,
        column: int | None = None,
        text: str | None = None,
    ) -> None:
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        self.text = text
        super().__init__(self._render())

    @property
    def position(self) -> str:
        """``file:line:column`` (parts that are unknown are left out)."""
        parts = [self.file]
        if self.line is not None:
            parts.append(str(self.line))
            if self.column is not None:
                parts.append(str(self.column))
        return ":".join(parts)

    def _render(self) -> str:
        out = f"{self.position}: {self.message}"
        if self.text is not None:
            shown = self.text.replace("\t", " ")
            out += "\n  " + shown
            if self.column is not None:
                out += "\n  " + " " * (self.column - 1) + "^"
        return out


class MechanismSyntaxError(SourceError):
    """The steps text does not follow the grammar, or a value in it is not allowed."""


class UnbalancedStepError(SourceError):
    """A step whose species are all formulas loses or gains atoms or charge."""


class ExpressionError(SourceError):
    """An expression (rate law, observable, prior) that does not parse or names unknowns."""


class MechanismError(MechfitError):
    """A request about a mechanism that does not fit it (unknown species or step...)."""


class StudyError(MechfitError):
    """A study file or data table that is missing, malformed or inconsistent."""


class IntegrationFailure(MechfitError):
    """A simulation could not be completed (step cap reached, non-finite state)."""

    exit_code = 1
