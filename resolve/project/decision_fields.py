"""The fields of a decision: actions, parsing of what the reviewer typed, and content hashes.

Kept apart from the session logic in `resolve.project.decisions` so that the audit check
(`resolve.project.audit.verify_audit`) and scripts can hash and read decisions without a run.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np
import pandas as pd

from resolve.errors import DecisionError
from resolve.project.audit import canonical

ACTIONS = ("accept", "reject", "split", "household", "not_household", "escalate", "note",
           "undo", "approve")
MIN_RECORDS = {"accept": 2, "reject": 2, "split": 2, "household": 2, "not_household": 2,
               "escalate": 1, "note": 1}
HASHED_FIELDS = ("decision_id", "action", "reviewer", "decided_at", "cluster_key", "kind",
                 "records_key", "record_ids", "groups", "target_id", "case_id",
                 "survivor_record_id", "note", "run_id", "evidence_hash")
MAX_NOTE = 5000
SYSTEM_ACTOR = "resolve"


@dataclass
class Decision:
    """A recorded decision, as returned to the caller."""

    decision_id: int
    action: str
    reviewer: str
    decided_at: str
    record_ids: list[str]
    cluster_key: str | None = None
    groups: list[list[str]] | None = None
    target_id: int | None = None
    case_id: int | None = None
    survivor_record_id: str | None = None
    counts: bool = True
    supersedes: list[int] = field(default_factory=list)
    audit_seq: int | None = None


@dataclass
class BulkResult:
    """What a bulk decision did (or, on a dry run, would do)."""

    candidates: pd.DataFrame
    decided: list[Decision] = field(default_factory=list)
    skipped: list[tuple[str, str]] = field(default_factory=list)
    dry_run: bool = False


def _plain(v):
    if v is None:
        return None
    if isinstance(v, (float, np.floating)):
        if np.isnan(v):
            return None
        return int(v) if float(v).is_integer() else float(v)
    if isinstance(v, np.integer):
        return int(v)
    if v is pd.NA:
        return None
    return v


def text_or_none(v) -> str | None:
    """A text value, or None for missing (None, NaN, <NA>)."""
    return None if v is None or (not isinstance(v, str) and pd.isna(v)) else str(v)


def decision_content_hash(row: Mapping) -> str:
    """SHA-256 of a decision's recorded fields and evidence; repeated in its audit entry."""
    body = {f: _plain(row.get(f)) for f in HASHED_FIELDS}
    body["evidence_sha256"] = hashlib.sha256((row.get("evidence") or "").encode()).hexdigest()
    return hashlib.sha256(canonical(body).encode()).hexdigest()


def records_key(record_ids: list[str]) -> str:
    """A key for a set of record IDs (order and repeats ignored)."""
    text = "\n".join(sorted(set(record_ids)))
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def normalise_action(action: str) -> str:
    """Accept ``not-household`` as well as ``not_household``; refuse unknown actions."""
    a = str(action).strip().lower().replace("-", "_")
    if a not in ACTIONS:
        raise DecisionError(f"unknown action {action!r}; use one of "
                            f"{', '.join(x.replace('_', '-') for x in ACTIONS)}.")
    return a


def check_reviewer(reviewer: str) -> str:
    """A reviewer name: 1-100 printable characters."""
    name = str(reviewer or "").strip()
    if not name or len(name) > 100 or not name.isprintable():
        raise DecisionError("give the reviewer's name (1-100 printable characters) with --reviewer.")
    return name


def parse_record_ids(text: str | list[str]) -> list[str]:
    """``"A,B,C"`` (or a list) -> sorted distinct record IDs."""
    items = text.split(",") if isinstance(text, str) else list(text)
    ids = sorted({str(i).strip() for i in items if str(i).strip()})
    if not ids:
        raise DecisionError("give record IDs separated by commas, e.g. --records C001,C002.")
    return ids


def parse_groups(text: str | list[list[str]]) -> list[list[str]]:
    """``"A,B;C"`` -> [["A", "B"], ["C"]]: groups separated by ';', records by ','."""
    raw = [g.split(",") for g in text.split(";")] if isinstance(text, str) else text
    groups = [sorted({str(r).strip() for r in g if str(r).strip()}) for g in raw]
    groups = [g for g in groups if g]
    flat = [r for g in groups for r in g]
    if len(groups) < 2:
        raise DecisionError('a split needs two or more groups, e.g. --groups "C001,C002;C003".')
    if len(flat) != len(set(flat)):
        raise DecisionError("a record appears in two groups of the split; list each record once.")
    return sorted(groups)
