"""Entity-level views of the record tables, shared by households, groups and the queue.

Entities are addressed inside these functions by a dense int code (their position in
factorised entity-ID order), the same trick `rec` plays for records, so that graph and
grouping work stays in numpy. The codes, record-ID hashes and orders are made once per run
and shared by every caller (`resolve.clusters.codes`): diagnostics, households, groups, the
queue and the signals all start from the same entity and record tables.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa

from resolve.clusters.codes import remembered, text_codes
from resolve.clusters.keys import arrow_text, hash_text, join_runs, text_rank
from resolve.errors import InputError
from resolve.links import identifier_labels, shareable_identifiers

NATIONAL_ID_KIND = 2
"""``kind`` of a national ID in `entity_values` (`resolve.links.shareable_identifiers` order)."""


def _in_rec_order(entities: pd.DataFrame) -> pd.DataFrame:
    rec = entities["rec"].to_numpy()
    if np.array_equal(rec, np.arange(len(entities))):
        return entities
    ordered = entities.sort_values("rec", kind="stable")
    if not np.array_equal(ordered["rec"].to_numpy(), np.arange(len(ordered))):
        raise InputError(
            "The entity table must hold every record exactly once; rebuild it with build_entities."
        )
    return ordered


def entity_codes(entities: pd.DataFrame) -> tuple[np.ndarray, pd.Index, np.ndarray]:
    """Entity code per rec (in rec order), the entity IDs by code, and the record IDs per rec.

    The arrays are read-only: for an Arrow-backed table they are computed once and shared by
    every caller (`resolve.clusters.codes`).
    """
    ordered = _in_rec_order(entities)
    codes, uniques = text_codes(ordered["entity_id"])
    record_id = remembered("object_array", [ordered["record_id"]],
                           lambda: _frozen_objects(ordered["record_id"]))
    return codes, uniques, record_id


def record_hashes(entities: pd.DataFrame) -> np.ndarray:
    """`hash_text` of every record ID, in rec order (read-only; computed once per column)."""
    return hash_text(_in_rec_order(entities)["record_id"])


def record_texts(entities: pd.DataFrame) -> tuple[pa.Array, np.ndarray]:
    """Record IDs in rec order as one Arrow string array, and their `text_rank` (read-only),
    computed once per column: the queue names and lists records from them."""

    def compute():
        ids = _in_rec_order(entities)["record_id"].astype("string")
        rank = text_rank(ids)
        rank.flags.writeable = False
        return arrow_text(ids), rank

    return remembered("record_texts", [_in_rec_order(entities)["record_id"]], compute)


def _frozen_objects(values: pd.Series) -> np.ndarray:
    out = values.to_numpy(dtype=object)
    out.flags.writeable = False
    return out


def entity_values(
    code: np.ndarray,
    identifiers: pd.DataFrame,
    hubs: pd.DataFrame | None = None,
    records: np.ndarray | None = None,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Identifier values per entity, placeholders, missing values and hubs left out.

    Returns ``(held, shared)``: ``held`` has one row per distinct (entity, value) with ``e``,
    ``value_id`` and ``holders`` (entities holding the value), sorted by entity and value;
    ``shared`` keeps the rows with ``holders`` >= 2 and adds ``kind`` (index into
    ``("phone", "email", "national_id", "address")``) and ``label`` (readable ``kind:key``).
    ``records``, a boolean mask per rec, keeps the identifiers of those records only
    (``holders`` then counts among their entities); pass whole entities, so that the first
    row of each (entity, value), whose label is used, is the same as without the mask.
    """
    ids = shareable_identifiers(identifiers, hubs)
    rec = ids["rec"].to_numpy()
    keep = rec < len(code)
    if records is not None and len(code):
        keep &= np.asarray(records, dtype=bool)[np.minimum(rec, len(code) - 1)]
    rows = np.flatnonzero(keep)
    e = code[rec[rows]]
    value = ids["value_id"].to_numpy()[rows]
    width = int(value.max(initial=0)) + 1
    pair = e * width + value
    order = np.argsort(pair, kind="stable")  # the first row of each (entity, value) leads its run
    pair = pair[order]
    lead = np.concatenate([[True], pair[1:] != pair[:-1]]) if len(pair) else np.zeros(0, dtype=bool)
    first = order[lead]
    held = pd.DataFrame({"e": e[first], "value_id": value[first]})
    held["holders"] = _holders(held["value_id"].to_numpy(), width)
    keep = np.flatnonzero(held["holders"].to_numpy() >= 2)
    shared = held.iloc[keep].reset_index(drop=True)
    picked = ids.iloc[rows[first[keep]]]
    shared["kind"] = picked["kind"].to_numpy()
    shared["label"] = identifier_labels(identifiers, picked).to_numpy()
    return held, shared


def _holders(value: np.ndarray, width: int) -> np.ndarray:
    """How many rows hold each row's value (a count per distinct value, gathered back)."""
    if len(value) == 0:
        return np.zeros(0, dtype=np.int64)
    if width <= 8 * len(value) + 1024:  # a dense count is cheaper than hashing
        return np.bincount(value, minlength=width)[value]
    codes, _ = pd.factorize(value)
    return np.bincount(codes)[codes]


def values_in_common(group_of_entity: np.ndarray, values: pd.DataFrame) -> pd.DataFrame:
    """Values held by two or more entities of the same group: ``group``, ``label``.

    ``values`` has ``e``, ``value_id``, ``label``; ``group_of_entity`` gives a group label
    per entity code (-1 for none).
    """
    g = group_of_entity[values["e"].to_numpy()]
    inside = np.flatnonzero(g >= 0)
    value = values["value_id"].to_numpy()[inside]
    key = g[inside] * (int(value.max(initial=0)) + 1) + value
    codes, _ = pd.factorize(key)
    keep = inside[np.bincount(codes)[codes] >= 2] if len(codes) else inside
    out = pd.DataFrame({"group": g[keep], "label": values["label"].to_numpy()[keep]})
    return out.drop_duplicates().sort_values(["group", "label"])


def joined_per_group(frame: pd.DataFrame, column: str, groups: np.ndarray) -> pd.Series:
    """';'-joined sorted ``column`` values per ``group``, aligned with ``groups`` (<NA> if none)."""
    ordered = frame.sort_values(["group", column], kind="stable")
    labels, joined = join_runs(ordered["group"].to_numpy(), ordered[column].to_numpy(dtype=object))
    return pd.Series(groups).map(pd.Series(joined, index=labels)).astype("string")
