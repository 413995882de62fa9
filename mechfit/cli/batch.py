"""``mechfit batch``: fit many candidate schemes in parallel, resumably, then rank them all.

Each SCHEMES file is one scheme, or, with ``--one-way`` / ``--extras``, the base of a
family of generated schemes (:func:`mechfit.batch.enumerate_schemes`). Schemes with the
same reduced rate law are merged before fitting (:func:`mechfit.batch.merge_equivalent`).
Every scheme x variant is fitted on an executor (local processes, a dask LocalCluster, or
a running dask scheduler), each result is kept in an SQLite store as soon as it is done,
and a rerun skips what the store holds. The stored ``ok`` results are then ranked with
the ranking's own code, and ``--report`` writes the ranking's results folder and report.
See ``docs/batch.md``.
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

from mechfit.cli._ranking_options import add_budget_options, fit_settings_from
from mechfit.errors import MechfitError

NAME = "batch"
HELP = "fit many schemes in parallel into a resumable store, then rank them all"
EXAMPLE = """example:
  mechfit batch study.toml base.mech --one-way --extras extras.mech --workers 2
  mechfit batch study.toml a.mech b.mech c.mech --variants auto --report results/screen
  mechfit batch study.toml base.mech --one-way --cluster local:4 --json
  mechfit batch study.toml base.mech --one-way --scheduler tcp://10.0.0.5:8786 --workers 16
