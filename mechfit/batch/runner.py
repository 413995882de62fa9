"""Running a batch: submit the work not yet in the store, store results as they finish.

:func:`run_batch` is a generator of :class:`BatchEvent` objects (long work as a
generator, so progress bars, checkpoints and tests hook in without flags);
:func:`run_to_end` is the thin loop around it. Only this process writes the store, so a
worker on another machine needs no access to it; whatever a worker raises becomes a
``failed`` result with the reason, and the other candidates go on.
"""

from __future__ import annotations

import time
import traceback
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, Executor, Future, wait
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from mechfit.batch.store import ResultStore


@dataclass(frozen=True)
class Task:
    """One piece of batch work: its store ``key``, a display ``name`` and ``variant``, and
    the ``payload`` handed to the evaluator (picklable)."""

    key: str
    name: str
    variant: str
    payload: Any = field(compare=False)


@dataclass(frozen=True)
class BatchEvent:
    """What happened to a task: ``kind`` is ``"skipped"`` (already stored), ``"done"`` or
    ``"failed"``; ``done_count``/``total`` count finished tasks (skipped included)."""

    kind: str
    task: Task
    done_count: int
    total: int
    seconds: float | None = None
    reason: str | None = None


def _call(evaluate: Callable[[Any], dict], payload: Any) -> dict:
    start = time.perf_counter()
    try:
        out = dict(evaluate(payload))
    except Exception as exc:  # a failed candidate must never stop the batch
        out = {"status": "failed", "summary": {},
               "reason": f"{type(exc).__name__}: {exc}".strip(),
               "detail": traceback.format_exc(limit=3)}
    out["seconds"] = time.perf_counter() - start
    return out


def run_batch(tasks: Iterable[Task], evaluate: Callable[[Any], dict], executor: Executor,
              store: ResultStore, *, max_in_flight: int = 4) -> Iterator[BatchEvent]:
    """Evaluate every task not yet in ``store``, yielding an event per task.

    ``evaluate(payload)`` runs in a worker and returns a dict with ``status`` (``"ok"`` or
    ``"failed"``), ``summary`` (JSON-safe), optionally ``reason`` and ``posterior`` (the
    posterior as netCDF bytes). At most ``max_in_flight`` tasks are submitted at once, so
    a killed batch loses little work; on restart the stored tasks are skipped.
    """
    tasks = list(tasks)
    total = len(tasks)
    count = 0
    store.remove_stray_files()
    pending: list[Task] = []
    for task in tasks:
        if store.has(task.key):
            count += 1
            yield BatchEvent("skipped", task, count, total)
        else:
            pending.append(task)
    running: dict[Future, Task] = {}
    queue = iter(pending)
    exhausted = False
    while running or not exhausted:
        while not exhausted and len(running) < max_in_flight:
            task = next(queue, None)
            if task is None:
                exhausted = True
                break
            running[executor.submit(_call, evaluate, task.payload)] = task
        if not running:
            break
        finished, _ = wait(list(running), return_when=FIRST_COMPLETED)
        for fut in finished:
            task = running.pop(fut)
            try:
                out = fut.result()
            except Exception as exc:  # the worker itself died (killed, out of memory)
                out = {"status": "failed", "summary": {}, "seconds": None,
                       "reason": f"worker failed: {type(exc).__name__}: {exc}"}
            status = out.get("status", "failed")
            blob = out.get("posterior")
            writer = None
            if blob is not None:
                def writer(path: Path, blob: bytes = blob) -> None:
                    path.write_bytes(blob)
            store.put(task.key, name=task.name, variant=task.variant, status=status,
                      summary=out.get("summary", {}), reason=out.get("reason"),
                      write_posterior=writer, seconds=out.get("seconds"))
            count += 1
            yield BatchEvent("done" if status == "ok" else "failed", task, count, total,
                             out.get("seconds"), out.get("reason"))


def run_to_end(events: Iterable[BatchEvent]) -> list[BatchEvent]:
    """Drain the generator, returning every event (the simplest runner)."""
    return list(events)
