"""A small hand-made project for review, audit and export tests.

All people, numbers and addresses are invented for these tests (phones in the 555-01xx range
kept for fiction, NANP practice per /work/shared/CHECKS.md). The tables have the shapes the
pipeline writes (docs/architecture.md), with only the columns the review layer reads.

Run 1 holds:
- C001 and C002: one person in two records, joined by a review-band link -> queue item
  ``entity``;
- C001 and C003 live together -> a household H1 (queue item ``household``);
- C006 and C007 carry the same national ID with different names -> a group item;
- C004 has a name that a spreadsheet would run as a formula, C005 a flag reason that starts
  with '@'; C008 stands alone.

Run 2 (``second_run``) is the same book with one link probability moved (the household item)
and everything else unchanged.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd

from resolve.clusters.keys import member_names
from resolve.project import Project

FIXED_TIME = "2024-06-01T09:00:00.000+00:00"

RECORDS = [
    # record_id, given, family, birth, phone, email, national_id, street, city, postcode, created
    ("C001", "Ana", "Ribeiro", "1980-02-03", "+15555550101", "ana.r@example.com",
     "123-45-6789", "12 Elm Street", "Springfield", "12345", "2020-01-05"),
    ("C002", "Ana", "Ribeiro", "1980-02-03", "+15555550101", "ana.ribeiro@example.com",
     None, None, "Springfield", None, "2021-03-01"),
    ("C003", "Bruno", "Ribeiro", "1978-11-30", "+15555550102", None,
     None, "12 Elm Street", "Springfield", "12345", "2019-07-21"),
    ("C004", "=1+1", "Dias", "1990-05-05", "+15555550199", "carla@example.com",
     None, "3 Oak Road", "Shelbyville", "54321", "2022-02-02"),
    ("C005", "Eva", "Nunes", "1985-09-09", None, "eva@example.com",
     None, "9 Pine Lane", "Ogdenville", "67890", "2023-04-04"),
    ("C006", "Felix", "Moreau", "1970-01-01", "+15555550150", None,
     "987-65-4321", "1 Bay Street", "Capital City", "11111", "2023-05-05"),
    ("C007", "Gina", "Lopes", "1999-12-12", "+15555550151", None,
     "987-65-4321", "2 Bay Street", "Capital City", "11111", "2023-05-06"),
    ("C008", "Hugo", "Silva", "1966-06-06", None, None,
     None, None, None, None, None),
]


def _records() -> pd.DataFrame:
    cols = ["record_id", "given_name", "family_name", "birth_date", "phone_1", "email_1",
            "national_id_1", "street", "city", "postcode", "created_at"]
    frame = pd.DataFrame(RECORDS, columns=cols).astype("string")
    frame.insert(0, "rec", np.arange(len(frame), dtype=np.int32))
    frame.insert(2, "source", pd.array(["branch"] * 4 + ["app"] * 4, dtype="string"))
    frame.insert(3, "row_number", np.arange(1, len(frame) + 1, dtype=np.int64))
    return frame


def _identifiers(records: pd.DataFrame) -> pd.DataFrame:
    rows = []
    for r in records.itertuples(index=False):
        for kind, col in (("phone", "phone_1"), ("email", "email_1"), ("national_id", "national_id_1")):
            raw = getattr(r, col)
            if pd.isna(raw):
                continue
            value = raw.replace("-", "") if kind == "national_id" else raw
            key = f"ssn:{value}" if kind == "national_id" else value
            rows.append((r.rec, kind, col, raw, value, key, "valid", None,
                         "ssn" if kind == "national_id" else None))
        if not pd.isna(r.street):
            key = f"{r.street}|{r.postcode}".lower()
            rows.append((r.rec, "address", "street", r.street, key, key, "valid", None, None))
    frame = pd.DataFrame(rows, columns=["rec", "kind", "slot", "raw", "value", "key", "status",
                                        "reason", "detail"])
    return frame.astype({"rec": "int32"}).astype({c: "string" for c in frame.columns if c != "rec"})


def _queue_row(kind: str, prefix: str, record_ids: list[str], entity_ids: list[str],
               score: float, priority: float, detail: str) -> dict:
    named = member_names(np.zeros(len(record_ids), dtype=np.int64),
                         pd.Series(record_ids, dtype="string"), prefix)
    return {"cluster_key": named["key"].iloc[0], "kind": kind, "size": len(record_ids),
            "score": score, "priority": priority, "record_ids": ";".join(sorted(record_ids)),
            "entity_ids": ";".join(sorted(entity_ids)), "detail": detail}


def tables(household_prob: float = 0.62) -> dict[str, pd.DataFrame]:
    """The run tables; ``household_prob`` moves the C001-C003 link (re-run tests)."""
    records = _records()
    people = pd.DataFrame({"record_id": records["record_id"],
                           "created_at": pd.to_datetime(records["created_at"])})
    entity = ["E001", "E002", "E003", "E004", "E005", "E006", "E007", "E008"]
    entities = pd.DataFrame({"rec": records["rec"], "record_id": records["record_id"],
                             "entity_id": pd.array(entity, dtype="string")})
    pairs = pd.DataFrame({
        "rec_a": np.array([0, 0, 5, 1], dtype=np.int32),
        "rec_b": np.array([1, 2, 6, 2], dtype=np.int32),
        "prob": np.array([0.83, household_prob, 0.41, 0.05], dtype=np.float64),
        "link_type": pd.array(["review", "household", "shared_identity", "none"], dtype="string"),
        "reasons": pd.array(["same_name;same_birth_date;shared_phone", "same_address;same_family_name",
                             "shared_national_id;name_differs", None], dtype="string"),
    })
    households = pd.DataFrame({"entity_id": pd.array(["E001", "E003"], dtype="string"),
                               "household_id": pd.array(["H001", "H001"], dtype="string"),
                               "size": [2, 2], "evidence": pd.array(["same_address"] * 2, dtype="string")})
    groups = pd.DataFrame({"entity_id": pd.array(["E006", "E007"], dtype="string"),
                           "group_id": pd.array(["G001", "G001"], dtype="string"),
                           "group_kind": pd.array(["ring_like"] * 2, dtype="string")})
    flags = pd.DataFrame({
        "record_id": pd.array(["C006", "C007", "C005", "C004"], dtype="string"),
        "flag": pd.array(["shared_national_id_conflict", "shared_national_id_conflict",
                          "implausible_age", "unusual_phone_type"], dtype="string"),
        "severity": pd.array(["high", "high", "low", "low"], dtype="string"),
        "reason": pd.array(["national ID ***4321 is held by 2 people whose names differ",
                            "national ID ***4321 is held by 2 people whose names differ",
                            "@age check: birth date gives an age over 110",
                            "-phone +15555550199 is a service line"], dtype="string"),
        "scope": pd.array(["group", "group", "record", "record"], dtype="string"),
        "entity_id": pd.array(["E006", "E007", "E005", "E004"], dtype="string"),
        "group_id": pd.array(["G001", "G001", None, None], dtype="string"),
    })
    queue = pd.DataFrame([
        _queue_row("group", "grp-", ["C006", "C007"], ["E006", "E007"], 0.41, 74.5, "ring_like"),
        _queue_row("entity", "ent-", ["C001", "C002"], ["E001", "E002"], 0.83, 30.1, "review_links"),
        _queue_row("household", "hh-", ["C001", "C003"], ["E001", "E003"], household_prob, 12.0,
                   "same_address"),
        _queue_row("flagged", "flg-", ["C005"], ["E005"], float("nan"), 15.0, "flagged_records"),
    ])
    return {"records": records, "people": people, "identifiers": _identifiers(records),
            "pairs": pairs, "entities": entities, "households": households, "groups": groups,
            "flags": flags, "queue": queue}


def make_project(path, *, settings: str | None = None, household_prob: float = 0.62) -> Project:
    """Create a project at ``path`` with one run; ``settings`` is project.toml text."""
    project = Project.create(path)
    if settings:
        (project.path / "project.toml").write_text(settings, encoding="utf-8")
    project.save_run(tables(household_prob), {"created": "2024-06-01T08:00:00+00:00",
                                              "input_rows": 8, "accepted": 8, "quarantined": 0})
    return project


def second_run(project: Project, household_prob: float = 0.71) -> None:
    """Add a re-run of the same book with the household link moved."""
    project.save_run(tables(household_prob), {"created": "2024-07-01T08:00:00+00:00",
                                              "input_rows": 8, "accepted": 8, "quarantined": 0})


def clock(start: str = "2024-06-01T09:00:00"):
    """A clock that ticks one second per call, from ``start`` (UTC)."""
    import datetime as dt

    t = dt.datetime.fromisoformat(start).replace(tzinfo=dt.timezone.utc)
    state = {"n": 0}

    def now() -> str:
        state["n"] += 1
        return (t + dt.timedelta(seconds=state["n"])).isoformat(timespec="milliseconds")
    return now


def keys(project: Project) -> dict[str, str]:
    """Cluster key by queue kind for the project's latest run."""
    q = project.latest_run().table("queue")
    return dict(zip(q["kind"], q["cluster_key"]))


def dumps(obj) -> str:
    return json.dumps(obj, indent=2, sort_keys=True, default=str)
