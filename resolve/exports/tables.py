"""The table exports: entity map, households, flags, approved merges and the audit log.

Each function returns a DataFrame with exactly the contract columns (docs/exports.md); the
caller writes it with `resolve.exports.csv_safe.write_csv`. All work is vectorised over the
latest run's tables and the decisions in force.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.clusters.keys import components, member_names
from resolve.project.audit import audit_frame
from resolve.project.decisions import Review
from resolve.project.standing import in_force
from resolve.project.survivor import choose_survivors, completeness

ENTITY_COLUMNS = ["record_id", "entity_id"]
HOUSEHOLD_COLUMNS = ["record_id", "household_id"]
FLAG_COLUMNS = ["record_id", "flag", "severity", "reason"]
MERGE_COLUMNS = ["entity_id", "survivor_record_id", "record_id", "decided_by", "decided_at"]
AUDIT_COLUMNS = ["seq", "at", "actor", "action", "subject", "details", "prev_hash", "hash"]


def _standing(review: Review, actions: tuple[str, ...]) -> tuple[pd.DataFrame, pd.DataFrame]:
    """In-force decisions with these actions, and their (decision_id, record_id, part) rows."""
    d = in_force(review.store.decisions(), review.store.settings().four_eyes)
    d = d[d["in_force"] & d["action"].isin(actions)]
    members = review.store.decision_records(d["decision_id"].astype(int).tolist())
    members = members.astype({"record_id": "string"}).merge(
        d[["decision_id", "action", "reviewer", "decided_at"]], on="decision_id")
    return d, members


def entities_table(review: Review) -> pd.DataFrame:
    """Every accepted record of the latest run exactly once, with its entity ID (rec order).

    Accept and split decisions are in these IDs once a run has been made after them
    (the pipeline applies them as must-link and cannot-link pairs).
    """
    ent = review.view.run.table("entities", ["rec", "record_id", "entity_id"])
    ent = ent.sort_values("rec", kind="stable")
    return ent[ENTITY_COLUMNS].astype("string").reset_index(drop=True)


def households_table(review: Review) -> pd.DataFrame:
    """Records in a household: the latest run's households, less those a reviewer denied,
    plus households reviewers confirmed. Sorted by household, then record."""
    run = review.view.run
    ent = run.table("entities", ["record_id", "entity_id"]).astype("string")
    hh = run.table("households", ["entity_id", "household_id"]).astype("string") \
        if run.has("households") else pd.DataFrame(columns=["entity_id", "household_id"], dtype="string")
    rows = ent.merge(hh, on="entity_id")[HOUSEHOLD_COLUMNS]

    _, members = _standing(review, ("household", "not_household"))
    denied = members[members["action"] == "not_household"][["decision_id", "record_id"]]
    if len(denied) and len(rows):
        hit = rows.merge(denied, on="record_id")
        covered = hit.groupby(["household_id", "decision_id"]).size().rename("n").reset_index()
        size = rows.groupby("household_id").size()
        gone = covered.loc[covered["n"].to_numpy() == size.reindex(covered["household_id"]).to_numpy(),
                           "household_id"].unique()
        rows = rows[~rows["household_id"].isin(gone)]

    confirmed = members[members["action"] == "household"][["decision_id", "record_id"]]
    if len(confirmed):
        confirmed = confirmed.sort_values("decision_id").drop_duplicates("record_id", keep="last")
        known = confirmed.merge(rows, on="record_id")
        votes = known.groupby(["decision_id", "household_id"]).size().rename("n").reset_index()
        votes = votes.sort_values(["decision_id", "n", "household_id"], ascending=[True, False, True])
        chosen = votes.drop_duplicates("decision_id").set_index("decision_id")["household_id"]
        named = member_names(confirmed["decision_id"].to_numpy(), confirmed["record_id"], "H")
        fresh = pd.Series(named["key"].to_numpy(), index=named["group"].to_numpy())
        hid = confirmed["decision_id"].map(chosen).astype("string").fillna(
            confirmed["decision_id"].map(fresh).astype("string"))
        extra = pd.DataFrame({"record_id": confirmed["record_id"].to_numpy(),
                              "household_id": hid.astype("string").to_numpy()})
        rows = pd.concat([rows[~rows["record_id"].isin(extra["record_id"])], extra])
    rows = rows.astype("string").sort_values(["household_id", "record_id"], kind="stable")
    return rows[HOUSEHOLD_COLUMNS].reset_index(drop=True)


def flags_table(review: Review) -> pd.DataFrame:
    """One row per flag on a record in the latest run."""
    run = review.view.run
    if not run.has("flags"):
        return pd.DataFrame(columns=FLAG_COLUMNS, dtype="string")
    flags = run.table("flags")
    return flags[FLAG_COLUMNS].reset_index(drop=True)


def merges_table(review: Review) -> pd.DataFrame:
    """Approved merges: one row per record joined by accept or split decisions in force.

    Records joined by decisions (directly or through a chain of decisions) form one merge;
    its survivor comes from the project's survivor rule over the merge's records, its
    ``entity_id`` is the latest run's entity of the survivor, and ``decided_by`` /
    ``decided_at`` name the latest decision that covers each record. With four-eyes on,
    only approved decisions are in force. Records no longer in the latest run are left out.
    """
    _, members = _standing(review, ("accept", "split"))
    if members.empty:
        return pd.DataFrame(columns=MERGE_COLUMNS, dtype="string")
    view = review.view
    members = members[view.record_index.get_indexer(members["record_id"]) >= 0]
    sizes = members.groupby(["decision_id", "part"])["record_id"].transform("size")
    members = members[sizes.to_numpy() >= 2]
    if members.empty:
        return pd.DataFrame(columns=MERGE_COLUMNS, dtype="string")
    code, ids = pd.factorize(members["record_id"])
    grp = members.groupby(["decision_id", "part"]).ngroup().to_numpy()
    first = pd.Series(code).groupby(grp).transform("first").to_numpy()
    label = components(len(ids), code, first)
    latest = members.sort_values("decision_id").drop_duplicates("record_id", keep="last")
    merged = pd.DataFrame({"record_id": pd.array(ids, dtype="string")})
    merged["group"] = label
    merged = merged.merge(latest[["record_id", "reviewer", "decided_at"]], on="record_id")
    recs = view.recs(merged["record_id"].tolist())
    merged["completeness"] = completeness(view.records.take(recs).to_pandas()).to_numpy()
    merged["created_at"] = view.created_at[recs]
    survivor = choose_survivors(merged, review.store.settings().survivor_rule)
    merged["survivor_record_id"] = merged["group"].map(survivor)
    entity_of = pd.Series(view.entity_ids, index=view.record_index)
    merged["entity_id"] = merged["survivor_record_id"].map(entity_of)
    out = pd.DataFrame({
        "entity_id": merged["entity_id"].astype("string"),
        "survivor_record_id": merged["survivor_record_id"].astype("string"),
        "record_id": merged["record_id"].astype("string"),
        "decided_by": merged["reviewer"].astype("string"),
        "decided_at": merged["decided_at"].astype("string"),
    })
    return out.sort_values(["entity_id", "record_id"], kind="stable").reset_index(drop=True)


def audit_table(review: Review) -> pd.DataFrame:
    """The audit log, oldest entry first."""
    return audit_frame(review.store)[AUDIT_COLUMNS]


def pending_note(review: Review) -> str | None:
    """A sentence when accept/reject/split decisions postdate the latest run, else None."""
    d = in_force(review.store.decisions(), review.store.settings().four_eyes)
    d = d[d["in_force"] & d["action"].isin(["accept", "reject", "split"])]
    created = review.view.run.manifest.get("created")
    if not created or d.empty:
        return None
    after = pd.to_datetime(d["decided_at"], utc=True, errors="coerce") > pd.to_datetime(created, utc=True)
    n = int(np.sum(after.to_numpy()))
    if not n:
        return None
    return (f"{n} decision(s) recorded after {review.view.run_id} are not yet in its entity IDs; "
            "re-run the pipeline to apply them.")
