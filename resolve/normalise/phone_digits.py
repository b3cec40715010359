"""Digits of phone strings as a fixed-width byte matrix, and the array operations on it.

`resolve.normalise.phone_fast` parses many phone strings at once; it keeps each string's
digits in one row of a ``uint8`` matrix (``WIDTH`` columns, ASCII digits) plus a length per
row. This module holds those matrix helpers: building the matrix from an Arrow string array,
turning rows back into strings, prefix tests and drops, and running a metadata regular
expression (Arrow RE2) over the rows.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

WIDTH = 20
"""Digits kept per string in the digit matrix; longer strings go to the slow path."""

ZERO = 48  # ord("0")


def _offsets_and_data(arr: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    bufs = arr.buffers()
    wide = pa.types.is_large_string(arr.type) or pa.types.is_large_binary(arr.type)
    offsets = np.frombuffer(bufs[1], dtype=np.int64 if wide else np.int32)
    offsets = offsets[arr.offset : arr.offset + len(arr) + 1].astype(np.int64)
    data = np.frombuffer(bufs[2], dtype=np.uint8) if bufs[2] is not None else np.zeros(0, np.uint8)
    return offsets, data


_NOT_DIGITS = bytes(b for b in range(256) if not ZERO <= b <= ZERO + 9)


def digit_matrix(arr: pa.Array, chunk: int = 1 << 18) -> tuple[np.ndarray, np.ndarray]:
    """ASCII digits of each string (no nulls) as a (n, WIDTH) uint8 matrix and their count.

    The count is the true number of digits; rows with more than WIDTH digits are left blank
    in the matrix (the callers send them to the slow path).
    """
    n = len(arr)
    matrix = np.zeros((n, WIDTH), dtype=np.uint8)
    flat_matrix = matrix.reshape(-1)
    counts = np.zeros(n, dtype=np.int64)
    offsets, data = _offsets_and_data(arr)
    for start in range(0, n, chunk):
        stop = min(n, start + chunk)
        seg = data[offsets[start] : offsets[stop]]
        digits = np.frombuffer(seg.tobytes().translate(None, _NOT_DIGITS), dtype=np.uint8)
        before = np.zeros(len(seg) + 1, dtype=np.int32)
        np.cumsum((seg >= ZERO) & (seg <= ZERO + 9), out=before[1:])
        digit_offsets = before[offsets[start : stop + 1] - offsets[start]].astype(np.int64)
        count = np.diff(digit_offsets)
        counts[start:stop] = count
        row_base = np.arange(start, stop, dtype=np.int64) * WIDTH - digit_offsets[:-1]
        flat = np.repeat(row_base, count) + np.arange(len(digits), dtype=np.int64)
        if (count > WIDTH).any():
            keep = np.repeat(count <= WIDTH, count)
            flat, digits = flat[keep], digits[keep]
        flat_matrix[flat] = digits
    return matrix, counts


def to_arrow(matrix: np.ndarray, lengths: np.ndarray) -> pa.StringArray:
    """Arrow strings from a left-aligned byte matrix and per-row lengths."""
    n = len(lengths)
    mask = np.arange(matrix.shape[1])[None, :] < lengths[:, None]
    data = np.ascontiguousarray(matrix[mask])
    offsets = np.zeros(n + 1, dtype=np.int32)
    np.cumsum(lengths, out=offsets[1:])
    return pa.StringArray.from_buffers(n, pa.py_buffer(offsets), pa.py_buffer(data))


_CC_TEXT = pa.array(["+" + str(code) for code in range(1000)], type=pa.string())


def e164_strings(country_codes: np.ndarray, matrix: np.ndarray, lengths: np.ndarray) -> pa.Array:
    """``+<calling code><national significant number>`` for every row."""
    prefix = _CC_TEXT.take(pa.array(np.asarray(country_codes, dtype=np.int64)))
    return pc.binary_join_element_wise(prefix, to_arrow(matrix, lengths), "")


def _starts_with(matrix: np.ndarray, lengths: np.ndarray, literal: bytes) -> np.ndarray:
    k = len(literal)
    if k > matrix.shape[1]:
        return np.zeros(len(lengths), dtype=bool)
    want = np.frombuffer(literal, dtype=np.uint8)
    return (lengths >= k) & (matrix[:, :k] == want).all(axis=1)


def _drop_prefix(matrix: np.ndarray, lengths: np.ndarray, k) -> tuple[np.ndarray, np.ndarray]:
    """Remove the first ``k`` digits of each row (``k`` a scalar or per-row array)."""
    k = np.broadcast_to(np.asarray(k, dtype=np.int64), lengths.shape)
    width = matrix.shape[1]
    if len(k) == 0 or (k == k[0]).all():  # one shift for all rows: a plain slice
        shift = int(k[0]) if len(k) else 0
        out = np.zeros_like(matrix)
        out[:, : width - shift] = matrix[:, shift:]
        return out, lengths - shift
    cols = np.minimum(np.arange(width)[None, :] + k[:, None], width - 1)
    return np.take_along_axis(matrix, cols, axis=1), lengths - k.astype(lengths.dtype)


def _regex_match(matrix: np.ndarray, lengths: np.ndarray, pattern: str | None) -> np.ndarray:
    if pattern is None or len(lengths) == 0:
        return np.zeros(len(lengths), dtype=bool)
    result = pc.match_substring_regex(to_arrow(matrix, lengths), pattern)
    return result.to_numpy(zero_copy_only=False)


def _regex_prefix(matrix, lengths, pattern: str) -> tuple[np.ndarray, np.ndarray]:
    """Whether ``pattern`` matches at the start, and the length of that (first) match."""
    arr = to_arrow(matrix, lengths)
    anchored = "^(?:" + pattern + ")"
    matched = pc.match_substring_regex(arr, anchored).to_numpy(zero_copy_only=False)
    rest = pc.replace_substring_regex(arr, anchored, "", max_replacements=1)
    rest_len = pc.utf8_length(rest).to_numpy(zero_copy_only=False)
    return matched, np.where(matched, lengths - rest_len, 0)
