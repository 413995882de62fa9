"""``mechfit demo``: the whole job on the packaged demo study (invented data)."""

from __future__ import annotations

from pathlib import Path

from mechfit.cli._ranking_options import add_fit_options, settings_from

NAME = "demo"
HELP = "rank the demo's candidate mechanisms on its invented study and write the report"
EXAMPLE = """example:
  mechfit demo
  mechfit demo --out demo-results
"""


def add_arguments(p) -> None:
    p.add_argument("--out", type=Path, default=None,
                   help="results folder (new; default mechfit-results/demo-<time>)")
    add_fit_options(p)


def run(args) -> int:
    from mechfit.demo import candidate_paths, study_path
    from mechfit.mechanism import load_mechanism
    from mechfit.pipeline.console import default_folder, run_ranking
    from mechfit.study import load_study

    study = load_study(study_path())
    mechanisms = [load_mechanism(p) for p in candidate_paths()]
    if not args.json:
        print(f"mechfit demo: {study.title}\n(the data are invented: see the study file)\n"
              f"candidates: {', '.join(m.name for m in mechanisms)}")
    run_ranking(study, mechanisms, settings_from(args), args.out or default_folder("demo"),
                as_json=args.json)
    return 0
