"""Reviewer decisions: record them, approve them, undo them, keyed by record IDs.

A decision names its records by the IDs from the user's extract (never by run-local
numbers), and by the queue's stable ``cluster_key`` when it was made from the queue, so it
still finds its records next month. Each decision is written in one transaction together
with its records, its audit entry and, for an escalation, its case; it carries the reviewer's
name, the UTC time, an optional note and a snapshot of the evidence shown
(`resolve.project.evidence`).

Actions (docs/review-and-audit.md):

- ``accept``: the records are one person (must-link). The survivor record is chosen by the
  project's rule (`resolve.project.survivor`) and kept with the decision.
- ``reject``: the records are not one person. Records that sit in different entities of the
  latest run are kept apart entity from entity (cannot-link across those entities; what each
  entity already holds is left alone). When all records are in one entity, every pair is
  kept apart.
- ``split``: a partition ``A,B;C``: must-link within each group, cannot-link across groups.
- ``household`` / ``not_household``: confirm or deny a household (exports only).
- ``escalate``: opens a case with a note; ``note``: a note only.
- ``undo``: a later decision that supersedes an earlier one (nothing is deleted).
- ``approve``: the second pair of eyes; the reviewer who recorded a decision cannot approve it.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Callable

import pandas as pd

from resolve.errors import DecisionError
from resolve.project.audit import append_entries, append_entry, canonical
from resolve.project.decision_fields import (ACTIONS, MAX_NOTE, MIN_RECORDS, SYSTEM_ACTOR, BulkResult,
                                             Decision, check_reviewer,
                                             decision_content_hash, normalise_action,
                                             parse_groups, parse_record_ids, records_key,
                                             text_or_none)
from resolve.project.conflicts import check_conflicts, live_ids
from resolve.project.evidence import RunView
from resolve.project.runs import Project, file_sha256
from resolve.project.standing import CHANGES_LINKS, FAMILY, NEEDS_APPROVAL, in_force
from resolve.project.store import ReviewStore
from resolve.project.survivor import completeness_of, survivor_of

__all__ = ["ACTIONS", "BulkResult", "Decision", "Review", "decide_bulk", "decision_content_hash",
           "record_decision", "record_reveal", "register_run"]


class Review:
    """A review session on a project: one store connection, run tables read once.

    Use as a context manager. ``clock`` fixes the time written (tests).
    """

    def __init__(self, project: str | Path | Project, clock: Callable[[], str] | None = None):
        self.project = project if isinstance(project, Project) else Project.open(project)
        self.store = ReviewStore.open(self.project.path, clock)
        self._view: RunView | None = None
        try:
            self.sync_runs()
        except BaseException:
            self.store.close()
            raise

    def close(self) -> None:
        self.store.close()

    def __enter__(self) -> "Review":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    @property
    def view(self) -> RunView:
        """The latest run, loaded lazily and kept for the session."""
        latest = self.project.latest_run()
        if self._view is None or self._view.run_id != latest.run_id:
            self._view = RunView(self.project, latest)
        return self._view

    # ------------------------------------------------------------------ runs
    def sync_runs(self) -> list[str]:
        """Register (and audit) every finished run not yet in the store; returns their IDs."""
        runs = self.project.runs()
        known = set(self.store.registered_runs()["run_id"])
        todo = [r for r in runs if r.run_id not in known]
        if not todo:
            return []
        added = []
        with self.store.atomic():
            for run in todo:
                manifest = run.manifest
                details = {k: manifest.get(k) for k in ("created", "input_rows", "accepted",
                                                        "quarantined", "settings_hash", "inputs")}
                details["run_id"] = run.run_id
                details["manifest_sha256"] = file_sha256(run.path / "manifest.json")
                if self.store.insert_run(run.run_id, manifest.get("created"),
                                         details["manifest_sha256"], canonical(details)):
                    append_entry(self.store, SYSTEM_ACTOR, "register_run", f"run:{run.run_id}", details)
                    added.append(run.run_id)
        return added

    # ------------------------------------------------------------- deciding
    def decide(self, action: str, reviewer: str, *, cluster_key: str | None = None,
               record_ids: str | list[str] | None = None, groups: str | list | None = None,
               note: str | None = None, target_id: int | None = None) -> Decision:
        """Record one decision in one transaction and return it.

        Give ``cluster_key`` (a queue item) or ``record_ids``; ``groups`` for a split;
        ``target_id`` (the decision to undo or approve) for undo and approve.
        Raises `DecisionError` with the fix when the decision cannot be recorded.
        """
        action = normalise_action(action)
        reviewer = check_reviewer(reviewer)
        note = self._check_note(action, note)
        if action in ("undo", "approve"):
            if target_id is None:
                raise DecisionError(f"{action} needs the decision it refers to: --decision ID.")
            if cluster_key or record_ids or groups:
                raise DecisionError(f"{action} refers to a decision (--decision ID), not to records.")
            return self._decide_on_decision(action, reviewer, int(target_id), note)
        plan = self._plan(action, cluster_key, record_ids, groups, note)
        with self.store.atomic():
            return self._write(plan, reviewer)

    @staticmethod
    def _check_note(action: str, note: str | None) -> str | None:
        note = (note or "").strip() or None
        if note and len(note) > MAX_NOTE:
            raise DecisionError(f"the note is longer than {MAX_NOTE} characters; shorten it.")
        if action in ("note", "escalate") and not note:
            raise DecisionError(f"{action} needs a note: --note TEXT.")
        return note

    def _plan(self, action, cluster_key, record_ids, groups, note, item=None) -> dict:
        """Everything a decision needs from the run, read before the write lock is taken."""
        view = self.view
        kind = None
        if cluster_key and record_ids:
            raise DecisionError("give either --cluster or --records, not both.")
        if cluster_key:
            item = view.queue_item(cluster_key) if item is None else item
            ids = parse_record_ids(str(item["record_ids"]).split(";"))
            kind = str(item["kind"])
        elif record_ids:
            ids = parse_record_ids(record_ids)
        elif groups is not None and action == "split":
            ids = None
        else:
            raise DecisionError("say which records: --cluster KEY (from 'resolve queue') or "
                                "--records ID,ID,...")
        parts = None
        if action == "split":
            if groups is None:
                raise DecisionError('a split needs --groups, e.g. --groups "C001,C002;C003".')
            parts = parse_groups(groups)
            flat = sorted(r for g in parts for r in g)
            if ids is None:
                ids = flat
            elif flat != ids:
                raise DecisionError("the split groups must list exactly the records of the "
                                    f"cluster ({', '.join(ids[:6])}{', ...' if len(ids) > 6 else ''}).")
        elif groups is not None:
            raise DecisionError("--groups is only for --action split.")
        if len(ids) < MIN_RECORDS[action]:
            raise DecisionError(f"{action} needs at least {MIN_RECORDS[action]} records.")
        recs = view.recs(ids)
        if action == "reject":
            entity = view.entity_ids[recs]
            if len(set(entity)) > 1:
                by_entity: dict[str, list[str]] = {}
                for e, r in zip(entity.tolist(), ids):
                    by_entity.setdefault(str(e), []).append(r)
                parts = sorted(sorted(g) for g in by_entity.values())
            else:
                parts = [[r] for r in ids]
        evidence, evidence_hash = view.snapshot(ids, item)
        survivor = None
        if action == "accept":
            survivor = self._survivor(ids)
            evidence["survivor"] = {"record_id": survivor, "rule": self.store.settings().survivor_rule}
        return {"action": action, "cluster_key": cluster_key or None, "kind": kind,
                "record_ids": ids, "parts": parts, "note": note, "run_id": view.run_id,
                "evidence": canonical(evidence), "evidence_hash": evidence_hash,
                "survivor_record_id": survivor}

    def _survivor(self, record_ids: list[str]) -> str:
        """The survivor of one accepted set of records under the project rule."""
        view = self.view
        recs = view.recs(record_ids)
        rows = view.records.take(recs).to_pylist()
        times = view.created_at[recs]
        return survivor_of([{"record_id": r["record_id"], "completeness": completeness_of(r),
                             "created_at": t} for r, t in zip(rows, times)],
                           self.store.settings().survivor_rule)

    def _write(self, plan: dict, reviewer: str) -> Decision:
        """Insert a planned decision (inside `atomic`)."""
        store = self.store
        four_eyes = store.settings().four_eyes
        action = plan["action"]
        ids = plan["record_ids"]
        key = records_key(ids)
        family = FAMILY.get(action)
        supersedes: list[int] = []
        if family:
            kin = tuple(a for a, f in FAMILY.items() if f == family)
            supersedes = sorted(live_ids(store, store.ids_with_records_key(key, kin), four_eyes))
        if action == "undo":
            supersedes = [int(plan["target_id"])]
        if action in CHANGES_LINKS:
            joined = [ids] if action == "accept" else (plan["parts"] if action == "split" else [])
            apart = plan["parts"] if action in ("split", "reject") else []
            check_conflicts(store, four_eyes, joined, apart, set(supersedes))
        decision_id = store.next_id("decisions")
        case_id = store.next_id("cases") if action == "escalate" else None
        at = store.clock()
        row = {"decision_id": decision_id, "action": action, "reviewer": reviewer,
               "decided_at": at, "cluster_key": plan["cluster_key"], "kind": plan["kind"],
               "records_key": key, "record_ids": ";".join(ids),
               "groups": json.dumps(plan["parts"]) if plan["parts"] else None,
               "target_id": plan.get("target_id"), "case_id": case_id,
               "survivor_record_id": plan["survivor_record_id"], "note": plan["note"],
               "run_id": plan["run_id"], "evidence": plan["evidence"],
               "evidence_hash": plan["evidence_hash"]}
        row["content_hash"] = decision_content_hash(row)
        if plan["parts"] and action in ("split", "reject"):
            members = [(r, i) for i, g in enumerate(plan["parts"]) for r in g]
        else:
            members = [(r, 0) for r in ids]
        store.insert_decision(row, members)
        if case_id is not None:
            store.insert_case({"case_id": case_id, "decision_id": decision_id, "opened_by": reviewer,
                               "opened_at": at, "cluster_key": plan["cluster_key"],
                               "record_ids": row["record_ids"], "note": plan["note"]})
        counts = action not in NEEDS_APPROVAL or not four_eyes
        details = {k: row[k] for k in ("decision_id", "action", "cluster_key", "target_id",
                                       "case_id", "survivor_record_id", "note", "run_id",
                                       "evidence_hash", "content_hash")}
        details.update(record_ids=ids, groups=plan["parts"], four_eyes=four_eyes,
                       supersedes=supersedes if counts else [])
        seq = append_entry(store, reviewer, action, f"decision:{decision_id}", details)
        return Decision(decision_id, action, reviewer, at, ids, plan["cluster_key"], plan["parts"],
                        plan.get("target_id"), case_id, plan["survivor_record_id"], counts,
                        supersedes if counts else [], seq)

    def _decide_on_decision(self, action: str, reviewer: str, target_id: int, note: str | None) -> Decision:
        """Undo or approve an earlier decision."""
        store = self.store
        rows = store.decisions_where("decision_id = ?", [target_id])
        if rows.empty:
            raise DecisionError(f"there is no decision {target_id}; see 'resolve status'.")
        ids = str(rows["record_ids"].iloc[0]).split(";")
        try:  # what the approver or undoer saw; rows are immutable, so read before the lock
            snap, evidence_hash = self.view.snapshot(ids)
            evidence = canonical(snap)
        except DecisionError:
            evidence, evidence_hash = canonical({"note": "the records are not all in the latest run"}), None
        with store.atomic():
            four_eyes = store.settings().four_eyes
            related = in_force(store.related_decisions([target_id]), four_eyes)
            t = related[related["decision_id"] == target_id].iloc[0]
            if pd.notna(t["superseded_by"]):
                raise DecisionError(f"decision {target_id} was already superseded by decision "
                                    f"{int(t['superseded_by'])}; nothing to {action}.")
            if action == "approve":
                if t["action"] not in NEEDS_APPROVAL:
                    raise DecisionError(f"decision {target_id} ({t['action']}) needs no approval.")
                if t["reviewer"] == reviewer:
                    raise DecisionError(f"decision {target_id} was recorded by {reviewer}; a "
                                        "different reviewer must approve it (four-eyes rule).")
                if bool(t["approved"]):
                    raise DecisionError(f"decision {target_id} is already approved by "
                                        f"{t['approved_by']}.")
            else:
                if t["action"] in ("undo", "approve"):
                    raise DecisionError(f"decision {target_id} is an {t['action']}; it cannot be "
                                        "undone. Record a new decision on the records instead.")
                pending = related[(related["action"] == "undo")
                                  & (pd.to_numeric(related["target_id"]) == target_id)]
                if len(pending):
                    raise DecisionError(f"decision {int(pending['decision_id'].iloc[0])} already "
                                        f"asks to undo decision {target_id}; approve that one.")
            plan = {"action": action, "cluster_key": text_or_none(t["cluster_key"]),
                    "kind": text_or_none(t["kind"]), "record_ids": ids, "parts": None,
                    "note": note, "run_id": self._latest_run_id(), "evidence": evidence,
                    "evidence_hash": evidence_hash, "survivor_record_id": None,
                    "target_id": target_id}
            return self._write(plan, reviewer)

    def _latest_run_id(self) -> str | None:
        runs = self.project.runs()
        return runs[-1].run_id if runs else None

    # ----------------------------------------------------------------- bulk
    def decide_bulk(self, action: str, reviewer: str, *, kind: str | None = None,
                    min_score: float | None = None, max_score: float | None = None,
                    limit: int | None = None, note: str | None = None,
                    dry_run: bool = False) -> BulkResult:
        """Decide every open queue item matching the filter, all in one transaction.

        Items that would contradict a standing decision are skipped and reported, not written.
        """
        from resolve.project.status import queue_state

        action = normalise_action(action)
        if action not in ("accept", "reject", "household", "not_household"):
            raise DecisionError("bulk decisions are accept, reject, household or not-household.")
        reviewer = check_reviewer(reviewer)
        note = self._check_note(action, note)
        state = queue_state(self)
        pick = state[state["state"] == "open"]
        if kind:
            pick = pick[pick["kind"] == kind]
        if min_score is not None:
            pick = pick[pick["score"].astype(float) >= float(min_score)]
        if max_score is not None:
            pick = pick[pick["score"].astype(float) <= float(max_score)]
        pick = pick.sort_values(["priority", "cluster_key"], ascending=[False, True], kind="stable")
        if limit is not None:
            pick = pick.head(int(limit))
        result = BulkResult(candidates=pick.reset_index(drop=True), dry_run=dry_run)
        if dry_run or pick.empty:
            return result
        plans = []
        for key in pick["cluster_key"].tolist():
            try:
                plans.append(self._plan(action, key, None, None, note))
            except DecisionError as exc:
                result.skipped.append((key, str(exc)))
        with self.store.atomic():
            for plan in plans:
                try:
                    result.decided.append(self._write(plan, reviewer))
                except DecisionError as exc:
                    result.skipped.append((plan["cluster_key"], str(exc)))
            append_entry(self.store, reviewer, "bulk", f"bulk:{action}", {
                "action": action, "kind": kind, "min_score": min_score, "max_score": max_score,
                "limit": limit, "decided": [d.decision_id for d in result.decided],
                "skipped": [k for k, _ in result.skipped]})
        return result

    # --------------------------------------------------------------- reveal
    def reveal(self, reviewer: str, record_id: str) -> pd.DataFrame:
        """Unmasked national IDs of one record; the reveal is written to the audit log."""
        reviewer = check_reviewer(reviewer)
        view = self.view
        rec = int(view.recs([str(record_id).strip()])[0])
        found = view.national_ids(rec)
        append_entries(self.store, [(reviewer, "reveal", f"record:{str(record_id).strip()}", {
            "record_id": str(record_id).strip(), "run_id": view.run_id,
            "national_ids": int(len(found)), "slots": [str(s) for s in found["slot"].tolist()]})])
        return found


def _session(project) -> tuple[Review, bool]:
    if isinstance(project, Review):
        return project, False
    return Review(project), True


def record_decision(project, action: str, reviewer: str, **options) -> Decision:
    """Record one decision on ``project`` (a folder, a `Project` or a `Review`)."""
    review, owned = _session(project)
    try:
        return review.decide(action, reviewer, **options)
    finally:
        if owned:
            review.close()


def decide_bulk(project, action: str, reviewer: str, **options) -> BulkResult:
    """Decide every open queue item matching the filter in one transaction."""
    review, owned = _session(project)
    try:
        return review.decide_bulk(action, reviewer, **options)
    finally:
        if owned:
            review.close()


def record_reveal(project, reviewer: str, record_id: str) -> pd.DataFrame:
    """Unmasked national IDs of one record, logged in the audit log as a reveal."""
    review, owned = _session(project)
    try:
        return review.reveal(reviewer, record_id)
    finally:
        if owned:
            review.close()


def register_run(project) -> list[str]:
    """Register (and audit) the project's new runs; the pipeline may call this after a run."""
    review, owned = _session(project)
    try:
        return review.sync_runs()
    finally:
        if owned:
            review.close()
