"""How good a set of candidate pairs is, measured against known true matches.

Blocking is judged by three figures (Christen & Goiser; Elfeky et al., ICDE 2002):
reduction ratio RR = 1 - candidates / all pairs, pairs completeness PC = true-match pairs kept /
all true-match pairs, pairs quality PQ = true-match pairs kept / candidates. All true-match
pairs are counted from the group sizes of the true person IDs (sum of k(k-1)/2), never by
listing them, so the check stays cheap for a million records.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.evaluate.metrics import blocking_quality, pairs_within


def pairs_completeness(pairs: pd.DataFrame, truth_person: np.ndarray) -> dict:
    """RR, PC and PQ of ``pairs`` given the true person of every record (index = rec).

    ``truth_person`` holds any hashable person label per record; a missing label counts as a
    person of its own. Returns the dict of `resolve.evaluate.metrics.blocking_quality`:
    records, all_pairs, candidates, true_pairs, true_pairs_kept, reduction_ratio,
    pairs_completeness, pairs_quality (None where a denominator is zero).
    """
    codes = np.asarray(pd.factorize(pd.Series(truth_person), use_na_sentinel=True)[0],
                       dtype=np.int64)
    alone = codes < 0
    if alone.any():
        codes[alone] = codes.max() + 1 + np.arange(int(alone.sum()))
    n = codes.size
    true_pairs = pairs_within(np.bincount(codes)) if n else 0
    a = pairs["rec_a"].to_numpy(dtype=np.int64)
    b = pairs["rec_b"].to_numpy(dtype=np.int64)
    kept = int(np.count_nonzero(codes[a] == codes[b])) if a.size else 0
    return blocking_quality(n, true_pairs, len(pairs), kept)
