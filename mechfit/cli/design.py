"""``mechfit design``: propose the next run from a study and its ranking results.

Reads the leading candidates of a results folder written by ``mechfit rank`` (their
posterior draws), searches the design space given with ``--vary`` and prints the proposed
runs, their expected gain and each candidate's predicted curves. Writes ``design.json``
into the results folder (never touching the ranking's own files). See ``docs/design.md``.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

NAME = "design"
HELP = "propose the next run that best separates the leading candidates (or pins parameters)"
EXAMPLE = """example:
  mechfit design study.toml --results results --vary Sub=10:200 --vary temperature=20:45
  mechfit design study.toml --results results --vary Sub=10:200 --vary points=10,20 --runs 2
  mechfit design study.toml --results results --vary Cat=0.5:5 --mode precision --json
"""


def add_arguments(p) -> None:
    p.add_argument("study", help="the study file (.toml) the results were ranked on")
    p.add_argument("--results", required=True, metavar="DIR",
                   help="results folder written by mechfit rank (ranking.json, candidates/)")
    p.add_argument("--vary", action="append", default=[], metavar="NAME=LOW:HIGH",
                   help="a design variable: a species (initial concentration), temperature, "
                        "duration (ranges LOW:HIGH or lists A,B,C) or points (a list), in the "
                        "study's units (repeatable)")
    p.add_argument("--measure", action="append", default=[], metavar="NAME[=SIGMA]",
                   help="an observable to measure, optionally with its noise standard "
                        "deviation in the observable's unit (repeatable; default: the "
                        "study's observables and their known or fitted noise)")
    p.add_argument("--runs", type=int, default=1, help="runs to propose (default 1)")
    # the modes are checked by DesignSettings (mechfit.design.proposal.MODES), so that
    # building the command line does not import the inference stack
    p.add_argument("--mode", default="discriminate",
                   help="discriminate (Box-Hill, default) or precision (D-optimal for the "
                        "best candidate)")
    p.add_argument("--candidates", type=int, default=None, metavar="N",
                   help="use the first N candidates (default: the ranking's leading set)")
    p.add_argument("--weights", choices=("stacking", "equal"), default="stacking",
                   help="candidate weights: the ranking's stacking weights renormalised "
                        "(default; equal when fewer than two are positive) or equal")
    p.add_argument("--draws", type=int, default=100, help="posterior draws per candidate")
    p.add_argument("--sobol", type=int, default=64, help="Sobol points of the search")
    p.add_argument("--seed", type=int, default=0, help="random seed of the search")
    p.add_argument("--overwrite", action="store_true",
                   help="replace an earlier design.json in the results folder")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def _measure(entries: list[str], study) -> tuple[tuple[str, ...], dict[str, float]]:
    from mechfit.design.predict import DesignInputError
    from mechfit.study.units import canonical_factor

    names, noise = [], {}
    for entry in entries:
        name, sep, value = entry.partition("=")
        name = name.strip()
        if name not in study.observables:
            raise DesignInputError(f"--measure {entry!r}: {name!r} is not an observable of "
                                   f"{study.path} (it has {', '.join(study.observables)})")
        names.append(name)
        if sep:
            try:
                sigma = float(value)
            except ValueError:
                sigma = -1.0
            if not sigma > 0:
                raise DesignInputError(f"--measure {entry!r}: expected NAME=SIGMA with a "
                                       "positive standard deviation")
            noise[name] = sigma * canonical_factor(study.observables[name].unit)[0]
    return tuple(names), noise


def run(args) -> int:
    from mechfit.design.predict import DesignInputError, load_candidates
    from mechfit.design.proposal import DesignProblem, DesignSettings, propose
    from mechfit.design.space import DesignSpace
    from mechfit.study import load_study

    space = DesignSpace.parse(args.vary)
    settings = DesignSettings(mode=args.mode, runs=args.runs, draws=args.draws,
                              n_initial=args.sobol, seed=args.seed)
    results = Path(args.results)
    target = results / "design.json"
    if target.exists() and not args.overwrite:
        raise DesignInputError(f"{target}: exists already; give --overwrite to replace it")
    study = load_study(args.study)
    observables, noise = _measure(args.measure, study)
    candidates = load_candidates(results, count=args.candidates, draws=args.draws,
                                 weighting=args.weights)
    if args.mode == "discriminate" and len(candidates) < 2:
        raise DesignInputError(f"{results}: only one candidate to discriminate; give "
                               "--candidates 2 or more, or use --mode precision")
    problem = DesignProblem(study, candidates, space, observables, noise)
    result = propose(problem, settings)
    summary = result.summary()
    with open(target, "w" if args.overwrite else "x", encoding="utf-8") as handle:
        json.dump(summary, handle, indent=2)
        handle.write("\n")
    if args.json:
        json.dump(summary, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    _print(summary, study.units)
    print(f"written: {target}")
    return 0


def _print(summary: dict, units) -> None:
    from mechfit.design.proposal import describe

    label = "Box-Hill discrimination" if summary["mode"] == "discriminate" else \
        "D-optimal gain"
    print("candidates: " + ", ".join(f"{c['name']} [{c['variant']}] (weight {c['weight']:.2f})"
                                     for c in summary["candidates"]))
    print(f"top designs ({label}):")
    for d in summary["top_designs"]:
        print(f"  {d['score']:12.4g}  {describe(d['values'], units)}")
    for i, prop in enumerate(summary["proposals"], start=1):
        print(f"\nproposed run {i}: {describe(prop['values'], units)}  "
              f"({label} {prop['score']:.4g})")
        for c in prop["curves"]:
            for name, o in c["observables"].items():
                cells = "  ".join(f"t={t:.3g}: {m:.3g} [{lo:.3g}, {hi:.3g}]" for t, m, lo, hi
                                  in zip(o["time"], o["median"], o["low"], o["high"],
                                         strict=True))
                print(f"  {c['candidate']:<24} {name} ({o['unit']}): {cells}")
    print()
    for sentence in summary["design_suggestions"]:
        print(sentence)
