"""Reliability of the review store: a killed writer loses nothing committed, two writers at
once lose nothing, and decisions are re-applied by the next run's clustering."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys

import numpy as np
import pandas as pd

from conftest_project import make_project
from resolve.clusters import build_entities
from resolve.project import Review, ReviewStore, verify_audit

WRITER = r"""
import os, sys, time
from resolve.project import Review

project, reviewer, count, gate = sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4]
print("ready", flush=True)
while gate != "-" and not os.path.exists(gate):
    time.sleep(0.005)
with Review(project) as review:
    i = 0
    while count < 0 or i < count:
        step = i % 4
        if step == 0:
            d = review.decide("accept", reviewer, record_ids="C001,C002")
        elif step == 1:
            d = review.decide("note", reviewer, record_ids="C00%d" % (1 + i % 8), note="n%d" % i)
        elif step == 2:
            d = review.decide("reject", reviewer, record_ids="C001,C002")
        else:
            d = review.decide("escalate", reviewer, record_ids="C006,C007", note="e%d" % i)
        print(d.decision_id, flush=True)   # printed only after the commit returned
        i += 1
"""


def writer(project, reviewer: str, count: int, gate: str = "-") -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-c", WRITER, str(project.path), reviewer, str(count), gate],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def stored_ids(project) -> set[int]:
    with ReviewStore.open(project.path) as store:
        return set(store.decisions()["decision_id"].astype(int))


def test_a_killed_writer_loses_no_committed_decision(tmp_path):
    project = make_project(tmp_path / "book")
    proc = writer(project, "ana", -1)
    assert proc.stdout.readline().strip() == "ready"
    printed: list[int] = []
    while len(printed) < 25:
        line = proc.stdout.readline()
        assert line, proc.stderr.read()
        printed.append(int(line))
    os.kill(proc.pid, signal.SIGKILL)   # in the middle of the stream of decisions
    rest, _ = proc.communicate(timeout=30)
    printed += [int(x) for x in rest.split()]
    assert proc.returncode == -signal.SIGKILL

    assert set(printed) <= stored_ids(project)
    conn = sqlite3.connect(project.path / "review.sqlite")
    assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    conn.close()
    ok, seq, message = verify_audit(project.path)
    assert ok, message
    with Review(project) as review:     # the store still takes decisions
        d = review.decide("note", "ben", record_ids="C001", note="after the crash")
    assert d.decision_id == max(stored_ids(project))
    assert verify_audit(project.path)[0]


def test_two_writers_at_once_keep_every_decision(tmp_path):
    project = make_project(tmp_path / "book")
    gate = tmp_path / "go"
    procs = [writer(project, name, 30, str(gate)) for name in ("ana", "ben")]
    for p in procs:
        assert p.stdout.readline().strip() == "ready"
    gate.touch()
    outputs = []
    for p in procs:
        out, err = p.communicate(timeout=120)
        assert p.returncode == 0, err
        outputs.append([int(x) for x in out.split()])
    printed = outputs[0] + outputs[1]
    assert len(printed) == 60 and len(set(printed)) == 60
    assert stored_ids(project) == set(printed)
    with ReviewStore.open(project.path) as store:
        log = store.query("SELECT seq, action FROM audit_log ORDER BY seq")
        runs = store.registered_runs()
    assert log["seq"].tolist() == list(range(1, len(log) + 1))
    assert (log["action"] != "register_run").sum() == 60 and len(runs) == 1
    ok, _, message = verify_audit(project.path)
    assert ok, message


def test_decisions_are_re_applied_by_the_next_clustering(tmp_path):
    """The constraints the store hands the pipeline do what the reviewer said."""
    project = make_project(tmp_path / "book")
    with Review(project) as review:
        review.decide("accept", "ana", record_ids="C001,C002")        # a review-band pair
        review.decide("split", "ana", record_ids="C004,C005", groups="C004;C005")
    people = project.latest_run().table("entities")[["record_id"]]
    links = pd.DataFrame({"rec_a": np.array([0, 3], dtype=np.int32), "rec_b": np.array([1, 4], dtype=np.int32),
                          "prob": [0.83, 0.97], "link_type": ["review", "same_person"]})
    plain = build_entities(people, links)
    ent = plain.set_index("record_id")["entity_id"]
    assert ent["C001"] != ent["C002"] and ent["C004"] == ent["C005"]   # before: as the scores say
    with ReviewStore.open(project.path) as store:
        must, cannot = store.constraints()
    ent = build_entities(people, links, must, cannot).set_index("record_id")["entity_id"]
    assert ent["C001"] == ent["C002"]       # accepted: one entity
    assert ent["C004"] != ent["C005"]       # split: kept apart despite a same-person link
    assert len(ent) == 8


def test_a_second_writer_waits_for_the_lock_instead_of_failing(tmp_path):
    import threading

    project = make_project(tmp_path / "book")
    released = threading.Event()
    with ReviewStore.open(project.path) as first, ReviewStore.open(project.path) as second:
        first.conn.execute("BEGIN IMMEDIATE")

        def release():
            released.set()
            first.conn.execute("COMMIT")
        threading.Timer(0.2, release).start()
        with second.atomic() as conn:     # blocks on the lock, then proceeds
            assert released.is_set()
            conn.execute("INSERT INTO runs VALUES ('w', NULL, 't', 'h', '{}')")
        assert second.query("SELECT run_id FROM runs WHERE run_id = 'w'").shape[0] == 1
