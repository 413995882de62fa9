"""Gibbs-energy levels along a reaction path, from fitted barriers and equilibrium constants.

* The Gibbs energy of activation of a step, dG‡, comes from its fitted Eyring law
  (dG‡ = dH‡ - T dS‡) or from a rate constant via ``dG‡ = R T ln(k_B T / (h k))``
  (Eyring 1935; IUPAC Gold Book "Eyring equation"; see
  :func:`mechfit.study.temperature.gibbs_energy_of_activation`).
* The standard reaction Gibbs energy of a two-way step is ``dG0 = -R T ln K`` with
  K = k_forward / k_reverse expressed for the standard state 1 mol/L (IUPAC Green Book,
  3rd ed., 2007, sec. 2.11).

R is the molar gas constant of :mod:`scipy.constants` (``scipy.constants.R``, CODATA).

Honest gaps: a one-way step has no equilibrium constant in a kinetic fit, so the
level after it is not known relative to the level before. The path is then cut:
the levels after the cut form a new segment whose energies are relative to the state
the one-way step leads to, and the figure and tables say so. A step without a barrier
estimate keeps its two states but has no transition-state level.

Examples
--------
>>> from mechfit.report.data import EnergyProfile, EnergyProfileStep
>>> profile = EnergyProfile("E + S", [
...     EnergyProfileStep("bind", "ES", barrier=60e3, equilibrium_constant=100.0),
...     EnergyProfileStep("cat", "E + P", barrier=70e3)], temperature=298.15)
>>> [(lv.name, None if lv.energy is None else round(lv.energy / 1e3, 2), lv.segment)
...  for lv in energy_levels(profile)]
[('E + S', 0.0, 0), ('bind', 60.0, 0), ('ES', -11.42, 0), ('cat', 58.58, 0), ('E + P', 0.0, 1)]
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy import constants

from mechfit.report.data import EnergyProfile
from mechfit.report.errors import ReportError

#: the molar gas constant in J/(mol K), scipy.constants.R (CODATA)
MOLAR_GAS_CONSTANT: float = constants.R


def reaction_gibbs_energy(equilibrium_constant: float, temperature: float) -> float:
    """dG0 = -R T ln K in J/mol (K for the standard state 1 mol/L, T in K).

    Examples
    --------
    >>> round(reaction_gibbs_energy(10.0, 298.15))
    -5708
    """
    if not (equilibrium_constant > 0 and temperature > 0):
        raise ReportError(f"energy profile: equilibrium constant {equilibrium_constant} and "
                          f"temperature {temperature} K must both be positive")
    return -MOLAR_GAS_CONSTANT * temperature * math.log(equilibrium_constant)


@dataclass(frozen=True)
class EnergyLevel:
    """One level of the profile.

    Attributes
    ----------
    kind
        ``"state"`` or ``"transition"``.
    name
        State name, or the step label for a transition state.
    energy
        J/mol relative to ``reference``; ``None`` for a transition state without a
        barrier estimate.
    segment
        Levels of different segments are not on a common scale.
    reference
        The state whose Gibbs energy is zero for this segment.
    note
        Why a level is missing or a segment starts, in words.
    """

    kind: str
    name: str
    energy: float | None
    segment: int
    reference: str
    note: str = ""


def energy_levels(profile: EnergyProfile) -> list[EnergyLevel]:
    """States and transition states along the path, with the gaps made explicit."""
    T = profile.temperature
    if not T > 0:
        raise ReportError(f"energy profile: temperature must be positive (K), got {T}")
    current, segment, reference = 0.0, 0, profile.start
    levels = [EnergyLevel("state", profile.start, 0.0, 0, reference)]
    for step in profile.steps:
        if step.reaction_energy is not None:
            change = float(step.reaction_energy)
        elif step.equilibrium_constant is not None:
            change = reaction_gibbs_energy(float(step.equilibrium_constant), T)
        else:
            change = None
        if step.barrier is None:
            levels.append(EnergyLevel("transition", step.label, None, segment, reference,
                                      f"no barrier estimate for step {step.label}"))
        else:
            barrier = float(step.barrier)
            note = ""
            if barrier < 0 or (change is not None and barrier < change):
                note = (f"barrier of {step.label} lies below one of its states: the "
                        "estimates are not consistent")
            levels.append(EnergyLevel("transition", step.label, current + barrier, segment,
                                      reference, note))
        if change is None:
            segment += 1
            reference = step.state_after
            current = 0.0
            levels.append(EnergyLevel(
                "state", step.state_after, 0.0, segment, reference,
                f"dG0 of the one-way step {step.label} is not determined by the kinetics; "
                f"later levels are relative to {step.state_after}"))
        else:
            current += change
            levels.append(EnergyLevel("state", step.state_after, current, segment, reference))
    return levels
