"""The SQLite result store: keys, atomic writes, WAL, no duplicates."""

import sqlite3
import threading

import pytest

from mechfit.batch.store import ResultStore, StoreError, content_key


def test_key_depends_on_content_not_on_order_of_settings():
    a = content_key(scheme="A -> B @ k1\n", variant="full", study="s", settings={"x": 1, "y": 2})
    b = content_key(scheme="A -> B @ k1\n", variant="full", study="s", settings={"y": 2, "x": 1})
    c = content_key(scheme="A -> B @ k1\n", variant="full", study="s2", settings={"x": 1, "y": 2})
    d = content_key(scheme="A -> B @ k1\n", variant="qssa", study="s", settings={"x": 1, "y": 2})
    e = content_key(scheme="A -> B @ k1\n", variant="full", study="s", settings={"x": 1, "y": 2},
                    version="0.0.0")
    assert a == b and len({a, c, d, e}) == 4


def test_put_get_and_first_result_wins(tmp_path):
    store = ResultStore(tmp_path / "b.sqlite")
    store.put("k", name="m", variant="full", status="ok", summary={"aicc": 1.0})
    store.put("k", name="m", variant="full", status="ok", summary={"aicc": 2.0})
    assert len(store) == 1 and store.get("k")["summary"] == {"aicc": 1.0}
    store.put("f", name="m2", variant="full", status="failed", reason="no fit converged",
              summary={})
    assert [r["name"] for r in store.results("failed")] == ["m2"]
    assert store.get("nope") is None


def test_posterior_written_under_temporary_name_then_renamed(tmp_path):
    store = ResultStore(tmp_path / "b.sqlite")
    seen = []

    def write(path):
        seen.append(path.name)
        path.write_bytes(b"netcdf")

    store.put("k" * 64, name="m", variant="full", status="ok", summary={}, write_posterior=write)
    row = store.get("k" * 64)
    assert seen[0].startswith(".") and seen[0].endswith(".tmp")
    assert row["posterior"].endswith(".nc") and open(row["posterior"], "rb").read() == b"netcdf"
    assert not list(store.posterior_dir.glob(".*.tmp"))


def test_failed_posterior_writer_leaves_no_row(tmp_path):
    store = ResultStore(tmp_path / "b.sqlite")

    def broken(path):
        path.write_bytes(b"half")
        raise OSError("disk full")

    with pytest.raises(OSError):
        store.put("k", name="m", variant="full", status="ok", summary={}, write_posterior=broken)
    assert not store.has("k")
    assert store.remove_stray_files() == 1


def test_wal_mode_allows_reading_while_writing(tmp_path):
    store = ResultStore(tmp_path / "b.sqlite")
    con = sqlite3.connect(store.path)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    con.execute("BEGIN IMMEDIATE")  # a writer holds the write lock...
    con.execute("INSERT INTO results VALUES ('x','m','full','ok',NULL,'{}',NULL,NULL,0,'v')")
    found = []
    t = threading.Thread(target=lambda: found.append(len(store)))
    t.start()
    t.join(5)
    assert found == [0]  # ...and a reader still answers (it sees the last commit)
    con.execute("COMMIT")
    assert len(store) == 1


def test_not_a_store(tmp_path):
    bad = tmp_path / "notes.sqlite"
    bad.write_text("this is not sqlite " * 100)
    with pytest.raises(StoreError, match="not a mechfit result store"):
        ResultStore(bad)
