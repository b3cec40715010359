"""Integer codes for text columns, computed once per column and shared between stages.

Households, identity-sharing groups, the review queue and the risk signals all group the same
million-row text columns (identifier keys and types, entity IDs). Hashing those strings is
the costly part of each step, and the pipeline hands every step the same tables, so
`text_codes` factorises a column once and keeps the result for as long as the column's Arrow
data lives. Arrow data never changes in place (assigning to a pandas column, even one cell,
replaces it), so the same Arrow object always holds the same values; the codes are returned
read-only so that no caller can change them under the next one. Columns not backed by Arrow
are factorised on every call, as before.
"""

from __future__ import annotations

import weakref

import numpy as np
import pandas as pd
import pyarrow as pa

_CACHE: dict[tuple, tuple[tuple, object]] = {}
"""Kept results by (name, ids of the Arrow data, dtypes). No lock: single dict operations are
atomic, two threads computing one result at once only waste work, and a lock taken inside a
weakref callback (which garbage collection can run at any allocation) could deadlock."""


def arrow_data(values: pd.Series) -> pa.ChunkedArray | pa.Array | None:
    """The immutable Arrow data behind ``values``, or None when it is not Arrow-backed."""
    array = values.array
    if not isinstance(array, pd.arrays.ArrowExtensionArray):
        return None
    data = array.__arrow_array__()
    return data if isinstance(data, (pa.ChunkedArray, pa.Array)) else None


def _frozen(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


def remembered(name: str, columns: list[pd.Series], compute):
    """``compute()``, kept while the Arrow data of every column in ``columns`` lives.

    ``name`` tells apart different results of the same columns. Without Arrow-backed
    columns nothing is kept. Callers must return read-only arrays or immutable objects.
    """
    data = [arrow_data(c) for c in columns]
    if not data or any(d is None for d in data):
        return compute()
    key = (name, tuple(id(d) for d in data), tuple(str(c.dtype) for c in columns))
    hit = _CACHE.get(key)
    if hit is not None and all(ref() is d for ref, d in zip(hit[0], data)):
        return hit[1]
    result = compute()

    def forget(_ref, key=key):
        _CACHE.pop(key, None)

    _CACHE[key] = (tuple(weakref.ref(d, forget) for d in data), result)
    return result


def text_codes(values: pd.Series) -> tuple[np.ndarray, pd.Index]:
    """``pd.factorize(values)`` as (read-only int64 codes, -1 for missing; uniques as an Index),
    computed once per Arrow column."""

    def compute():
        data = arrow_data(values)
        encoded = None
        if isinstance(values.dtype, pd.StringDtype) and isinstance(data, pa.ChunkedArray) and len(data):
            encoded = data.dictionary_encode()
        if encoded is not None and encoded.num_chunks:
            # Arrow's own hashing, without pandas' extra passes; one dictionary for all chunks,
            # in order of first appearance, as pd.factorize numbers them
            indices = [c.indices for c in encoded.chunks]
            codes = pa.chunked_array(indices, type=indices[0].type).fill_null(-1).to_numpy()
            uniques = pd.Index(pd.arrays.ArrowStringArray(encoded.chunks[-1].dictionary)).astype(values.dtype)
            return _frozen(np.asarray(codes, dtype=np.int64)), uniques
        codes, uniques = pd.factorize(values)
        return _frozen(np.asarray(codes, dtype=np.int64)), pd.Index(uniques)

    return remembered("text_codes", [values], compute)


def first_seen_codes(values: np.ndarray, width: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """``pd.factorize`` of non-negative integers (codes in order of first appearance), and
    the distinct values in that order; negative values get -1.

    With a small bound (``width`` > every value) it works in a dense table instead of
    hashing: a row is the first of its value when it is the lowest row holding it.
    """
    values = np.asarray(values)
    n = len(values)
    if width is None:
        width = int(values.max(initial=-1)) + 1
    if n and width <= 16:  # a few categories: one pass per category finds its first row
        leads = []
        for v in range(width):
            equal = values == v
            first = int(np.argmax(equal))
            if equal[first]:
                leads.append(first)
        leads = np.sort(np.array(leads, dtype=np.int64))
        code_of = np.full(width + 1, -1, dtype=np.int64)
        code_of[values[leads]] = np.arange(len(leads))
        return code_of[np.where(values >= 0, values, width)], values[leads].astype(np.int64)
    values = values.astype(np.int64, copy=False)
    codes = np.full(n, -1, dtype=np.int64)
    rows = np.flatnonzero(values >= 0)
    if len(rows) == 0:
        return codes, np.zeros(0, dtype=np.int64)
    if width > 4 * n + 1024:
        found, uniques = pd.factorize(values[rows])
        codes[rows] = found
        return codes, np.asarray(uniques, dtype=np.int64)
    first = np.full(width, n, dtype=np.int64)
    np.minimum.at(first, values[rows], rows)
    leads = rows[first[values[rows]] == rows]  # already in row order
    code_of = np.full(width, -1, dtype=np.int64)
    code_of[values[leads]] = np.arange(len(leads))
    codes[rows] = code_of[values[rows]]
    return codes, values[leads]


def forget_all() -> None:
    """Drop every kept result (for benchmarks that time a first call twice)."""
    _CACHE.clear()


def take_text(values: pd.Series, rows: np.ndarray) -> pd.Series:
    """``values.iloc[rows]`` as a string Series with a fresh index, for a few rows of a long
    Arrow column: each chunk gives its own rows (taking from a chunked column at once would
    first copy every chunk into one)."""
    rows = np.asarray(rows, dtype=np.int64)
    data = arrow_data(values)
    if not isinstance(data, pa.ChunkedArray) or not (pa.types.is_string(data.type) or pa.types.is_large_string(data.type)):
        return values.iloc[rows].astype("string").reset_index(drop=True)
    if len(rows) == 0 or data.num_chunks == 0:
        return pd.Series(pd.arrays.ArrowStringArray(pa.array([], type=data.type)))
    starts = np.cumsum([0] + [len(c) for c in data.chunks])
    chunk = np.searchsorted(starts, rows, side="right") - 1
    order = np.argsort(chunk, kind="stable")
    bounds = np.searchsorted(chunk[order], np.arange(data.num_chunks + 1))
    pieces = [data.chunk(k).take(pa.array(rows[order[bounds[k]:bounds[k + 1]]] - starts[k]))
              for k in range(data.num_chunks) if bounds[k + 1] > bounds[k]]
    taken = pa.concat_arrays(pieces)
    back = np.empty(len(rows), dtype=np.int64)
    back[order] = np.arange(len(rows))
    return pd.Series(pd.arrays.ArrowStringArray(taken.take(pa.array(back)))).astype(values.dtype)


def isin(values: pd.Series, wanted) -> np.ndarray:
    """``values.isin(wanted)`` as a bool array; for a categorical, decided once per category."""
    if isinstance(values.dtype, pd.CategoricalDtype):
        table = np.append(values.cat.categories.isin(list(wanted)), False)
        return table[values.cat.codes.to_numpy()]
    return values.isin(list(wanted)).to_numpy(dtype=bool)
