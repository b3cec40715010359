"""Shared machinery for comparing record pairs column by column without a loop per pair.

People columns are factorised once per run into small integers (one code per distinct value,
-1 for missing). A pair's values are then gathered with `numpy.take` on ``rec_a`` and
``rec_b``, so exact agreement is an integer comparison. String similarity goes through
rapidfuzz's `process.cpdist`, which scores aligned lists in C++ on all cores; it is called
once per distinct pair of values, never once per pair of records.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Mapping

import numpy as np
import pandas as pd
from rapidfuzz import process
from rapidfuzz.distance import OSA, JaroWinkler, Levenshtein

from resolve.errors import InputError
from resolve.settings_util import coerce_settings

#: Phone number types whose sharing is weak evidence: lines shared by a household, an office
#: or a service (matched after lower-casing and turning spaces and hyphens into underscores).
WEAK_PHONE_TYPES = (
    "fixed_line",
    "toll_free",
    "premium_rate",
    "shared_cost",
    "voip",
    "uan",
    "pager",
    "voicemail",
)


#: Distinct string pairs from which `process.cpdist` runs on all cores.
PARALLEL_FROM = 20_000


@dataclass(frozen=True)
class CompareSettings:
    """Thresholds and choices for `compare_pairs`; every field has a documented default."""

    #: Jaro-Winkler similarity for the "very similar spelling" name level.
    name_close: float = 0.94
    #: Jaro-Winkler similarity for the "similar spelling" name level.
    name_similar: float = 0.88
    #: Jaro-Winkler similarity of street names for the "close" address level.
    street_close: float = 0.90
    #: Shortest name (in characters, the shorter of the two) for which any single edit counts
    #: as the "one typing slip" name level; shorter names count only a swap of two neighbours.
    name_one_edit_min_length: int = 4
    #: Identifier statuses that count as missing (never compared).
    unusable_status: tuple[str, ...] = ("placeholder", "missing")
    #: Phone number types treated as landlines or service numbers.
    weak_phone_types: tuple[str, ...] = WEAK_PHONE_TYPES

    @classmethod
    def coerce(cls, settings: "CompareSettings | Mapping[str, Any] | None") -> "CompareSettings":
        """Accept None (defaults), a CompareSettings, or a mapping of field names to values."""
        return coerce_settings(cls, settings, "comparison")


def record_positions(people: pd.DataFrame) -> pd.DataFrame:
    """Return ``people`` ordered so that row position equals ``rec``.

    ``rec`` is read from a ``rec`` column when there is one, else from the index. It must be
    the dense numbers 0..n-1 (in any order).
    """
    rec = people["rec"] if "rec" in people.columns else people.index.to_series()
    rec = np.asarray(rec, dtype=np.int64)
    n = len(people)
    if n and (rec.min() != 0 or rec.max() != n - 1 or np.bincount(rec).max() != 1):
        raise InputError(
            "The people table must be indexed by rec = 0..n-1 with no gaps; "
            "pass the table produced by normalise_records."
        )
    if n and not np.all(rec[1:] > rec[:-1]):
        people = people.iloc[np.argsort(rec, kind="stable")]
    return people


def pair_arrays(pairs: pd.DataFrame, n: int) -> tuple[np.ndarray, np.ndarray]:
    """``rec_a`` and ``rec_b`` as int64 arrays, checked against the number of records."""
    for col in ("rec_a", "rec_b"):
        if col not in pairs.columns:
            raise InputError(f"The pairs table lacks the {col} column; pass candidate pairs.")
    a = pairs["rec_a"].to_numpy(dtype=np.int64)
    b = pairs["rec_b"].to_numpy(dtype=np.int64)
    if a.size and (a.min() < 0 or b.max() >= n or np.any(a >= b)):
        raise InputError(
            "Candidate pairs must hold rec_a < rec_b, both records of the people table; "
            "rebuild the candidate pairs from the same run."
        )
    return a, b


def text_column(people: pd.DataFrame, name: str) -> pd.Series:
    """A people column as strings with <NA> for blanks (all <NA> when the column is absent)."""
    if name not in people.columns:
        return pd.Series(pd.NA, index=people.index, dtype="string")
    s = people[name].astype("string")
    return s.mask(s.str.strip() == "")


def int_column(people: pd.DataFrame, name: str) -> np.ndarray:
    """A nullable integer people column as int64 with -1 for missing."""
    if name not in people.columns:
        return np.full(len(people), -1, dtype=np.int64)
    return pd.to_numeric(people[name], errors="coerce").astype("Int64").to_numpy(
        dtype=np.int64, na_value=-1
    )


def factorize_ints(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Codes and sorted distinct values of an integer array (sort-based, deterministic)."""
    order = np.argsort(x, kind="stable")
    xs = x[order]
    new = np.ones(xs.size, dtype=bool)
    new[1:] = xs[1:] != xs[:-1]
    codes = np.empty(x.size, dtype=np.int64)
    codes[order] = np.cumsum(new) - 1
    return codes, xs[new]


