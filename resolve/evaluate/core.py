"""Compare a run's entities, households, flags and candidate pairs with ground truth.

A team tuning the pipeline needs to know, on labelled data, how many merges are wrong, how many
duplicates were missed, whether households and risk flags land on the right records, and what
each match threshold would cost in review work. `evaluate` answers all of that in one dict that
is JSON-ready (plain ints, floats and None) so that the CLI can print it or write it as JSON.
Every metric is defined, with its source, in docs/evaluation.md.
"""

from __future__ import annotations

from typing import Iterable

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from resolve.errors import InputError
from resolve.evaluate import frames
from resolve.evaluate.metrics import (
    blocking_quality,
    bcubed,
    cluster_errors,
    crosstab,
    pairs_within,
    pairwise,
    precision_recall,
    ratio,
)

DEFAULT_THRESHOLDS = (0.5, 0.8, 0.9, 0.95, 0.99, 0.999)
RISK_LABELS = ("fabricated", "stolen_id", "second_id", "never_issued")
PLACEHOLDER_LABEL = "placeholder"
SEVERITY_RANK = {"low": 0, "medium": 1, "high": 2}


def evaluate(
    truth: pd.DataFrame,
    entities: pd.DataFrame,
    households: pd.DataFrame | None = None,
    flags: pd.DataFrame | None = None,
    pairs: pd.DataFrame | None = None,
    thresholds: list[float] | None = None,
    *,
    min_severity: str = "medium",
    risk_labels: Iterable[str] = RISK_LABELS,
    review_floor: float = 0.5,
) -> dict:
    """Measure a run against ground truth; returns a JSON-ready dict of sections.

    ``truth`` needs record_id and person_id (household_id, ring_id and label are optional);
    ``entities`` record_id and entity_id; ``households`` record_id and household_id; ``flags``
    record_id, flag and severity; ``pairs`` record_id_a, record_id_b and, for the threshold
    sweep, prob. Only records listed in ``truth`` are evaluated; a truth record that the run did
    not place in any entity counts as an entity of its own. A record is "flagged" when it has a
    flag of severity ``min_severity`` or above; ``risk_labels`` are the labels that should be
    flagged. Sections whose inputs are absent are None.
    """
    if min_severity not in SEVERITY_RANK:
        raise InputError(
            f"Unknown severity '{min_severity}'; use one of {', '.join(SEVERITY_RANK)}."
        )
    t = frames.read_truth(truth)
    ids = t["record_id"]
    person = frames.with_singletons(frames.codes(t["person_id"]))
    entity = frames.attach(ids, entities, "entity_id", "entities")
    placed = int((entity >= 0).sum())

    result: dict = {
        "records": {
            "truth": int(len(t)),
            "in_entities": int(len(entities)),
            "missing_from_entities": int(len(t) - placed),
            "not_in_truth": int(len(entities) - placed),
        },
        "same_person": same_person(person, frames.with_singletons(entity)),
        "households": None,
        "risk_flags": None,
        "blocking": None,
        "thresholds": None,
        "settings": {
            "min_severity": min_severity,
            "risk_labels": sorted(set(risk_labels)),
            "review_floor": float(review_floor),
        },
    }
    if households is not None:
        result["households"] = household_quality(t, person, households)
    if flags is not None:
        result["risk_flags"] = flag_quality(t, flags, min_severity, set(risk_labels))
    if pairs is not None:
        positions = frames.pair_positions(pairs, ids)
        result["blocking"] = blocking(positions, person)
        if "prob" in positions.columns:
            sweep = list(DEFAULT_THRESHOLDS if thresholds is None else thresholds)
            result["thresholds"] = threshold_sweep(positions, person, sweep, review_floor)
    return result


def same_person(person: np.ndarray, predicted: np.ndarray) -> dict:
    """Pairwise and B-cubed scores plus whole-cluster error counts for one labelling."""
    ct = crosstab(person, predicted)
    return {"pairwise": pairwise(ct), "bcubed": bcubed(ct), **cluster_errors(ct)}


