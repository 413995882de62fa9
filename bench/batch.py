"""Benchmark of ``mechfit batch``: many generated schemes on the demo study (INVENTED data).

Generates schemes from a base scheme of the demo (catalyst binds the enone, the thiol
attacks the complex) by one-way choices and optional extra steps, merges equivalent
ones, and fits N of them (default 100) with a reduced sampling budget. Prints, side by
side in one run: a subset of K schemes fitted with 1 worker and with 2 workers (wall
times, their ratio and the parallel efficiency T1 / (2 T2)), then the whole batch at 2
workers, resuming from the 2-worker subset's store (so the subset is not fitted twice):
wall time, schemes per minute, store size. Wall times include starting the worker
processes (spawn and imports), as a user sees it.

Run:  python bench/batch.py --schemes 6 --subset 2
Targets (issue 8): >= 80 % efficiency at 2 workers; 100 schemes in <= 30 min on 2 cores.
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from pathlib import Path

from mechfit import parse_mechanism
from mechfit.batch import (
    ResultStore,
    Task,
    content_key,
    enumerate_schemes,
    open_executor,
    run_batch,
    run_to_end,
)
from mechfit.batch.equivalence import merge_equivalent
from mechfit.batch.evaluation import evaluate_scheme, scheme_payload, study_content
from mechfit.demo import study_path
from mechfit.pipeline import FitSettings
from mechfit.study import load_study

BASE = """bind:   Cat + Sub <=> CatSub        @ k1, k_1
attack: CatSub + Nu -> Cat + Prod   @ k2
"""
EXTRAS = """die:    Cat -> Dead                 @ kd
uncat:  Sub + Nu -> Prod            @ k0
park:   Cat + Sub <=> CatSubOff     @ k3, k_3
inhib:  Cat + Prod <=> CatProd      @ k4, k_4
nubind: Cat + Nu <=> CatNu          @ k5, k_5
dimer:  2 Cat <=> Cat2              @ k6, k_6
"""


def generated_schemes(count: int) -> list:
    base = parse_mechanism(BASE, name="demo")
    extras = parse_mechanism(EXTRAS, name="extras")
    kept: list = []
    for limit in range(0, 7):
        every = enumerate_schemes(base, one_way=True, extras=extras, max_extras=limit)
        kept, _merged = merge_equivalent(every)
        if len(kept) >= count:
            break
    return kept[:count]


def tasks_for(schemes, study, settings: FitSettings) -> list[Task]:
    content = study_content(study)
    return [Task(content_key(scheme=s.text, variant="full", study=content,
                             settings=settings.as_dict()), s.name, "full",
                 scheme_payload(study.path, s.text, s.name, "full", settings))
            for s in schemes]


def timed_run(tasks, store: ResultStore, workers: int) -> tuple[float, list]:
    start = time.perf_counter()
    with open_executor(workers=workers) as ex:
        events = run_to_end(run_batch(tasks, evaluate_scheme, ex, store, max_in_flight=workers))
    return time.perf_counter() - start, events


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--schemes", type=int, default=100, help="schemes in the batch (100)")
    p.add_argument("--subset", type=int, default=12,
                   help="schemes of the 1-worker vs 2-worker comparison (12; with 4, the "
                        "start-up of the workers and uneven schemes dominate: 68 %% "
                        "against 99 %% with 12)")
    p.add_argument("--starts", type=int, default=3)
    p.add_argument("--max-steps", type=int, default=300)
    args = p.parse_args()
    settings = FitSettings(starts=args.starts, max_steps=args.max_steps)
    study = load_study(study_path())
    start = time.perf_counter()
    schemes = generated_schemes(args.schemes)
    generate = time.perf_counter() - start
    print(f"demo study (invented data): {len(study.runs)} runs; {len(schemes)} schemes "
          f"generated and merged in {generate:.1f} s; budget starts={args.starts}, "
          f"max_steps={args.max_steps}")
    tasks = tasks_for(schemes, study, settings)
    subset = tasks[:min(args.subset, len(tasks))]
    with tempfile.TemporaryDirectory(prefix="mechfit-bench-batch-") as tmp:
        one = ResultStore(Path(tmp) / "one.sqlite")
        two = ResultStore(Path(tmp) / "two.sqlite")
        t1, ev1 = timed_run(subset, one, 1)
        t2, ev2 = timed_run(subset, two, 2)
        per = [e.seconds for e in ev1 if e.seconds is not None]
        print(f"\nsubset of {len(subset)} schemes   1 worker: {t1:7.1f} s   2 workers: "
              f"{t2:7.1f} s   ratio T1/T2: {t1 / t2:.2f}   parallel efficiency "
              f"T1/(2 T2): {100 * t1 / (2 * t2):.0f} %")
        if per:
            print(f"  median seconds per scheme (1 worker, inside the worker): "
                  f"{statistics.median(per):.1f}")
        same = all(one.get(t.key)["status"] == two.get(t.key)["status"] for t in subset)
        print(f"  statuses equal at 1 and 2 workers: {same}")
        tall, events = timed_run(tasks, two, 2)
        total = t2 + tall
        failed = [e for e in events if e.kind == "failed"]
        print(f"\nbatch of {len(tasks)} schemes at 2 workers: {total:.1f} s wall "
              f"({t2:.1f} s subset + {tall:.1f} s rest, resumed from the subset's store): "
              f"{60 * len(tasks) / total:.2f} schemes per minute; "
              f"{len(failed)} failed")
        for e in failed:
            print(f"  failed {e.task.name}: {e.reason}")
        size = two.size_bytes()
        print(f"store: {len(two)} rows, {size / 1e6:.1f} MB "
              f"({size / max(len(two), 1) / 1e6:.2f} MB per result)")
        if len(tasks) < 100:
            print(f"\nnote: {len(tasks)} schemes, not the 100-scheme target run; at the "
                  f"measured pace 100 schemes would take about "
                  f"{100 * total / len(tasks) / 60:.0f} min at 2 workers")


if __name__ == "__main__":
    main()
