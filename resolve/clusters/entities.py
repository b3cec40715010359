"""Entities: the groups of records taken to be one person, with reviewer decisions applied.

An entity is a connected component over `same_person` links plus the reviewer's must-link
pairs. Components are found with scipy.sparse (a million records in well under a second).
Cannot-link decisions then split any entity that holds both records of a cannot-link pair,
by a minimum cut between the two records on that entity's own small graph (networkx), where
a must-link counts as an uncuttable link: must-link wins over scores, cannot-link wins over
scores, and a pair that is both must-link and cannot-link is an error for the reviewer.

Entity IDs are derived from content ('E' + the smallest hash of the entity's record IDs), so
two runs on the same input give the same IDs; `stable_entity_ids` carries IDs across runs whose
input changed.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.clusters.keys import components, hash_text, names_from_text, names_per_label, text_rank
from resolve.errors import DecisionError, InputError
from resolve.links import SAME_PERSON

ENTITY_PREFIX = "E"


def record_positions(people: pd.DataFrame, pairs: pd.DataFrame | None) -> tuple[np.ndarray, np.ndarray]:
    """Map a (record_id_a, record_id_b) decision table to ``rec`` positions.

    Pairs naming a record that is not in this run are dropped: decisions outlive records.
    """
    if pairs is None or len(pairs) == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty
    index = pd.Index(people["record_id"])
    a = index.get_indexer(pairs["record_id_a"].astype(people["record_id"].dtype))
    b = index.get_indexer(pairs["record_id_b"].astype(people["record_id"].dtype))
    keep = (a >= 0) & (b >= 0) & (a != b)
    return a[keep].astype(np.int64), b[keep].astype(np.int64)


def _check_people(people: pd.DataFrame) -> None:
    if "record_id" not in people.columns:
        raise InputError("The people table lacks record_id; build it with resolve.normalise.")
    if people["record_id"].isna().any():
        raise InputError("Every record needs a record_id; fill the empty ones before clustering.")


def _check_unique(people: pd.DataFrame) -> None:
    """Called when two record-ID hashes are equal: almost surely a repeated record ID."""
    if not people["record_id"].is_unique:
        raise InputError("Record IDs must be unique within a run; de-duplicate record_id first.")


def build_entities(
    people: pd.DataFrame,
    links: pd.DataFrame,
    must_link: pd.DataFrame | None = None,
    cannot_link: pd.DataFrame | None = None,
    prefix: str = ENTITY_PREFIX,
) -> pd.DataFrame:
    """Put every record in exactly one entity.

    ``people`` rows are in ``rec`` order (0..n-1); ``links`` is the output of
    `resolve.links.type_links`; ``must_link`` and ``cannot_link`` hold reviewer decisions as
    ``record_id_a``, ``record_id_b``. Returns ``rec``, ``record_id``, ``entity_id``.
    Raises `DecisionError` when must-link decisions join a cannot-link pair.
    """
    _check_people(people)
    n = len(people)
    record_id = people["record_id"].astype("string").reset_index(drop=True)
    record_hash = hash_text(record_id)
    if not pd.Series(record_hash).is_unique:
        _check_unique(people)
    same = (links["link_type"] == SAME_PERSON).to_numpy(dtype=bool)
    la = links["rec_a"].to_numpy(dtype=np.int64)[same]
    lb = links["rec_b"].to_numpy(dtype=np.int64)[same]
    lp = links["prob"].to_numpy(dtype=np.float64)[same]
    ma, mb = record_positions(people, must_link)
    labels = components(n, np.concatenate([la, ma]), np.concatenate([lb, mb]))
    ca, cb = record_positions(people, cannot_link)
    clash = labels[ca] == labels[cb]
    if clash.any():
        labels = _split_cannot_links(labels, (la, lb, lp), (ma, mb), (ca[clash], cb[clash]), people)
    names = names_per_label(labels, record_hash, prefix)  # labels run 0..k-1
    return pd.DataFrame(
        {
            "rec": np.arange(n, dtype=np.int32),
            "record_id": record_id.array,
            "entity_id": names.array.take(labels),
        }
    )


def _split_cannot_links(
    labels: np.ndarray,
    same: tuple[np.ndarray, np.ndarray, np.ndarray],
    must: tuple[np.ndarray, np.ndarray],
    cannot: tuple[np.ndarray, np.ndarray],
    people: pd.DataFrame,
) -> np.ndarray:
    """Split components holding a cannot-link pair by minimum cuts (capacity = probability)."""
    la, lb, lp = same
    ma, mb = must
    ca, cb = cannot
    labels = labels.copy()
    next_label = int(labels.max()) + 1
    record_id = people["record_id"].to_numpy()
    affected = np.unique(labels[ca])

    def by_label(*columns: np.ndarray) -> tuple[np.ndarray, list[np.ndarray]]:
        """Rows of ``columns`` inside affected components, sorted by component label."""
        inside = np.flatnonzero(np.isin(labels[columns[0]], affected))
        order = inside[np.argsort(labels[columns[0]][inside], kind="stable")]
        return labels[columns[0]][order], [c[order] for c in columns]

    link_label, (la, lb, lp) = by_label(la, lb, lp)
    must_label, (ma, mb) = by_label(ma, mb)
    cannot_label, (ca, cb) = by_label(ca, cb)
    rec_order = np.argsort(labels, kind="stable")
    rec_labels = labels[rec_order]
    for label in affected:
        graph = nx.Graph()
        lo, hi = np.searchsorted(rec_labels, [label, label + 1])
        graph.add_nodes_from(rec_order[lo:hi].tolist())
        lo, hi = np.searchsorted(link_label, [label, label + 1])
        for u, v, p in sorted(zip(la[lo:hi].tolist(), lb[lo:hi].tolist(), lp[lo:hi].tolist())):
            if graph.has_edge(u, v):
                graph[u][v]["capacity"] = max(graph[u][v]["capacity"], p)
            else:
                graph.add_edge(u, v, capacity=p)
        lo, hi = np.searchsorted(must_label, [label, label + 1])
        for u, v in sorted(zip(ma[lo:hi].tolist(), mb[lo:hi].tolist())):
            graph.add_edge(u, v)  # without a capacity networkx treats the edge as uncuttable
            graph[u][v].pop("capacity", None)
        lo, hi = np.searchsorted(cannot_label, [label, label + 1])
        for s, t in sorted(zip(ca[lo:hi].tolist(), cb[lo:hi].tolist())):
            if not nx.has_path(graph, s, t):
                continue
            try:
                _, (side_s, side_t) = nx.minimum_cut(graph, s, t, capacity="capacity")
            except nx.NetworkXUnbounded:
                raise DecisionError(
                    f"Records {record_id[s]} and {record_id[t]} are joined by must-link decisions "
                    "but also marked cannot-link; withdraw one of those decisions."
                ) from None
            graph.remove_edges_from([(u, v) for u, v in graph.edges(side_s) if v in side_t])
        for i, part in enumerate(sorted(nx.connected_components(graph), key=min)):
            if i:
                labels[list(part)] = next_label
                next_label += 1
    return labels


def stable_entity_ids(new_entities: pd.DataFrame, previous_entities: pd.DataFrame) -> pd.DataFrame:
    """Carry entity IDs over from a previous run.

    Each new entity keeps the ID of the previous entity it shares most records with; ties go
    to the smaller previous ID, and each previous ID goes to one new entity at most (the pairs
    are taken greedily by overlap, then previous ID, then new ID). A new entity left without
    an ID keeps its content-derived ID unless a previous run used that ID, in which case it
    gets a fresh one derived from it. Returns ``new_entities`` with ``entity_id`` replaced.
    """
    new_code, new_ids = pd.factorize(new_entities["entity_id"].astype("string"))
    old_code, old_ids = pd.factorize(previous_entities["entity_id"].astype("string"))
    new_ids = np.asarray(new_ids, dtype=object)
    old_ids = np.asarray(old_ids, dtype=object)
    where = pd.Index(previous_entities["record_id"].astype("string")).get_indexer_for(
        new_entities["record_id"].astype("string")
    )
    both = where >= 0
    pair = new_code[both].astype(np.int64) * len(old_ids) + old_code[where[both]]
    pair, shared = np.unique(pair, return_counts=True)
    n, o = pair // max(len(old_ids), 1), pair % max(len(old_ids), 1)
    new_rank, old_rank = text_rank(new_ids), text_rank(old_ids)
    assigned = np.full(len(new_ids), -1, dtype=np.int64)
    used = np.zeros(len(old_ids), dtype=bool)
    while len(n):
        # a pair is taken when it is the best remaining pair of both its entities
        order = np.lexsort((new_rank[n], old_rank[o], -shared))
        n, o, shared = n[order], o[order], shared[order]
        best_of_new = np.zeros(len(n), dtype=bool)
        best_of_new[np.unique(n, return_index=True)[1]] = True
        best_of_old = np.zeros(len(n), dtype=bool)
        best_of_old[np.unique(o, return_index=True)[1]] = True
        take = best_of_new & best_of_old
        assigned[n[take]] = o[take]
        used[o[take]] = True
        keep = (assigned[n] < 0) & ~used[o]
        n, o, shared = n[keep], o[keep], shared[keep]
    final = np.where(assigned >= 0, old_ids[np.maximum(assigned, 0)] if len(old_ids) else new_ids, new_ids)
    reused = pc.is_in(pa.array(new_ids, type=pa.string()), value_set=pa.array(old_ids, type=pa.string()))
    clash = (assigned < 0) & reused.to_numpy(zero_copy_only=False)
    taken = set(old_ids) | set(new_ids) if clash.any() else set()
    for i in np.flatnonzero(clash):  # a new entity whose own ID a previous run used: derive one
        fresh, k = new_ids[i], 0
        while fresh in taken:
            k += 1
            prefix = new_ids[i].rstrip("0123456789abcdef") or new_ids[i][:1]
            fresh = names_from_text(pd.Series([f"{new_ids[i]}#{k}"], dtype="string"), prefix).iloc[0]
        final[i] = fresh
        taken.add(fresh)
    out = new_entities.copy()
    out["entity_id"] = pd.array(final[new_code], dtype="string")
    return out
