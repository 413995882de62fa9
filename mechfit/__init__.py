"""mechfit: test proposed reaction mechanisms against kinetic data.

Examples
--------
>>> import mechfit
>>> m = mechfit.parse_mechanism("A -> B @ k1")
>>> m.species
('A', 'B')
"""

from mechfit.errors import (
    ExpressionError,
    IntegrationFailure,
    MechanismError,
    MechanismSyntaxError,
    MechfitError,
    SourceError,
    StudyError,
    UnbalancedStepError,
)
from mechfit.mechanism import (
    Mechanism,
    Step,
    analyse_network,
    load_mechanism,
    parse_expression,
    parse_mechanism,
)

__version__ = "0.1.0.dev0"

__all__ = [
    "ExpressionError", "IntegrationFailure", "Mechanism", "MechanismError",
    "MechanismSyntaxError", "MechfitError", "SourceError", "Step", "StudyError",
    "UnbalancedStepError", "__version__", "analyse_network", "load_mechanism",
    "load_study", "parse_expression", "parse_mechanism",
]


def __getattr__(name: str):
    # the study layer (pint, scipy.stats: about 2 s) is imported when first asked for,
    # so that simulating or checking a mechanism does not wait for it
    if name == "load_study":
        from mechfit.study import load_study

        return load_study
    raise AttributeError(f"module 'mechfit' has no attribute {name!r}")
