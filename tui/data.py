"""Read-only views of a project's latest run, shaped for the workbench's work list.

The work list must be on screen within two seconds even for a million-record project, so the
queue table is read first and alone, with only the columns shown (Parquet column projection).
Everything else (records, pairs, identifiers, flags) is indexed later by `tui.index.RunIndex`
in a worker. Filtering, searching and paging work on whole numpy columns; the screen only
ever draws one page of rows.

This module reads Parquet through `resolve.project`; it never touches the review store (the
decisions layer does, through `tui.actions`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from resolve.project import Project, Run
from tui.filters import ANY_FLAG, KINDS, PAGE_SIZE, STATES, QueueFilter, cycle, reviewer_name

QUEUE_COLUMNS = ("cluster_key", "kind", "size", "score", "priority", "record_ids", "entity_ids",
                 "detail")


def read_queue(run: Run) -> pd.DataFrame:
    """The run's queue with only the columns the work list shows, in priority order."""
    path = run.path / "queue.parquet"
    if not path.exists():
        return empty_queue()
    names = set(pq.read_schema(path).names)
    cols = [c for c in QUEUE_COLUMNS if c in names]
    frame = pq.read_table(path, columns=cols).to_pandas()
    for c in QUEUE_COLUMNS:
        if c not in frame.columns:
            frame[c] = pd.NA
    return frame[list(QUEUE_COLUMNS)].reset_index(drop=True)


def empty_queue() -> pd.DataFrame:
    """A queue with no items and the usual columns."""
    return pd.DataFrame({c: pd.Series(dtype="float64" if c in ("score", "priority") else
                                      "int64" if c == "size" else "string")
                         for c in QUEUE_COLUMNS})


@dataclass
class QueueData:
    """The work list with the columns the filters need, all aligned with ``frame`` rows.

    ``flag_mask`` and ``flag_codes`` arrive once the run index is built; ``state``,
    ``decided_by`` once the review store has been read. Until then every item counts as open
    and unflagged.
    """

    frame: pd.DataFrame
    flag_codes: list[str] = field(default_factory=list)
    flag_mask: np.ndarray | None = None
    flag_text: np.ndarray | None = None
    state: np.ndarray | None = None
    decided_by: np.ndarray | None = None

    def __post_init__(self) -> None:
        n = len(self.frame)
        self.kind = self.frame["kind"].astype("string").fillna("").to_numpy(dtype=object)
        self.keys = self.frame["cluster_key"].astype("string").to_numpy(dtype=object)
        self.position = pd.Index(self.keys)
        self._columns = {c: self.frame[c].to_numpy(dtype=object) for c in QUEUE_COLUMNS}
        if self.state is None:
            self.state = np.full(n, "open", dtype=object)
        if self.decided_by is None:
            self.decided_by = np.full(n, "", dtype=object)
        if self.flag_mask is None:
            self.flag_mask = np.zeros(n, dtype=np.int64)
            self.flag_text = np.full(n, "", dtype=object)

    def __len__(self) -> int:
        return len(self.frame)

    def set_states(self, states: pd.DataFrame) -> None:
        """Take ``cluster_key``, ``state``, ``decided_by`` rows from the review store."""
        n = len(self.frame)
        self.state = np.full(n, "open", dtype=object)
        self.decided_by = np.full(n, "", dtype=object)
        if states is None or len(states) == 0:
            return
        pos = self.position.get_indexer(states["cluster_key"].astype("string"))
        ok = pos >= 0
        self.state[pos[ok]] = states["state"].astype(str).to_numpy(dtype=object)[ok]
        if "decided_by" in states.columns:
            self.decided_by[pos[ok]] = states["decided_by"].fillna("").astype(str).to_numpy(dtype=object)[ok]

    def set_state_of(self, cluster_key: str, state: str, decided_by: str) -> None:
        """Update one item after a decision recorded in this session."""
        pos = self.position.get_indexer([cluster_key])[0]
        if pos >= 0:
            self.state[pos] = state
            self.decided_by[pos] = decided_by

    def set_flags(self, codes: list[str], mask: np.ndarray) -> None:
        """Per-item bit masks over ``codes`` (bit i = flag ``codes[i]`` on one of its records)."""
        self.flag_codes = list(codes)
        self.flag_mask = np.asarray(mask, dtype=np.int64)
        distinct, inverse = np.unique(self.flag_mask, return_inverse=True)
        words = np.array([", ".join(c for i, c in enumerate(codes) if int(m) >> i & 1)
                          for m in distinct], dtype=object)
        self.flag_text = words[inverse] if len(words) else np.full(len(self.frame), "", dtype=object)

    # ------------------------------------------------------------------ filtering
    def select(self, filt: QueueFilter, found: np.ndarray | None = None) -> np.ndarray:
        """Positions of the items that pass ``filt``, in queue order.

        ``found`` holds the item positions matching ``filt.search`` (from
        `tui.index.RunIndex.search`); None ignores the search.
        """
        keep = np.ones(len(self.frame), dtype=bool)
        if filt.kind:
            keep &= self.kind == filt.kind
        if filt.flag:
            if filt.flag == ANY_FLAG:
                keep &= self.flag_mask != 0
            elif filt.flag in self.flag_codes:
                keep &= (self.flag_mask >> self.flag_codes.index(filt.flag)) & 1 == 1
            else:
                keep &= False
        if filt.state:
            keep &= self.state == filt.state
        if filt.reviewer:
            keep &= self.decided_by == filt.reviewer
        if filt.search and found is not None:
            hit = np.zeros(len(self.frame), dtype=bool)
            hit[found] = True
            keep &= hit
        return np.flatnonzero(keep)

    def counts(self, positions: np.ndarray | None = None) -> dict[str, dict[str, int]]:
        """Items per kind and per state (over ``positions``, or all items)."""
        kind = self.kind if positions is None else self.kind[positions]
        state = self.state if positions is None else self.state[positions]
        by_kind = pd.Series(kind).value_counts()
        by_state = pd.Series(state).value_counts()
        return {"kind": {k: int(by_kind.get(k, 0)) for k in KINDS},
                "state": {s: int(by_state.get(s, 0)) for s in STATES}}

    def place_of(self, positions: np.ndarray, position: int) -> int | None:
        """1-based place of ``position`` among ``positions`` (None when it is not there)."""
        where = np.flatnonzero(positions == position)
        return int(where[0]) + 1 if len(where) else None

    def reviewers(self) -> list[str]:
        """Reviewers who have decided items, sorted."""
        return sorted({r for r in self.decided_by if r})

    def page(self, positions: np.ndarray, number: int, size: int = PAGE_SIZE) -> pd.DataFrame:
        """One page of the selected items, with state and flag columns added."""
        rows = positions[number * size:(number + 1) * size]
        out = self.frame.iloc[rows].copy()
        out["state"] = self.state[rows]
        out["decided_by"] = self.decided_by[rows]
        out["flags"] = self.flag_text[rows]
        out["position"] = rows
        return out

    def item(self, position: int) -> dict:
        """One item as a plain dict (with state and flags)."""
        position = int(position)
        row = {c: values[position] for c, values in self._columns.items()}
        row = {c: (None if v is pd.NA else v) for c, v in row.items()}
        row.update(state=self.state[position], decided_by=self.decided_by[position],
                   flags=self.flag_text[position], position=int(position))
        return row


