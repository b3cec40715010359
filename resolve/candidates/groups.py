"""Vectorised building blocks for blocking: group codes, block membership and pair emission.

Every blocking key ends the same way: each record (or identifier row) gets an integer block
code, records with equal codes form a block, and every block of k records yields its
k(k-1)/2 pairs. Doing that with a Python loop per block or per pair would not survive a
million records, so everything here is numpy over whole arrays:

- block membership is one sort of ``block * n + rec`` (which also removes a record listed twice
  in one block, e.g. the same phone in two columns);
- the pairs of all blocks come from offsets and `np.repeat`, never from a loop.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd


def factorize_text(values: pd.Series) -> tuple[np.ndarray, pd.Series]:
    """Codes and distinct values of a column; missing and empty text get code -1."""
    codes, uniques = pd.factorize(values, use_na_sentinel=True)
    codes = np.asarray(codes, dtype=np.int64)
    uniques = pd.Series(uniques, dtype=values.dtype)
    if len(uniques) and pd.api.types.is_string_dtype(values.dtype):
        blank = uniques.astype("string").str.strip() == ""
        empty = np.flatnonzero(blank.to_numpy(dtype=bool, na_value=False))
        if empty.size:
            codes[np.isin(codes, empty)] = -1
    return codes, uniques


def factor_codes(values: pd.Series) -> np.ndarray:
    """Integer codes for a column (equal values share a code); -1 for missing or empty text."""
    return factorize_text(values)[0]


def sorted_unique(values: np.ndarray) -> np.ndarray:
    """Sorted distinct values of an integer array (a sort and a diff: cheaper than np.unique)."""
    out = np.sort(values)
    if out.size > 1:
        out = out[np.r_[True, out[1:] != out[:-1]]]
    return out


def compact_codes(codes: np.ndarray) -> np.ndarray:
    """Renumber codes 0..k-1 in order of first appearance; -1 stays -1."""
    codes = np.asarray(codes, dtype=np.int64)
    dense = np.asarray(pd.factorize(codes)[0], dtype=np.int64)
    return np.where(codes < 0, -1, dense)


_SPAN = 2 ** 62


def combine_codes(*codes: np.ndarray) -> np.ndarray:
    """Codes for the combination of several code columns; -1 where any part is -1.

    The result stays below 2**62 / rows, so that ``block * rows + rec`` fits in int64; parts
    are multiplied together and only renumbered (hashed) when that bound would be passed.
    """
    out = np.asarray(codes[0], dtype=np.int64)
    rows = max(out.size, 1)
    missing = out < 0
    for part in codes[1:]:
        part = np.asarray(part, dtype=np.int64)
        missing = missing | (part < 0)
        width = int(part.max()) + 1 if part.size else 1
        span = int(out.max()) + 1 if out.size else 1
        if span * width >= _SPAN:
            out = compact_codes(np.where(missing, -1, out))
            span = int(out.max()) + 1
        out = np.where(missing, -1, out * width + part)
        if span * width >= _SPAN // rows:
            out = compact_codes(out)
    return out


def ranges(starts: np.ndarray, counts: np.ndarray) -> np.ndarray:
    """Concatenation of ``arange(s, s + c)`` for every (s, c), without a loop."""
    counts = np.asarray(counts, dtype=np.int64)
    total = int(counts.sum())
    if total == 0:
        return np.zeros(0, dtype=np.int64)
    run_start = np.cumsum(counts) - counts
    shift = np.repeat(np.asarray(starts, dtype=np.int64) - run_start, counts)
    return np.arange(total, dtype=np.int64) + shift


def pairs_within(starts: np.ndarray, sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Positions (i, j), i < j, of every pair inside runs [start, start + size) of an array."""
    sizes = np.asarray(sizes, dtype=np.int64)
    pos = ranges(starts, sizes)
    local = pos - np.repeat(np.asarray(starts, dtype=np.int64), sizes)
    after = np.repeat(sizes, sizes) - local - 1  # partners that follow each position
    pos_a = np.repeat(pos, after)
    pos_b = ranges(pos + 1, after)
    return pos_a, pos_b


