"""Temperature laws of rate constants: Arrhenius with a reference temperature, Eyring.

All functions take and return canonical units (K, J/mol, J/(mol K), and rate
constants in mol, L and s) and work elementwise on numpy arrays, so that one call
gives a rate constant for every (draw, run) pair.

Physical constants are CODATA values from :mod:`scipy.constants`:
:data:`GAS_CONSTANT` (molar gas constant R), :data:`BOLTZMANN` (k_B) and
:data:`PLANCK` (h).

* Arrhenius, centred on a reference temperature (the form recommended to decorrelate
  the pair; e.g. Bates & Watts, *Nonlinear Regression Analysis*, 1988, sec. 3.1)::

      k(T) = k_ref * exp(-(Ea / R) * (1/T - 1/T_ref))

* Eyring (transition-state theory; Eyring 1935; IUPAC Gold Book "Eyring equation"),
  standard state 1 mol/L::

      k(T) = kappa * (k_B T / h) * exp(dS / R) * exp(-dH / (R T))

Examples
--------
>>> round(float(arrhenius(1.0, 50e3, 310.0, 300.0)), 4)
1.9091
>>> round(float(eyring(80e3, 0.0, 298.15)), 6)
0.059961
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from scipy import constants

#: molar gas constant R in J/(mol K) (CODATA, scipy.constants.R)
GAS_CONSTANT: float = constants.R
#: Boltzmann constant k_B in J/K (CODATA, scipy.constants.k)
BOLTZMANN: float = constants.k
#: Planck constant h in J s (CODATA, scipy.constants.h)
PLANCK: float = constants.h

#: the names of the temperature laws a study may choose
LAWS = ("arrhenius", "eyring", "constant")


def arrhenius(rate_ref, activation_energy, temperature, reference_temperature):
    """Rate constant at ``temperature`` from its value at ``reference_temperature``.

    Parameters
    ----------
    rate_ref
        k at the reference temperature (any unit; the result has the same).
    activation_energy
        Ea in J/mol.
    temperature, reference_temperature
        In K. All arguments broadcast with numpy.

    Examples
    --------
    >>> float(arrhenius(2.0, 60e3, 300.0, 300.0))
    2.0
    """
    T = np.asarray(temperature, dtype=float)
    return np.asarray(rate_ref) * np.exp(
        -np.asarray(activation_energy) / GAS_CONSTANT * (1.0 / T - 1.0 / reference_temperature)
    )


def arrhenius_prefactor(rate_ref, activation_energy, reference_temperature):
    """The pre-exponential factor A of ``k = A exp(-Ea/(R T))`` from ``k_ref`` and ``Ea``.

    Examples
    --------
    >>> k = arrhenius_prefactor(1.0, 50e3, 300.0) * np.exp(-50e3 / (GAS_CONSTANT * 300.0))
    >>> round(float(k), 12)
    1.0
    """
    return np.asarray(rate_ref) * np.exp(
        np.asarray(activation_energy) / (GAS_CONSTANT * np.asarray(reference_temperature))
    )


def eyring(enthalpy, entropy, temperature, transmission: float = 1.0):
    """Rate constant from the enthalpy and entropy of activation (Eyring equation).

    Parameters
    ----------
    enthalpy
        dH (activation enthalpy) in J/mol.
    entropy
        dS (activation entropy) in J/(mol K), standard state 1 mol/L.
    temperature
        In K.
    transmission
        The transmission coefficient kappa (1 by common practice).

    Examples
    --------
    >>> round(float(eyring(0.0, 0.0, 298.15)) / 1e12, 4)  # k_B T / h
    6.2124
    """
    T = np.asarray(temperature, dtype=float)
    return (transmission * BOLTZMANN * T / PLANCK
            * np.exp(np.asarray(entropy) / GAS_CONSTANT)
            * np.exp(-np.asarray(enthalpy) / (GAS_CONSTANT * T)))


def activation_energy(rate_1, temperature_1, rate_2, temperature_2):
    """Ea in J/mol from rate constants at two temperatures (two-point Arrhenius).

    Examples
    --------
    >>> k2 = arrhenius(1.0, 75e3, 320.0, 300.0)
    >>> round(float(activation_energy(1.0, 300.0, k2, 320.0)))
    75000
    """
    return (GAS_CONSTANT * np.log(np.asarray(rate_2) / np.asarray(rate_1))
            / (1.0 / np.asarray(temperature_1) - 1.0 / np.asarray(temperature_2)))


class ArrheniusFit(NamedTuple):
    """Result of :func:`fit_arrhenius`: Ea (J/mol), A (unit of k) and their standard errors."""

    activation_energy: float
    prefactor: float
    activation_energy_se: float
    log_prefactor_se: float


def fit_arrhenius(temperature, rate) -> ArrheniusFit:
    """Least-squares straight line through ln k against 1/T (an Arrhenius plot).

    Examples
    --------
    >>> T = np.array([300.0, 310.0, 320.0])
    >>> fit = fit_arrhenius(T, arrhenius(1.0, 60e3, T, 300.0))
    >>> round(fit.activation_energy)
    60000
    """
    x = 1.0 / np.asarray(temperature, dtype=float)
    y = np.log(np.asarray(rate, dtype=float))
    design = np.column_stack([np.ones_like(x), x])
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    n = len(x)
    if n > 2:
        resid = y - design @ coef
        s2 = float(resid @ resid) / (n - 2)
        cov = s2 * np.linalg.inv(design.T @ design)
        se = np.sqrt(np.diag(cov))
    else:
        se = np.array([np.nan, np.nan])
    return ArrheniusFit(float(-coef[1] * GAS_CONSTANT), float(np.exp(coef[0])),
                        float(se[1] * GAS_CONSTANT), float(se[0]))


def eyring_from_arrhenius(activation_energy, prefactor, temperature):
    """dH and dS of activation from Arrhenius parameters, for a reaction in solution.

    ``dH = Ea - R T`` and ``dS = R (ln(A h / (k_B T)) - 1)`` (Laidler, *Chemical
    Kinetics*, 3rd ed., 1987, sec. 4.5; standard state 1 mol/L).

    Examples
    --------
    >>> dH, dS = eyring_from_arrhenius(80e3, 1e13, 298.15)
    >>> round(float(dH)), round(float(dS), 2)
    (77521, -4.36)
    """
    T = np.asarray(temperature, dtype=float)
    dH = np.asarray(activation_energy) - GAS_CONSTANT * T
    dS = GAS_CONSTANT * (np.log(np.asarray(prefactor) * PLANCK / (BOLTZMANN * T)) - 1.0)
    return dH, dS


def gibbs_energy_of_activation(rate, temperature, transmission: float = 1.0):
    """dG of activation in J/mol from a rate constant: ``R T ln(kappa k_B T / (h k))``.

    Examples
    --------
    >>> round(float(gibbs_energy_of_activation(eyring(90e3, -20.0, 298.15), 298.15)))
    95963
    """
    T = np.asarray(temperature, dtype=float)
    return GAS_CONSTANT * T * np.log(transmission * BOLTZMANN * T
                                     / (PLANCK * np.asarray(rate)))


@dataclass(frozen=True)
class TemperatureLaw:
    """How one rate constant depends on temperature, global over all runs of a study.

    Attributes
    ----------
    constant
        The rate-constant name in the mechanism (``k1``).
    kind
        ``"arrhenius"``, ``"eyring"`` or ``"constant"``.
    reference_temperature
        T_ref in K (Arrhenius only; ``None`` otherwise).

    Notes
    -----
    The fitted parameters replace the rate constant (see :attr:`parameter_names`):

    * arrhenius: ``k1`` (its value at T_ref, canonical units) and ``Ea_k1`` (J/mol);
    * eyring: ``dH_k1`` (J/mol) and ``dS_k1`` (J/(mol K));
    * constant: ``k1`` itself, the same at every temperature.

    Examples
    --------
    >>> law = TemperatureLaw("k1", "arrhenius", 300.0)
    >>> law.parameter_names
    ('k1', 'Ea_k1')
    >>> law.rate_constant({"k1": 2.0, "Ea_k1": 0.0}, np.array([290.0, 310.0]))
    array([2., 2.])
    """

    constant: str
    kind: str
    reference_temperature: float | None = None

    @property
    def parameter_names(self) -> tuple[str, ...]:
        """Names of the fitted parameters this law introduces, in a fixed order."""
        if self.kind == "arrhenius":
            return (self.constant, f"Ea_{self.constant}")
        if self.kind == "eyring":
            return (f"dH_{self.constant}", f"dS_{self.constant}")
        return (self.constant,)

    @property
    def units(self) -> tuple[str, ...]:
        """Canonical unit of each parameter (``"k"`` stands for the rate constant's own)."""
        return {"arrhenius": ("k", "J/mol"), "eyring": ("J/mol", "J/(mol*K)")}.get(
            self.kind, ("k",))

    def rate_constant(self, values: Mapping[str, object], temperature):
        """The rate constant at ``temperature`` (K) from parameter values (broadcasting).

        ``values`` maps :attr:`parameter_names` to numbers or arrays.
        """
        if self.kind == "arrhenius":
            return arrhenius(values[self.constant], values[f"Ea_{self.constant}"],
                             temperature, self.reference_temperature)
        if self.kind == "eyring":
            return eyring(values[f"dH_{self.constant}"], values[f"dS_{self.constant}"],
                          temperature)
        return np.asarray(values[self.constant]) * np.ones_like(np.asarray(temperature,
                                                                            dtype=float))

    def summary(self) -> dict:
        """JSON-safe description."""
        out: dict = {"constant": self.constant, "law": self.kind,
                     "parameters": list(self.parameter_names)}
        if self.reference_temperature is not None:
            out["reference_temperature_K"] = self.reference_temperature
        return out
