"""The review store: reviewer decisions, cases, registered runs and the audit log in SQLite.

Bulk run results live in Parquet; what people decide lives here, in ``review.sqlite`` inside
the project folder. This is the one module that talks to SQLite. It opens the file in WAL mode
(readers never block the writer), waits on a busy lock instead of failing (two reviewers, or a
reviewer and a scheduled job, can write at the same time), and runs every write through one
`ReviewStore.atomic` helper (``BEGIN IMMEDIATE`` ... ``COMMIT``), so a decision, its records
and its audit entry are kept together or not at all. Schema changes are numbered migrations
recorded in ``schema_migrations``.

Rows are never updated or deleted: triggers refuse it. A decision is withdrawn by a later
decision that supersedes it (see `resolve.project.standing`). The file is created readable by
the owner only, and SQLite gives its ``-wal`` and ``-shm`` files the same permissions.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
import sqlite3
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterator

import pandas as pd

from resolve.errors import DecisionError, ProjectError

STORE_FILE = "review.sqlite"
BUSY_TIMEOUT_MS = 30_000
SURVIVOR_RULES = ("most_complete", "oldest", "newest")
SYNC_MODES = ("normal", "full")

_NO_CHANGE = "SELECT RAISE(ABORT, 'review store rows are never changed or deleted')"


def _immutable(table: str) -> list[str]:
    return [
        f"CREATE TRIGGER {table}_no_update BEFORE UPDATE ON {table} BEGIN {_NO_CHANGE}; END",
        f"CREATE TRIGGER {table}_no_delete BEFORE DELETE ON {table} BEGIN {_NO_CHANGE}; END",
    ]


MIGRATIONS: list[tuple[int, str, list[str]]] = [
    (1, "decisions, decision records, cases, runs and the audit log", [
        """CREATE TABLE runs (
            run_id TEXT PRIMARY KEY,
            created TEXT,
            registered_at TEXT NOT NULL,
            manifest_sha256 TEXT NOT NULL,
            details TEXT NOT NULL)""",
        """CREATE TABLE decisions (
            decision_id INTEGER PRIMARY KEY AUTOINCREMENT,
            action TEXT NOT NULL,
            reviewer TEXT NOT NULL,
            decided_at TEXT NOT NULL,
            cluster_key TEXT,
            kind TEXT,
            records_key TEXT NOT NULL,
            record_ids TEXT NOT NULL,
            groups TEXT,
            target_id INTEGER REFERENCES decisions(decision_id),
            case_id INTEGER,
            survivor_record_id TEXT,
            note TEXT,
            run_id TEXT,
            evidence TEXT,
            evidence_hash TEXT,
            content_hash TEXT NOT NULL)""",
        "CREATE INDEX decisions_cluster ON decisions(cluster_key)",
        "CREATE INDEX decisions_records_key ON decisions(records_key)",
        "CREATE INDEX decisions_target ON decisions(target_id)",
        """CREATE TABLE decision_records (
            decision_id INTEGER NOT NULL REFERENCES decisions(decision_id),
            record_id TEXT NOT NULL,
            part INTEGER NOT NULL,
            PRIMARY KEY (decision_id, record_id)) WITHOUT ROWID""",
        "CREATE INDEX decision_records_record ON decision_records(record_id)",
        """CREATE TABLE cases (
            case_id INTEGER PRIMARY KEY AUTOINCREMENT,
            decision_id INTEGER NOT NULL REFERENCES decisions(decision_id),
            opened_by TEXT NOT NULL,
            opened_at TEXT NOT NULL,
            cluster_key TEXT,
            record_ids TEXT NOT NULL,
            note TEXT)""",
        """CREATE TABLE audit_log (
            seq INTEGER PRIMARY KEY,
            at TEXT NOT NULL,
            actor TEXT NOT NULL,
            action TEXT NOT NULL,
            subject TEXT NOT NULL,
            details TEXT NOT NULL,
            prev_hash TEXT NOT NULL,
            hash TEXT NOT NULL)""",
        *_immutable("decisions"),
        *_immutable("decision_records"),
        *_immutable("cases"),
        *_immutable("audit_log"),
        *_immutable("runs"),
    ]),
]
"""(version, description, statements). Append new versions; never edit an applied one."""


def utc_now() -> str:
    """The current time as UTC ISO 8601 text with milliseconds."""
    return dt.datetime.now(dt.timezone.utc).isoformat(timespec="milliseconds")


@dataclass(frozen=True)
class ReviewSettings:
    """The ``[review]`` table of project.toml.

    ``four_eyes``: a decision counts only once a second, different reviewer approves it.
    ``survivor_rule``: how the surviving record of a merge is chosen (`resolve.project.survivor`).
    ``sync``: ``"normal"`` (default) keeps every committed decision through a crash or kill of
    the program; ``"full"`` also through a power cut or operating-system crash, at the cost
    of one disk flush (several milliseconds) per decision.
    """

    four_eyes: bool = False
    survivor_rule: str = "most_complete"
    sync: str = "normal"


def load_review_settings(project_path: str | Path) -> ReviewSettings:
    """Read ``[review]`` from the project's project.toml; defaults when absent."""
    path = Path(project_path) / "project.toml"
    if not path.exists():
        return ReviewSettings()
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ProjectError(f"{path} is not valid TOML ({exc}); fix the file.") from None
    review = data.get("review", {}) or {}
    four_eyes = review.get("four_eyes", False)
    rule = review.get("survivor_rule", "most_complete")
    if not isinstance(four_eyes, bool):
        raise ProjectError(f"{path}: [review] four_eyes must be true or false.")
    if rule not in SURVIVOR_RULES:
        raise ProjectError(f"{path}: [review] survivor_rule must be one of "
                           f"{', '.join(SURVIVOR_RULES)}, not {rule!r}.")
    sync = review.get("sync", "normal")
    if sync not in SYNC_MODES:
        raise ProjectError(f"{path}: [review] sync must be \"normal\" or \"full\", not {sync!r}.")
    return ReviewSettings(four_eyes=four_eyes, survivor_rule=rule, sync=sync)


