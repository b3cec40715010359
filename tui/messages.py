"""Events that workers post back to the interface, named for what has happened.

Slow work (reading tables, indexing a run, recording a decision, re-clustering) runs in
worker threads; each reports back with one of these messages, and only the message handlers
touch widgets. Nothing here does any work.
"""

from __future__ import annotations

from textual.message import Message


class FirstPageRead(Message):
    """The first page of the work list has been read (before the rest is loaded)."""

    def __init__(self, page) -> None:
        super().__init__()
        self.page = page


class QueueLoaded(Message):
    """The work list has been read."""

    def __init__(self, queue) -> None:
        super().__init__()
        self.queue = queue


class IndexBuilt(Message):
    """The run's tables have been indexed; clusters, flags and search are ready."""

    def __init__(self, index, model: dict) -> None:
        super().__init__()
        self.index = index
        self.model = model


class StatesLoaded(Message):
    """Review states of the work-list items have been read from the review store."""

    def __init__(self, states) -> None:
        super().__init__()
        self.states = states


class SearchFinished(Message):
    """A search over record IDs and names has found its items."""

    def __init__(self, text: str, positions) -> None:
        super().__init__()
        self.text = text
        self.positions = positions


class ClusterLoaded(Message):
    """One item's records, links, identifiers and flags have been gathered."""

    def __init__(self, position: int, view) -> None:
        super().__init__()
        self.position = position
        self.view = view


class DecisionRecorded(Message):
    """A decision has been written to the review store."""

    def __init__(self, cluster_key: str, outcome) -> None:
        super().__init__()
        self.cluster_key = cluster_key
        self.outcome = outcome


class DecisionRefused(Message):
    """The decisions layer refused a decision; ``reason`` says what to do."""

    def __init__(self, cluster_key: str, action: str, reason: str) -> None:
        super().__init__()
        self.cluster_key = cluster_key
        self.action = action
        self.reason = reason


class IdentifiersRevealed(Message):
    """A record's national IDs have been revealed (and the reveal audited)."""

    def __init__(self, record_id: str, values: dict) -> None:
        super().__init__()
        self.record_id = record_id
        self.values = values


class ThresholdsApplied(Message):
    """Re-clustering with new thresholds has finished; ``result`` holds the new counts."""

    def __init__(self, result) -> None:
        super().__init__()
        self.result = result


class LoadFailed(Message):
    """Reading the project failed; ``reason`` is one plain sentence."""

    def __init__(self, what: str, reason: str) -> None:
        super().__init__()
        self.what = what
        self.reason = reason
