"""``mechfit report``: write the report of a results folder again."""

from __future__ import annotations

import os
from pathlib import Path

NAME = "report"
HELP = "write the HTML, Markdown and JSON report of a results folder made by 'mechfit rank'"
EXAMPLE = """example:
  mechfit report mechfit-results/study-20261201-101500
  mechfit report mechfit-results/study-20261201-101500 --out report-copy
"""


def add_arguments(p) -> None:
    p.add_argument("folder", type=Path, help="a results folder written by 'mechfit rank'")
    p.add_argument("--out", type=Path, default=None,
                   help="where to write the report (default: the results folder itself)")
    p.add_argument("--overwrite", action="store_true", help="replace an existing report")
    p.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1),
                   help="processes that draw the figures (default: 2)")


def run(args) -> int:
    from mechfit.errors import MechfitError
    from mechfit.pipeline.report_inputs import report_data_from_folder
    from mechfit.report import check_report_folder, write_report

    if args.workers < 1:
        raise MechfitError(f"--workers {args.workers}: expected a positive number")
    # refused before the results are read: nothing is drawn only to be thrown away
    check_report_folder(args.out or args.folder, overwrite=args.overwrite)
    paths = write_report(report_data_from_folder(args.folder), args.out or args.folder,
                         overwrite=args.overwrite, workers=args.workers)
    print(f"report: {paths.html}")
    return 0
