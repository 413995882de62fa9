"""``mechfit check``: parse a steps file and print what its network is made of."""

from __future__ import annotations

import json
import sys

from mechfit.mechanism import analyse_network, load_mechanism

NAME = "check"
HELP = "check a steps file (.mech) and summarise its reaction network"
EXAMPLE = """example:
  mechfit check mechanisms/classic/michaelis_menten.mech
  mechfit check mechanisms/classic/michaelis_menten.mech --json
"""


def add_arguments(p) -> None:
    p.add_argument("file", help="a steps file (.mech)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def run(args) -> int:
    mech = load_mechanism(args.file)
    analysis = analyse_network(mech)
    if args.json:
        json.dump(analysis.summary(), sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        print(analysis.report())
    return 0
