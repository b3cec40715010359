"""National IDs one edit apart: a deletion index over the distinct ID values.

A national ID typed with one wrong digit, or with two neighbouring digits swapped, no longer
equals the person's other records, so `shared_national_id` misses it. For every distinct ID
key (``<id_type>:<id>``) we form its deletion variants: the key with one character of the ID
part removed (the type prefix is never touched, so IDs of different types never meet). Two IDs
that differ by one substitution share the variant without that position; two IDs that differ by
one adjacent swap share a variant too (``..ab..`` less ``b`` equals ``..ba..`` less ``b``).

Sharing a variant is necessary, not sufficient (``1234`` and ``2341`` share ``234``), so every
ID pair found is then checked exactly: same length, and either one differing position or two
neighbouring positions holding each other's characters, compared byte by byte (compact ID
keys are ASCII). Insertions and deletions (IDs of different lengths) are not matched.

Variants are hashed, never built as strings: each ID is a row of bytes, and the hash of the
row less column p is a prefix sum plus a shifted suffix sum of per-column terms, so all
positions of all IDs are hashed with a few whole-array numpy operations per ID length.
The exact check afterwards makes hash collisions harmless.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa

from resolve.candidates.groups import (BlockPairs, empty_pairs, pairs_across, pairs_within,
                                       sorted_unique)

MAX_LENGTH = 40          # longer keys are not national IDs worth a neighbourhood
CHUNK_ROWS = 1 << 17     # rows hashed at a time, to bound memory
_BASE = np.uint64(0x9E3779B97F4A7C15)
_COLON = ord(":")


def _byte_table(uniques: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """UTF-8 bytes of every distinct key: (offsets, data) as numpy views of one Arrow array."""
    arr = pa.array(uniques.astype("string"))
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    arr = arr.cast(pa.large_binary())
    bufs = arr.buffers()
    offsets = np.frombuffer(bufs[1], dtype=np.int64)[arr.offset:arr.offset + len(arr) + 1]
    data = np.frombuffer(bufs[2], dtype=np.uint8) if bufs[2] is not None \
        else np.zeros(0, dtype=np.uint8)
    return offsets, data


def _matrix(offsets: np.ndarray, data: np.ndarray, rows: np.ndarray, width: int) -> np.ndarray:
    """Bytes of the given keys as a (rows x width) uint8 matrix, zero-padded."""
    lengths = offsets[rows + 1] - offsets[rows]
    cols = np.arange(width, dtype=np.int64)
    idx = offsets[rows][:, None] + cols[None, :]
    inside = cols[None, :] < lengths[:, None]
    return np.where(inside, data[np.minimum(idx, max(len(data) - 1, 0))], 0).astype(np.uint8)


def _mix(h: np.ndarray) -> np.ndarray:
    """A 64-bit finaliser so that nearby sums land far apart."""
    h = h ^ (h >> np.uint64(31))
    h = h * np.uint64(0xBF58476D1CE4E5B9)
    h = h ^ (h >> np.uint64(27))
    h = h * np.uint64(0x94D049BB133111EB)
    return h ^ (h >> np.uint64(31))


def _variant_hashes(mat: np.ndarray, start: int) -> np.ndarray:
    """Hash of each row less one column, for every column from ``start`` on.

    Columns before ``start`` (the ID type and its colon) are never deleted; they enter the
    hash through a per-row salt, together with the row length. Returns (rows, width - start).
    """
    rows, width = mat.shape
    body_width = width - start
    with np.errstate(over="ignore"):
        powers = np.cumprod(np.r_[np.uint64(1), np.full(width - 1, _BASE, dtype=np.uint64)],
                            dtype=np.uint64)
        m = mat.astype(np.uint64) + np.uint64(1)
        head = (m[:, :start] * powers[None, :start]).sum(axis=1, dtype=np.uint64)
        salt = _mix(head ^ np.uint64((width * 0x632BE59BD9B4E019) & 0xFFFFFFFFFFFFFFFF))
        body = m[:, start:]
        before = body * powers[None, :body_width]                  # column j weighted B^j
        prefix = np.cumsum(before, axis=1, dtype=np.uint64) - before  # sum over j < p
        after = np.zeros_like(before)
        after[:, 1:] = body[:, 1:] * powers[None, :body_width - 1]    # column j weighted B^(j-1)
        suffix = after.sum(axis=1, dtype=np.uint64)[:, None] - np.cumsum(after, axis=1,
                                                                          dtype=np.uint64)
        return _mix((prefix + suffix) ^ salt[:, None])


def _colon_positions(offsets: np.ndarray, data: np.ndarray, lengths: np.ndarray) -> np.ndarray:
    """Position of the first ':' in each key (-1 when there is none), without a loop."""
    colon = np.full(lengths.size, -1, dtype=np.int64)
    hits = np.flatnonzero(data == _COLON)
    if hits.size:
        owner = np.searchsorted(offsets, hits, side="right") - 1
        first = np.r_[True, owner[1:] != owner[:-1]]
        colon[owner[first]] = hits[first] - offsets[owner[first]]
    return colon


def _check_one_edit(offsets, data, u: np.ndarray, v: np.ndarray) -> np.ndarray:
    """True where keys u and v have equal length and differ by one substitution or swap."""
    if u.size == 0:
        return np.zeros(0, dtype=bool)
    lu = offsets[u + 1] - offsets[u]
    lv = offsets[v + 1] - offsets[v]
    width = int(max(lu.max(), lv.max()))
    a = _matrix(offsets, data, u, width)
    b = _matrix(offsets, data, v, width)
    diff = a != b
    ndiff = diff.sum(axis=1)
    first = diff.argmax(axis=1)
    colon = np.where((a == _COLON).any(axis=1), (a == _COLON).argmax(axis=1), -1)
    nxt = np.minimum(first + 1, width - 1)
    idx = np.arange(u.size)
    swap = ((ndiff == 2) & diff[idx, nxt] & (a[idx, first] == b[idx, nxt])
            & (a[idx, nxt] == b[idx, first]))
    return (lu == lv) & (first > colon) & ((ndiff == 1) | swap)


def _label(offsets, data, u: int, v: int) -> str:
    """A readable block value: the first ID with the differing positions shown as '?'."""
    a = bytes(data[offsets[u]:offsets[u + 1]])
    b = bytes(data[offsets[v]:offsets[v + 1]])
    chars = [chr(x) if (i < len(b) and b[i] == x) else "?" for i, x in enumerate(a)]
    return "".join(chars)


def one_edit_pairs(code: np.ndarray, rec: np.ndarray, uniques: pd.Series, n_records: int,
                   cap_of) -> BlockPairs:
    """Record pairs whose national IDs are one substitution or adjacent swap apart.

    ``code``/``rec``: one row per (usable, non-hub) national ID on a record, the code indexing
    ``uniques`` (the distinct ID keys). A deletion variant shared by more records than
    ``cap_of(sizes)`` produces no pairs and is reported.
    """
    code = np.asarray(code, dtype=np.int64)
    n_ids = len(uniques)
    if code.size == 0 or n_ids < 2:
        return empty_pairs()
    # records carrying each ID, as runs of one sorted array
    width = max(int(n_records), 1)
    cr = sorted_unique(code * width + np.asarray(rec, dtype=np.int64))
    id_of, rec_of = cr // width, cr % width
    id_count = np.bincount(id_of, minlength=n_ids)
    id_start = np.cumsum(id_count) - id_count
    offsets, data = _byte_table(uniques)
    lengths = offsets[1:] - offsets[:-1]
    present = (id_count > 0) & (lengths >= 2) & (lengths <= MAX_LENGTH)
    colon = _colon_positions(offsets, data, lengths)
    # deletion variants of every ID, packed as (high bits of the variant hash, ID) in one uint64
    id_bits = max(1, int(n_ids - 1).bit_length())
    id_mask = np.uint64((1 << id_bits) - 1)
    packed_parts = []
    bucket = lengths * (MAX_LENGTH + 2) + (colon + 1)
    for b in sorted_unique(bucket[present]):
        ids = np.flatnonzero(present & (bucket == b))
        length, start = int(b // (MAX_LENGTH + 2)), int(b % (MAX_LENGTH + 2))
        if start >= length:
            continue
        for lo in range(0, ids.size, CHUNK_ROWS):
            chunk = ids[lo:lo + CHUNK_ROWS]
            h = _variant_hashes(_matrix(offsets, data, chunk, length), start)
            owner = np.repeat(chunk.astype(np.uint64), h.shape[1])
            packed_parts.append((h.ravel() & ~id_mask) | owner)
    if not packed_parts:
        return empty_pairs()
    packed = sorted_unique(np.concatenate(packed_parts))
    del packed_parts
    variant = packed >> np.uint64(id_bits)
    starts = np.flatnonzero(np.r_[True, variant[1:] != variant[:-1]])
    sizes = np.diff(np.r_[starts, variant.size])
    big = sizes >= 2
    member_id = (packed[np.repeat(big, sizes)] & id_mask).astype(np.int64)
    sizes = sizes[big]
    starts = np.cumsum(sizes) - sizes
    # a variant's size for the cap is the records carrying its IDs (counted per ID)
    rec_sizes = np.add.reduceat(id_count[member_id], starts) if starts.size \
        else np.zeros(0, dtype=np.int64)
    cap = int(cap_of(rec_sizes))
    ok = rec_sizes <= cap
    pos_a, pos_b = pairs_within(starts[ok], sizes[ok])
    lo_id = np.minimum(member_id[pos_a], member_id[pos_b])
    hi_id = np.maximum(member_id[pos_a], member_id[pos_b])
    pair_code = sorted_unique(lo_id * n_ids + hi_id)
    u, v = pair_code // n_ids, pair_code % n_ids
    good = _check_one_edit(offsets, data, u, v)
    u, v = u[good], v[good]
    pa_, pb_ = pairs_across(id_start[u], id_count[u], id_start[v], id_count[v])
    ra, rb = rec_of[pa_], rec_of[pb_]
    keep = ra != rb  # one record holding both IDs is not a pair
    ra, rb = ra[keep], rb[keep]
    over = np.flatnonzero(~ok)
    first, second = member_id[starts[over]], member_id[starts[over] + 1]
    # `blocks` here counts the ID pairs found one edit apart (variant groups are mostly noise)
    return BlockPairs(
        rec_a=np.minimum(ra, rb), rec_b=np.maximum(ra, rb), blocks=int(u.size),
        largest=int(rec_sizes[ok].max()) if ok.any() else 0, cap=cap,
        dropped_ids=over, dropped_sizes=rec_sizes[over],
        dropped_rec=rec_of[id_start[first]],
        dropped_labels=[_label(offsets, data, int(a), int(b)) for a, b in zip(first, second)],
    )
