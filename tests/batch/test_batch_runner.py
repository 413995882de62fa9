"""The batch runner: skips stored work, stores results, survives failing candidates."""

from mechfit.batch.executors import open_executor
from mechfit.batch.runner import Task, run_batch, run_to_end
from mechfit.batch.store import ResultStore


def square_or_fail(x):
    if x < 0:
        raise ValueError(f"negative input {x}")
    return {"status": "ok", "summary": {"value": x * x}, "posterior": b"nc" * x}


def test_runner_stores_results_and_failures_and_skips_on_rerun(tmp_path):
    store = ResultStore(tmp_path / "b.sqlite")
    tasks = [Task(f"key{i}", f"s{i}", "full", x) for i, x in enumerate([1, 2, -3, 4])]
    with open_executor(workers=2) as ex:
        events = run_to_end(run_batch(tasks, square_or_fail, ex, store, max_in_flight=2))
    kinds = sorted(e.kind for e in events)
    assert kinds == ["done", "done", "done", "failed"]
    failed = store.results("failed")
    assert [r["name"] for r in failed] == ["s2"] and "negative input -3" in failed[0]["reason"]
    assert store.get("key3")["summary"] == {"value": 16}
    assert open(store.get("key1")["posterior"], "rb").read() == b"ncnc"
    assert events[-1].done_count == events[-1].total == 4
    with open_executor(workers=1) as ex:
        again = run_to_end(run_batch(tasks + [Task("key9", "s9", "full", 3)], square_or_fail,
                                     ex, store))
    assert [e.kind for e in again].count("skipped") == 4
    assert [e.task.name for e in again if e.kind == "done"] == ["s9"]
    assert len(store) == 5


def test_local_dask_cluster_gives_the_same_results_as_the_process_pool(tmp_path):
    """A real dask.distributed LocalCluster on loopback (two worker processes)."""
    import pytest

    pytest.importorskip("distributed")
    tasks = [Task(f"key{i}", f"s{i}", "full", x) for i, x in enumerate([5, -1, 7])]
    results = {}
    for kind, opts in (("pool", {"workers": 2}), ("dask", {"cluster": "local:2"})):
        store = ResultStore(tmp_path / f"{kind}.sqlite")
        with open_executor(**opts) as ex:
            run_to_end(run_batch(tasks, square_or_fail, ex, store))
        results[kind] = {r["name"]: (r["status"], r["summary"]) for r in store.results()}
    assert results["pool"] == results["dask"]
    assert results["dask"]["s0"] == ("ok", {"value": 25})
