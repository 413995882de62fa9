"""Everything ``mechfit check`` says about a mechanism, in one object.

Examples
--------
>>> from mechfit import parse_mechanism
>>> a = analyse_network(parse_mechanism("E + S <=> ES @ k1, k_1\\nES -> E + P @ k2"))
>>> a.intermediates, a.deficiency
(('E', 'ES'), 0)
>>> sorted(a.summary())[:4]
['balance', 'complexes', 'conservation_laws', 'constants']
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy

from mechfit.mechanism.balance import balance_status
from mechfit.mechanism.conservation import ConservationLaw, conservation_laws
from mechfit.mechanism.deficiency import ComplexAnalysis, analyse_complexes
from mechfit.mechanism.expression import to_text
from mechfit.mechanism.model import Mechanism
from mechfit.mechanism.network import intermediates, stoichiometric_matrix
from mechfit.mechanism.wegscheider import Cycle, cycles, dependent_constants


@dataclass(frozen=True)
class NetworkAnalysis:
    """The network facts of a mechanism (see :func:`analyse_network`)."""

    mechanism: Mechanism
    intermediates: tuple[str, ...]
    conservation_laws: tuple[ConservationLaw, ...]
    cycles: tuple[Cycle, ...]
    dependent: dict[str, sympy.Expr]
    complexes: ComplexAnalysis
    balance: dict[str, str]

    @property
    def deficiency(self) -> int:
        return self.complexes.deficiency

    def summary(self) -> dict:
        """JSON-safe dictionary; its keys are documented in docs/check.md."""
        m = self.mechanism
        steps = []
        for s in m.steps:
            steps.append({
                "label": s.label,
                "line": s.line,
                "equation": s.equation(),
                "reactants": {n: c for n, c in s.reactants},
                "products": {n: c for n, c in s.products},
                "reversible": s.reversible,
                "forward": s.forward.name if s.forward else None,
                "forward_factor": s.forward.factor if s.forward else None,
                "reverse": s.reverse.name if s.reverse else None,
                "reverse_factor": s.reverse.factor if s.reverse else None,
                "law": to_text(s.law.sympy, m.species) if s.law else None,
                "molecularity": s.molecularity,
            })
        return {
            "name": m.name,
            "file": m.source,
            "species": list(m.species),
            "steps": steps,
            "constants": [
                {"name": c, "fixed": m.fixed.get(c),
                 "steps": [s.label for s in m.steps
                           if any(k is not None and k.name == c for k in (s.forward, s.reverse))]}
                for c in m.constants
            ],
            "law_parameters": list(m.law_parameters),
            "intermediates": list(self.intermediates),
            "conservation_laws": [
                {"weights": law.as_dict(m.species), "text": law.as_text(m.species),
                 "nonnegative": law.nonnegative}
                for law in self.conservation_laws
            ],
            "cycles": [
                {"steps": {label: v for label, v in c.steps}, "condition": c.condition_text()}
                for c in self.cycles
            ],
            "dependent_constants": {k: sympy.sstr(v) for k, v in self.dependent.items()},
            "complexes": list(self.complexes.complexes),
            "linkage_classes": len(self.complexes.linkage_classes),
            "rank": self.complexes.rank,
            "deficiency": self.deficiency,
            "weakly_reversible": self.complexes.weakly_reversible,
            "stoichiometric_matrix": stoichiometric_matrix(m).tolist(),
            "directives": {"steady": list(m.steady), "fast": list(m.fast),
                           "made_of": {k: dict(v) for k, v in m.made_of_items}},
            "balance": self.balance,
            "warnings": list(m.warnings),
        }

    def report(self) -> str:
        """A readable multi-line summary (what ``mechfit check`` prints)."""
        m = self.mechanism
        d = self.summary()
        out = [f"Mechanism {m.name} ({m.source})",
               f"  species ({len(m.species)}): {', '.join(m.species)}",
               f"  steps ({len(m.steps)}):"]
        width = max(len(s.label) for s in m.steps)
        for s in m.steps:
            k = (f"rate = {to_text(s.law.sympy, m.species)}" if s.law else
                 ", ".join(c.text() for c in (s.forward, s.reverse) if c is not None))
            out.append(f"    {s.label:>{width}}: {s.equation():<34} @ {k}")
        consts = []
        for c in d["constants"]:
            consts.append(c["name"] + (f" = {c['fixed']:g} (fixed)" if c["fixed"] else ""))
        out.append(f"  rate constants ({len(consts)}): {', '.join(consts)}")
        if m.law_parameters:
            out.append(f"  law parameters: {', '.join(m.law_parameters)}")
        out.append(f"  intermediates: {', '.join(self.intermediates) or 'none'}")
        laws = [law.as_text(m.species) + ("" if law.nonnegative else "  (mixed sign)")
                for law in self.conservation_laws]
        out.append("  conservation laws: " + ("; ".join(f"{t} = const" for t in laws) or "none"))
        if self.cycles:
            out.append("  cycles of two-way steps (Wegscheider conditions):")
            for c in self.cycles:
                members = " + ".join(f"{v}x{lab}" if v != 1 else lab for lab, v in c.steps)
                out.append(f"    {members}: {c.condition_text()}")
            for k, v in self.dependent.items():
                out.append(f"    eliminable: {k} = {sympy.sstr(v)}")
        else:
            out.append("  cycles of two-way steps: none")
        cx = self.complexes
        out.append(f"  complexes: {len(cx.complexes)}, linkage classes: {len(cx.linkage_classes)}, "
                   f"rank: {cx.rank}, deficiency: {cx.deficiency}, "
                   f"weakly reversible: {'yes' if cx.weakly_reversible else 'no'}")
        counts = {k: sum(1 for v in self.balance.values() if v == k)
                  for k in ("balanced", "exchange", "not checked")}
        line = f"  balance: {counts['balanced']} of {len(self.balance)} steps checked and balanced"
        if counts["exchange"]:
            line += f"; {counts['exchange']} inflow/outflow"
        if counts["not checked"]:
            line += f"; {counts['not checked']} not checked (species of unknown make-up)"
        out.append(line)
        if m.steady or m.fast:
            out.append(f"  directives: steady = {', '.join(m.steady) or '-'}; "
                       f"fast = {', '.join(m.fast) or '-'}")
        if m.warnings:
            out.append(f"  warnings ({len(m.warnings)}):")
            out.extend(f"    - {w}" for w in m.warnings)
        return "\n".join(out)


def analyse_network(mech: Mechanism) -> NetworkAnalysis:
    """Run every network analysis on ``mech``.

    Parameters
    ----------
    mech
        A parsed mechanism.

    Returns
    -------
    NetworkAnalysis
        Intermediates, conservation laws, Wegscheider cycles (and the constants one
        may eliminate), complexes and deficiency, balance status.
    """
    return NetworkAnalysis(
        mechanism=mech,
        intermediates=intermediates(mech),
        conservation_laws=conservation_laws(mech),
        cycles=cycles(mech),
        dependent=dependent_constants(mech),
        complexes=analyse_complexes(mech),
        balance=balance_status(mech),
    )
