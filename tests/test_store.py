"""The review store: file permissions, WAL, migrations, transactions, append-only rows,
settings, and the constraints() call the pipeline makes."""

from __future__ import annotations

import os
import sqlite3
import stat

import pandas as pd
import pytest

from conftest_project import clock, keys, make_project
from resolve.errors import ProjectError
from resolve.project import Review, ReviewStore, load_review_settings
from resolve.project.store import MIGRATIONS, STORE_FILE


def mode(path) -> int:
    return stat.S_IMODE(os.stat(path).st_mode)


def test_store_is_created_owner_only_with_wal_files_too(tmp_path):
    project = make_project(tmp_path / "p")
    assert not ReviewStore.exists(project.path)
    old = os.umask(0o022)  # a permissive umask must not leak into the store's files
    try:
        with Review(project, clock=clock()) as review:
            review.decide("note", "ana", record_ids="C001", note="first look")
            path = project.path / STORE_FILE
            assert ReviewStore.exists(project.path)
            assert mode(path) == 0o600
            for suffix in ("-wal", "-shm"):
                side = project.path / (STORE_FILE + suffix)
                assert side.exists()
                assert mode(side) & 0o077 == 0, f"{side.name} readable by others"
    finally:
        os.umask(old)


def test_wal_mode_busy_timeout_and_recorded_migrations(tmp_path):
    project = make_project(tmp_path / "p")
    with ReviewStore.open(project.path) as store:
        assert store.conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert store.conn.execute("PRAGMA busy_timeout").fetchone()[0] >= 5000
        applied = store.migrations()
        assert applied["version"].tolist() == [v for v, _, _ in MIGRATIONS]
        assert applied["applied_at"].str.match(r"^\d{4}-\d\d-\d\dT").all()
    with ReviewStore.open(project.path) as store:  # reopening applies nothing twice
        assert len(store.migrations()) == len(MIGRATIONS)


def test_store_written_by_a_newer_version_is_refused(tmp_path):
    project = make_project(tmp_path / "p")
    with ReviewStore.open(project.path) as store:
        store.conn.execute("INSERT INTO schema_migrations VALUES (999, 'future', 'x')")
    with pytest.raises(ProjectError, match="newer version"):
        ReviewStore.open(project.path)


def test_open_needs_a_project_folder(tmp_path):
    with pytest.raises(ProjectError, match="not a project folder"):
        ReviewStore.open(tmp_path / "missing")


def test_atomic_rolls_back_everything_on_error_and_nests(tmp_path):
    project = make_project(tmp_path / "p")
    with ReviewStore.open(project.path) as store:
        with pytest.raises(RuntimeError):
            with store.atomic() as conn:
                conn.execute("INSERT INTO runs VALUES ('x', NULL, 't', 'h', '{}')")
                with store.atomic():  # joins the outer transaction
                    conn.execute("INSERT INTO runs VALUES ('y', NULL, 't', 'h', '{}')")
                raise RuntimeError("boom")
        assert store.query("SELECT run_id FROM runs WHERE run_id IN ('x', 'y')").empty
        with store.atomic() as conn:
            conn.execute("INSERT INTO runs VALUES ('z', NULL, 't', 'h', '{}')")
        assert store.query("SELECT run_id FROM runs WHERE run_id = 'z'")["run_id"].tolist() == ["z"]


@pytest.mark.parametrize("table", ["decisions", "decision_records", "audit_log", "cases", "runs"])
def test_rows_are_never_updated_or_deleted(tmp_path, table):
    project = make_project(tmp_path / "p")
    with Review(project, clock=clock()) as review:
        review.decide("escalate", "ana", cluster_key=keys(project)["group"], note="look")
        conn = review.store.conn
        with pytest.raises(sqlite3.DatabaseError, match="never changed or deleted"):
            conn.execute(f"DELETE FROM {table}")
        column = conn.execute(f"SELECT * FROM {table}").description[1][0]
        with pytest.raises(sqlite3.DatabaseError, match="never changed or deleted"):
            conn.execute(f"UPDATE {table} SET {column} = {column}")


def test_constraints_contract_for_the_pipeline(tmp_path):
    project = make_project(tmp_path / "p")
    with ReviewStore.open(project.path) as store:  # empty store
        must, cannot = store.constraints()
    for frame in (must, cannot):
        assert list(frame.columns) == ["record_id_a", "record_id_b"]
        assert frame.empty
    with Review(project, clock=clock()) as review:
        review.decide("accept", "ana", cluster_key=keys(project)["entity"])
    with ReviewStore.open(project.path) as store:
        must, cannot = store.constraints()
    assert must.to_dict(orient="records") == [{"record_id_a": "C001", "record_id_b": "C002"}]
    assert cannot.empty


def test_review_settings_defaults_and_errors(tmp_path):
    assert load_review_settings(tmp_path).four_eyes is False
    assert load_review_settings(tmp_path).survivor_rule == "most_complete"
    (tmp_path / "project.toml").write_text('[review]\nfour_eyes = true\nsurvivor_rule = "oldest"\n'
                                           'sync = "full"\n')
    s = load_review_settings(tmp_path)
    assert (s.four_eyes, s.survivor_rule, s.sync) == (True, "oldest", "full")
    (tmp_path / "project.toml").write_text('[review]\nsurvivor_rule = "random"\n')
    with pytest.raises(ProjectError, match="survivor_rule"):
        load_review_settings(tmp_path)
    (tmp_path / "project.toml").write_text('[review]\nfour_eyes = "yes"\n')
    with pytest.raises(ProjectError, match="four_eyes"):
        load_review_settings(tmp_path)
    (tmp_path / "project.toml").write_text('[review\n')
    with pytest.raises(ProjectError, match="not valid TOML"):
        load_review_settings(tmp_path)


def test_full_sync_setting_reaches_sqlite(tmp_path):
    project = make_project(tmp_path / "p", settings='[review]\nsync = "full"\n')
    with ReviewStore.open(project.path) as store:
        # PRAGMA synchronous reports FULL as 2 (SQLite documentation, from memory)
        assert store.conn.execute("PRAGMA synchronous").fetchone()[0] == 2


def test_runs_are_registered_once(tmp_path):
    project = make_project(tmp_path / "p")
    with Review(project) as review:
        assert review.sync_runs() == []  # the first open registered run-0001 already
        runs = review.store.registered_runs()
    assert runs["run_id"].tolist() == ["run-0001"]
    assert isinstance(runs, pd.DataFrame) and runs["manifest_sha256"].str.len().eq(64).all()
