"""Errors of the derivation stage."""

from __future__ import annotations

from mechfit.errors import MechanismError


class DerivationError(MechanismError):
    """A derivation request that does not fit the mechanism.

    Raised for steady state on a species that is not an intermediate, a one-way step
    named fast, an unknown species or step, or equations that cannot be separated.
    The message names the offending species or step and says what is allowed.

    Examples
    --------
    >>> err = DerivationError("'S' is not an intermediate", names=("S",))
    >>> err.names, err.exit_code
    (('S',), 2)
    """

    def __init__(self, message: str, *, names: tuple[str, ...] = ()) -> None:
        self.names = tuple(names)
        super().__init__(message)
