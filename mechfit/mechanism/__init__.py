"""Mechanism language and reaction-network analysis.

Public surface: :func:`parse_mechanism`, :func:`load_mechanism`, :class:`Mechanism`,
:class:`Step`, :class:`Reaction`, :func:`parse_expression`, :func:`analyse_network`
and the network functions (stoichiometric matrix, conservation laws, cycles,
deficiency).
"""

from mechfit.mechanism.analysis import NetworkAnalysis, analyse_network
from mechfit.mechanism.conservation import ConservationLaw, conservation_laws
from mechfit.mechanism.deficiency import analyse_complexes, complex_graph
from mechfit.mechanism.expression import Expression, parse_expression, to_text
from mechfit.mechanism.model import Constant, Mechanism, Reaction, Step
from mechfit.mechanism.network import (
    formed_and_consumed,
    intermediates,
    order_matrices,
    species_step_graph,
    stoichiometric_matrix,
)
from mechfit.mechanism.parser import load_mechanism, parse_mechanism
from mechfit.mechanism.wegscheider import Cycle, cycles, dependent_constants

__all__ = [
    "ConservationLaw", "Constant", "Cycle", "Expression", "Mechanism", "NetworkAnalysis",
    "Reaction", "Step", "analyse_complexes", "analyse_network", "complex_graph",
    "conservation_laws", "cycles", "dependent_constants", "formed_and_consumed",
    "intermediates", "load_mechanism", "order_matrices", "parse_expression",
    "parse_mechanism", "species_step_graph", "stoichiometric_matrix", "to_text",
]
