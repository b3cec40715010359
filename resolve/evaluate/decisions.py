"""Turn reviewer decisions into a truth-like table, so that later runs can be scored on them.

Teams rarely have a labelled extract; they do have months of reviewer decisions. Each accepted
merge says "these records are one person", each rejection "these are different people", each
split "these parts are different people, each part one person", each household decision
"different people sharing a home". That is enough to score the next run on the reviewed
records. Escalations carry no answer and are left out.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from resolve.errors import InputError
from resolve.evaluate.frames import require, text_column

ACTIONS = {
    "accept": "accept", "accepted": "accept",
    "reject": "reject", "rejected": "reject",
    "split": "split",
    "household": "household",
    "escalate": "escalate", "escalated": "escalate",
}


def labels_from_decisions(decisions: pd.DataFrame, group_column: str = "decision_id") -> pd.DataFrame:
    """Build record_id, person_id, household_id, ring_id, label from reviewer decisions.

    ``decisions`` has one row per (decision, record): ``group_column`` (one value per
    decision), ``record_id``, ``action`` (accept, reject, split, household, escalate), optional
    ``part`` (which part of a split the record went to) and optional ``decided_at``. When a
    decision ID appears with several timestamps only the latest one counts (decisions are
    superseded, never overwritten). Then:

    - records of one accepted decision, or of one part of a split, are the same person, and
      those ties chain across decisions;
    - rejected and household records are otherwise persons of their own;
    - records of one household decision share a household (chained the same way);
    - records seen only in escalations are left out.

    person_id and household_id are the smallest record_id of their group; ring_id and label
    are blank.
    """
    require(decisions, ("record_id", "action", group_column), "decisions")
    d = pd.DataFrame({
        "group": text_column(decisions, group_column),
        "record_id": text_column(decisions, "record_id"),
        "action": text_column(decisions, "action").str.lower().map(ACTIONS),
        "part": text_column(decisions, "part").fillna(""),
    })
    bad = decisions.loc[d["action"].isna(), "action"]
    if len(bad):
        raise InputError(
            f"Unknown decision action '{bad.iloc[0]}'; use accept, reject, split, household or escalate."
        )
    if "decided_at" in decisions.columns:
        when = pd.to_datetime(decisions["decided_at"], errors="coerce", utc=True)
        latest = when.groupby(d["group"].to_numpy()).transform("max")
        d = d[(when == latest) | latest.isna()]
    d = d.dropna(subset=["record_id", "group"])
    d = d[d["action"] != "escalate"]
    ids = np.sort(d["record_id"].unique())
    pos = np.searchsorted(ids, d["record_id"].to_numpy())
    d = d.assign(pos=pos)

    same = d[d["action"].isin(["accept", "split"])]
    same_part = same["group"] + "\x1f" + same["part"].where(same["action"] == "split", "")
    person = _components(len(ids), same["pos"].to_numpy(), same_part.to_numpy())
    home = d[d["action"] == "household"]
    household = _components(len(ids), home["pos"].to_numpy(), home["group"].to_numpy())
    in_home = np.zeros(len(ids), dtype=bool)
    in_home[home["pos"].to_numpy()] = True
    # Labels are the smallest record_id of each component: ids are sorted, so the first
    # position seen per component label is its smallest member.
    first_person = _first_member(person)
    first_home = _first_member(household)
    household_id = pd.Series(ids[first_home[household]], dtype="string").where(in_home)
    return pd.DataFrame({
        "record_id": pd.Series(ids, dtype="string"),
        "person_id": pd.Series(ids[first_person[person]], dtype="string"),
        "household_id": household_id,
        "ring_id": pd.Series(pd.NA, index=range(len(ids)), dtype="string"),
        "label": pd.Series(pd.NA, index=range(len(ids)), dtype="string"),
    })


def _components(n: int, positions: np.ndarray, groups: np.ndarray) -> np.ndarray:
    """Component label per position, joining positions that share a group value."""
    if len(positions) == 0:
        return np.arange(n)
    codes, _ = pd.factorize(pd.Series(groups))
    first = pd.Series(positions).groupby(codes).transform("first").to_numpy()
    graph = coo_matrix((np.ones(len(positions), dtype=np.int8), (positions, first)), shape=(n, n))
    return connected_components(graph.tocsr(), directed=False)[1]


def _first_member(labels: np.ndarray) -> np.ndarray:
    """For each component label, the smallest position that carries it."""
    if len(labels) == 0:
        return np.zeros(0, dtype=np.int64)
    smallest = pd.Series(np.arange(len(labels))).groupby(labels).min()
    first = np.zeros(int(labels.max()) + 1, dtype=np.int64)
    first[smallest.index.to_numpy()] = smallest.to_numpy()
    return first
