"""Fast batched simulation of kinetic models, with sensitivities and initial rates.

Public surface: :class:`Simulator` (compile a model once, then
:meth:`Simulator.solve` many systems per call), :class:`Result`,
:data:`REASONS` (failure codes) and :class:`SimulationInputError`.
See ``docs/simulate.md`` for the method notes.
"""

from mechfit.simulate.approximation import deviation_from_full
from mechfit.simulate.batch import Result, SimulationInputError, Simulator
from mechfit.simulate.integrator import REASONS

__all__ = ["REASONS", "Result", "SimulationInputError", "Simulator", "deviation_from_full"]
