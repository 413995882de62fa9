"""``mechfit derive``: derive the rate law of a mechanism under a chosen approximation."""

from __future__ import annotations

import json
import sys

from mechfit.derive import (
    DerivationError,
    derive_rate_law,
    derive_variant,
    derive_variants,
    mass_action_model,
    rate_determining_model,
    reduced_model,
)
from mechfit.derive.steady_state import eliminable_species
from mechfit.mechanism import load_mechanism

NAME = "derive"
HELP = "derive the rate law of a steps file (steady state, pre-equilibrium, lumped parameters)"
EXAMPLE = """Without options the file's 'steady:' and 'fast:' directives are used; without
those, steady state on every intermediate (the full model when that does not
apply). --steady and --fast override the directive of the same kind ('none'
clears it).

example:
  mechfit derive mechanisms/classic/michaelis_menten.mech
  mechfit derive enzyme.mech --fast bind --for P --latex
  mechfit derive enzyme.mech --steady ES --json
  mechfit derive enzyme.mech --variants
"""

CAUTION = ("A derived rate law holds only where its assumptions do; do not extrapolate it "
           "to other conditions or scales, or use it for thermal-safety decisions, without "
           "validation and review under local codes and licensed process-safety practice.")


def add_arguments(p) -> None:
    p.add_argument("file", help="a steps file (.mech)")
    p.add_argument("--steady", metavar="X,Y",
                   help="intermediates to put in steady state ('all' or 'none' allowed)")
    p.add_argument("--fast", metavar="STEP",
                   help="labels of two-way steps at equilibrium, comma-separated ('none')")
    p.add_argument("--rds", metavar="STEP", help="the rate-determining-step variant for STEP")
    p.add_argument("--variant", metavar="NAME",
                   help="a variant by name (full, qssa:all, preeq:STEP, rds:STEP, ...)")
    p.add_argument("--variants", action="store_true",
                   help="derive every variant of the mechanism")
    p.add_argument("--for", dest="species", metavar="SPECIES",
                   help="the species whose rate is given (default: the first product)")
    p.add_argument("--latex", action="store_true", help="also print the rate law in LaTeX")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def _items(text: str | None) -> list[str] | None:
    if text is None:
        return None
    items = [t.strip() for t in text.split(",") if t.strip()]
    return [] if items == ["none"] else items


def _chosen_model(mech, args):
    steady, fast = _items(args.steady), _items(args.fast)
    picked = [name for name, given in (("--variant", args.variant), ("--rds", args.rds),
                                       ("--steady/--fast", steady is not None or fast is not None))
              if given]
    if len(picked) > 1:
        raise DerivationError(f"{' and '.join(picked)} cannot be combined: choose one way to "
                              "name the variant")
    if args.variant:
        return derive_variant(mech, args.variant)
    if args.rds:
        return rate_determining_model(mech, args.rds)
    if steady is None:
        steady = list(mech.steady)
    if fast is None:
        fast = list(mech.fast)
    if steady == ["all"]:
        steady = list(eliminable_species(mech))
    if not steady and not fast and args.steady is None and args.fast is None \
            and eliminable_species(mech):
        # no directive and no option: steady state on everything, if that applies
        try:
            return reduced_model(mech, steady=list(eliminable_species(mech)))
        except DerivationError as err:
            print(f"mechfit derive: qssa:all does not apply ({err}); showing the full "
                  "model", file=sys.stderr)
            return mass_action_model(mech)
    if not steady and not fast:
        return mass_action_model(mech)
    return reduced_model(mech, steady=steady, fast=fast)


def run(args) -> int:
    mech = load_mechanism(args.file)
    if args.species is not None and args.species not in mech.species:
        raise DerivationError(f"{args.file}: --for: unknown species '{args.species}': the "
                              f"mechanism has {', '.join(mech.species)}")
    if args.variants:
        return _run_all(mech, args)
    law = derive_rate_law(_chosen_model(mech, args), args.species)
    if args.json:
        out = {"file": args.file, **law.summary(), "caution": CAUTION}
        json.dump(out, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    print(law.report())
    if args.latex:
        print("latex:")
        print("  " + law.latex())
    print(f"caution: {CAUTION}")
    return 0


def _run_all(mech, args) -> int:
    skipped: list = []
    entries = []
    for model in derive_variants(mech, skipped=skipped):
        try:
            entries.append(derive_rate_law(model, args.species).summary())
        except DerivationError as err:
            entries.append({"variant": model.name, "rate": None, "error": str(err)})
    if args.json:
        json.dump({"file": args.file, "variants": entries,
                   "skipped": [{"variant": n, "reason": r} for n, r in skipped],
                   "caution": CAUTION}, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    for e in entries:
        if e.get("error"):
            print(f"{e['variant']}: {e['error']}")
        elif not e["closed_form"]:
            print(f"{e['variant']}: no closed form ({', '.join(e['implicit_species'])} "
                  "solved numerically)")
        else:
            print(f"{e['variant']}: {e['quantity']} = {e['text']}")
        if args.latex and not e.get("error"):
            print(f"  latex: {e['latex']}")
    for n, r in skipped:
        print(f"{n}: left out ({r})")
    print(f"caution: {CAUTION}")
    return 0
