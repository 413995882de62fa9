"""``mechfit rank``: fit every candidate mechanism to a study and rank them."""

from __future__ import annotations

from pathlib import Path

from mechfit.cli._ranking_options import add_fit_options, settings_from
from mechfit.errors import MechfitError
from mechfit.mechanism import load_mechanism

NAME = "rank"
HELP = "fit candidate mechanisms to a study, rank them, and write the report"
EXAMPLE = """example:
  mechfit rank study.toml mechanisms/*.mech --out results/coupling
  mechfit rank study.toml a.mech b.mech --variants full,qssa:all --json
"""


def add_arguments(p) -> None:
    p.add_argument("study", help="the study file (.toml)")
    p.add_argument("mechanisms", nargs="*", metavar="MECH",
                   help="candidate mechanism files (.mech)")
    p.add_argument("--out", type=Path, default=None,
                   help="results folder (new; default mechfit-results/<study>-<time>)")
    add_fit_options(p)


def run(args) -> int:
    from mechfit.pipeline.console import default_folder, run_ranking
    from mechfit.study import load_study

    if not args.mechanisms:
        raise MechfitError("mechfit rank: give one or more candidate mechanism files "
                           "(.mech) after the study")
    study = load_study(args.study)
    mechanisms = [load_mechanism(m) for m in args.mechanisms]
    for m in mechanisms:
        study.validate_against(m)
    folder = args.out or default_folder(Path(args.study).stem)
    run_ranking(study, mechanisms, settings_from(args), folder, as_json=args.json)
    return 0