def household_quality(t: pd.DataFrame, person: np.ndarray, households: pd.DataFrame) -> dict | None:
    """Household pairwise scores over pairs of distinct true persons.

    Each true person takes the true household_id held by most of their records, and the
    predicted household that holds most of their records (ties: the household listed first;
    no household only when none of their records is in one). A pair of distinct persons is a
    true household pair when both have the same true household, a predicted pair when both
    have the same predicted household. Same-person pairs never count: they are the merge
    metrics' business.
    """
    if t["household_id"].isna().all():
        return None
    predicted = frames.attach(t["record_id"], households, "household_id", "households")
    n_persons = int(person.max()) + 1
    true_codes = frames.modal(person, frames.codes(t["household_id"]), n_persons)
    pred_codes = frames.modal(person, predicted, n_persons)
    both = (true_codes >= 0) & (pred_codes >= 0)
    true_sizes = np.bincount(true_codes[true_codes >= 0])
    pred_sizes = np.bincount(pred_codes[pred_codes >= 0])
    correct = pairs_within(crosstab(true_codes[both], pred_codes[both]).n)
    actual = pairs_within(true_sizes)
    guessed = pairs_within(pred_sizes)
    out = precision_recall(correct, guessed, actual)
    out.update(
        true_pairs=actual,
        predicted_pairs=guessed,
        correct_pairs=correct,
        true_households=int((true_sizes >= 2).sum()),
        predicted_households=int((pred_sizes >= 2).sum()),
        persons_in_true_households=int(true_sizes[true_sizes >= 2].sum()),
    )
    return out


def flag_quality(t: pd.DataFrame, flags: pd.DataFrame, min_severity: str, risky: set[str]) -> dict | None:
    """Precision and recall of risk flags against labels, per label, per flag code and for rings.

    Placeholder-labelled records are a line of their own (any severity counts there) and are
    left out of the main precision and recall, being neither a risk nor a clean record.
    Records without a label are left out everywhere.
    """
    if t["label"].isna().all():
        return None
    frames.require(flags, ("record_id", "flag", "severity"), "flags")
    n = len(t)
    pos = frames.positions(t["record_id"], frames.text_column(flags, "record_id"))
    rank = frames.text_column(flags, "severity").str.lower().map(SEVERITY_RANK)
    rank = pd.to_numeric(rank, errors="coerce").fillna(-1).to_numpy(dtype=np.int64)
    hit = pos >= 0
    strong = np.zeros(n, dtype=bool)
    strong[pos[hit & (rank >= SEVERITY_RANK[min_severity])]] = True
    anyflag = np.zeros(n, dtype=bool)
    anyflag[pos[hit]] = True

    label_codes, label_names = pd.factorize(t["label"], use_na_sentinel=True)
    names = np.asarray(label_names, dtype=object)
    labelled = label_codes >= 0
    is_risky = labelled & np.isin(label_codes, np.flatnonzero(np.isin(names, list(risky))))
    is_placeholder = labelled & np.isin(label_codes, np.flatnonzero(names == PLACEHOLDER_LABEL))
    scored = labelled & ~is_placeholder
    out = precision_recall(
        int((strong & is_risky).sum()), int((strong & scored).sum()), int(is_risky.sum())
    )
    out.update(
        labelled_records=int(labelled.sum()),
        should_flag=int(is_risky.sum()),
        flagged=int((strong & scored).sum()),
        flagged_and_should=int((strong & is_risky).sum()),
    )
    ph = int(is_placeholder.sum())
    ph_flagged = int((anyflag & is_placeholder).sum())
    out["placeholder"] = {"records": ph, "flagged_any_severity": ph_flagged, "recall": ratio(ph_flagged, ph)}
    records = np.bincount(label_codes[labelled], minlength=len(names))
    flagged = np.bincount(label_codes[labelled & strong], minlength=len(names))
    out["by_label"] = [
        {"label": str(names[i]), "records": int(records[i]), "flagged": int(flagged[i]),
         "share_flagged": ratio(int(flagged[i]), int(records[i]))}
        for i in np.argsort(names.astype(str))
    ]
    out["by_flag"] = _by_flag(frames.text_column(flags, "flag"), pos, label_codes, is_risky, is_placeholder)
    out["rings"] = _ring_line(t, strong)
    return out


