"""The audit log: hash chain, verification, tamper detection, and what gets logged."""

from __future__ import annotations

import hashlib
import json
import sqlite3

import pytest

from conftest_project import clock, keys, make_project, second_run
from resolve.exports import export
from resolve.project import Review, ReviewStore, verify_audit
from resolve.project.audit import GENESIS, audit_frame, canonical, entry_hash
from resolve.project.runs import file_sha256


@pytest.fixture
def busy(tmp_path):
    """A project with a handful of logged actions."""
    project = make_project(tmp_path / "book")
    with Review(project, clock=clock()) as review:
        a = review.decide("accept", "ana", cluster_key=keys(project)["entity"])
        review.decide("escalate", "ben", cluster_key=keys(project)["group"], note="ring")
        review.decide("undo", "ben", target_id=a.decision_id)
        review.reveal("ana", "C006")
    return project


def raw(project) -> sqlite3.Connection:
    return sqlite3.connect(project.path / "review.sqlite", isolation_level=None)


def test_entry_hash_is_sha256_of_prev_hash_and_canonical_json():
    # computed by hand from the definition: sha256(prev_hash + canonical JSON of the entry)
    body = '{"action":"export","actor":"ana","at":"t","details":{"a":"é","b":1},"seq":1,"subject":"s"}'
    expected = hashlib.sha256((GENESIS + body).encode("utf-8")).hexdigest()
    assert entry_hash(GENESIS, 1, "t", "ana", "export", "s", {"b": 1, "a": "é"}) == expected
    assert canonical({"b": [1, 2], "a": None}) == '{"a":null,"b":[1,2]}'


def test_chain_links_every_entry_and_verifies(busy):
    with ReviewStore.open(busy.path) as store:
        log = audit_frame(store)
    assert log["seq"].tolist() == list(range(1, len(log) + 1))
    assert log["prev_hash"].iloc[0] == GENESIS
    assert (log["prev_hash"].iloc[1:].to_numpy() == log["hash"].iloc[:-1].to_numpy()).all()
    for row in log.itertuples(index=False):
        assert row.hash == entry_hash(row.prev_hash, row.seq, row.at, row.actor, row.action,
                                      row.subject, json.loads(row.details))
    assert log["action"].tolist() == ["register_run", "accept", "escalate", "undo", "reveal"]
    ok, seq, message = verify_audit(busy.path)
    assert ok and seq is None and f"{len(log)} audit entries verified" in message


def test_changing_one_entry_is_named_by_seq(busy):
    conn = raw(busy)
    conn.execute("DROP TRIGGER audit_log_no_update")  # what a tamperer would have to do
    conn.execute("UPDATE audit_log SET actor = 'mallory' WHERE seq = 3")
    conn.close()
    ok, seq, message = verify_audit(busy.path)
    assert (ok, seq) == (False, 3) and "entry 3 was changed" in message


def test_rehashing_a_changed_entry_breaks_the_next_link(busy):
    conn = raw(busy)
    conn.execute("DROP TRIGGER audit_log_no_update")
    row = conn.execute("SELECT seq, at, actor, action, subject, details, prev_hash FROM audit_log "
                       "WHERE seq = 2").fetchone()
    details = json.loads(row[5])
    details["note"] = "edited"
    new_hash = entry_hash(row[6], row[0], row[1], row[2], row[3], row[4], details)
    conn.execute("UPDATE audit_log SET details = ?, hash = ? WHERE seq = 2", (canonical(details), new_hash))
    conn.close()
    ok, seq, _ = verify_audit(busy.path)
    assert (ok, seq) == (False, 3)


def test_removing_an_entry_is_named(busy):
    conn = raw(busy)
    conn.execute("DROP TRIGGER audit_log_no_delete")
    conn.execute("DELETE FROM audit_log WHERE seq = 2")
    conn.close()
    ok, seq, message = verify_audit(busy.path)
    assert (ok, seq) == (False, 2) and "missing" in message


def test_changing_a_decision_row_is_caught_through_its_audit_entry(busy):
    conn = raw(busy)
    conn.execute("DROP TRIGGER decisions_no_update")
    conn.execute("UPDATE decisions SET reviewer = 'mallory' WHERE decision_id = 1")
    conn.close()
    ok, seq, message = verify_audit(busy.path)
    assert (ok, seq) == (False, 2) and "decision 1 no longer matches" in message


def test_a_decision_without_its_audit_entry_is_caught(busy):
    conn = raw(busy)
    conn.execute("DROP TRIGGER audit_log_no_delete")
    conn.execute("DELETE FROM audit_log WHERE seq >= 4")  # cut the tail: undo and reveal
    conn.close()
    ok, seq, message = verify_audit(busy.path)
    assert not ok and "decision 3 has no audit entry" in message


def test_exports_and_runs_are_logged(busy, tmp_path):
    out = tmp_path / "entities.csv"
    export(busy, "entities", out, actor="carol")
    second_run(busy)
    with Review(busy) as review:   # opening registers the new run
        log = audit_frame(review.store)
    exp = log[log["action"] == "export"].iloc[-1]
    details = json.loads(exp["details"])
    assert exp["actor"] == "carol" and exp["subject"] == "export:entities"
    assert details["sha256"] == file_sha256(out) and details["rows"] == 8
    runs = log[log["action"] == "register_run"]
    assert runs["subject"].tolist() == ["run:run-0001", "run:run-0002"]
    assert all(len(json.loads(d)["manifest_sha256"]) == 64 for d in runs["details"])
    assert verify_audit(busy.path)[0]


def test_empty_log_verifies(tmp_path):
    project = make_project(tmp_path / "b")
    ReviewStore.open(project.path).close()
    assert verify_audit(project.path) == (True, None, f"0 audit entries verified; head {GENESIS}.")