class ReviewStore:
    """One connection to a project's review store. Use as a context manager.

    ``clock`` returns the time written on decisions and audit entries (UTC ISO text); tests
    pass a fixed one.
    """

    def __init__(self, project_path: Path, conn: sqlite3.Connection,
                 clock: Callable[[], str] | None = None):
        self.project_path = project_path
        self.path = project_path / STORE_FILE
        self.conn = conn
        self.clock = clock or utc_now
        self._depth = 0

    # ----------------------------------------------------------------- opening
    @staticmethod
    def exists(project_path: str | Path) -> bool:
        """True when the project folder already holds a review store."""
        return (Path(project_path) / STORE_FILE).is_file()

    @classmethod
    def open(cls, project_path: str | Path, clock: Callable[[], str] | None = None) -> "ReviewStore":
        """Open (creating it if needed) the review store of an existing project folder."""
        project_path = Path(project_path)
        if not project_path.is_dir():
            raise ProjectError(f"{project_path} is not a project folder; create one with "
                               f"'resolve run INPUT --project {project_path}'.")
        path = project_path / STORE_FILE
        sync = load_review_settings(project_path).sync.upper()
        if not path.exists():
            # create the empty file owner-only; SQLite copies its mode to -wal and -shm
            with contextlib.suppress(FileExistsError):
                os.close(os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        try:
            conn = sqlite3.connect(path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None,
                                   check_same_thread=False)
            conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            mode = conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]
            conn.execute(f"PRAGMA synchronous = {sync}")
            conn.execute("PRAGMA foreign_keys = ON")
        except sqlite3.DatabaseError as exc:
            raise ProjectError(f"{path} cannot be opened as a review store ({exc}); "
                               "restore it from a backup.") from None
        if str(mode).lower() != "wal":
            conn.close()
            raise ProjectError(f"{path} cannot use write-ahead logging; keep the project on a "
                               "local disk.")
        store = cls(project_path, conn, clock)
        store._migrate()
        store._tighten_permissions()
        return store

    def _tighten_permissions(self) -> None:
        for suffix in ("", "-wal", "-shm"):
            p = Path(str(self.path) + suffix)
            with contextlib.suppress(FileNotFoundError, PermissionError):
                if p.stat().st_mode & 0o077:
                    os.chmod(p, 0o600)

    def close(self) -> None:
        """Close the connection (uncommitted work is rolled back)."""
        self.conn.close()

    def __enter__(self) -> "ReviewStore":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # ------------------------------------------------------------ transactions
    @contextlib.contextmanager
    def atomic(self) -> Iterator[sqlite3.Connection]:
        """One write transaction (``BEGIN IMMEDIATE``): all of it is kept, or none of it.

        Nested calls join the outer transaction. Another process holding the write lock makes
        this wait (up to 30 s) rather than fail.
        """
        if self._depth:
            self._depth += 1
            try:
                yield self.conn
            finally:
                self._depth -= 1
            return
        try:
            self.conn.execute("BEGIN IMMEDIATE")
        except sqlite3.OperationalError as exc:
            raise ProjectError(f"the review store is locked by another process ({exc}); "
                               "try again in a moment.") from None
        self._depth = 1
        try:
            yield self.conn
        except BaseException:
            self._depth = 0
            self.conn.execute("ROLLBACK")
            raise
        self._depth = 0
        self.conn.execute("COMMIT")

    def _migrate(self) -> None:
        """Apply missing migrations in order, each recorded with its time."""
        with self.atomic() as conn:
            conn.execute("CREATE TABLE IF NOT EXISTS schema_migrations ("
                         "version INTEGER PRIMARY KEY, description TEXT NOT NULL, "
                         "applied_at TEXT NOT NULL)")
            done = {row[0] for row in conn.execute("SELECT version FROM schema_migrations")}
            newest = max(v for v, _, _ in MIGRATIONS)
            if done and max(done) > newest:
                raise ProjectError(f"{self.path} was written by a newer version of resolve; "
                                   "upgrade resolve to open it.")
            for version, description, statements in MIGRATIONS:
                if version in done:
                    continue
                for statement in statements:
                    conn.execute(statement)
                conn.execute("INSERT INTO schema_migrations VALUES (?, ?, ?)",
                             (version, description, utc_now()))

    def migrations(self) -> pd.DataFrame:
        """The applied schema migrations: version, description, applied_at."""
        return self.query("SELECT version, description, applied_at FROM schema_migrations "
                          "ORDER BY version")

    # ----------------------------------------------------------------- reading
    def query(self, sql: str, params: tuple | list = ()) -> pd.DataFrame:
        """Run a SELECT and return the rows as a DataFrame (column names from the query)."""
        cur = self.conn.execute(sql, params)
        cols = [c[0] for c in cur.description]
        return pd.DataFrame(cur.fetchall(), columns=cols)

    def settings(self) -> ReviewSettings:
        """The project's current ``[review]`` settings (read from project.toml each time)."""
        return load_review_settings(self.project_path)

    DECISION_COLUMNS = ("decision_id, action, reviewer, decided_at, cluster_key, kind, records_key, "
                        "record_ids, groups, target_id, case_id, survivor_record_id, note, run_id, "
                        "evidence_hash, content_hash")

    def decisions(self, with_evidence: bool = False) -> pd.DataFrame:
        """Every decision ever recorded, oldest first (superseded ones included)."""
        cols = self.DECISION_COLUMNS + (", evidence" if with_evidence else "")
        return self.query(f"SELECT {cols} FROM decisions ORDER BY decision_id")

    def decisions_where(self, where: str, params: tuple | list = ()) -> pd.DataFrame:
        """Decisions matching a SQL condition over the decisions table, oldest first."""
        return self.query(f"SELECT {self.DECISION_COLUMNS} FROM decisions WHERE {where} "
                          "ORDER BY decision_id", params)

    def decision_records(self, decision_ids: list[int] | None = None) -> pd.DataFrame:
        """(decision_id, record_id, part) rows, for some decisions or all."""
        if decision_ids is None:
            return self.query("SELECT decision_id, record_id, part FROM decision_records")
        if not decision_ids:
            return pd.DataFrame({"decision_id": pd.Series(dtype="int64"),
                                 "record_id": pd.Series(dtype="string"),
                                 "part": pd.Series(dtype="int64")})
        frames = [self.query("SELECT decision_id, record_id, part FROM decision_records "
                             f"WHERE decision_id IN ({','.join('?' * len(chunk))})", chunk)
                  for chunk in _chunks([int(i) for i in decision_ids])]
        return pd.concat(frames, ignore_index=True)

    def decisions_touching(self, record_ids: list[str], actions: tuple[str, ...]) -> pd.DataFrame:
        """Decision IDs (with action) whose records include any of ``record_ids``."""
        rows = self.ids_touching(record_ids, actions, with_action=True)
        return pd.DataFrame(rows, columns=["decision_id", "action"]).astype({"decision_id": "int64"})

    def ids_touching(self, record_ids: list[str], actions: tuple[str, ...],
                     with_action: bool = False) -> list:
        """IDs of decisions with these actions whose records include any of ``record_ids``
        (plain rows, for the per-decision path)."""
        marks = ",".join("?" * len(actions))
        out: list = []
        for chunk in _chunks(list(record_ids)):
            out += self.conn.execute(
                "SELECT DISTINCT d.decision_id, d.action FROM decision_records r "
                "JOIN decisions d ON d.decision_id = r.decision_id "
                f"WHERE r.record_id IN ({','.join('?' * len(chunk))}) AND d.action IN ({marks})",
                [*chunk, *actions]).fetchall()
        return sorted(set(out)) if with_action else sorted({r[0] for r in out})

    def ids_with_records_key(self, key: str, actions: tuple[str, ...]) -> list[int]:
        """IDs of decisions with these actions on exactly the records of ``key``."""
        rows = self.conn.execute(
            f"SELECT decision_id FROM decisions WHERE records_key = ? AND action IN "
            f"({','.join('?' * len(actions))}) ORDER BY decision_id", [key, *actions]).fetchall()
        return [r[0] for r in rows]

    def member_rows(self, decision_ids: list[int]) -> list[tuple[int, str, int]]:
        """(decision_id, record_id, part) rows of some decisions, sorted (plain rows)."""
        out: list = []
        for chunk in _chunks([int(i) for i in decision_ids]):
            out += self.conn.execute(
                "SELECT decision_id, record_id, part FROM decision_records "
                f"WHERE decision_id IN ({','.join('?' * len(chunk))})", chunk).fetchall()
        return sorted(out)

    def related_decisions(self, decision_ids: list[int]) -> pd.DataFrame:
        """Every decision that bears on the standing of ``decision_ids``.

        That is the decisions themselves, undos and approvals naming them, decisions on the
        same records (same ``records_key``), and approvals and undos naming any of those:
        enough for `resolve.project.standing.in_force` to judge ``decision_ids`` exactly.
        """
        ids = sorted({int(i) for i in decision_ids})
        if not ids:
            return self.decisions_where("0")
        frames = []
        for chunk in _chunks(ids, 400):
            marks = ",".join("?" * len(chunk))
            frames.append(self.decisions_where(
                f"decision_id IN ({marks}) OR target_id IN ({marks}) OR records_key IN "
                f"(SELECT records_key FROM decisions WHERE decision_id IN ({marks}))",
                [*chunk, *chunk, *chunk]))
        first = pd.concat(frames, ignore_index=True).drop_duplicates("decision_id")
        extra = sorted(set(first["decision_id"].tolist()) - set(ids))
        frames = [first]
        for chunk in _chunks(extra, 900):
            frames.append(self.decisions_where(
                f"target_id IN ({','.join('?' * len(chunk))})", chunk))
        out = pd.concat(frames, ignore_index=True).drop_duplicates("decision_id")
        return out.sort_values("decision_id").reset_index(drop=True)

    def next_id(self, table: str) -> int:
        """The next decision or case number (call inside `atomic`; rows are never deleted)."""
        column = {"decisions": "decision_id", "cases": "case_id"}[table]
        row = self.conn.execute(f"SELECT COALESCE(MAX({column}), 0) + 1 FROM {table}").fetchone()
        return int(row[0])

    def insert_decision(self, row: dict, members: list[tuple[str, int]]) -> None:
        """Insert one decision row and its (record_id, part) members (inside `atomic`)."""
        cols = list(row)
        self.conn.execute(f"INSERT INTO decisions ({', '.join(cols)}) VALUES "
                          f"({', '.join('?' * len(cols))})", [row[c] for c in cols])
        self.conn.executemany("INSERT INTO decision_records VALUES (?, ?, ?)",
                              [(row["decision_id"], r, int(p)) for r, p in members])

    def insert_case(self, row: dict) -> None:
        """Insert one case row (inside `atomic`)."""
        cols = list(row)
        self.conn.execute(f"INSERT INTO cases ({', '.join(cols)}) VALUES "
                          f"({', '.join('?' * len(cols))})", [row[c] for c in cols])

    def insert_run(self, run_id: str, created: str | None, manifest_sha256: str, details: str) -> bool:
        """Register a run once (inside `atomic`); False when it was registered already."""
        known = self.conn.execute("SELECT 1 FROM runs WHERE run_id = ?", (run_id,)).fetchone()
        if known:
            return False
        self.conn.execute("INSERT INTO runs VALUES (?, ?, ?, ?, ?)",
                          (run_id, created, self.clock(), manifest_sha256, details))
        return True

    def cases(self) -> pd.DataFrame:
        """Every case opened by an escalation, oldest first."""
        return self.query("SELECT case_id, decision_id, opened_by, opened_at, cluster_key, "
                          "record_ids, note FROM cases ORDER BY case_id")

    def evidence_of(self, decision_id: int) -> str | None:
        """The evidence snapshot (JSON text) stored with one decision."""
        row = self.conn.execute("SELECT evidence FROM decisions WHERE decision_id = ?",
                                (int(decision_id),)).fetchone()
        if row is None:
            raise DecisionError(f"there is no decision {decision_id}; list decisions with "
                                "'resolve status'.")
        return row[0]

    def registered_runs(self) -> pd.DataFrame:
        """Runs registered in the store: run_id, created, registered_at, manifest_sha256."""
        return self.query("SELECT run_id, created, registered_at, manifest_sha256 FROM runs "
                          "ORDER BY run_id")

    # ------------------------------------------------------------- constraints
    def constraints(self) -> tuple[pd.DataFrame, pd.DataFrame]:
        """Must-link and cannot-link record pairs from the decisions in force.

        Returns two frames with ``record_id_a``, ``record_id_b`` (a < b, no repeats).
        Superseded decisions are left out; with four-eyes on, so are unapproved ones.
        """
        from resolve.project.standing import constraint_pairs, in_force

        decisions = self.query("SELECT decision_id, action, reviewer, target_id, records_key "
                               "FROM decisions")
        standing = in_force(decisions, self.settings().four_eyes)
        keep = standing.loc[standing["in_force"]
                            & standing["action"].isin(["accept", "reject", "split"]),
                            ["decision_id", "action"]]
        members = self.decision_records(None) if len(keep) else self.decision_records([])
        return constraint_pairs(keep, members)


def _chunks(values: list, size: int = 900) -> Iterator[list]:
    """Split a parameter list under SQLite's variable limit."""
    for i in range(0, len(values), size):
        yield values[i:i + size]