def _by_flag(flag: pd.Series, pos: np.ndarray, label_codes: np.ndarray,
             is_risky: np.ndarray, is_placeholder: np.ndarray) -> list[dict]:
    """Per flag code: labelled records carrying it and the share of those that are risky."""
    per = pd.DataFrame({"flag": flag.to_numpy(), "pos": pos}).dropna()
    per = per[(per["pos"] >= 0)]
    per = per[label_codes[per["pos"].to_numpy()] >= 0].drop_duplicates()
    p = per["pos"].to_numpy()
    per = per.assign(risky=is_risky[p], placeholder=is_placeholder[p])
    sums = per.groupby("flag", sort=True)[["risky", "placeholder"]].agg(["sum", "size"])
    return [
        {
            "flag": str(code),
            "records": int(row[("risky", "size")]),
            "risky": int(row[("risky", "sum")]),
            "placeholder": int(row[("placeholder", "sum")]),
            "precision": ratio(int(row[("risky", "sum")]),
                               int(row[("risky", "size")] - row[("placeholder", "sum")])),
        }
        for code, row in sums.iterrows()
    ]


def _ring_line(t: pd.DataFrame, strong: np.ndarray) -> dict | None:
    """How many records of true rings carry a flag at or above the severity floor."""
    in_ring = t["ring_id"].notna().to_numpy()
    if not in_ring.any():
        return None
    flagged = int((strong & in_ring).sum())
    return {
        "rings": int(t.loc[in_ring, "ring_id"].nunique()),
        "records": int(in_ring.sum()),
        "flagged": flagged,
        "recall": ratio(flagged, int(in_ring.sum())),
    }


def blocking(positions: pd.DataFrame, person: np.ndarray) -> dict:
    """Reduction ratio, pairs completeness and pairs quality of the candidate pairs."""
    a = positions["a"].to_numpy()
    b = positions["b"].to_numpy()
    kept = int((person[a] == person[b]).sum())
    true_pairs = pairs_within(np.bincount(person))
    return blocking_quality(len(person), true_pairs, len(positions), kept)


def threshold_sweep(
    positions: pd.DataFrame, person: np.ndarray, thresholds: list[float], review_floor: float
) -> list[dict]:
    """Scores of the entities a bare threshold would give, one row per threshold.

    For threshold t the entities are the connected components of the graph whose edges are
    the candidate pairs with prob >= t. ``review_queue`` counts pairs with prob in
    [review_floor, t): the pairs a reviewer would see if t were the merge threshold.
    """
    n = len(person)
    prob = positions["prob"].to_numpy(dtype=np.float64)
    a = positions["a"].to_numpy()
    b = positions["b"].to_numpy()
    rows = []
    for threshold in sorted(float(x) for x in thresholds):
        keep = prob >= threshold
        graph = coo_matrix(
            (np.ones(int(keep.sum()), dtype=np.int8), (a[keep], b[keep])), shape=(n, n)
        ).tocsr()
        count, labels = connected_components(graph, directed=False)
        ct = crosstab(person, labels)
        pw = pairwise(ct)
        errors = cluster_errors(ct)
        rows.append({
            "threshold": threshold,
            "entities": int(count),
            "precision": pw["precision"],
            "recall": pw["recall"],
            "f1": pw["f1"],
            "bcubed_f1": bcubed(ct)["f1"],
            "over_merged_entities": errors["over_merged_entities"],
            "split_persons": errors["split_persons"],
            "pairs_at_or_above": int(keep.sum()),
            "review_queue": int(((prob >= review_floor) & (prob < threshold)).sum()),
        })
    return rows
