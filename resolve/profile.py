"""Data-quality profile of an extract, read before matching.

`profile_extract` summarises what ingest and normalisation found: per role fill rate; per
identifier kind the valid / invalid / placeholder counts with the top reasons; the most shared
identifier values (a value on very many records is usually a placeholder or a call-centre
number, and would chain strangers together if trusted); quarantined rows by reason.
The result is plain data (a dict) so the CLI can print it as a table or as JSON.
"""

from __future__ import annotations

import pandas as pd

from resolve.ingest import IngestResult
from resolve.normalise.records import NormalisedRecords

TOP = 10


def _status_block(status: pd.Series, reason: pd.Series, total: int) -> dict:
    counts = status.astype("string").value_counts()
    reasons = reason[reason.notna()].astype("string").value_counts().head(TOP)
    return {
        "values": int(total),
        "valid": int(counts.get("valid", 0)),
        "invalid": int(counts.get("invalid", 0)),
        "placeholder": int(counts.get("placeholder", 0)),
        "missing": int(counts.get("missing", 0)),
        "top_reasons": {str(k): int(v) for k, v in reasons.items()},
    }


def profile_extract(ingest: IngestResult, normalised: NormalisedRecords) -> dict:
    """Return the profile as a JSON-ready dict (see docs/input.md for each field)."""
    records = ingest.records
    n = len(records)
    fill = {}
    for role, cols in ingest.mapping.columns.items():
        for i, col in enumerate(cols, start=1):
            name = role if role in records.columns else f"{role}_{i}"
            if role == "source":
                name = "source_system"
            if name not in records.columns:
                continue
            filled = int(records[name].notna().sum())
            fill[f"{role} ({col})"] = {"filled": filled, "rate": round(filled / n, 4) if n else 0.0}
    people = normalised.people
    ids = normalised.identifiers
    quality = {
        "name": _status_block(people["name_status"], people["name_reason"], n),
        "birth_date": _status_block(people["birth_status"], people["birth_reason"], n),
        "address": _status_block(people["address_status"], people["address_reason"], n),
    }
    if "birth_ambiguous" in people:
        quality["birth_date"]["ambiguous_day_month"] = int(people["birth_ambiguous"].fillna(False).sum())
    for kind in ("phone", "email", "national_id"):
        sub = ids[ids["kind"] == kind]
        quality[kind] = _status_block(sub["status"], sub["reason"], len(sub))
        if kind == "phone" and len(sub):
            quality[kind]["number_types"] = {
                str(k): int(v) for k, v in sub["detail"].astype("string").value_counts().items()}
    shared = []
    usable = ids[ids["value"].notna() & (ids["kind"] != "address")]
    if len(usable):
        per_value = (usable.drop_duplicates(["kind", "value", "rec"])
                     .groupby(["kind", "value"], observed=True).size()
                     .sort_values(ascending=False, kind="stable"))
        for (kind, value), count in per_value.head(TOP).items():
            if count < 2:
                break
            status = usable.loc[(usable["kind"] == kind) & (usable["value"] == value), "status"]
            shared.append({"kind": str(kind), "value": str(value), "records": int(count),
                           "status": str(status.iloc[0])})
    q = ingest.quarantine
    return {
        "files": ingest.files.to_dict(orient="records"),
        "input_rows": ingest.input_rows,
        "accepted": n,
        "quarantined": len(q),
        "quarantine_reasons": {str(k): int(v) for k, v in q["reason"].value_counts().items()},
        "quarantine_sample": q.head(TOP).astype(object).where(q.head(TOP).notna(), None)
        .to_dict(orient="records"),
        "fill": fill,
        "quality": quality,
        "most_shared_values": shared,
        "mapping": {k: v for k, v in ingest.mapping.columns.items()},
        "notes": ingest.notes,
    }
