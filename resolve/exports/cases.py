"""Investigation cases: what was escalated, with its records, evidence, flags, notes and decisions.

An escalation opens a case. An investigator picking it up needs everything in one place: the
records (national IDs masked), the evidence snapshot taken when it was escalated, the flags
on those records in the latest run, the notes reviewers left and every decision that touched
the records. `case_documents` gathers that as plain data for the JSON export and the HTML
evidence page; `cases_table` flattens it to one CSV row per case and record.
"""

from __future__ import annotations

import json

import pandas as pd

from resolve.errors import DecisionError
from resolve.project.decisions import Review
from resolve.project.evidence import records_as_dicts
from resolve.project.standing import in_force

CASE_COLUMNS = ["case_id", "status", "opened_by", "opened_at", "cluster_key", "record_id",
                "entity_id", "flags", "note"]


def _none(v):
    return None if v is None or (not isinstance(v, (str, list, dict)) and pd.isna(v)) else v


def case_documents(review: Review, case_id: int | None = None) -> list[dict]:
    """One dict per case (or only ``case_id``), oldest first, JSON-ready."""
    store = review.store
    cases = store.cases()
    if case_id is not None:
        cases = cases[cases["case_id"] == int(case_id)]
        if cases.empty:
            raise DecisionError(f"there is no case {case_id}; list cases with "
                                "'resolve export cases --project DIR --out cases.json'.")
    if cases.empty:
        return []
    standing = in_force(store.decisions(), store.settings().four_eyes).set_index("decision_id")
    try:
        view = review.view
    except Exception:  # noqa: BLE001 - a project without runs still has its cases
        view = None
    out = []
    for case in cases.itertuples(index=False):
        ids = str(case.record_ids).split(";")
        evidence = json.loads(store.evidence_of(int(case.decision_id)) or "{}")
        touching = store.decisions_touching(ids, tuple(standing["action"].unique()))
        touched = standing.loc[sorted(set(touching["decision_id"].astype(int)))] if len(touching) \
            else standing.iloc[0:0]
        decisions = [{
            "decision_id": int(i), "action": r["action"], "reviewer": r["reviewer"],
            "decided_at": r["decided_at"], "in_force": bool(r["in_force"]),
            "approved_by": _none(r["approved_by"]),
            "superseded_by": None if pd.isna(r["superseded_by"]) else int(r["superseded_by"]),
            "target_id": None if pd.isna(r["target_id"]) else int(r["target_id"]),
            "record_ids": str(r["record_ids"]).split(";"), "note": _none(r["note"]),
        } for i, r in touched.iterrows()]
        notes = [{"decision_id": d["decision_id"], "reviewer": d["reviewer"],
                  "decided_at": d["decided_at"], "note": d["note"]}
                 for d in decisions if d["note"] and d["in_force"]]
        flags, entities = [], {}
        if view is not None:
            present = [r for r in ids if view.record_index.get_indexer([r])[0] >= 0]
            if present:
                recs = view.recs(present)
                flags = records_as_dicts(view.flags_of(recs))
                entities = dict(zip(present, view.entity_ids[recs].tolist()))
        escalation = standing.loc[int(case.decision_id)]
        out.append({
            "case_id": int(case.case_id),
            "status": "open" if escalation["in_force"] else "withdrawn",
            "opened_by": case.opened_by, "opened_at": case.opened_at,
            "cluster_key": _none(case.cluster_key), "record_ids": ids, "note": _none(case.note),
            "decision_id": int(case.decision_id),
            "evidence": evidence, "current_run": view.run_id if view is not None else None,
            "current_entities": entities, "current_flags": flags,
            "notes": notes, "decisions": decisions,
        })
    return out


def cases_table(documents: list[dict]) -> pd.DataFrame:
    """One row per (case, record): the CSV form of the cases export."""
    rows = []
    for doc in documents:
        flags: dict[str, list[str]] = {}
        for f in doc["current_flags"]:
            flags.setdefault(f["record_id"], []).append(str(f["flag"]))
        for rid in doc["record_ids"]:
            rows.append({"case_id": doc["case_id"], "status": doc["status"],
                         "opened_by": doc["opened_by"], "opened_at": doc["opened_at"],
                         "cluster_key": doc["cluster_key"], "record_id": rid,
                         "entity_id": doc["current_entities"].get(rid),
                         "flags": ";".join(sorted(set(flags.get(rid, [])))) or None,
                         "note": doc["note"]})
    frame = pd.DataFrame(rows, columns=CASE_COLUMNS)
    return frame.astype({c: "string" for c in CASE_COLUMNS if c != "case_id"}).astype(
        {"case_id": "int64"})
