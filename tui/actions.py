"""The workbench's one door to the decisions layer: every decision goes through here.

Screens never write to the review store and never build SQL. They call `ReviewActions`,
which holds one `resolve.project.decisions.Review` session (one store connection, run tables
read once) and calls its public functions: ``Review.decide`` for accept, reject, split,
household, escalate, note and undo, ``Review.reveal`` for an audited reveal of a masked
national ID, and `resolve.project.status.queue_state` for the state of every work-list item.
Calls come from worker threads, one at a time (a lock), so the interface never waits on the
store.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import pandas as pd

from resolve.errors import DecisionError
from resolve.project.decisions import Decision, Review

ITEM_ACTIONS = ("accept", "reject", "split", "household", "not_household", "escalate")
"""Decisions that settle a work-list item (and so can be undone from it)."""


@dataclass(frozen=True)
class Outcome:
    """What the workbench shows after a decision: the item's new state and a sentence."""

    decision: Decision
    state: str
    message: str


class ReviewActions:
    """Decisions, undo, reveal and item states for one reviewer on one project."""

    def __init__(self, project_dir: str | Path, reviewer: str,
                 clock: Callable[[], str] | None = None):
        self.project_dir = Path(project_dir)
        self.reviewer = reviewer
        self.clock = clock
        self._review: Review | None = None
        self._lock = threading.Lock()

    # ------------------------------------------------------------------ session
    @property
    def review(self) -> Review:
        """The decisions-layer session, opened on first use."""
        if self._review is None:
            self._review = Review(self.project_dir, clock=self.clock)
        return self._review

    def close(self) -> None:
        """Close the store connection."""
        with self._lock:
            if self._review is not None:
                self._review.close()
                self._review = None

    def warm(self) -> None:
        """Read the run tables the decisions layer needs, so the first decision is quick."""
        with self._lock:
            view = self.review.view
            _ = view.record_index, view.entity_ids, view.created_at, view.queue
            view.links_among(view.recs([view.record_index[0]])) if len(view.record_index) else None
            view.identifiers_of(view.recs([view.record_index[0]])) if len(view.record_index) else None
            view.flags_of(view.recs([view.record_index[0]])) if len(view.record_index) else None

    # ------------------------------------------------------------------ reading
    def states(self) -> pd.DataFrame:
        """Per item of the latest queue: cluster_key, state, action, decided_by, decision_id."""
        from resolve.project.status import queue_state

        with self._lock:
            q = queue_state(self.review)
        return pd.DataFrame({
            "cluster_key": q["cluster_key"].astype("string"),
            "state": _item_state(q["state"], q["action"]),
            "action": q["action"].astype("string"),
            "decided_by": q["reviewer"].astype("string"),
            "decision_id": q["decision_id"],
        })

    def history(self, cluster_key: str) -> pd.DataFrame:
        """Decisions recorded against one item, oldest first, with their standing."""
        from resolve.project.status import standing_decisions

        with self._lock:
            standing = standing_decisions(self.review)
        return standing[(standing["cluster_key"] == cluster_key).fillna(False).to_numpy(dtype=bool)]

    def constraints(self) -> tuple[pd.DataFrame, pd.DataFrame]:
        """Must-link and cannot-link record pairs from the decisions in force (for re-clustering)."""
        with self._lock:
            return self.review.store.constraints()

    def save_thresholds(self, thresholds: dict) -> None:
        """Keep re-tuned thresholds for the next run (audited by the library)."""
        from resolve.project.thresholds import save_thresholds

        with self._lock:
            save_thresholds(self.project_dir, thresholds["auto"], thresholds["review"],
                            self.reviewer, store=self.review.store)

    # ------------------------------------------------------------------ deciding
    def decide(self, action: str, cluster_key: str, *, groups: list[list[str]] | None = None,
               note: str | None = None) -> Outcome:
        """Record one decision on a work-list item."""
        with self._lock:
            decision = self.review.decide(action, self.reviewer, cluster_key=cluster_key,
                                          groups=groups, note=note)
        return Outcome(decision, _state_after(decision), _sentence(decision))

    def undo(self, cluster_key: str) -> Outcome:
        """Withdraw the newest decision standing on an item (an undo decision; nothing deleted)."""
        history = self.history(cluster_key)
        standing = history[history["in_force"] & history["action"].isin(ITEM_ACTIONS)
                           & (history["cluster_key"] == cluster_key)] if len(history) else history
        if standing.empty:
            raise DecisionError("there is no standing decision on this item to undo.")
        target = int(standing["decision_id"].max())
        with self._lock:
            decision = self.review.decide("undo", self.reviewer, target_id=target)
        state = "open" if decision.counts else "awaiting_approval"
        return Outcome(decision, state, f"Decision {target} withdrawn (undo {decision.decision_id}).")

    def reveal(self, record_id: str) -> dict[str, str]:
        """Full national IDs of one record by source column; the reveal is audited."""
        with self._lock:
            found = self.review.reveal(self.reviewer, record_id)
        return {str(s): str(r) for s, r in zip(found["slot"], found["raw"]) if pd.notna(r)}


def _item_state(state: pd.Series, action: pd.Series) -> pd.Series:
    """The library's item state, with escalated items told apart from other decided ones."""
    s = state.astype("string").fillna("open")
    return s.mask((s == "decided") & (action.astype("string") == "escalate"), "escalated")


def _state_after(decision: Decision) -> str:
    if decision.action == "note":
        return ""
    if not decision.counts:
        return "awaiting_approval"
    return "escalated" if decision.action == "escalate" else "decided"


_VERBS = {"accept": "Recorded: same person", "reject": "Recorded: not the same person",
          "split": "Recorded: split", "household": "Recorded: household",
          "not_household": "Recorded: not a household", "escalate": "Escalated",
          "note": "Note saved", "undo": "Withdrawn"}


def _sentence(d: Decision) -> str:
    text = f"{_VERBS.get(d.action, d.action)} (decision {d.decision_id}"
    if d.case_id is not None:
        text += f", case {d.case_id}"
    text += ")."
    if not d.counts:
        text += " It counts once a second reviewer approves it."
    return text
