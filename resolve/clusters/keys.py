"""Stable names for entities, households, groups and review items, and a fast component finder.

Run-local numbers (`rec` positions, component labels) change whenever the input changes, so
anything a reviewer, a decision or an export refers to is named from its content instead: a
short hash of record IDs. The hash is SipHash-2-4 with pandas' fixed key over the UTF-8 text
(`pandas.util.hash_array`), computed column-wise in C, so the same record IDs give the same
names in every run and on every machine.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

DIGITS = 12
"""Hex digits in a name (48 bits); colliding names are lengthened to 16 digits."""

_BYTE_HEX = np.array([f"{i:02x}".encode() for i in range(256)], dtype="S2")


def hash_text(values: pd.Series) -> np.ndarray:
    """Return the 64-bit content hash (uint64) of each string in ``values`` (no missing values)."""
    if len(values) == 0:
        return np.zeros(0, dtype=np.uint64)
    text = values.astype("string").to_numpy(dtype=object)
    return pd.util.hash_array(text, categorize=False)


def _hex(hashes: np.ndarray, digits: int) -> pa.Array:
    """Lower-case hex text of the leading ``digits`` (even) hex digits of each hash."""
    raw = hashes.astype(">u8").view(np.uint8).reshape(len(hashes), 8)[:, : digits // 2]
    chars = np.ascontiguousarray(_BYTE_HEX[raw]).view(f"S{digits}").ravel()
    return pa.array(chars, type=pa.binary()).cast(pa.string())


def names_from_hashes(hashes: np.ndarray, prefix: str) -> pd.arrays.ArrowStringArray:
    """Name each hash ``prefix`` + its first 12 hex digits (all 16 where two names collide).

    ``hashes`` should be distinct (one per thing named).
    """
    hashes = np.asarray(hashes, dtype=np.uint64)
    clash = pd.Series(hashes >> np.uint64(64 - 4 * DIGITS)).duplicated(keep=False).to_numpy()
    text = _hex(hashes, DIGITS)
    if clash.any():
        longer = np.asarray(_hex(hashes, 16), dtype=object)
        text = pa.array(np.where(clash, longer, np.asarray(text, dtype=object)), type=pa.string())
    return pd.arrays.ArrowStringArray(pc.binary_join_element_wise(prefix, text, ""))


def names_from_text(texts: pd.Series, prefix: str) -> pd.Series:
    """Name each distinct text ``prefix`` + 12 hex digits of its hash, aligned with ``texts``."""
    return pd.Series(names_from_hashes(hash_text(texts), prefix), index=texts.index)


def names_per_label(labels: np.ndarray, record_hash: np.ndarray, prefix: str) -> pd.Series:
    """Name each label from the smallest record hash among its rows; indexed by label.

    A record joining or leaving a cluster changes its name only when that record holds the
    smallest hash, and the same records always give the same name.
    """
    smallest = pd.Series(np.asarray(record_hash, dtype=np.uint64)).groupby(np.asarray(labels)).min()
    return pd.Series(names_from_hashes(smallest.to_numpy(), prefix), index=smallest.index)


def text_rank(texts: np.ndarray) -> np.ndarray:
    """Position of each text in sorted order, so that sorting by text is sorting by int."""
    rank = np.empty(len(texts), dtype=np.int64)
    order = pc.sort_indices(pa.array(np.asarray(texts, dtype=object), type=pa.string()))
    rank[order.to_numpy()] = np.arange(len(texts))
    return rank


def join_runs(groups: np.ndarray, texts, sep: str = ";") -> tuple[np.ndarray, np.ndarray]:
    """Join ``texts`` by ``sep`` within runs of equal ``groups`` (rows already in runs).

    Returns the distinct groups (one per run) and the joined text of each (object array).
    The joining runs in Arrow (list arrays and `binary_join`), not in a Python loop.
    """
    groups = np.asarray(groups)
    if len(groups) == 0:
        return groups, np.zeros(0, dtype=object)
    starts = np.flatnonzero(np.concatenate([[True], groups[1:] != groups[:-1]]))
    values = texts if isinstance(texts, pa.Array) else pa.array(np.asarray(texts, dtype=object), type=pa.string())
    offsets = pa.array(np.append(starts, len(groups)).astype(np.int32))
    joined = pc.binary_join(pa.ListArray.from_arrays(offsets, values), sep)
    return groups[starts], np.asarray(joined.to_numpy(zero_copy_only=False), dtype=object)


def _mix(x: np.ndarray) -> np.ndarray:
    """The SplitMix64 finaliser: spreads a sum of hashes over all 64 bits again."""
    x = np.asarray(x, dtype=np.uint64).copy()
    with np.errstate(over="ignore"):
        x ^= x >> np.uint64(30)
        x *= np.uint64(0xBF58476D1CE4E5B9)
        x ^= x >> np.uint64(27)
        x *= np.uint64(0x94D049BB133111EB)
        x ^= x >> np.uint64(31)
    return x


def member_names(group: np.ndarray, record_id: pd.Series, prefix: str) -> pd.DataFrame:
    """Name groups of records from their member record IDs.

    ``group`` holds a group label per row of ``record_id`` (a record at most once per group).
    Returns one row per group (sorted by label): ``group``; ``key``, ``prefix`` + 12 hex digits
    of the mixed sum of the members' record-ID hashes, so the key depends on the set of
    members only, not on their order; ``record_ids``, the sorted IDs joined by ';'; ``size``.
    """
    group = np.asarray(group)
    ids = record_id.astype("string").reset_index(drop=True)
    order = np.lexsort((text_rank(ids.to_numpy(dtype=object)), group))
    labels, joined = join_runs(group[order], ids.to_numpy(dtype=object)[order])
    starts = np.searchsorted(group[order], labels)
    hashes = hash_text(ids)[order]
    sums = np.add.reduceat(hashes, starts) if len(starts) else hashes[:0]
    return pd.DataFrame(
        {
            "group": labels,
            "key": names_from_hashes(_mix(sums), prefix),
            "record_ids": pd.array(joined, dtype="string"),
            "size": np.diff(np.append(starts, len(order))).astype(np.int64),
        }
    )


def components(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Connected-component label (int64) of each of ``n`` nodes joined by edges ``a``-``b``."""
    if n == 0:
        return np.zeros(0, dtype=np.int64)
    a = np.asarray(a, dtype=np.int64)
    b = np.asarray(b, dtype=np.int64)
    graph = coo_matrix((np.ones(len(a), dtype=np.int8), (a, b)), shape=(n, n)).tocsr()
    _, labels = connected_components(graph, directed=False)
    return labels.astype(np.int64)
