"""The audit log: an append-only, hash-chained record of everything done to a project.

Internal audit or a regulator must be able to see who decided what and when, and to tell
whether the record was altered afterwards. Every decision, approval, undo, export, reveal of a
masked national ID and run registration appends one entry. Each entry carries ``seq`` (1, 2,
3, ...), ``at`` (UTC), ``actor``, ``action``, ``subject``, ``details`` (JSON), ``prev_hash`` (the
previous entry's hash; 64 zeros for the first) and ``hash`` = SHA-256 of ``prev_hash``
followed by the canonical JSON (sorted keys, no spaces) of the entry's other fields. Editing,
removing or re-ordering an entry breaks every hash after it; `verify_audit` recomputes the
chain, and also checks each decision row against the content hash its audit entry recorded.

The store's triggers refuse updates and deletes; the chain catches anyone who removes the
triggers. Removing the newest entries leaves a valid shorter chain, so keep the head hash
(`audit_head`, printed by ``resolve audit verify``) somewhere else and compare it later.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import pandas as pd

from resolve.project.store import ReviewStore

GENESIS = "0" * 64


def canonical(obj) -> str:
    """Canonical JSON text: sorted keys, no spaces, UTF-8 characters kept."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False, default=str)


def entry_hash(prev_hash: str, seq: int, at: str, actor: str, action: str, subject: str,
               details: dict) -> str:
    """SHA-256 (hex) of ``prev_hash`` + the canonical JSON of the entry."""
    body = canonical({"seq": int(seq), "at": at, "actor": actor, "action": action,
                      "subject": subject, "details": details})
    return hashlib.sha256((prev_hash + body).encode("utf-8")).hexdigest()


def append_entries(store: ReviewStore, entries: list[tuple[str, str, str, dict]]) -> list[int]:
    """Append (actor, action, subject, details) entries; returns their seq numbers.

    Runs inside the caller's `ReviewStore.atomic` transaction (or opens one), so the entries
    commit together with the change they describe.
    """
    with store.atomic() as conn:
        row = conn.execute("SELECT seq, hash FROM audit_log ORDER BY seq DESC LIMIT 1").fetchone()
        seq, prev = (row[0], row[1]) if row else (0, GENESIS)
        at = store.clock()
        rows, seqs = [], []
        for actor, action, subject, details in entries:
            seq += 1
            h = entry_hash(prev, seq, at, actor, action, subject, details)
            rows.append((seq, at, actor, action, subject, canonical(details), prev, h))
            seqs.append(seq)
            prev = h
        conn.executemany("INSERT INTO audit_log VALUES (?, ?, ?, ?, ?, ?, ?, ?)", rows)
    return seqs


def append_entry(store: ReviewStore, actor: str, action: str, subject: str, details: dict) -> int:
    """Append one entry; returns its seq."""
    return append_entries(store, [(actor, action, subject, details)])[0]


def audit_frame(store: ReviewStore) -> pd.DataFrame:
    """The whole audit log, oldest first."""
    return store.query("SELECT seq, at, actor, action, subject, details, prev_hash, hash "
                       "FROM audit_log ORDER BY seq")


def audit_head(store: ReviewStore) -> tuple[int, str]:
    """(seq, hash) of the newest entry; (0, 64 zeros) for an empty log."""
    row = store.conn.execute("SELECT seq, hash FROM audit_log ORDER BY seq DESC LIMIT 1").fetchone()
    return (int(row[0]), row[1]) if row else (0, GENESIS)


def _open(project) -> tuple[ReviewStore, bool]:
    if isinstance(project, ReviewStore):
        return project, False
    path = Path(getattr(project, "path", project))
    return ReviewStore.open(path), True


def verify_audit(project) -> tuple[bool, int | None, str]:
    """Recompute the audit chain and check decisions against it.

    ``project`` is a project folder, a `Project` or an open `ReviewStore`. Returns
    ``(ok, first_broken_seq, message)``; ``first_broken_seq`` is None when the chain holds, or
    when a decision has no audit entry at all (the message names the decision).
    """
    from resolve.project.decision_fields import decision_content_hash

    store, owned = _open(project)
    try:
        log = audit_frame(store)
        prev = GENESIS
        for i, row in enumerate(log.itertuples(index=False), start=1):
            if row.seq != i:
                return False, i, f"entry {i} is missing; entries were removed from the log."
            if row.prev_hash != prev:
                return False, i, (f"entry {i} does not follow the entry before it; an entry "
                                  "was removed, added or changed.")
            try:
                details = json.loads(row.details)
            except json.JSONDecodeError:
                return False, i, f"entry {i} holds unreadable details."
            if entry_hash(prev, row.seq, row.at, row.actor, row.action, row.subject,
                          details) != row.hash:
                return False, i, f"entry {i} was changed after it was written."
            prev = row.hash

        decisions = store.decisions(with_evidence=True)
        logged = log[log["subject"].str.startswith("decision:")].copy()
        logged["decision_id"] = logged["subject"].str.slice(9).astype("int64")
        logged["content_hash"] = [json.loads(t).get("content_hash") for t in logged["details"]]
        by_id = logged.drop_duplicates("decision_id").set_index("decision_id")
        for row in decisions.itertuples(index=False):
            if row.decision_id not in by_id.index:
                return False, None, (f"decision {row.decision_id} has no audit entry; the log "
                                     "was cut short or the decision was added behind its back.")
            entry = by_id.loc[row.decision_id]
            if decision_content_hash(row._asdict()) != entry["content_hash"] \
                    or row.content_hash != entry["content_hash"]:
                return False, int(entry["seq"]), (f"decision {row.decision_id} no longer matches "
                                                  f"its audit entry {entry['seq']}.")
        n = len(log)
        head = log["hash"].iloc[-1] if n else GENESIS
        return True, None, f"{n} audit entries verified; head {head}."
    finally:
        if owned:
            store.close()
