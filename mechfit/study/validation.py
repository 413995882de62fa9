"""Checking a study against a mechanism: species, steps and parameter names.

A study is written once for several candidate mechanisms, so names that only some
candidates use (a temperature law or a prior for a constant another candidate
lacks) are *notes*, not errors; :func:`unused_by_all` turns them into an error when
no candidate uses them (a misspelling). Species and steps the study relies on must
exist in every mechanism it is fitted with: those are errors.

Examples
--------
>>> from mechfit import parse_mechanism
>>> m = parse_mechanism("A -> P @ k1")
>>> unknown_species(["A", "Q"], m)
['Q']
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

from mechfit.errors import StudyError
from mechfit.mechanism import intermediates


def unknown_species(names: Iterable[str], mechanism) -> list[str]:
    """The names that are not species of ``mechanism`` (sorted)."""
    known = set(mechanism.species)
    return sorted(set(names) - known)


def _species_list(mechanism) -> str:
    return ", ".join(mechanism.species)


def validate(study, mechanism) -> tuple[str, ...]:
    """Check ``study`` against ``mechanism``; return notes, raise on errors.

    Errors (:class:`~mechfit.errors.StudyError`, naming the study file and the run
    or observable):

    * a species in a run's ``initial`` or ``initial_scale``, or in an observable,
      that the mechanism lacks;
    * a heat-flow observable naming a step the mechanism lacks;
    * an observable parameter with the name of a rate constant or law parameter.

    Notes (returned): temperature laws and priors for names the mechanism does not
    use, laws given for constants the mechanism fixes, and initial-rate observables
    taken at t = 0 when the mechanism has intermediates (their full mass-action
    rate at t = 0 is that of an empty intermediate pool).
    """
    file = study.path
    name = getattr(mechanism, "name", "mechanism")
    for run in study.runs:
        bad = unknown_species(run.initial, mechanism)
        if bad:
            raise StudyError(
                f"{file}: run '{run.name}': initial names species {', '.join(bad)} that "
                f"mechanism '{name}' lacks (its species: {_species_list(mechanism)})")
        if run.initial_scale is not None:
            bad = unknown_species(run.initial_scale.species, mechanism)
            if bad:
                raise StudyError(
                    f"{file}: run '{run.name}': initial_scale names species "
                    f"{', '.join(bad)} that mechanism '{name}' lacks")
    params = set(mechanism.parameters)
    labels = {s.label for s in mechanism.steps}
    for obs in study.observables.values():
        bad = unknown_species(obs.species, mechanism)
        if bad:
            raise StudyError(
                f"{file}: observable.{obs.name}: species {', '.join(bad)} not in "
                f"mechanism '{name}' (its species: {_species_list(mechanism)})")
        clash = sorted(set(obs.fitted) & params)
        if clash:
            raise StudyError(
                f"{file}: observable.{obs.name}: parameter(s) {', '.join(clash)} have the "
                f"name of a rate constant or law parameter of mechanism '{name}'; rename "
                "them")
        for label, _ in obs.steps:
            if label not in labels:
                raise StudyError(
                    f"{file}: observable.{obs.name}: step '{label}' not in mechanism "
                    f"'{name}' (its steps: {', '.join(s.label for s in mechanism.steps)})")
    notes: list[str] = []
    for constant in study.temperature_laws:
        if constant not in mechanism.constants:
            notes.append(f"temperature law for '{constant}': mechanism '{name}' has no such "
                         "rate constant")
        elif constant in mechanism.fixed:
            notes.append(f"temperature law for '{constant}': fixed in mechanism '{name}', "
                         "so it keeps its value at every temperature")
    known = set(used_names(study, mechanism))
    for prior in study.priors:
        if prior not in known:
            notes.append(f"prior for '{prior}': not a parameter of mechanism '{name}' "
                         "with this study")
    inter = set(intermediates(mechanism))
    for obs in study.observables.values():
        if obs.derivative and inter:
            notes.append(
                f"observable '{obs.name}' is d[X]/dt at t = 0; mechanism '{name}' has "
                f"intermediates ({', '.join(sorted(inter))}), so fit it with a "
                "steady-state variant (or give the observable a window)")
    return tuple(notes)


def used_names(study, mechanism) -> list[str]:
    """Every parameter name the study and mechanism use together (fitted or fixed)."""
    groups = study.parameter_names(mechanism)
    out = [n for g in groups.values() for n in g]
    for law in study.rate_constant_laws(mechanism).values():
        out.extend(law.parameter_names)
    out.extend(mechanism.parameters)
    for obs in study.observables.values():
        out.extend(obs.parameters)
    for run in study.runs:
        if run.time_offset is not None:
            out.append(run.time_offset.parameter)
        if run.initial_scale is not None:
            out.append(run.initial_scale.parameter)
    return list(dict.fromkeys(out))


def unused_by_all(study, mechanisms: Sequence) -> list[str]:
    """Temperature-law and prior names that none of ``mechanisms`` uses (likely typos)."""
    used: set[str] = set()
    for m in mechanisms:
        used |= set(used_names(study, m))
        used |= set(m.constants)
    names = list(study.temperature_laws) + list(study.priors)
    return [n for n in dict.fromkeys(names) if n not in used]
