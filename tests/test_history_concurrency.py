"""Nothing is lost: concurrent adds from several processes, and a process killed mid-add."""
from __future__ import annotations

import hashlib
import multiprocessing
import os
import signal
import sqlite3

import numpy as np
import pytest

from identify.history import HistoryStore
from identify.poles import pole_from_frequency_damping, pole_with_delta_intervals

N_PROCESSES = 4
ADDS_PER_PROCESS = 25


class SyntheticResult:
    def __init__(self, path):
        data = open(path, "rb").read()
        self.source = str(path)
        self.sha256 = hashlib.sha256(data).hexdigest()
        fn = 10.0 + (int(self.sha256[:6], 16) % 1000) / 1000.0
        self.poles = (pole_with_delta_intervals(pole_from_frequency_damping(fn, 0.02),
                                                np.diag([0.01, 0.03]), 0.95),)
        self.warnings = ()
        self.settings = {"synthetic": True}


def analyse(path):
    return SyntheticResult(path)


def worker(db, folder, worker_id, shared_file, queue):
    try:
        with HistoryStore(db) as store:
            added = 0
            for i in range(ADDS_PER_PROCESS):
                path = os.path.join(folder, f"w{worker_id}-{i}.csv")
                with open(path, "w") as fh:
                    fh.write(f"t,x\n0,{worker_id}\n1,{i}\n")
                out = store.add("rig", path, analyse=analyse, when=f"2026-01-01T00:{worker_id:02d}:{i:02d}Z")
                added += out.added
                if i == ADDS_PER_PROCESS // 2:  # every process also races to add the same file
                    store.add("rig", shared_file, analyse=analyse, when="2026-01-02")
        queue.put((worker_id, added, None))
    except BaseException as exc:  # report to the parent instead of dying silently
        queue.put((worker_id, 0, repr(exc)))


def test_concurrent_adds_lose_nothing(tmp_path):
    db = str(tmp_path / "h.sqlite")
    shared = tmp_path / "shared.csv"
    shared.write_text("t,x\n0,42\n")
    HistoryStore(db).close()  # created before the race; creation races are covered below
    ctx = multiprocessing.get_context("fork")
    queue = ctx.Queue()
    procs = [ctx.Process(target=worker, args=(db, str(tmp_path), w, str(shared), queue))
             for w in range(N_PROCESSES)]
    for p in procs:
        p.start()
    reports = [queue.get(timeout=120) for _ in procs]
    for p in procs:
        p.join(timeout=60)
        assert p.exitcode == 0
    assert all(err is None for _, _, err in reports), reports
    assert sorted(n for _, n, _ in reports) == [ADDS_PER_PROCESS] * N_PROCESSES
    with HistoryStore(db) as store:
        tests = store.get("rig")
    expected = {hashlib.sha256(open(tmp_path / f"w{w}-{i}.csv", "rb").read()).hexdigest()
                for w in range(N_PROCESSES) for i in range(ADDS_PER_PROCESS)}
    expected.add(hashlib.sha256(shared.read_bytes()).hexdigest())
    got = [t.sha256 for t in tests]
    assert len(got) == N_PROCESSES * ADDS_PER_PROCESS + 1 == len(set(got))
    assert set(got) == expected


def create_and_add(db, folder, worker_id, queue):
    worker(db, folder, worker_id, os.path.join(folder, "shared.csv"), queue)


def test_concurrent_creation_of_a_new_database(tmp_path):
    db = str(tmp_path / "new.sqlite")
    (tmp_path / "shared.csv").write_text("t,x\n0,7\n")
    ctx = multiprocessing.get_context("fork")
    queue = ctx.Queue()
    procs = [ctx.Process(target=create_and_add, args=(db, str(tmp_path), w, queue)) for w in range(3)]
    for p in procs:
        p.start()
    reports = [queue.get(timeout=120) for _ in procs]
    for p in procs:
        p.join(timeout=60)
    assert all(err is None for _, _, err in reports), reports
    with HistoryStore(db) as store:
        assert store.count() == 3 * ADDS_PER_PROCESS + 1
        assert store.schema_version == 2
    conn = sqlite3.connect(db)
    assert conn.execute("SELECT COUNT(*) FROM poleprint_schema").fetchone()[0] == 2  # migrated once
    conn.close()


class StallingStore(HistoryStore):
    """Inserts the row, then tells the parent and waits to be killed before COMMIT."""

    def __init__(self, path, ready):
        super().__init__(path)
        self._ready = ready

    def _insert_test(self, conn, row):
        new_id = super()._insert_test(conn, row)
        self._ready.set()
        import time

        time.sleep(120)
        return new_id


def stalled_add(db, path, ready):
    store = StallingStore(db, ready)
    store.add("rig", path, analyse=analyse, when="2026-06-01")


@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL")
def test_process_killed_mid_add_leaves_database_consistent(tmp_path):
    db = str(tmp_path / "h.sqlite")
    with HistoryStore(db) as store:
        for i in range(5):
            f = tmp_path / f"ok{i}.csv"
            f.write_text(f"t,x\n0,{i}\n")
            store.add("rig", str(f), analyse=analyse, when=f"2026-0{i + 1}-01")
    doomed = tmp_path / "doomed.csv"
    doomed.write_text("t,x\n0,666\n")
    ctx = multiprocessing.get_context("fork")
    ready = ctx.Event()
    child = ctx.Process(target=stalled_add, args=(db, str(doomed), ready))
    child.start()
    assert ready.wait(timeout=60), "the child never reached the middle of its transaction"
    os.kill(child.pid, signal.SIGKILL)
    child.join(timeout=30)
    assert child.exitcode == -signal.SIGKILL

    assert os.path.exists(db + "-wal")  # the killed writer left its log behind
    with HistoryStore(db) as store:  # opened the usual way: read-only checks, then recovery
        assert store.conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        tests = store.get("rig")
        assert [t.source for t in tests] == [str(tmp_path / f"ok{i}.csv") for i in range(5)]
        assert store.find_sha256(hashlib.sha256(doomed.read_bytes()).hexdigest()) is None
        # the lock died with the process: the same file can now be added
        out = store.add("rig", str(doomed), analyse=analyse, when="2026-06-01")
        assert out.added and store.count() == 6
