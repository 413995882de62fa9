"""``mechfit check``: check a steps file, or a study file against mechanisms.

A ``.mech`` file is parsed and its reaction network summarised. A ``.toml`` file is
loaded as a study (runs, points, observables, units) and, with ``--mechanism``
(repeatable), checked against each mechanism: species, steps and parameter names.
"""

from __future__ import annotations

import json
import sys

from mechfit.errors import StudyError
from mechfit.mechanism import analyse_network, load_mechanism

NAME = "check"
HELP = "check a steps file (.mech), or a study file (.toml) against mechanisms"
EXAMPLE = """example:
  mechfit check mechanisms/classic/michaelis_menten.mech
  mechfit check mechanisms/classic/michaelis_menten.mech --json
  mechfit check study.toml --mechanism a.mech --mechanism b.mech
  mechfit check study.toml --mechanism a.mech --json
"""


def add_arguments(p) -> None:
    p.add_argument("file", help="a steps file (.mech) or a study file (.toml)")
    p.add_argument("--mechanism", action="append", default=[], metavar="FILE",
                   help="with a study file: a mechanism to check it against (repeatable)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def run(args) -> int:
    if str(args.file).lower().endswith(".toml"):
        return _check_study(args)
    if args.mechanism:
        raise StudyError("--mechanism goes with a study file (.toml), not with "
                         f"'{args.file}'")
    mech = load_mechanism(args.file)
    analysis = analyse_network(mech)
    if args.json:
        json.dump(analysis.summary(), sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        print(analysis.report())
    return 0


def _check_study(args) -> int:
    from mechfit.study import load_study
    from mechfit.study.validation import unused_by_all

    study = load_study(args.file)
    mechanisms = [load_mechanism(path) for path in args.mechanism]
    checked = []
    for path, mech in zip(args.mechanism, mechanisms, strict=True):
        notes = study.validate_against(mech)
        checked.append({
            "name": mech.name,
            "file": path,
            "notes": list(notes),
            "parameters": {k: list(v) for k, v in study.parameter_names(mech).items()},
        })
    if mechanisms:
        unused = unused_by_all(study, mechanisms)
        if unused:
            raise StudyError(
                f"{study.path}: {', '.join(unused)} (in temperature_law or prior) is not a "
                "parameter of any mechanism given; check the spelling")
    if args.json:
        out = {"kind": "study", "study": study.summary(), "mechanisms": checked}
        json.dump(out, sys.stdout, indent=2)
        sys.stdout.write("\n")
        return 0
    print(study.report())
    for item in checked:
        groups = item["parameters"]
        n = sum(len(v) for v in groups.values())
        print(f"mechanism {item['name']} ({item['file']}): ok; {n} fitted parameters "
              f"(kinetic: {', '.join(groups['kinetic']) or 'none'})")
        for note in item["notes"]:
            print(f"  note: {note}")
    if not mechanisms:
        print("(give --mechanism FILE to check species and parameter names)")
    return 0
