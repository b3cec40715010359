"""Vectorised helpers for the demo: exact random picks, one-edit typos, dates, variation tags.

A million-record demo must run in well under two minutes, so nothing here loops over records
in Python. Typos and transpositions work on fixed-width numpy unicode arrays viewed as code
point matrices (one gather per edit kind); accent folding runs once per distinct value.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.demo.tables import KEY_NEIGHBOURS

EPOCH = np.datetime64("1970-01-01", "D")

# Lookup: lower-case ASCII code point -> 4 neighbouring key code points (repeats to fill).
_NEIGHBOURS = np.zeros((128, 4), dtype=np.uint32)
for _k, _v in KEY_NEIGHBOURS.items():
    _NEIGHBOURS[ord(_k)] = [ord(_v[i % len(_v)]) for i in range(4)]


def text(values, index=None) -> pd.Series:
    """A pandas (Arrow-backed) string Series from any array-like; missing becomes empty text."""
    if isinstance(values, pd.Series) and values.dtype == "str":
        s = values.reset_index(drop=True) if index is None else values.set_axis(index)
        return s.fillna("") if s.hasnans else s
    if isinstance(values, (pa.Array, pa.ChunkedArray)):
        s = pd.Series(pd.array(values.cast(pa.large_string()), dtype="str"), index=index)
        return s.fillna("") if s.hasnans else s
    s = pd.Series(values, index=index, dtype="str")
    return s.fillna("") if s.hasnans else s


def arrow(values) -> pa.Array:
    """The text as one Arrow large_string array (no copy for Arrow-backed Series)."""
    if isinstance(values, pd.Series) and values.dtype == "str":
        arr = pa.array(values.array)
    elif isinstance(values, (pa.Array, pa.ChunkedArray)):
        arr = values
    else:
        arr = pa.array(np.asarray(values, dtype=object), type=pa.large_string())
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    return arr.cast(pa.large_string())


def scatter(base, rows: np.ndarray, values) -> pd.Series:
    """``base`` with ``values`` put at positions ``rows`` (whole-column Arrow take, no loops)."""
    rows = np.asarray(rows, dtype=np.int64)
    base_arr = arrow(base)
    if not len(rows):
        return text(base_arr)
    if isinstance(values, str):
        values = np.full(len(rows), values, dtype=object)
    n = len(base_arr)
    index = np.arange(n, dtype=np.int64)
    index[rows] = n + np.arange(len(rows), dtype=np.int64)
    both = pa.concat_arrays([base_arr, arrow(values)])
    return text(both.take(pa.array(index)))


def put(frame: pd.DataFrame, rows: np.ndarray, col: str, values) -> None:
    """Set ``frame[col]`` at row positions ``rows`` (in place; text columns via `scatter`)."""
    rows = np.asarray(rows, dtype=np.int64)
    if not len(rows):
        return
    if frame[col].dtype == "str":
        frame[col] = scatter(frame[col], rows, values).set_axis(frame.index)
    else:
        frame.iloc[rows, frame.columns.get_loc(col)] = values


def empty_text(n: int) -> pa.Array:
    """An Arrow array of ``n`` empty strings."""
    return pc.fill_null(pa.nulls(n, pa.large_string()), "")


def assemble(n: int, pieces: list[tuple[np.ndarray, object]]) -> pd.Series:
    """A text column of length ``n`` from (row positions, values) pieces; other rows empty."""
    pieces = [(np.asarray(r, dtype=np.int64), v) for r, v in pieces if len(r)]
    if not pieces:
        return text(empty_text(n))
    rows = np.concatenate([r for r, _ in pieces])
    values = pa.concat_arrays([arrow(v) for _, v in pieces])
    return scatter(empty_text(n), rows, values)


def padded(numbers, width: int) -> pd.Series:
    """Integers as zero-padded decimal text."""
    return pd.Series(np.asarray(numbers, dtype=np.int64)).astype("str").str.zfill(width)


def choose(rng: np.random.Generator, options, n: int, probs=None) -> np.ndarray:
    """Draw ``n`` items from ``options`` (object array result)."""
    opts = np.asarray(options, dtype=object)
    if probs is None:
        return opts[rng.integers(0, len(opts), n)]
    cum = np.cumsum(probs, dtype=float)
    idx = np.searchsorted(cum / cum[-1], rng.random(n), side="right")
    return opts[np.minimum(idx, len(opts) - 1)]


def exact_pick(rng: np.random.Generator, eligible: np.ndarray, share: float) -> np.ndarray:
    """A mask with exactly round(share * eligible.sum()) True values, all among ``eligible``."""
    eligible = np.asarray(eligible, dtype=bool)
    where = np.flatnonzero(eligible)
    k = int(round(share * len(where)))
    out = np.zeros(len(eligible), dtype=bool)
    if k:
        out[rng.choice(where, size=min(k, len(where)), replace=False)] = True
    return out


def mask_of(n: int, rows) -> np.ndarray:
    """A boolean mask of length ``n``, True at positions ``rows``."""
    mask = np.zeros(n, dtype=bool)
    mask[np.asarray(rows, dtype=np.int64)] = True
    return mask


def chance(rng: np.random.Generator, n: int, rate: float, among=None) -> np.ndarray:
    """An independent coin flip per row with probability ``rate`` (and ``among`` if given)."""
    mask = rng.random(n) < rate
    return mask if among is None else mask & np.asarray(among, dtype=bool)


def group_rows(keys) -> list[tuple[object, np.ndarray]]:
    """(key, row positions) for each distinct key, found with one factorise and one sort."""
    codes, uniques = pd.factorize(np.asarray(keys, dtype=object))
    order = np.argsort(codes, kind="stable")
    bounds = np.searchsorted(codes[order], np.arange(len(uniques) + 1))
    return [(u, order[bounds[i]:bounds[i + 1]]) for i, u in enumerate(uniques)]


_SPECIAL = (("ł", "l"), ("Ł", "L"), ("đ", "d"), ("Đ", "D"), ("ß", "ss"), ("ø", "o"), ("Ø", "O"),
            ("æ", "ae"), ("Æ", "AE"), ("œ", "oe"), ("Œ", "OE"), ("ı", "i"), ("ẞ", "SS"),
            ("þ", "th"), ("Þ", "TH"), ("ð", "d"), ("Ð", "D"), ("ħ", "h"), ("Ħ", "H"))


def fold_arrow(arr: pa.Array) -> pa.Array:
    """Plain ASCII: accents dropped, special letters mapped (ß -> ss), anything else removed.

    Works on the distinct non-ASCII values only; ASCII rows pass through untouched.
    """
    ascii_rows = pc.fill_null(pc.string_is_ascii(arr), True)
    if pc.all(ascii_rows).as_py():
        return arr
    rows = np.flatnonzero(~ascii_rows.to_numpy(zero_copy_only=False))
    encoded = pc.dictionary_encode(arr.take(pa.array(rows)))
    distinct = encoded.dictionary
    for src, dst in _SPECIAL:
        distinct = pc.replace_substring(distinct, src, dst)
    distinct = pc.replace_substring_regex(pc.utf8_normalize(distinct, "NFKD"), r"\p{Mn}", "")
    distinct = pc.replace_substring_regex(distinct, r"[^\x00-\x7F]", "")  # anything left over
    return arrow(scatter(arr, rows, distinct.take(encoded.indices)))


def fold_series(s: pd.Series) -> pd.Series:
    """Accents dropped (see `fold_arrow`), keeping the index of ``s``."""
    return text(fold_arrow(arrow(s)), index=s.index)


def mailbox_words(s: pd.Series) -> pd.Series:
    """Names as people put them in a mailbox name: ASCII, lower case, letters and digits only."""
    arr = pc.utf8_lower(fold_arrow(arrow(s)))
    arr = pc.replace_substring_regex(arr, r"[^a-z0-9]", "")
    arr = pc.if_else(pc.equal(arr, ""), "x", arr)
    return text(arr, index=s.index)


def _as_matrix(values) -> tuple[np.ndarray, np.ndarray, int]:
    arr = np.asarray(values, dtype=str)
    width = max(int(arr.dtype.itemsize // 4), 1) + 2
    arr = arr.astype(f"<U{width}")
    codes = arr.view(np.uint32).reshape(len(arr), width)
    lengths = (codes != 0).sum(axis=1)
    return codes, lengths, width


def _from_matrix(codes: np.ndarray, width: int) -> np.ndarray:
    return np.ascontiguousarray(codes).view(f"<U{width}").ravel().astype(object)


def one_edit(values, rng: np.random.Generator, ops=None) -> np.ndarray:
    """Apply one keyboard-style slip to each string: substitute, delete, insert or transpose.

    ``ops`` (0 substitute, 1 delete, 2 insert, 3 transpose) may be given per row; strings
    shorter than two characters are substituted. The result always differs from the input.
    """
    values = np.asarray(values, dtype=object)
    n = len(values)
    if n == 0:
        return values.copy()
    codes, lengths, width = _as_matrix(values)
    if ops is None:
        ops = rng.integers(0, 4, n)
    ops = np.where(lengths < 2, 0, ops)
    # Positions avoid the first letter for insertions and deletions, as slips rarely hit it.
    span = np.maximum(lengths - 1, 1)
    pos = np.where(ops == 0, rng.integers(0, 1 << 30, n) % np.maximum(lengths, 1),
                   1 + rng.integers(0, 1 << 30, n) % span)
    pos = np.where(ops == 3, np.minimum(pos, np.maximum(lengths - 2, 0)), pos)
    pos = np.minimum(pos, np.maximum(lengths - 1, 0))
    cols = np.arange(width)[None, :]
    p = pos[:, None]
    src = np.broadcast_to(cols, codes.shape).copy()
    src = np.where((ops == 1)[:, None] & (cols >= p), cols + 1, src)
    src = np.where((ops == 2)[:, None] & (cols > p), cols - 1, src)
    swap = (ops == 3)[:, None]
    src = np.where(swap & (cols == p), cols + 1, src)
    src = np.where(swap & (cols == p + 1), cols - 1, src)
    padded_codes = np.concatenate([codes, np.zeros((n, 1), dtype=np.uint32)], axis=1)
    out = np.take_along_axis(padded_codes, np.minimum(src, width), axis=1)
    rows = np.arange(n)
    original = codes[rows, pos]
    lower = np.where((original >= 65) & (original <= 90), original + 32, original)
    neighbour = np.where(lower < 128, _NEIGHBOURS[np.minimum(lower, 127), rng.integers(0, 4, n)], 0)
    neighbour = np.where(neighbour == 0, 97 + rng.integers(0, 26, n), neighbour).astype(np.uint32)
    neighbour = np.where((original >= 65) & (original <= 90), neighbour - 32, neighbour)
    neighbour = np.where(neighbour == original, np.where(original == 122, 121, original + 1), neighbour)
    put = (ops == 0) | (ops == 2)
    out[rows[put], pos[put]] = np.where(ops[put] == 2, lower[put], neighbour[put]).astype(np.uint32)
    result = _from_matrix(out, width)
    same = result == values
    if same.any():  # e.g. a transposition of two equal letters: substitute instead
        result[same] = one_edit(values[same], rng, ops=np.zeros(int(same.sum()), dtype=np.int64))
    return result


def transpose_digits(values, rng: np.random.Generator) -> np.ndarray:
    """Swap one pair of neighbouring, different digits in each string (an ID keyed wrongly)."""
    values = np.asarray(values, dtype=object)
    n = len(values)
    if n == 0:
        return values.copy()
    codes, lengths, width = _as_matrix(values)
    digit = (codes >= 48) & (codes <= 57)
    candidates = digit[:, :-1] & digit[:, 1:] & (codes[:, :-1] != codes[:, 1:])
    start = rng.integers(0, 1 << 30, n) % np.maximum(lengths - 1, 1)
    cols = np.arange(width - 1)[None, :]
    after = candidates & (cols >= start[:, None])
    pos = np.where(after.any(axis=1), after.argmax(axis=1), candidates.argmax(axis=1))
    ok = candidates.any(axis=1)
    rows = np.flatnonzero(ok)
    p = pos[ok]
    a, b = codes[rows, p].copy(), codes[rows, p + 1].copy()
    codes[rows, p], codes[rows, p + 1] = b, a
    return _from_matrix(codes, width)


def insert_at(values, rng: np.random.Generator, char: str) -> np.ndarray:
    """Insert ``char`` at a random inner position of each string (e.g. a dot in a mailbox)."""
    values = np.asarray(values, dtype=object)
    n = len(values)
    if n == 0:
        return values.copy()
    codes, lengths, width = _as_matrix(values)
    pos = 1 + rng.integers(0, 1 << 30, n) % np.maximum(lengths - 1, 1)
    cols = np.arange(width)[None, :]
    src = np.where(cols > pos[:, None], cols - 1, cols)
    out = np.take_along_axis(codes, src, axis=1)
    out[np.arange(n), pos] = ord(char)
    return _from_matrix(out, width)


def date_parts(days) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Year, month and day of day numbers counted from 1970-01-01."""
    d = EPOCH + np.asarray(days, dtype=np.int64)
    months = d.astype("datetime64[M]")
    year = months.astype("datetime64[Y]").astype(np.int64) + 1970
    month = months.astype(np.int64) % 12 + 1
    day = (d - months.astype("datetime64[D]")).astype(np.int64) + 1
    return year, month, day


