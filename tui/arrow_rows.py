"""Arrow tables read once and looked up by position or by key, without copies.

The run index (`tui.index`) keeps a million-record run in memory as Arrow tables and answers
"the rows of these records" many times a second. These helpers make each answer cost what it
returns: binary search over sorted keys (`ranges`, `KeyOrder`), row takes chunk by chunk
(`Rows`), and hash look-ups of IDs in Arrow's C++ (`index_in`).
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from resolve.project import Run


def ranges(sorted_keys: np.ndarray, wanted: np.ndarray) -> np.ndarray:
    """Positions in ``sorted_keys`` whose value is one of ``wanted`` (vectorised)."""
    wanted = np.asarray(wanted, dtype=sorted_keys.dtype if len(sorted_keys) else np.int64)
    lo = np.searchsorted(sorted_keys, wanted, side="left")
    hi = np.searchsorted(sorted_keys, wanted, side="right")
    n = hi - lo
    total = int(n.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    starts = np.repeat(lo - np.concatenate([[0], np.cumsum(n)[:-1]]), n)
    return starts + np.arange(total)


def read(run: Run, name: str, columns: list[str] | None = None) -> pa.Table | None:
    path = run.path / f"{name}.parquet"
    if not path.exists():
        return None
    if columns is not None:
        present = set(pq.read_schema(path).names)
        columns = [c for c in columns if c in present]
    return pq.read_table(path, columns=columns)


class KeyOrder:
    """Positions of a table's rows sorted by an integer key, for binary search by key.

    The table itself is never reordered (that would copy it); ``rows_for(keys)`` gives the
    original row positions holding any of the keys.
    """

    def __init__(self, key: np.ndarray):
        key = np.asarray(key, dtype=np.int64)
        if len(key) and not np.all(key[1:] >= key[:-1]):
            self.order: np.ndarray | None = np.argsort(key, kind="stable")
            self.sorted = key[self.order]
        else:
            self.order, self.sorted = None, key
        self.key = key

    def rows_for(self, wanted: np.ndarray) -> np.ndarray:
        """Original positions (in sorted-key order) of the rows whose key is in ``wanted``."""
        found = ranges(self.sorted, np.unique(np.asarray(wanted, dtype=np.int64)))
        return found if self.order is None else self.order[found]


class Rows:
    """Rows of a chunked Arrow table by position, without combining its chunks.

    Arrow's ``take`` on a many-chunk table joins the chunks on every call (a copy of the whole
    column); combining them once at load copies the whole table. This looks each position up
    in its own chunk instead, so a take costs what it returns.
    """

    def __init__(self, table: pa.Table):
        self.table = table
        self.batches = table.to_batches()
        self.offsets = np.concatenate([[0], np.cumsum([b.num_rows for b in self.batches])]).astype(np.int64)

    @property
    def num_rows(self) -> int:
        return self.table.num_rows

    def column(self, name: str):
        return self.table.column(name)

    @property
    def column_names(self) -> list[str]:
        return self.table.column_names

    def take(self, positions) -> pa.Table:
        """The rows at ``positions``, in that order."""
        idx = np.asarray(positions, dtype=np.int64)
        if len(idx) == 0 or not self.batches:
            return self.table.slice(0, 0)
        if len(self.batches) == 1:
            return pa.Table.from_batches([self.batches[0].take(pa.array(idx))])
        chunk = np.searchsorted(self.offsets, idx, side="right") - 1
        parts, where = [], []
        for c in np.unique(chunk).tolist():
            mask = chunk == c
            parts.append(self.batches[c].take(pa.array(idx[mask] - self.offsets[c])))
            where.append(np.flatnonzero(mask))
        found = pa.Table.from_batches(parts)
        if len(parts) == 1:
            return found
        return found.take(pa.array(np.argsort(np.concatenate(where), kind="stable")))


def rows_of(table: pa.Table | None) -> Rows | None:
    """`Rows` over a table, or None."""
    return Rows(table) if table is not None else None


def index_in(values, value_set: pa.Array) -> np.ndarray:
    """Position of each value in ``value_set`` (-1 when absent), hashed in Arrow's C++."""
    found = pc.fill_null(pc.index_in(values, value_set=value_set), -1)
    if isinstance(found, pa.ChunkedArray):
        found = found.combine_chunks()
    return found.to_numpy(zero_copy_only=False).astype(np.int64)


def strings(column) -> pa.Array:
    """One contiguous string array (a single chunk is not copied)."""
    if isinstance(column, pa.ChunkedArray):
        column = column.combine_chunks() if column.num_chunks != 1 else column.chunk(0)
    return column.cast(pa.string()) if column.type != pa.string() else column
