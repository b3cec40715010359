"""Where the review stands: the queue with decision states, and a project summary.

After a re-run the queue is rebuilt from scratch, but most of it was decided last month. Each
item of the latest queue is matched to the decisions standing in the store:

- ``decided``: a standing decision on the same cluster key (or exactly the same records) and
  the item's evidence hash is unchanged;
- ``awaiting_approval``: as decided, but four-eyes is on and nobody has approved it yet;
- ``reopened``: an earlier decision on this item, but its evidence changed since (a link
  moved by 0.01 or more, changed type, or records joined or left: an earlier decision
  whose records overlap the item's by more than half, by Jaccard overlap, counts as earlier);
- ``open``: nothing decided yet.

Notes never change an item's state; escalations do (the item is decided as escalated).
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq

from resolve.project.audit import audit_head
from resolve.project.decisions import Review
from resolve.project.evidence import evidence_hashes
from resolve.project.standing import in_force

STATES = ("open", "decided", "awaiting_approval", "reopened")
ON_ITEMS = ("accept", "reject", "split", "household", "not_household", "escalate")
OVERLAP = 0.5


def _session(project) -> tuple[Review, bool]:
    if isinstance(project, Review):
        return project, False
    return Review(project), True


def standing_decisions(review: Review) -> pd.DataFrame:
    """Every decision with its standing (see `resolve.project.standing.in_force`)."""
    return in_force(review.store.decisions(), review.store.settings().four_eyes)


def _records_keys(record_ids: pd.Series) -> np.ndarray:
    """`resolve.project.decisions.records_key` of each sorted ';'-joined ID list."""
    text = record_ids.astype(str).str.replace(";", "\n", regex=False)
    return np.array([hashlib.sha256(t.encode()).hexdigest()[:32] for t in text], dtype=object)


def queue_state(project) -> pd.DataFrame:
    """The latest run's queue with ``state``, ``decision_id``, ``action``, ``reviewer``,
    ``decided_at`` and ``case_id`` of the decision that decides each item (if any)."""
    review, owned = _session(project)
    try:
        view = review.view
        queue = view.queue.reset_index(drop=True).copy()
        standing = standing_decisions(review)
        live = standing[standing["action"].isin(ON_ITEMS) & standing["superseded_by"].isna()]
        live = live.sort_values("decision_id")
        n = len(queue)
        match = pd.Series(pd.NA, index=queue.index, dtype="Int64")
        by_key = live.dropna(subset=["cluster_key"]).drop_duplicates("cluster_key", keep="last")
        match = match.fillna(queue["cluster_key"].map(
            dict(zip(by_key["cluster_key"], by_key["decision_id"]))).astype("Int64"))
        if match.isna().any() and len(live):
            by_records = live.drop_duplicates("records_key", keep="last")
            keys = pd.Series(_records_keys(queue["record_ids"]), index=queue.index)
            match = match.fillna(keys.map(dict(zip(by_records["records_key"],
                                                   by_records["decision_id"]))).astype("Int64"))
        exact = match.notna().to_numpy()
        overlap = _overlap_matches(review, queue[~exact], live)
        match = match.fillna(overlap.astype("Int64"))

        facts = live.set_index("decision_id")
        mid = match.dropna().astype("int64")
        state = np.full(n, "open", dtype=object)
        if len(mid):
            counts = facts["counts"].reindex(mid.to_numpy()).to_numpy(dtype=bool)
            stored = facts["evidence_hash"].reindex(mid.to_numpy()).to_numpy(dtype=object)
            rows = mid.index.to_numpy()
            now = _current_hashes(review, queue.loc[rows])
            same = np.array([now.get(r) == s for r, s in zip(rows, stored)], dtype=bool)
            same &= exact[rows]
            state[rows] = np.where(~same, "reopened", np.where(counts, "decided", "awaiting_approval"))
        queue["state"] = pd.array(state, dtype="string")
        queue["decision_id"] = match.array
        for col in ("action", "reviewer", "decided_at", "case_id"):
            values = facts[col].reindex(mid.to_numpy()).to_numpy(dtype=object)
            out = np.full(n, None, dtype=object)
            out[mid.index.to_numpy()] = values
            queue[col] = pd.array(out, dtype="Int64" if col == "case_id" else "string")
        return queue
    finally:
        if owned:
            review.close()


def _overlap_matches(review: Review, items: pd.DataFrame, live: pd.DataFrame) -> pd.Series:
    """Latest live decision overlapping an item by more than half (Jaccard), per unmatched item."""
    if items.empty or live.empty:
        return pd.Series(pd.NA, index=items.index, dtype="Int64")
    members = review.store.decision_records(live["decision_id"].astype(int).tolist())
    members = members.astype({"record_id": "string"})
    decided = set(members["record_id"].tolist())
    exploded = items["record_ids"].astype("string").str.split(";").explode()
    exploded = exploded[exploded.isin(decided)]
    if exploded.empty:
        return pd.Series(pd.NA, index=items.index, dtype="Int64")
    hits = pd.DataFrame({"item": exploded.index.to_numpy(), "record_id": exploded.astype("string").to_numpy()})
    hits = hits.merge(members[["decision_id", "record_id"]].drop_duplicates(), on="record_id")
    shared = hits.groupby(["item", "decision_id"]).size().rename("shared").reset_index()
    size_item = items["size"].astype(int)
    size_dec = members.groupby("decision_id").size()
    union = size_item.reindex(shared["item"]).to_numpy() + size_dec.reindex(
        shared["decision_id"]).to_numpy() - shared["shared"].to_numpy()
    shared = shared[(shared["shared"].to_numpy() / union) > OVERLAP]
    best = shared.sort_values(["item", "decision_id"]).drop_duplicates("item", keep="last")
    return pd.Series(best["decision_id"].to_numpy(), index=best["item"].to_numpy(),
                     dtype="Int64").reindex(items.index)


def _current_hashes(review: Review, items: pd.DataFrame) -> dict:
    """Evidence hash of each item in the latest run, keyed by the item's row label."""
    view = review.view
    exploded = items["record_ids"].astype("string").str.split(";").explode()
    members = pd.DataFrame({"item": exploded.index.to_numpy(),
                            "record_id": exploded.astype(str).to_numpy()})
    recs = view.recs(sorted(set(members["record_id"])))
    links = view.links_among(recs)
    if len(links):
        links = links.merge(members.rename(columns={"record_id": "record_id_a"}), on="record_id_a")
        links = links.merge(members.rename(columns={"record_id": "record_id_b"}),
                            on=["record_id_b", "item"])
    else:
        links = links.assign(item=pd.Series(dtype="int64"))
    return evidence_hashes(members, links)