"""


def add_arguments(p) -> None:
    p.add_argument("study", help="the study file (.toml)")
    p.add_argument("schemes", nargs="+", metavar="SCHEMES",
                   help="scheme files (.mech); with --one-way/--extras each is a base scheme")
    p.add_argument("--variants", default="full",
                   help="variants per scheme: 'full' (default), 'auto' (every variant with a "
                        "closed form; 'all' means the same), or a list such as "
                        "'full,qssa:all'")
    p.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1),
                   help="local worker processes (default 2); with --scheduler, how many "
                        "candidates are sent to the cluster at once")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="run on a running dask.distributed scheduler (tcp://host:8786)")
    p.add_argument("--cluster", default=None, metavar="local:N",
                   help="start a dask LocalCluster of N worker processes here")
    p.add_argument("--store", type=Path, default=None,
                   help="result store (SQLite; default <study stem>-batch.sqlite in the "
                        "current folder); a rerun with the same store skips finished work")
    p.add_argument("--report", type=Path, default=None, metavar="DIR",
                   help="write the ranking results and report to this new folder")
    p.add_argument("--extras", type=Path, default=None, metavar="FILE",
                   help="steps file of optional extra steps (labelled), added in every "
                        "combination")
    p.add_argument("--one-way", action="store_true",
                   help="also make each two-way step of a base scheme one-way (all "
                        "combinations)")
    p.add_argument("--max-extras", type=int, default=None, metavar="N",
                   help="at most N extra steps added at once (with --extras)")
    add_budget_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def _schemes(args, study):
    from mechfit.batch.schemes import Scheme, enumerate_schemes
    from mechfit.mechanism import load_mechanism

    if args.max_extras is not None and args.extras is None:
        raise MechfitError("--max-extras needs --extras FILE (the optional extra steps)")
    if args.max_extras is not None and args.max_extras < 0:
        raise MechfitError(f"--max-extras {args.max_extras}: expected 0 or more")
    extras = load_mechanism(args.extras) if args.extras is not None else None
    out = []
    for path in args.schemes:
        base = load_mechanism(path)
        if args.one_way or extras is not None:
            out += enumerate_schemes(base, one_way=args.one_way, extras=extras,
                                     max_extras=args.max_extras)
        else:
            out.append(Scheme(base.name, base.to_text(), base, ()))
    names = [s.name for s in out]
    doubled = sorted({n for n in names if names.count(n) > 1})
    if doubled:
        raise MechfitError("two schemes share a name: " + ", ".join(doubled)
                           + "; rename one of the scheme files")
    for s in out:
        study.validate_against(s.mechanism)
    return out


def _variants(spec: str, mechanism) -> list[str]:
    from mechfit.pipeline import RankSettings

    return RankSettings(variants="all" if spec == "auto" else spec).variant_names(mechanism)


def _failed_table(rows) -> str:
    if not rows:
        return ""
    width = max(len(f"{r['name']} [{r['variant']}]") for r in rows)
    lines = ["failed schemes:", f"  {'scheme [variant]':<{width}}  reason"]
    for r in rows:
        lines.append(f"  {r['name'] + ' [' + r['variant'] + ']':<{width}}  {r['reason']}")
    return "\n".join(lines)


def run(args) -> int:
    from rich.console import Console
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        TextColumn,
        TimeElapsedColumn,
        TimeRemainingColumn,
    )

    from mechfit.batch import ResultStore, Task, content_key, open_executor, run_batch
    from mechfit.batch.equivalence import merge_equivalent
    from mechfit.batch.evaluation import (
        evaluate_scheme,
        rank_stored,
        scheme_payload,
        study_content,
    )
    from mechfit.pipeline import RankSettings
    from mechfit.pipeline.console import check_new_folder
    from mechfit.pipeline.ranking_run import RankingFailure
    from mechfit.study import load_study

    start = time.perf_counter()
    if args.workers < 1:
        raise MechfitError(f"--workers {args.workers}: expected a positive number")
    study = load_study(args.study)
    fit = fit_settings_from(args)
    schemes, merged = merge_equivalent(_schemes(args, study))
    content = study_content(study)
    tasks = []
    for s in schemes:
        for v in _variants(args.variants, s.mechanism):
            key = content_key(scheme=s.text, variant=v, study=content, settings=fit.as_dict())
            tasks.append(Task(key, s.name, v,
                              scheme_payload(study.path, s.text, s.name, v, fit)))
    if args.report is not None:
        check_new_folder(args.report)
    store = ResultStore(args.store or Path.cwd() / f"{Path(args.study).stem}-batch.sqlite")
    console = Console(stderr=True, quiet=args.json and not sys.stderr.isatty())
    if merged:
        for kept, names in merged.items():
            console.print(f"merged into {kept} (same reduced rate law): {', '.join(names)}",
                          markup=False, highlight=False)
    counts = {"skipped": 0, "done": 0, "failed": 0}
    pending = sum(not store.has(t.key) for t in tasks)
    # as many candidates in flight as there are workers: a killed batch loses little
    size = args.cluster.partition(":")[2] if args.cluster else ""
    in_flight = int(size) if size.isdigit() else args.workers
    with open_executor(workers=args.workers, scheduler=args.scheduler,
                       cluster=args.cluster) as executor, \
            Progress(TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
                     TimeElapsedColumn(), TextColumn("left"), TimeRemainingColumn(),
                     console=console) as progress:
        bar = progress.add_task(f"fitting ({len(tasks) - pending} stored already)",
                                total=pending)
        for event in run_batch(tasks, evaluate_scheme, executor, store,
                               max_in_flight=max(1, in_flight)):
            counts[event.kind] += 1
            if event.kind == "skipped":
                continue
            progress.advance(bar)
            took = f" ({event.seconds:.1f} s)" if event.seconds is not None else ""
            note = f": {event.reason}" if event.kind == "failed" else ""
            progress.console.print(f"  {event.task.name} [{event.task.variant}]: "
                                   f"{'ok' if event.kind == 'done' else 'failed'}{took}{note}",
                                   markup=False, highlight=False)
    # a row stored by an earlier batch under another scheme name is shown under this one
    rows = [dict(r, name=t.name, variant=t.variant)
            for t, r in ((t, store.get(t.key)) for t in tasks) if r is not None]
    failed = [{"name": r["name"], "variant": r["variant"], "reason": r["reason"] or ""}
              for r in rows if r["status"] == "failed"]
    settings = RankSettings(variants=args.variants, fit=fit, workers=args.workers,
                            exact_refits=False)
    ranking = None
    code = 0
    message = ""
    try:
        ranking = rank_stored(study, rows, settings)
    except RankingFailure as exc:
        code, message = 1, str(exc)
    report = None
    if ranking is not None and args.report is not None:
        from mechfit.pipeline.report_inputs import report_data_from_folder
        from mechfit.report import write_report

        ranking.write(args.report)
        report = write_report(report_data_from_folder(args.report), args.report,
                              workers=min(args.workers, os.cpu_count() or 1)).html
    elapsed = time.perf_counter() - start
    if args.json:
        out = {"study": str(study.path), "store": str(store.path),
               "schemes": [s.name for s in schemes], "merged": merged,
               "tasks": len(tasks), "skipped": counts["skipped"],
               "fitted": counts["done"] + counts["failed"], "failed": failed,
               "ranking": ranking.summary() if ranking is not None else None,
               "error": message or None, "report": str(report) if report else None,
               "folder": str(args.report) if report else None,
               "store_bytes": store.size_bytes(), "seconds": round(elapsed, 1)}
        json.dump(out, sys.stdout, indent=2, default=str)
        sys.stdout.write("\n")
    else:
        print(ranking.ranking.report() if ranking is not None else message)
        if failed:
            print("\n" + _failed_table(failed))
        print(f"\nstore:   {store.path} ({len(tasks)} candidates: {counts['skipped']} stored "
              f"already, {counts['done'] + counts['failed']} fitted now)")
        if report:
            print(f"results: {args.report}\nreport:  {report}")
        print(f"({elapsed:.0f} s)")
    return code
