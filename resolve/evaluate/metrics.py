"""Clustering and blocking metrics computed from contingency tables, never from pair lists.

Comparing a predicted clustering with the true one pair by pair would touch n(n-1)/2 record
pairs; a million records would never finish. Every pair count here comes instead from the
cross-tabulation of true cluster against predicted cluster: the number of record pairs that
share a cell of size n is C(n, 2) = n(n-1)/2, so

- pairs placed together by the prediction = sum of C(size, 2) over predicted clusters,
- pairs that are truly together           = sum of C(size, 2) over true clusters,
- pairs that are both                     = sum of C(n, 2) over the cells of the cross-tab.

The cross-tab is built with one sort of an integer array, so a million records take well under
a second. Definitions and sources are in docs/evaluation.md.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def pairs_within(sizes: np.ndarray) -> int:
    """Number of unordered pairs inside groups of the given sizes: sum of C(n, 2)."""
    s = np.asarray(sizes, dtype=np.int64)
    return int((s * (s - 1) // 2).sum())


def ratio(numerator: float, denominator: float) -> float | None:
    """``numerator / denominator`` as a float, or None when the denominator is zero."""
    return None if denominator == 0 else float(numerator) / float(denominator)


def f_score(precision: float | None, recall: float | None) -> float | None:
    """Harmonic mean of precision and recall (F1); None when either is undefined."""
    if precision is None or recall is None:
        return None
    total = precision + recall
    return 0.0 if total == 0 else 2.0 * precision * recall / total


def precision_recall(correct: int, predicted: int, actual: int) -> dict:
    """Precision, recall and F1 from three counts, with the counts kept for the report."""
    p = ratio(correct, predicted)
    r = ratio(correct, actual)
    return {"precision": p, "recall": r, "f1": f_score(p, r)}


@dataclass(frozen=True)
class Crosstab:
    """Non-empty cells of the true x predicted cross-tabulation of one set of records.

    ``true`` and ``pred`` give each cell's dense true and predicted cluster number, ``n`` its
    record count; ``true_sizes`` and ``pred_sizes`` are the cluster sizes indexed by number.
    """

    true: np.ndarray
    pred: np.ndarray
    n: np.ndarray
    true_sizes: np.ndarray
    pred_sizes: np.ndarray

    @property
    def records(self) -> int:
        """Number of records cross-tabulated."""
        return int(self.n.sum())


def _dense(labels: np.ndarray) -> np.ndarray:
    """Labels renumbered 0..k-1 (returned as is when they already are)."""
    labels = labels.astype(np.int64, copy=False)
    if labels.min() >= 0 and np.bincount(labels).all():
        return labels
    return np.unique(labels, return_inverse=True)[1].astype(np.int64).reshape(labels.shape)


def crosstab(true_codes: np.ndarray, pred_codes: np.ndarray) -> Crosstab:
    """Cross-tabulate two cluster labellings of the same records (any integer labels)."""
    t = np.asarray(true_codes)
    p = np.asarray(pred_codes)
    if t.shape != p.shape:
        raise ValueError("true and predicted labels must cover the same records")
    if t.size == 0:
        empty = np.zeros(0, dtype=np.int64)
        return Crosstab(empty, empty, empty, empty, empty)
    t = _dense(t)
    p = _dense(p)
    width = int(p.max()) + 1
    cells, counts = np.unique(t * width + p, return_counts=True)
    return Crosstab(
        true=cells // width,
        pred=cells % width,
        n=counts.astype(np.int64),
        true_sizes=np.bincount(t).astype(np.int64),
        pred_sizes=np.bincount(p).astype(np.int64),
    )


def pairwise(ct: Crosstab) -> dict:
    """Pairwise precision, recall and F1 of the predicted clustering, with the pair counts.

    Precision is the share of record pairs placed together that are truly together; recall the
    share of truly-together pairs that were placed together.
    """
    correct = pairs_within(ct.n)
    predicted = pairs_within(ct.pred_sizes)
    actual = pairs_within(ct.true_sizes)
    out = precision_recall(correct, predicted, actual)
    out.update(true_pairs=actual, predicted_pairs=predicted, correct_pairs=correct)
    return out


def bcubed(ct: Crosstab) -> dict:
    """B-cubed precision, recall and F1 (Bagga & Baldwin 1998), averaged over records.

    For a record r in predicted cluster C and true cluster T, precision(r) = |C n T| / |C| and
    recall(r) = |C n T| / |T|. Every record of one cell shares those values, so the averages
    are sum(n^2 / |C|) / N and sum(n^2 / |T|) / N over the cells.
    """
    total = ct.records
    if total == 0:
        return {"precision": None, "recall": None, "f1": None}
    n = ct.n.astype(np.float64)
    p = float((n * n / ct.pred_sizes[ct.pred]).sum() / total)
    r = float((n * n / ct.true_sizes[ct.true]).sum() / total)
    return {"precision": p, "recall": r, "f1": f_score(p, r)}


def cluster_errors(ct: Crosstab) -> dict:
    """Counts of whole-cluster errors.

    - ``over_merged_entities``: predicted clusters holding records of more than one true cluster;
    - ``records_in_over_merged``: records inside those clusters;
    - ``split_persons``: true clusters spread over more than one predicted cluster;
    - ``exact_entities``: predicted clusters identical to a true cluster.
    """
    cells_per_pred = np.bincount(ct.pred, minlength=ct.pred_sizes.size)
    cells_per_true = np.bincount(ct.true, minlength=ct.true_sizes.size)
    over = cells_per_pred > 1
    exact = (ct.n == ct.true_sizes[ct.true]) & (ct.n == ct.pred_sizes[ct.pred])
    return {
        "entities": int(ct.pred_sizes.size),
        "persons": int(ct.true_sizes.size),
        "exact_entities": int(exact.sum()),
        "over_merged_entities": int(over.sum()),
        "records_in_over_merged": int(ct.pred_sizes[over].sum()),
        "split_persons": int((cells_per_true > 1).sum()),
    }


def blocking_quality(records: int, true_pairs: int, candidates: int, true_kept: int) -> dict:
    """Reduction ratio, pairs completeness and pairs quality of a set of candidate pairs.

    RR = 1 - candidates / all pairs, PC = true pairs kept / all true pairs,
    PQ = true pairs kept / candidates (Elfeky et al., ICDE 2002; Christen & Goiser).
    """
    all_pairs = records * (records - 1) // 2
    rr = ratio(candidates, all_pairs)
    return {
        "records": int(records),
        "all_pairs": int(all_pairs),
        "candidates": int(candidates),
        "true_pairs": int(true_pairs),
        "true_pairs_kept": int(true_kept),
        "reduction_ratio": None if rr is None else 1.0 - rr,
        "pairs_completeness": ratio(true_kept, true_pairs),
        "pairs_quality": ratio(true_kept, candidates),
    }
