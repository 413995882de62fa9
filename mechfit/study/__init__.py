"""Study files: runs, data tables, units, observables, temperature laws and priors.

Public surface: :func:`load_study` returns a :class:`Study` (runs as :class:`Run`
with :class:`Series` of data, observables, temperature laws, priors), all numbers in
canonical units (mol/L, s, K, J/mol, L, W). :func:`observable_expression` turns an
observable into one sympy expression in a kinetic model's state. The temperature
laws (:func:`arrhenius`, :func:`eyring` and their inverses) work on numpy arrays.
The format is described in ``docs/study.md``.

Examples
--------
>>> from mechfit.study import arrhenius
>>> round(float(arrhenius(1.0, 50e3, 310.0, 300.0)), 3)
1.909
"""

from mechfit.study.observables import (
    KINDS,
    VOLUME,
    Noise,
    Observable,
    build_observable,
    observable_expression,
)
from mechfit.study.priors import DISTRIBUTIONS, Prior, build_prior
from mechfit.study.study import InitialScale, Run, Series, Study, TimeOffset
from mechfit.study.study_file import load_study
from mechfit.study.tables import Column, Table, parse_table, read_table
from mechfit.study.temperature import (
    BOLTZMANN,
    GAS_CONSTANT,
    LAWS,
    PLANCK,
    ArrheniusFit,
    TemperatureLaw,
    activation_energy,
    arrhenius,
    arrhenius_prefactor,
    eyring,
    eyring_from_arrhenius,
    fit_arrhenius,
    gibbs_energy_of_activation,
)
from mechfit.study.units import CANONICAL, canonical_factor, parse_unit, to_canonical
from mechfit.study.validation import unused_by_all, validate

__all__ = [
    "BOLTZMANN", "CANONICAL", "DISTRIBUTIONS", "GAS_CONSTANT", "KINDS", "LAWS", "PLANCK",
    "VOLUME", "ArrheniusFit", "Column", "InitialScale", "Noise", "Observable", "Prior",
    "Run", "Series", "Study", "Table", "TemperatureLaw", "TimeOffset", "activation_energy",
    "arrhenius", "arrhenius_prefactor", "build_observable", "build_prior",
    "canonical_factor", "eyring", "eyring_from_arrhenius", "fit_arrhenius",
    "gibbs_energy_of_activation", "load_study", "observable_expression", "parse_table",
    "parse_unit", "read_table", "to_canonical", "unused_by_all", "validate",
]
