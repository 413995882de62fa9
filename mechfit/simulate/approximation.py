"""How far a reduced variant (steady state, pre-equilibrium) strays from the full model.

Both models are simulated from the same parameters and initial state, and the largest
relative deviation of the species the reduced model integrates is measured (the
eliminated intermediates differ from the full model by construction during the initial
transient, so they are not compared)
(:func:`mechfit.derive.largest_relative_deviation`, which scales by each species'
largest value over the run). A deviation of a few per cent means the approximation is
good for this run; the steady-state approximation is known to hold when the catalyst
(enzyme) is scarce compared with the substrate (L. A. Segel and M. Slemrod, SIAM Rev. 31
(1989) 446).

Examples
--------
>>> from mechfit import parse_mechanism
>>> from mechfit.derive import derive_variant
>>> m = parse_mechanism("bind: E + S <=> ES @ k1, k_1\\nturn: ES -> E + P @ k2")
>>> k = {"k1": 100.0, "k_1": 1.0, "k2": 10.0}
>>> small = deviation_from_full(derive_variant(m, "qssa:all"), k, {"E": 1e-3, "S": 1.0}, 5.0)
>>> small[0] < 0.01
True
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from mechfit.derive import KineticModel, largest_relative_deviation, mass_action_model
from mechfit.simulate.batch import Simulator


def deviation_from_full(reduced: KineticModel, values: Mapping[str, float],
                        initial: Mapping[str, float], until: float, *, points: int = 50,
                        rtol: float = 1e-8) -> tuple[float, str]:
    """Largest relative deviation of ``reduced`` from its full mass-action model.

    Parameters
    ----------
    reduced
        A variant of a mechanism (``derive_variant(m, "qssa:all")``...).
    values
        Rate constants (and law parameters) by name.
    initial
        Initial concentrations by species (others 0).
    until
        End of the run (same time unit as the rate constants). The models are compared
        at ``points`` evenly spaced and ``points`` geometrically spaced times (from
        1e-6 ``until``).

    Returns
    -------
    (deviation, species)
        The fraction and the species where it is largest.
    """
    # even and geometric spacing together: a fast early transient, which is where an
    # approximation fails first, is not stepped over
    until = float(until)
    times = np.unique(np.concatenate([np.linspace(0.0, until, int(points)),
                                      np.geomspace(1e-6 * until, until, int(points))]))
    full = mass_action_model(reduced.mechanism)
    out = []
    for model in (full, reduced):
        sim = Simulator(model, rtol=rtol)
        result = sim.solve(times, sim.initial_vector(initial)[None, :],
                           sim.parameter_vector(values)[None, :])
        if not result.ok[0]:
            return float("inf"), f"({model.name} failed: {result.reason[0]})"
        out.append({s: result.concentration(s) for s in reduced.state})
    return largest_relative_deviation(out[0], out[1])
