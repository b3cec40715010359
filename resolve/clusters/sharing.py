"""Entity-level views of the record tables, shared by households, groups and the queue.

Entities are addressed inside these functions by a dense int code (their position in
factorised entity-ID order), the same trick `rec` plays for records, so that graph and
grouping work stays in numpy.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.clusters.keys import join_runs
from resolve.errors import InputError
from resolve.links import identifier_labels, shareable_identifiers


def entity_codes(entities: pd.DataFrame) -> tuple[np.ndarray, pd.Index, np.ndarray]:
    """Entity code per rec (in rec order), the entity IDs by code, and the record IDs per rec."""
    rec = entities["rec"].to_numpy()
    ordered = entities
    if not np.array_equal(rec, np.arange(len(entities))):
        ordered = entities.sort_values("rec", kind="stable")
        if not np.array_equal(ordered["rec"].to_numpy(), np.arange(len(ordered))):
            raise InputError(
                "The entity table must hold every record exactly once; rebuild it with build_entities."
            )
    codes, uniques = pd.factorize(ordered["entity_id"])
    return codes.astype(np.int64), pd.Index(uniques), ordered["record_id"].to_numpy(dtype=object)


def entity_values(
    code: np.ndarray, identifiers: pd.DataFrame, hubs: pd.DataFrame | None = None
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Identifier values per entity, placeholders, missing values and hubs left out.

    Returns ``(held, shared)``: ``held`` has one row per distinct (entity, value) with ``e``,
    ``value_id`` and ``holders`` (entities holding the value); ``shared`` keeps the rows with
    ``holders`` >= 2 and adds ``label`` (readable ``kind:key``).
    """
    ids = shareable_identifiers(identifiers, hubs)
    ids = ids[ids["rec"].to_numpy() < len(code)]
    e = code[ids["rec"].to_numpy()]
    value = ids["value_id"].to_numpy()
    pair = e * (int(value.max(initial=0)) + 1) + value
    _, first = np.unique(pair, return_index=True)
    held = pd.DataFrame({"e": e[first], "value_id": value[first]})
    vcode, _ = pd.factorize(held["value_id"])
    held["holders"] = np.bincount(vcode)[vcode] if len(vcode) else np.zeros(0, dtype=np.int64)
    keep = np.flatnonzero(held["holders"].to_numpy() >= 2)
    shared = held.iloc[keep].reset_index(drop=True)
    shared["label"] = identifier_labels(identifiers, ids.iloc[first[keep]]).to_numpy()
    return held, shared


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
