"""Symbolic rate laws: mass action, steady state, pre-equilibrium, lumped parameters."""

from mechfit.derive.model import KineticModel, mass_action_model, mass_action_odes

__all__ = ["KineticModel", "mass_action_model", "mass_action_odes"]