def project_status(project) -> dict:
    """Runs with counts, queue counts by kind and state, decisions by reviewer and action,
    cases and the audit log head, as plain data (JSON-ready)."""
    review, owned = _session(project)
    try:
        settings = review.store.settings()
        runs = []
        for run in review.project.runs():
            m = run.manifest
            entry = {"run_id": run.run_id, "created": m.get("created"),
                     "input_rows": m.get("input_rows"), "accepted": m.get("accepted"),
                     "quarantined": m.get("quarantined")}
            for table in ("pairs", "flags", "queue"):
                path = run.path / f"{table}.parquet"
                entry[table] = pq.ParquetFile(path).metadata.num_rows if path.exists() else None
            runs.append(entry)
        if runs and review.project.latest_run().has("entities"):
            ents = review.project.latest_run().table("entities", ["entity_id"])["entity_id"]
            runs[-1]["entities"] = int(ents.nunique())
        queue: dict = {"by_kind": {}, "by_state": {s: 0 for s in STATES}, "by_kind_and_state": {}}
        if runs:
            qs = queue_state(review)
            queue["by_kind"] = {str(k): int(v) for k, v in qs["kind"].value_counts().sort_index().items()}
            queue["by_state"].update({str(k): int(v) for k, v in qs["state"].value_counts().items()})
            for (k, s), v in qs.groupby(["kind", "state"]).size().items():
                queue["by_kind_and_state"].setdefault(str(k), {})[str(s)] = int(v)
        d = standing_decisions(review)
        decisions = {
            "total": int(len(d)),
            "in_force": int((d["in_force"] & ~d["action"].isin(["undo", "approve"])).sum()),
            "awaiting_approval": int((~d["counts"]).sum()),
            "superseded": int(d["superseded_by"].notna().sum()),
            "by_action": {str(k): int(v) for k, v in d["action"].value_counts().sort_index().items()},
            "by_reviewer": {},
        }
        for (r, a), v in d.groupby(["reviewer", "action"]).size().items():
            decisions["by_reviewer"].setdefault(str(r), {})[str(a)] = int(v)
        cases = review.store.cases()
        withdrawn = set(d.loc[d["superseded_by"].notna(), "decision_id"].astype(int))
        seq, head = audit_head(review.store)
        return {
            "project": str(Path(review.project.path)),
            "four_eyes": settings.four_eyes,
            "survivor_rule": settings.survivor_rule,
            "runs": runs,
            "latest_run": runs[-1]["run_id"] if runs else None,
            "queue": queue,
            "decisions": decisions,
            "cases": {"open": int((~cases["decision_id"].isin(withdrawn)).sum()),
                      "withdrawn": int(cases["decision_id"].isin(withdrawn).sum())},
            "audit": {"entries": seq, "head": head},
        }
    finally:
        if owned:
            review.close()