def days_from_parts(year, month, day) -> np.ndarray:
    """Day numbers (from 1970-01-01) of year/month/day arrays; days past month end are clipped."""
    year = np.asarray(year, dtype=np.int64)
    month = np.asarray(month, dtype=np.int64)
    first = (year - 1970) * 12 + (month - 1)
    start = first.astype("datetime64[M]").astype("datetime64[D]")
    end = (first + 1).astype("datetime64[M]").astype("datetime64[D]")
    length = (end - start).astype(np.int64)
    return (start - EPOCH).astype(np.int64) + np.minimum(np.asarray(day, dtype=np.int64), length) - 1


def day_number(date) -> int:
    """Day number of a `datetime.date`."""
    return int((np.datetime64(date, "D") - EPOCH).astype(np.int64))


class Tags:
    """Collects variation tags per row and renders them as ``tag;tag`` text."""

    def __init__(self, n: int) -> None:
        self.n = n
        self.masks: dict[str, np.ndarray] = {}

    def add(self, tag: str, mask: np.ndarray) -> None:
        """Mark ``tag`` on the rows where ``mask`` is True."""
        mask = np.asarray(mask, dtype=bool)
        if tag in self.masks:
            self.masks[tag] = self.masks[tag] | mask
        else:
            self.masks[tag] = mask.copy()

    def remove(self, tag: str, mask: np.ndarray) -> None:
        """Take ``tag`` off the rows where ``mask`` is True."""
        if tag in self.masks:
            self.masks[tag] = self.masks[tag] & ~np.asarray(mask, dtype=bool)

    def has(self, tag: str) -> np.ndarray:
        """Rows carrying ``tag``."""
        return self.masks.get(tag, np.zeros(self.n, dtype=bool))

    def render(self) -> pd.Series:
        """One ``;``-joined text per row (empty where no tag)."""
        out = pd.Series([""] * self.n, dtype="str")
        for tag, mask in self.masks.items():
            if mask.any():
                out = out + pd.Series(np.where(mask, tag + ";", ""), dtype="str")
        return out.str.rstrip(";")
