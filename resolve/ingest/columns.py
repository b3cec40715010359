"""Column helpers for ingest that work on the Arrow strings behind pandas ``string`` columns.

Ingest touches every field of every row (trim, blank to <NA>, the field-size guard), so at a
million rows the pandas string methods and the per-row Python lists they were fed cost
several seconds. These helpers do the same on the Arrow arrays directly: one kernel per
column, nothing built per row in Python. Results are plain pandas ``string`` Series (Arrow
``large_string`` in one chunk), the dtype the `RecordTable` contract names.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise.textkeys import STRING, to_arrow, to_series


def trimmed(values: pd.Series) -> pd.Series:
    """White space stripped from both ends and empty strings as <NA>.

    The same as ``s.str.strip()`` then ``s.mask(s == "")`` (pandas strips with Arrow's
    ``utf8_trim_whitespace`` too); the blank-to-null step is skipped when no value is blank,
    which is the usual case because the readers already give empty fields as null.
    """
    arr = to_arrow(values)
    if _may_have_outer_space(arr):
        arr = pc.utf8_trim_whitespace(arr)
    blank = pc.equal(arr, "")
    if pc.any(blank).as_py():
        arr = pc.if_else(blank, pa.scalar(None, STRING), arr)
    return to_series(arr)


# White space as Arrow's trim sees it (Unicode category Zs and the bidirectional classes
# WS, B and S): ASCII tab to carriage return, the separators U+001C..U+001F and space, and
# outside ASCII U+0085 and U+00A0 (two bytes) and U+1680, U+2000..U+200A, U+2028, U+2029,
# U+202F, U+205F and U+3000 (three bytes). A test checks every code point against Arrow.
_ASCII_SPACE = np.zeros(256, dtype=bool)
_ASCII_SPACE[[9, 10, 11, 12, 13, 28, 29, 30, 31, 32]] = True
_WIDE_SPACES = np.array(sorted(
    int.from_bytes(chr(c).encode("utf-8"), "big")
    for c in (0x85, 0xA0, 0x1680, *range(0x2000, 0x200B), 0x2028, 0x2029, 0x202F, 0x205F,
              0x3000)), dtype=np.int64)


def _may_have_outer_space(arr: pa.Array) -> bool:
    """False only when no value starts or ends with white space (read from the bytes).

    Trimming copies every string of the column; extracts rarely pad their fields, so a look
    at each value's first and last bytes usually shows that the copy is not needed.
    """
    bufs = arr.buffers()
    if len(arr) == 0 or bufs[2] is None or bufs[2].size == 0:
        return False
    offsets = np.frombuffer(bufs[1], dtype=np.int64)[arr.offset:arr.offset + len(arr) + 1]
    data = np.frombuffer(bufs[2], dtype=np.uint8)
    # Null and empty values have no bytes: the neighbour's byte read in their place can only
    # ask for a trim that was not needed, and "clip" keeps every read inside the buffer.
    starts, ends = offsets[:-1], offsets[1:] - 1
    first, last = np.take(data, starts, mode="clip"), np.take(data, ends, mode="clip")
    if _ASCII_SPACE[first].any() or _ASCII_SPACE[last].any():
        return True
    for edge, at, step in ((first, starts, 1), (last, ends, -1)):
        wide = np.flatnonzero(edge >= 0x80)  # a character outside ASCII at that end
        if len(wide) == 0:
            continue
        at = at[wide]
        one, two, three = (np.take(data, at + k * step, mode="clip").astype(np.int64)
                           for k in range(3))
        if step == 1:  # the character's bytes in order: one two [three]
            two_bytes, three_bytes = (one << 8) | two, (one << 16) | (two << 8) | three
        else:          # read backwards from the end: [three] two one
            two_bytes, three_bytes = (two << 8) | one, (three << 16) | (two << 8) | one
        if np.isin(two_bytes, _WIDE_SPACES).any() or np.isin(three_bytes, _WIDE_SPACES).any():
            return True
    return False


def constant(text: str, n: int) -> pd.Series:
    """A ``string`` Series holding ``text`` ``n`` times."""
    return to_series(pa.repeat(pa.scalar(text, STRING), n))


def blank(n: int) -> pd.Series:
    """A ``string`` Series of ``n`` <NA> values."""
    return to_series(pa.nulls(n, STRING))


def longer_than(values: pd.Series, limit: int) -> np.ndarray:
    """True where a value has more than ``limit`` characters (<NA> is never too long).

    A value never has more characters than bytes, so the character count is only taken when
    some value is longer than ``limit`` in bytes.
    """
    arr = to_arrow(values)
    n = len(arr)
    if n == 0 or arr.null_count == n:
        return np.zeros(n, dtype=bool)
    longest = pc.max(pc.binary_length(arr)).as_py()
    if longest is None or longest <= limit:
        return np.zeros(n, dtype=bool)
    over = pc.fill_null(pc.greater(pc.utf8_length(arr), limit), False)
    return over.to_numpy(zero_copy_only=False)


def all_distinct(values: pd.Series) -> bool:
    """True when no value repeats (a null counts as a value), found by hashing in Arrow."""
    arr = to_arrow(values)
    return len(pc.unique(arr)) == len(arr)