def pairs_across(a_starts: np.ndarray, a_sizes: np.ndarray, b_starts: np.ndarray,
                 b_sizes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Positions of every (left, right) pair between run A and run B of each block."""
    a_sizes = np.asarray(a_sizes, dtype=np.int64)
    b_sizes = np.asarray(b_sizes, dtype=np.int64)
    left = ranges(a_starts, a_sizes)
    partners = np.repeat(b_sizes, a_sizes)
    pos_a = np.repeat(left, partners)
    pos_b = ranges(np.repeat(np.asarray(b_starts, dtype=np.int64), a_sizes), partners)
    return pos_a, pos_b


@dataclass
class Members:
    """Distinct (block, record) memberships sorted by block then record, with block runs."""

    block: np.ndarray   # block code of each membership (sorted)
    rec: np.ndarray     # record of each membership
    starts: np.ndarray  # first membership of each block
    sizes: np.ndarray   # distinct records in each block

    @property
    def block_ids(self) -> np.ndarray:
        """Block code of each run."""
        return self.block[self.starts]


def members(block: np.ndarray, rec: np.ndarray, n_records: int) -> Members:
    """Sort memberships by block and record, drop repeats and blocks of one record."""
    block = np.asarray(block, dtype=np.int64)
    rec = np.asarray(rec, dtype=np.int64)
    keep = block >= 0
    block, rec = block[keep], rec[keep]
    if block.size and int(block.max()) < 8 * block.size:
        # dense codes: drop one-row blocks before sorting (most blocks are one record)
        counts = np.bincount(block)
        keep = counts[block] >= 2
        block, rec = block[keep], rec[keep]
    width = max(int(n_records), 1)
    code = sorted_unique(block * width + rec)
    block, rec = code // width, code % width
    if block.size:
        starts = np.flatnonzero(np.r_[True, block[1:] != block[:-1]])
    else:
        starts = np.zeros(0, dtype=np.int64)
    sizes = np.diff(np.r_[starts, block.size]).astype(np.int64)
    big = sizes >= 2
    if not big.all():
        keep = np.repeat(big, sizes)
        block, rec = block[keep], rec[keep]
        sizes = sizes[big]
        starts = (np.cumsum(sizes) - sizes).astype(np.int64)
    return Members(block, rec, starts, sizes)


@dataclass
class BlockPairs:
    """The pairs one blocking key produced, with what the report needs about its blocks."""

    rec_a: np.ndarray
    rec_b: np.ndarray
    blocks: int = 0            # blocks that produced pairs
    largest: int = 0           # largest block that produced pairs
    cap: int | None = None
    dropped_ids: np.ndarray | None = None    # block codes over the cap
    dropped_sizes: np.ndarray | None = None  # their distinct record counts
    dropped_rec: np.ndarray | None = None    # one record of each dropped block (for its label)
    dropped_labels: list[str] | None = None  # readable block values, filled in by the key builder


def empty_pairs(cap: int | None = None) -> BlockPairs:
    """A `BlockPairs` with no pairs."""
    z = np.zeros(0, dtype=np.int64)
    return BlockPairs(z, z.copy(), cap=cap, dropped_ids=z.copy(), dropped_sizes=z.copy(),
                      dropped_rec=z.copy())


def block_pairs(m: Members, cap_of) -> BlockPairs:
    """All pairs inside the blocks of ``m`` no larger than ``cap_of(sizes)``."""
    cap = int(cap_of(m.sizes))
    ok = m.sizes <= cap
    pos_a, pos_b = pairs_within(m.starts[ok], m.sizes[ok])
    over = ~ok
    return BlockPairs(
        rec_a=m.rec[pos_a], rec_b=m.rec[pos_b], blocks=int(ok.sum()),
        largest=int(m.sizes[ok].max()) if ok.any() else 0, cap=cap,
        dropped_ids=m.block_ids[over], dropped_sizes=m.sizes[over],
        dropped_rec=m.rec[m.starts[over]],
    )


def two_sided_pairs(block: np.ndarray, side: np.ndarray, rec: np.ndarray, n_records: int,
                    cap_of, within_first: bool = False) -> BlockPairs:
    """Pairs across the two sides (0 and 1) of each block, and optionally within side 0.

    Used where a block holds two orientations of the same values (given/family names swapped,
    day/month swapped: only cross-side pairs are wanted), or records with and without a value
    (``within_first``: records lacking it pair with every record of the block). A block's size
    for the cap is the records on both sides; rows with block or side -1 take no part.
    """
    side = np.asarray(side, dtype=np.int64)
    block = np.where(side < 0, -1, np.asarray(block, dtype=np.int64))
    keep = block >= 0
    if keep.any() and int(block.max()) >= 8 * block.size:
        block = compact_codes(block)  # dense codes for counting (and room for the side bit)
    if keep.any():
        counts = np.bincount(block[keep])
        keep &= counts[np.maximum(block, 0)] >= 2
    m = _runs_keep_singletons(np.where(keep, block * 2 + side, -1), rec, n_records)
    run_block, run_side = m.block_ids // 2, m.block_ids % 2
    first_run = np.flatnonzero(np.r_[True, run_block[1:] != run_block[:-1]]) if run_block.size \
        else np.zeros(0, dtype=np.int64)
    runs_in_block = np.diff(np.r_[first_run, run_block.size])
    has_left = run_side[first_run] == 0
    has_right = (runs_in_block == 2) | (run_side[first_run] == 1)
    left_size = np.where(has_left, m.sizes[first_run], 0)
    left_start = m.starts[first_run]
    right_run = first_run + runs_in_block - 1
    right_size = np.where(has_right, m.sizes[right_run], 0)
    right_start = m.starts[right_run]
    sizes = left_size + right_size
    productive = (left_size * right_size > 0) | (within_first & (left_size >= 2))
    cap = int(cap_of(sizes[productive]))
    ok = productive & (sizes <= cap)
    pos_a, pos_b = pairs_across(left_start[ok], left_size[ok], right_start[ok], right_size[ok])
    if within_first:
        wa, wb = pairs_within(left_start[ok], left_size[ok])
        pos_a, pos_b = np.concatenate([pos_a, wa]), np.concatenate([pos_b, wb])
    ra, rb = m.rec[pos_a], m.rec[pos_b]
    over = productive & ~ok
    return BlockPairs(
        rec_a=np.minimum(ra, rb), rec_b=np.maximum(ra, rb), blocks=int(ok.sum()),
        largest=int(sizes[ok].max()) if ok.any() else 0, cap=cap,
        dropped_ids=run_block[first_run[over]], dropped_sizes=sizes[over],
        dropped_rec=m.rec[m.starts[first_run[over]]],
    )


def _runs_keep_singletons(block: np.ndarray, rec: np.ndarray, n_records: int) -> Members:
    block = np.asarray(block, dtype=np.int64)
    rec = np.asarray(rec, dtype=np.int64)
    keep = block >= 0
    width = max(int(n_records), 1)
    code = sorted_unique(block[keep] * width + rec[keep])
    block, rec = code // width, code % width
    starts = np.flatnonzero(np.r_[True, block[1:] != block[:-1]]) if block.size \
        else np.zeros(0, dtype=np.int64)
    sizes = np.diff(np.r_[starts, block.size]).astype(np.int64)
    return Members(block, rec, starts, sizes)
