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

from resolve.clusters.codes import remembered

DIGITS = 12
"""Hex digits in a name (48 bits); colliding names are lengthened to 16 digits."""

_BYTE_HEX = np.array([f"{i:02x}".encode() for i in range(256)], dtype="S2")


def hash_text(values: pd.Series) -> np.ndarray:
    """Return the 64-bit content hash (uint64) of each string in ``values`` (no missing values).

    Read-only; computed once per Arrow column (`resolve.clusters.codes.remembered`), since
    entities, households and groups all name themselves from the same record IDs.
    """
    if len(values) == 0:
        return np.zeros(0, dtype=np.uint64)

    def compute():
        text = values.astype("string").to_numpy(dtype=object)
        hashes = pd.util.hash_array(text, categorize=False)
        hashes.flags.writeable = False
        return hashes

    return remembered("hash_text", [values], compute)


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


def arrow_text(texts) -> pa.Array:
    """Text (array, Series, Index or Arrow data) as one contiguous Arrow string array; pandas
    data already held in Arrow is not copied into Python objects."""
    data = texts
    if isinstance(texts, (pd.Series, pd.Index)) and isinstance(texts.array, pd.arrays.ArrowExtensionArray):
        data = texts.array.__arrow_array__()
    elif not isinstance(texts, (pa.Array, pa.ChunkedArray)):
        data = pa.array(np.asarray(texts, dtype=object), type=pa.string())
    return data.combine_chunks() if isinstance(data, pa.ChunkedArray) else data


def text_rank(texts) -> np.ndarray:
    """Position of each text in sorted order, so that sorting by text is sorting by int."""
    rank = np.empty(len(texts), dtype=np.int64)
    order = pc.sort_indices(arrow_text(texts))
    rank[order.to_numpy()] = np.arange(len(texts))
    return rank


def index_rank(index: pd.Index) -> np.ndarray:
    """`text_rank` of an index of IDs (read-only); computed once per Arrow-backed index, as
    groups and the queue both order the same entity IDs."""

    def compute():
        rank = text_rank(index)
        rank.flags.writeable = False
        return rank

    return remembered("text_rank", [index], compute)


def join_runs_arrow(groups: np.ndarray, texts, sep: str = ";") -> tuple[np.ndarray, pa.Array]:
    """`join_runs`, with the joined texts left as an Arrow string array."""
    groups = np.asarray(groups)
    if len(groups) == 0:
        return groups, pa.array([], type=pa.string())
    starts = np.flatnonzero(np.concatenate([[True], groups[1:] != groups[:-1]]))
    values = arrow_text(texts)
    offsets = pa.array(np.append(starts, len(groups)).astype(np.int32))
    return groups[starts], pc.binary_join(pa.ListArray.from_arrays(offsets, values), pa.scalar(sep, values.type))


def join_runs(groups: np.ndarray, texts, sep: str = ";") -> tuple[np.ndarray, np.ndarray]:
    """Join ``texts`` by ``sep`` within runs of equal ``groups`` (rows already in runs).

    Returns the distinct groups (one per run) and the joined text of each (object array).
    The joining runs in Arrow (list arrays and `binary_join`), not in a Python loop.
    """
    labels, joined = join_runs_arrow(groups, texts, sep)
    return labels, np.asarray(joined.to_numpy(zero_copy_only=False), dtype=object)


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
    ids = record_id.astype("string").reset_index(drop=True)
    everyone = np.arange(len(ids))
    return member_names_at(group, everyone, arrow_text(ids), text_rank(ids), hash_text(ids), prefix)


def member_names_at(group: np.ndarray, recs: np.ndarray, texts: pa.Array, rank: np.ndarray,
                    hashes: np.ndarray, prefix: str) -> pd.DataFrame:
    """`member_names` for records given as positions ``recs`` into per-record arrays made once:
    their IDs as Arrow ``texts``, the IDs' `text_rank` and their `hash_text` hashes."""
    group = np.asarray(group)
    recs = np.asarray(recs, dtype=np.int64)
    order = recs[np.lexsort((rank[recs], group))]  # records by group, then by ID
    by_group = np.sort(group, kind="stable")
    labels, joined = join_runs_arrow(by_group, texts.take(pa.array(order)))
    starts = np.searchsorted(by_group, labels)
    ordered_hashes = np.asarray(hashes)[order]
    sums = np.add.reduceat(ordered_hashes, starts) if len(starts) else ordered_hashes[:0]
    return pd.DataFrame(
        {
            "group": labels,
            "key": names_from_hashes(_mix(sums), prefix),
            "record_ids": pd.arrays.ArrowStringArray(joined),
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