def letter_features(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Length in characters and a 32-bit "which letters occur" mask for each string.

    Characters fall into 32 buckets by code point (a-z land in distinct buckets); the mask is
    used only to prove that two strings cannot be similar enough, so bucket collisions are
    safe (they only keep pairs in).
    """
    k = len(values)
    lengths = pd.Series(values, dtype="string").str.len().to_numpy(dtype=np.int32, na_value=0)
    masks = np.zeros(k, dtype=np.uint32)
    step = 50_000
    for start in range(0, k, step):
        chunk = np.array(values[start : start + step].tolist(), dtype="U")
        width = max(chunk.dtype.itemsize // 4, 1)
        points = chunk.view(np.uint32).reshape(len(chunk), width)
        used = points > 0
        bits = np.left_shift(np.uint32(1), (points % 32).astype(np.uint32))
        masks[start : start + step] = np.bitwise_or.reduce(
            np.where(used, bits, np.uint32(0)), axis=1
        )
    return lengths, masks


@dataclass
class Vocabulary:
    """Codes for one or more people columns factorised over one shared set of distinct values.

    A shared vocabulary lets different columns be compared as integers (given name of one
    record against family name of the other, or the parts of compound family names).
    """

    codes: dict[str, np.ndarray]
    values: np.ndarray  # object array of distinct strings, indexed by code
    _features: tuple[np.ndarray, np.ndarray] | None = None

    @classmethod
    def build(cls, people: pd.DataFrame, names: tuple[str, ...]) -> "Vocabulary":
        """Factorise the named columns (absent columns become all-missing)."""
        cols = [text_column(people, name) for name in names]
        joined = pd.concat(cols, ignore_index=True)
        codes, uniques = pd.factorize(joined)
        codes = codes.astype(np.int32)
        n = len(people)
        split = {name: codes[i * n : (i + 1) * n] for i, name in enumerate(names)}
        values = np.asarray(uniques.astype(object), dtype=object)
        return cls(split, values)

    def first_letter(self) -> np.ndarray:
        """Code of each value's first character."""
        if not len(self.values):
            return np.zeros(0, dtype=np.int32)
        firsts = pd.Series(self.values, dtype="string").str.slice(0, 1)
        return pd.factorize(firsts)[0].astype(np.int32)

    def features(self) -> tuple[np.ndarray, np.ndarray]:
        """Lengths and letter masks of the distinct values (computed once)."""
        if self._features is None:
            self._features = letter_features(self.values)
        return self._features

    def lengths(self) -> np.ndarray:
        """Length in characters of each distinct value."""
        return self.features()[0]

    def _gaps(self, ca: np.ndarray, cb: np.ndarray) -> tuple[np.ndarray, ...]:
        """Lengths of both sides and how many letter buckets each has that the other lacks."""
        lengths, masks = self.features()
        ma, mb = masks[ca], masks[cb]
        only_a = np.bitwise_count(ma & ~mb).astype(np.int32)
        only_b = np.bitwise_count(mb & ~ma).astype(np.int32)
        return lengths[ca], lengths[cb], only_a, only_b

    @staticmethod
    def _may_reach(gaps: tuple[np.ndarray, ...], threshold: float) -> np.ndarray:
        """Rows whose Jaro-Winkler similarity can reach ``threshold`` (see `jaro_winkler`)."""
        la, lb, only_a, only_b = gaps
        common = np.maximum(np.minimum(la - only_a, lb - only_b), 0).astype(np.float64)
        need = (threshold - 0.4) / 0.6 - 1e-9
        # (c/la + c/lb + 1) / 3 >= need, multiplied out (lengths are positive here).
        keep = common * (la + lb) >= (3.0 * need - 1.0) * la * lb
        keep &= common > 0
        keep |= (la == 0) & (lb == 0)  # two empty strings are identical
        return keep

    @staticmethod
    def _may_slip(gaps: tuple[np.ndarray, ...], min_length: int) -> np.ndarray:
        """Rows that can be one typing slip apart (see `one_edit`)."""
        la, lb, only_a, only_b = gaps
        shorter = np.minimum(la, lb)
        keep = (np.abs(la - lb) <= 1) & (only_a <= 1) & (only_b <= 1) & (shorter >= 2)
        keep &= (shorter >= min_length) | ((la == lb) & (only_a == 0) & (only_b == 0))
        return keep

    def jaro_winkler(self, ca: np.ndarray, cb: np.ndarray, threshold: float) -> np.ndarray:
        """Jaro-Winkler similarity of ``values[ca]`` and ``values[cb]``, row by row.

        Exact at or above ``threshold``; rows that provably score below it are skipped and
        get 0. The proof: the Winkler prefix bonus (weight 0.1, at most 4 characters) gives
        JW <= 0.4 + 0.6 * Jaro, and Jaro <= (c/|a| + c/|b| + 1) / 3 where c, the number of
        matching characters, is at most each length minus the letters missing from the other.
        """
        return self.spelling(ca, cb, threshold, None)[0]

    def one_edit(self, ca: np.ndarray, cb: np.ndarray, min_length: int) -> np.ndarray:
        """Whether ``values[ca]`` and ``values[cb]`` are one typing slip apart, row by row.

        A slip is optimal string alignment distance 1: one character changed, dropped or
        added, or two neighbours swapped. When the shorter value has fewer than
        ``min_length`` characters only the swap counts: one changed letter turns many short
        names into other real names (dan/don, kim/tim), a swap of neighbours rarely does.
        Rows that cannot be one edit apart (lengths more than one apart, or more than one
        letter on either side missing from the other) never reach the string scorer.
        """
        return self.spelling(ca, cb, None, min_length)[1]

    def spelling(
        self, ca: np.ndarray, cb: np.ndarray, threshold: float | None, min_length: int | None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Jaro-Winkler similarity (as `jaro_winkler`, 0 without ``threshold``) and, for
        the rows below ``threshold``, whether they are one typing slip apart (as `one_edit`;
        all False without ``min_length``). Both tests share one pass over the letter masks.
        """
        gaps = self._gaps(ca, cb)
        sim = np.zeros(ca.shape[0], dtype=np.float32)
        slip = np.zeros(ca.shape[0], dtype=bool)
        if threshold is not None:
            rows = np.flatnonzero(self._may_reach(gaps, threshold))
            sim[rows] = pair_scores(
                ca[rows], cb[rows], self.values, JaroWinkler.normalized_similarity
            )
        if min_length is None:
            return sim, slip
        may = self._may_slip(gaps, min_length)
        if threshold is not None:
            may &= sim < threshold
        rows = np.flatnonzero(may)
        if not rows.size:
            return sim, slip
        dist = pair_scores(
            ca[rows], cb[rows], self.values, OSA.distance, dtype=np.int32, score_cutoff=1
        )
        hit = dist == 1
        short = hit & (np.minimum(gaps[0][rows], gaps[1][rows]) < min_length)
        if short.any():  # a swap of neighbours costs 2 as plain edits, a changed letter 1
            sub = rows[short]
            plain = pair_scores(
                ca[sub], cb[sub], self.values, Levenshtein.distance, dtype=np.int32
            )
            hit[np.flatnonzero(short)[plain != 2]] = False
        slip[rows[hit]] = True
        return sim, slip


def lookup(table: np.ndarray, codes: np.ndarray, missing: Any = -1) -> np.ndarray:
    """``table[codes]`` with ``missing`` wherever the code is -1."""
    if table.size == 0:  # no values at all: every code is -1
        return np.full(codes.shape, missing)
    out = table[np.where(codes >= 0, codes, 0)]
    return np.where(codes >= 0, out, missing)


def pair_scores(
    ca: np.ndarray,
    cb: np.ndarray,
    values: np.ndarray,
    scorer: Callable[..., Any],
    *,
    dtype: Any = np.float32,
    score_cutoff: float | None = None,
) -> np.ndarray:
    """Score ``values[ca]`` against ``values[cb]`` row by row with a rapidfuzz scorer.

    Pairs of codes are deduplicated (order-free: the scorers used are symmetric) and scored in
    one `process.cpdist` call, which runs in C++ on all cores; the result is spread back.
    ``score_cutoff`` is passed to the scorer (for a distance: anything above it comes back as
    cutoff + 1, which lets the scorer stop early).
    """
    if ca.size == 0:
        return np.zeros(0, dtype=dtype)
    ca = ca.astype(np.int64)
    cb = cb.astype(np.int64)
    width = np.int64(max(len(values), 1))
    inverse, distinct = factorize_ints(np.minimum(ca, cb) * width + np.maximum(ca, cb))
    left = values[distinct // width]
    right = values[distinct % width]
    # Small batches stay on one thread: starting workers costs more than it saves.
    workers = -1 if distinct.size > PARALLEL_FROM else 1
    scores = process.cpdist(
        left, right, scorer=scorer, workers=workers, dtype=dtype, score_cutoff=score_cutoff
    )
    return np.asarray(scores, dtype=dtype)[inverse]
