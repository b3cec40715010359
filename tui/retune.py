"""Trying other thresholds: what moves if the review and auto-merge thresholds change.

The thresholds screen shows the match-weight distribution of the run's scored pairs and lets
the reviewer slide the two thresholds. Every preview is a handful of vectorised counts over
the pairs' probability array (which band each pair falls in before and after), so sliding is
instant even with millions of pairs. Applying re-types the stored links with the library's
own rules (`resolve.links.type_links`, no re-scoring) and re-clusters them
(`resolve.clusters.build_entities`, with the reviewers' standing decisions as constraints),
then reports the new counts. Nothing is written to the run.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

BANDS = ("auto-merge", "review", "no link")
LIMIT = 1e-12


def to_weight(p: float) -> float:
    """Match weight (log2 odds) of a probability, clipped away from 0 and 1."""
    p = min(max(float(p), LIMIT), 1.0 - LIMIT)
    return math.log2(p / (1.0 - p))


def to_probability(w: float) -> float:
    """Probability of a match weight (log2 odds)."""
    return 1.0 / (1.0 + 2.0 ** (-float(w)))


def bands(prob: np.ndarray, auto: float, review: float) -> np.ndarray:
    """Band of each pair: 0 auto-merge (p >= auto), 1 review (p >= review), 2 no link."""
    prob = np.asarray(prob, dtype=np.float64)
    return np.where(prob >= auto, 0, np.where(prob >= review, 1, 2)).astype(np.int8)


def band_moves(prob: np.ndarray, before: dict, after: dict) -> np.ndarray:
    """3x3 counts: row = band under ``before`` thresholds, column = band under ``after``."""
    old = bands(prob, before["auto"], before["review"]).astype(np.int64)
    new = bands(prob, after["auto"], after["review"]).astype(np.int64)
    return np.bincount(old * 3 + new, minlength=9).reshape(3, 3)


def entities_touched(prob: np.ndarray, rec_a: np.ndarray, rec_b: np.ndarray, entity_code: np.ndarray,
                     before: dict, after: dict) -> int:
    """Entities holding a record of a pair that changes band (a cheap measure of clusters moved)."""
    old = bands(prob, before["auto"], before["review"])
    new = bands(prob, after["auto"], after["review"])
    moving = old != new
    if not moving.any():
        return 0
    codes = np.concatenate([entity_code[rec_a[moving]], entity_code[rec_b[moving]]])
    return int(len(np.unique(codes[codes >= 0])))


@dataclass
class Histogram:
    """Counts of pair weights in 1-bit bins; ``edges`` has one more entry than ``counts``."""

    edges: np.ndarray
    counts: np.ndarray
    below: int
    above: int


def weight_histogram(weight: np.ndarray, bins: int = 60, span: tuple[float, float] | None = None) -> Histogram:
    """Histogram of match weights over ``bins`` equal bins.

    ``span`` defaults to the 0.1st to 99.9th percentile, widened to whole bits; weights
    outside it are counted in ``below`` and ``above``.
    """
    w = np.asarray(weight, dtype=np.float64)
    w = w[np.isfinite(w)]
    if len(w) == 0:
        return Histogram(np.linspace(-10, 10, bins + 1), np.zeros(bins, dtype=np.int64), 0, 0)
    lo, hi = span if span is not None else (math.floor(np.percentile(w, 0.1)),
                                             math.ceil(np.percentile(w, 99.9)))
    if hi <= lo:
        hi = lo + 1
    edges = np.linspace(lo, hi, bins + 1)
    counts, _ = np.histogram(w, bins=edges)
    return Histogram(edges, counts.astype(np.int64), int((w < lo).sum()), int((w > hi).sum()))


@dataclass
class ReclusterResult:
    """Counts before and after re-clustering with new thresholds."""

    thresholds: dict
    before: dict
    after: dict


def cluster_counts(entities: pd.DataFrame, links: pd.DataFrame) -> dict:
    """Entities, multi-record entities and link counts by type."""
    sizes = entities["entity_id"].value_counts()
    types = links["link_type"].astype("string").value_counts()
    return {"entities": int(len(sizes)), "multi_record_entities": int((sizes > 1).sum()),
            "largest_entity": int(sizes.max()) if len(sizes) else 0,
            "same_person_links": int(types.get("same_person", 0)),
            "review_links": int(types.get("review", 0))}


def recluster(run, thresholds: dict, must_link=None, cannot_link=None) -> ReclusterResult:
    """Re-type the run's stored links at ``thresholds`` and rebuild entities (no re-scoring)."""
    from resolve.clusters import build_entities
    from resolve.links import type_links

    people = run.table("people")
    identifiers = run.table("identifiers")
    pairs = run.table("pairs")
    hubs = run.table("hubs") if run.has("hubs") else None
    before = cluster_counts(run.table("entities", ["entity_id"]), pairs)
    base = pairs.drop(columns=[c for c in ("link_type", "reasons") if c in pairs.columns])
    links = type_links(base, people, identifiers, thresholds, hubs)
    entities = build_entities(people, links, must_link, cannot_link)
    return ReclusterResult(dict(thresholds), before, cluster_counts(entities, links))
