"""The survivor rule: which record of an accepted merge stands for the person downstream.

A merge list says "these records are one person"; the system that consumes it needs one
record to keep (the survivor) and the others to point at it. The rule is a project setting,
``[review] survivor_rule`` in project.toml, so a team can match its own data policy:

- ``most_complete`` (default): the record with the most filled-in fields (names, birth date,
  phones, emails, national IDs, address parts); ties go to the oldest ``created_at``, then the
  smallest record ID;
- ``oldest``: the earliest ``created_at`` (records without one come last); ties go to the
  most complete, then the smallest record ID;
- ``newest``: the latest ``created_at`` (records without one come last); ties as ``oldest``.

Record IDs compare as text. Every rule ends in a unique tie-break, so the choice is
deterministic.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.errors import ProjectError

RULES = ("most_complete", "oldest", "newest")
NOT_COUNTED = ("rec", "record_id", "source", "source_system", "file", "row_number", "created_at",
               "entity_id", "national_id_country", "country")
"""Columns that are bookkeeping, not facts about the person, so they do not add completeness."""


def completeness(records: pd.DataFrame) -> pd.Series:
    """Number of filled-in person fields per record (blank text counts as empty)."""
    cols = [c for c in records.columns if c not in NOT_COUNTED]
    if not cols:
        return pd.Series(0, index=records.index, dtype="int64")
    filled = np.zeros(len(records), dtype=np.int64)
    for c in cols:  # one vectorised pass per column, not per record
        s = records[c].astype("string")
        filled += (s.notna() & (s.str.strip() != "")).fillna(False).to_numpy(dtype=bool)
    return pd.Series(filled, index=records.index)


def completeness_of(row: dict) -> int:
    """`completeness` of one record given as a dict (the same count, without pandas)."""
    return sum(1 for k, v in row.items() if k not in NOT_COUNTED and v is not None
               and not (isinstance(v, float) and np.isnan(v)) and str(v).strip() != "")


def _sort_key(rule: str):
    def key(row: dict):
        t = row["created_at"]
        missing = t is None or pd.isna(t)
        ns = 0 if missing else pd.Timestamp(t).value
        if rule == "most_complete":
            return (-row["completeness"], missing, ns, str(row["record_id"]))
        if rule == "oldest":
            return (missing, ns, -row["completeness"], str(row["record_id"]))
        return (missing, -ns, -row["completeness"], str(row["record_id"]))
    return key


def survivor_of(rows: list[dict], rule: str = "most_complete") -> str:
    """`choose_survivors` for one small group given as dicts with ``record_id``,
    ``completeness`` and ``created_at`` (the same choice, without pandas)."""
    if rule not in RULES:
        raise ProjectError(f"survivor rule must be one of {', '.join(RULES)}, not {rule!r}; "
                           "fix [review] survivor_rule in project.toml.")
    return str(min(rows, key=_sort_key(rule))["record_id"])


def choose_survivors(frame: pd.DataFrame, rule: str = "most_complete") -> pd.Series:
    """Survivor record ID per group.

    ``frame`` has ``group``, ``record_id``, ``completeness`` (int) and ``created_at``
    (datetime64, NaT when unknown). Returns a Series indexed by group.
    """
    if rule not in RULES:
        raise ProjectError(f"survivor rule must be one of {', '.join(RULES)}, not {rule!r}; "
                           "fix [review] survivor_rule in project.toml.")
    f = frame[["group", "record_id", "completeness", "created_at"]].copy()
    f["record_id"] = f["record_id"].astype(str)
    f["created_at"] = pd.to_datetime(f["created_at"], errors="coerce", utc=True)
    f["missing_time"] = f["created_at"].isna()
    if rule == "most_complete":
        keys, asc = ["completeness", "missing_time", "created_at", "record_id"], [False, True, True, True]
    elif rule == "oldest":
        keys, asc = ["missing_time", "created_at", "completeness", "record_id"], [True, True, False, True]
    else:
        keys, asc = ["missing_time", "created_at", "completeness", "record_id"], [True, False, False, True]
    ordered = f.sort_values(["group", *keys], ascending=[True, *asc], kind="stable")
    first = ordered.drop_duplicates("group")
    return pd.Series(first["record_id"].to_numpy(), index=first["group"].to_numpy(), name="survivor_record_id")


def created_times(records: pd.DataFrame, people: pd.DataFrame | None = None) -> pd.Series:
    """``created_at`` as datetimes aligned with ``records``: from ``people`` when it has the
    parsed column, else read from the raw text with the pipeline's own timestamp reader."""
    if people is not None and "created_at" in people.columns:
        return pd.Series(pd.to_datetime(people["created_at"], errors="coerce").to_numpy(),
                         index=records.index)
    if "created_at" not in records.columns:
        return pd.Series(pd.NaT, index=records.index, dtype="datetime64[ns]")
    from resolve.normalise.dates import parse_timestamps

    return pd.Series(parse_timestamps(records["created_at"].astype("string")).to_numpy(),
                     index=records.index)
