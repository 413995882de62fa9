"""``mechfit batch`` end to end on a tiny invented study: a real batch process killed with
SIGKILL and resumed, a failing scheme, the JSON contract, and a dask LocalCluster."""

import json
import os
import re
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

SCHEMES = {
    "first": "decay: A -> P @ k\n",
    "second": "decay: 2 A -> P @ k\n",
    "mixed": "one: A -> P @ k1\ntwo: 2 A -> P @ k2\n",
    "saturating": "decay: A -> P @ rate = k*[A]/(1 + q*[A])\n",
    # same reduced rate law as 'first' (k1*k2/(k_1 + k2) * [A]): merged, never fitted
    "via": "on: A <=> I @ k1, k_1\noff: I -> P @ k2\nsteady: I\n",
    # every constant fixed: nothing to fit, so it fails (and the others go on)
    "fixed": "decay: A -> P @ k = 0.02\n",
}
FITTED = ["first", "second", "mixed", "saturating", "fixed"]
BUDGET = ["--starts", "2", "--max-steps", "300"]
# the keys of `mechfit batch --json` documented in docs/batch.md
JSON_KEYS = {"study", "store", "schemes", "merged", "tasks", "skipped", "fitted", "failed",
             "ranking", "error", "report", "folder", "store_bytes", "seconds"}


@pytest.fixture(scope="module")
def study(tmp_path_factory):
    """Invented data: first-order decay of A (k = 0.02 1/s) from 1 and 2 mM, 10 points
    each, noise 0.01 mM, seed 5 (made up for this test)."""
    folder = tmp_path_factory.mktemp("batch-study")
    rng = np.random.default_rng(5)
    t = np.linspace(0.0, 150.0, 10)
    runs = []
    for i, a0 in enumerate([1.0, 2.0], start=1):
        a = a0 * np.exp(-0.02 * t) + rng.normal(0.0, 0.01, t.size)
        (folder / f"r{i}.csv").write_text("time,A\n" + "".join(
            f"{x:.6g},{y:.6g}\n" for x, y in zip(t, a, strict=True)))
        runs.append(f'[[run]]\nname = "r{i}"\ninitial = {{ A = {a0} }}\ntable = "r{i}.csv"\n')
    (folder / "study.toml").write_text(
        'title = "Decay of A (invented data for a test)"\n'
        'units = { concentration = "mM", time = "s", temperature = "degC" }\n'
        "temperature = 25\n\n[observable.A]\nkind = \"concentration\"\nsigma = 0.01\n\n"
        + "\n".join(runs))
    for name, text in SCHEMES.items():
        (folder / f"{name}.mech").write_text(text)
    return folder


def command(study, store, *extra):
    return [sys.executable, "-m", "mechfit", "batch", str(study / "study.toml"),
            *[str(study / f"{n}.mech") for n in SCHEMES], "--store", str(store), *BUDGET,
            *extra]


def stored_rows(store):
    if not Path(store).exists():
        return []
    con = sqlite3.connect(store, timeout=30)
    try:
        return con.execute("SELECT key, name, finished, posterior FROM results").fetchall()
    except sqlite3.OperationalError:  # the table is not made yet
        return []
    finally:
        con.close()


@pytest.fixture(scope="module")
def resumed(study, tmp_path_factory):
    """Start a real batch, SIGKILL its process group after the first stored result, then
    rerun the same command to the end."""
    store = tmp_path_factory.mktemp("store") / "screen.sqlite"
    proc = subprocess.Popen(command(study, store, "--workers", "1"), start_new_session=True,
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    deadline = time.monotonic() + 240
    try:
        while not stored_rows(store):
            assert proc.poll() is None, proc.stderr.read().decode()[-3000:]
            assert time.monotonic() < deadline, "no result stored within 240 s"
            time.sleep(0.2)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)  # the workers die with it
        proc.wait()
    before = stored_rows(store)
    again = subprocess.run(command(study, store, "--workers", "1", "--json"),
                           capture_output=True, text=True, timeout=600)
    assert again.returncode == 0, again.stderr[-3000:]
    return store, before, json.loads(again.stdout), proc.returncode


def test_killed_batch_resumes_with_nothing_lost_and_nothing_duplicated(resumed):
    store, before, data, killed_code = resumed
    assert killed_code == -signal.SIGKILL
    assert 1 <= len(before) < len(FITTED)  # killed mid-way
    rows = stored_rows(store)
    keys = [r[0] for r in rows]
    assert sorted(r[1] for r in rows) == sorted(FITTED)  # nothing lost...
    assert len(rows) == len(set(keys)) == len(FITTED) == data["tasks"]  # ...none twice
    # the results stored before the kill were kept, not redone
    finished = {r[0]: r[2] for r in rows}
    assert all(finished[k] == t for k, _n, t, _p in before)
    assert data["skipped"] == len(before) and data["fitted"] == len(FITTED) - len(before)
    files = sorted(p.name for p in Path(str(store) + ".posteriors").iterdir())
    assert files == sorted(r[3] for r in rows if r[3])  # one posterior per ok row, no tmp
    assert len(files) == len(FITTED) - 1


def test_failing_scheme_is_recorded_with_its_reason_and_the_others_are_ranked(resumed):
    _store, _before, data, _code = resumed
    assert [(f["name"], f["variant"]) for f in data["failed"]] == [("fixed", "full")]
    assert "nothing to sample" in data["failed"][0]["reason"]
    ranked = [c["name"] for c in data["ranking"]["candidates"]]
    assert sorted(ranked) == sorted(n for n in FITTED if n != "fixed")
    # the truth (first order) is not beaten by the second-order scheme
    assert ranked.index("first") < ranked.index("second")


def test_equivalent_scheme_merged_and_json_keys_as_documented(resumed):
    _store, _before, data, _code = resumed
    assert data["merged"] == {"first": ["via"]}
    assert "via" not in data["schemes"] and data["error"] is None
    assert set(data) == JSON_KEYS
    doc = (Path(__file__).parents[2] / "docs" / "batch.md").read_text()
    documented = set(re.findall(r"^\| `(\w+)` \|", doc, flags=re.MULTILINE))
    assert JSON_KEYS <= documented


def _without_timings(value):
    if isinstance(value, dict):
        return {k: _without_timings(v) for k, v in value.items() if k != "seconds"}
    if isinstance(value, list):
        return [_without_timings(v) for v in value]
    return value


def test_local_cluster_gives_the_same_stored_summaries_as_the_process_pool(resumed, study,
                                                                           tmp_path):
    """A real dask.distributed LocalCluster on loopback, against the pool's store."""
    pytest.importorskip("distributed")
    from mechfit.batch import ResultStore

    pool_store, _before, _data, _code = resumed
    store = tmp_path / "dask.sqlite"
    cmd = [sys.executable, "-m", "mechfit", "batch", str(study / "study.toml"),
           str(study / "first.mech"), str(study / "fixed.mech"), "--store", str(store),
           *BUDGET, "--cluster", "local:1", "--json"]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr[-3000:]
    dask_rows = ResultStore(store).results()
    assert len(dask_rows) == 2
    pool = ResultStore(pool_store)
    for row in dask_rows:
        twin = pool.get(row["key"])  # same content key: same scheme, study, settings
        assert twin is not None and twin["status"] == row["status"]
        assert _without_timings(twin["summary"]) == _without_timings(row["summary"])
        assert twin["reason"] == row["reason"]
