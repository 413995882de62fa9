"""Running a ranking from the command line: progress bars, the table, the files.

Shared by ``mechfit rank`` and ``mechfit demo`` (one way to do it).
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path

from mechfit.errors import MechfitError
from mechfit.pipeline.ranking_run import RankSettings, StudyRanking, rank_study_steps
from mechfit.pipeline.report_inputs import report_data_from_folder


def default_folder(stem: str) -> Path:
    """A new results folder name: ``mechfit-results/<stem>-<date>-<time>`` (never reused)."""
    base = Path("mechfit-results") / f"{stem}-{time.strftime('%Y%m%d-%H%M%S')}"
    out, n = base, 1
    while out.exists():
        n += 1
        out = base.with_name(f"{base.name}-{n}")
    return out


def check_new_folder(folder: Path) -> None:
    """Refuse a folder that already holds a ranking or a report (results are never
    overwritten)."""
    if folder.exists() and not folder.is_dir():
        raise MechfitError(f"--out {folder}: exists and is not a folder")
    taken = [n for n in ("ranking.json", "report.html") if (folder / n).exists()]
    if taken:
        raise MechfitError(f"--out {folder}: holds results already ({', '.join(taken)}); "
                           "choose a new folder")


def run_ranking(study, mechanisms, settings: RankSettings, folder: Path, *,
                as_json: bool = False, quiet: bool = False) -> StudyRanking:
    """Rank with a progress bar on stderr, write results and report, print the table."""
    from rich.console import Console
    from rich.markup import escape
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from mechfit.report import write_report

    check_new_folder(folder)
    console = Console(stderr=True, quiet=quiet or not sys.stderr.isatty() and as_json)
    result: StudyRanking | None = None
    start = time.perf_counter()
    with Progress(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.completed}/"
                  "{task.total}"), TimeElapsedColumn(), console=console,
                  transient=False) as progress:
        task = None
        for item in rank_study_steps(study, mechanisms, settings):
            if isinstance(item, StudyRanking):
                result = item
            elif item.kind == "start":
                task = progress.add_task("fitting candidates", total=item.total)
            elif item.kind == "fitted":
                progress.update(task, completed=item.done)
                progress.console.print(escape(f"  {item.key}: {item.status} "
                                              f"({item.seconds:.1f} s)"))
            elif item.kind == "refits":
                task = progress.add_task("exact leave-one-run-out refits", total=item.total)
            elif item.kind == "refit":
                progress.update(task, completed=item.done)
            elif item.kind == "ranked":
                progress.update(task, description="ranked")
    result.write(folder)
    paths = write_report(report_data_from_folder(folder), folder, workers=settings.workers)
    elapsed = time.perf_counter() - start
    if as_json:
        out = result.summary()
        out["report"] = str(paths.html)
        out["folder"] = str(folder)
        out["seconds"] = round(elapsed, 1)
        json.dump(out, sys.stdout, indent=2, default=str)
        sys.stdout.write("\n")
    else:
        print(result.table())
        print(f"\nresults: {folder}\nreport:  {paths.html}\n({elapsed:.0f} s)")
    return result
