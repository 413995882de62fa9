"""Symbolic rate laws: mass action, steady state, pre-equilibrium, lumped parameters.

Public surface:

* :class:`KineticModel`, :func:`mass_action_model`, :func:`mass_action_odes` (the
  variant ``full``);
* :func:`reduced_model` (steady state and/or pre-equilibrium),
  :func:`steady_state_model`, :func:`pre_equilibrium_model`,
  :func:`rate_determining_model`;
* :func:`derive_variants`, :func:`derive_variant`, :func:`variant_requests`,
  :func:`variant_name`, :func:`split_variant_list` (stable names);
* :func:`derive_rate_law` -> :class:`RateLaw` (rate, numerator, denominator, lumped
  parameters, apparent orders, text, LaTeX, ``summary()``);
* :func:`time_scale_separation`, :func:`largest_relative_deviation`,
  :func:`algebraic_values` (validity);
* :class:`DerivationError`.

The maths is in ``docs/derive.md``.
"""

from mechfit.derive.errors import DerivationError
from mechfit.derive.model import KineticModel, mass_action_model, mass_action_odes
from mechfit.derive.rate_law import LumpedParameter, RateLaw, default_species, derive_rate_law
from mechfit.derive.steady_state import (
    pre_equilibrium_model,
    rate_determining_model,
    reduced_model,
    steady_state_model,
    variant_name,
)
from mechfit.derive.validity import (
    TimeScaleSeparation,
    algebraic_values,
    largest_relative_deviation,
    time_scale_separation,
)
from mechfit.derive.variants import (
    derive_variant,
    derive_variants,
    split_variant_list,
    variant_requests,
)

__all__ = [
    "DerivationError", "KineticModel", "LumpedParameter", "RateLaw", "TimeScaleSeparation",
    "algebraic_values", "default_species", "derive_rate_law", "derive_variant",
    "derive_variants", "largest_relative_deviation", "mass_action_model", "mass_action_odes",
    "pre_equilibrium_model", "rate_determining_model", "reduced_model", "steady_state_model",
    "split_variant_list", "time_scale_separation", "variant_name", "variant_requests",
]
