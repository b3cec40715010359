"""Which recorded decisions stand, and the record pairs they impose on every later run.

Decisions are never edited or deleted. What is in force is worked out from the whole record
each time, by fixed rules (docs/review-and-audit.md):

- with four-eyes on, a decision that changes results (accept, reject, split, household,
  not_household, undo) counts only once a different reviewer has approved it;
- a counting ``undo`` supersedes the decision it names;
- a counting accept/reject/split supersedes earlier accept/reject/split decisions on exactly
  the same records, and a household/not_household decision earlier household decisions on
  the same records: the latest word on a set of records is the one that stands;
- a decision is in force when it counts and nothing counting supersedes it.

`constraint_pairs` turns the standing accept, split and reject decisions into must-link and
cannot-link pairs, vectorised: an accepted cluster of k records becomes a chain of k-1
must-link pairs (enough to join them), a split joins each part by a chain and keeps every
pair across parts apart, a reject keeps every pair across its parts apart.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

NEEDS_APPROVAL = ("accept", "reject", "split", "household", "not_household", "undo")
FAMILY = {"accept": "link", "reject": "link", "split": "link",
          "household": "home", "not_household": "home"}
CHANGES_LINKS = ("accept", "reject", "split")
META = ("undo", "approve")


def in_force(decisions: pd.DataFrame, four_eyes: bool) -> pd.DataFrame:
    """Add the standing of each decision.

    ``decisions`` has ``decision_id``, ``action``, ``reviewer``, ``target_id``,
    ``records_key`` (and optionally ``decided_at``). Adds ``needs_approval``, ``approved``,
    ``approved_by``, ``approved_at``, ``counts``, ``superseded_by`` (nullable Int64) and
    ``in_force`` (bool; undo and approve rows are in force when they count).
    """
    d = decisions.copy()
    d["decision_id"] = d["decision_id"].astype("int64")
    target = pd.to_numeric(d["target_id"], errors="coerce").astype("Int64")
    action = d["action"].astype(str)
    is_approve = (action == "approve").to_numpy()
    owner = pd.Series(d["reviewer"].to_numpy(), index=d["decision_id"].to_numpy())
    appr = pd.DataFrame({
        "approval": d["decision_id"].to_numpy()[is_approve],
        "target": target.to_numpy()[is_approve],
        "by": d["reviewer"].to_numpy()[is_approve],
        "at": (d["decided_at"].to_numpy()[is_approve] if "decided_at" in d
               else np.full(int(is_approve.sum()), None, dtype=object)),
    }).dropna(subset=["target"])
    appr["target"] = appr["target"].astype("int64")
    appr = appr[(appr["by"] != appr["target"].map(owner)).to_numpy()]
    first = appr.sort_values("approval").drop_duplicates("target")
    by = dict(zip(first["target"], first["by"]))
    at = dict(zip(first["target"], first["at"]))
    d["needs_approval"] = action.isin(NEEDS_APPROVAL).to_numpy()
    d["approved"] = d["decision_id"].isin(list(by)).to_numpy()
    d["approved_by"] = d["decision_id"].map(by).astype("string")
    d["approved_at"] = d["decision_id"].map(at).astype("string")
    d["counts"] = ~d["needs_approval"] | d["approved"] | (not four_eyes)

    superseded = pd.Series(pd.NA, index=d.index, dtype="Int64")
    undo = d[(action == "undo").to_numpy() & d["counts"].to_numpy()].assign(target=target[action == "undo"])
    if len(undo):
        first_undo = undo.sort_values("decision_id").drop_duplicates("target")
        superseded = d["decision_id"].map(dict(zip(first_undo["target"].astype("int64"),
                                                   first_undo["decision_id"]))).astype("Int64")
    family = action.map(FAMILY)
    fam = d.assign(family=family)[family.notna().to_numpy()]
    if len(fam):
        left = fam[["decision_id", "family", "records_key"]].sort_values("decision_id")
        right = fam.loc[fam["counts"], ["decision_id", "family", "records_key"]].rename(
            columns={"decision_id": "later"}).sort_values("later")
        if len(right):
            nxt = pd.merge_asof(left, right, left_on="decision_id", right_on="later",
                                by=["family", "records_key"], direction="forward",
                                allow_exact_matches=False)
            later = pd.Series(nxt["later"].to_numpy(), index=nxt["decision_id"].to_numpy())
            by_family = d["decision_id"].map(later).astype("Int64")
            superseded = pd.concat([superseded, by_family], axis=1).min(axis=1).astype("Int64")
    d["superseded_by"] = superseded.to_numpy()
    meta = action.isin(META).to_numpy()
    d["in_force"] = d["counts"].to_numpy() & (meta | d["superseded_by"].isna().to_numpy())
    return d


def _empty_pairs() -> pd.DataFrame:
    return pd.DataFrame({"record_id_a": pd.Series(dtype="string"),
                         "record_id_b": pd.Series(dtype="string")})


def _ordered(a: np.ndarray, b: np.ndarray) -> pd.DataFrame:
    a = pd.Series(a, dtype="string")
    b = pd.Series(b, dtype="string")
    swap = (a > b).to_numpy()
    lo = a.where(~swap, b)
    hi = b.where(~swap, a)
    out = pd.DataFrame({"record_id_a": lo.to_numpy(), "record_id_b": hi.to_numpy()})
    out = out[(out["record_id_a"] != out["record_id_b"]).to_numpy()]
    out = out.drop_duplicates().sort_values(["record_id_a", "record_id_b"], kind="stable")
    return out.reset_index(drop=True).astype("string")


def constraint_pairs(standing: pd.DataFrame, members: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Must-link and cannot-link pairs from standing accept/split/reject decisions.

    ``standing`` has ``decision_id`` and ``action`` of the decisions to apply; ``members`` has
    ``decision_id``, ``record_id``, ``part`` (which group of a split or reject a record is in;
    0 for accept). Returns (must_link, cannot_link), each ``record_id_a`` < ``record_id_b``.
    """
    if len(standing) == 0 or len(members) == 0:
        return _empty_pairs(), _empty_pairs()
    m = members.merge(standing[["decision_id", "action"]], on="decision_id")
    m = m.astype({"record_id": "string"}).sort_values(["decision_id", "part", "record_id"],
                                                      kind="stable").reset_index(drop=True)
    joins = m["action"].isin(["accept", "split"]).to_numpy()
    j = m[joins]
    dec = j["decision_id"].to_numpy()
    part = j["part"].to_numpy()
    rid = j["record_id"].to_numpy(dtype=object)
    same = (dec[1:] == dec[:-1]) & (part[1:] == part[:-1])
    must = _ordered(rid[:-1][same], rid[1:][same]) if len(rid) > 1 else _empty_pairs()

    apart = m[m["action"].isin(["reject", "split"]).to_numpy()][["decision_id", "record_id", "part"]]
    if len(apart):
        cross = apart.merge(apart, on="decision_id", suffixes=("_a", "_b"))
        cross = cross[(cross["part_a"] < cross["part_b"]).to_numpy()]
        cannot = _ordered(cross["record_id_a"].to_numpy(dtype=object),
                          cross["record_id_b"].to_numpy(dtype=object))
    else:
        cannot = _empty_pairs()
    return must, cannot