def split_members(record_ids: pd.Series) -> tuple[np.ndarray, pa.Array]:
    """(item position, record ID) for every member of every item, via Arrow's split.

    Item positions come out in increasing order; the IDs stay an Arrow string array.
    """
    arr = pa.array(record_ids.astype("string").fillna(""), type=pa.string())
    lists = pc.split_pattern(arr, ";")
    flat = pc.list_flatten(lists)
    parent = pc.list_parent_indices(lists).to_numpy()
    return parent.astype(np.int64), flat


@dataclass
class ReviewData:
    """A project opened for review: the latest run and where its tables are."""

    project: Project
    run: Run

    @classmethod
    def open(cls, project_dir: str | Path) -> "ReviewData":
        """Open the project's latest run (raises `ProjectError` when there is none)."""
        project = Project.open(project_dir)
        return cls(project, project.latest_run())

    def queue(self) -> QueueData:
        """The work list (queue table only; fast)."""
        return QueueData(read_queue(self.run))

    def thresholds(self) -> dict[str, float]:
        """The run's auto and review thresholds (match probabilities)."""
        found = self.run.manifest.get("thresholds") or {}
        if not found:
            try:
                model = self.run.read_json("model.json")
                found = {"auto": model["thresholds"]["accept_probability"],
                         "review": model["thresholds"]["review_probability"]}
            except (OSError, KeyError, ValueError):
                found = {"auto": 0.99, "review": 0.5}
        return {"auto": float(found["auto"]), "review": float(found["review"])}

    def model(self) -> dict:
        """The run's saved match model (plain JSON), or {} without one."""
        try:
            return self.run.read_json("model.json")
        except (OSError, ValueError):
            return {}


__all__ = ["ANY_FLAG", "KINDS", "PAGE_SIZE", "QUEUE_COLUMNS", "STATES", "QueueData",
           "QueueFilter", "ReviewData", "cycle", "empty_queue", "read_queue",
           "reviewer_name", "split_members"]
