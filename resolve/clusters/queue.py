"""The review queue: everything that needs a human, most pressing first, under stable keys.

Items (``kind``):

- ``entity``: records joined by review-band links (with the same-person links around them)
  that a reviewer must accept or reject as one person;
- ``split``: an entity with a split suggestion (see `resolve.clusters.diagnostics`);
- ``household``: a household to confirm;
- ``group``: an identity-sharing group, except single-household groups (their household item
  covers them);
- ``flagged``: an entity with a risk flag on one of its records and no other item.

Each item's ``cluster_key`` is a kind prefix and a hash of its member record IDs (see
`resolve.clusters.keys.member_names`), so the same records give the same key in every run,
whatever their order, and a decision recorded against a key still finds its records next
month. Priority (0..100) mixes risk, uncertainty and size:

    priority = 100 * (0.5 * risk + 0.3 * uncertainty + 0.2 * size_term)

- ``risk``: the larger of the item kind's base risk (`KIND_RISK`) and the highest flag
  severity on its records (high 1.0, medium 0.6, low 0.3; numbers above 1 are read on a
  1-3 scale);
- ``uncertainty``: 1 - |2p - 1| for the deciding link probability p nearest 0.5 (1 at p = 0.5,
  0 at p = 0 or 1); 0.5 for a split driven by a conflicting pair (the evidence disagrees
  with itself);
- ``size_term``: min(1, log2(size) / 6), so 2 records count 1/6 and 64 or more count 1.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.clusters.keys import arrow_text, components, index_rank, join_runs_arrow, member_names_at
from resolve.clusters.sharing import entity_codes, record_hashes, record_texts
from resolve.links import REVIEW

PREFIXES = {"entity": "ent-", "split": "spl-", "household": "hh-", "group": "grp-", "flagged": "flg-"}
KIND_RISK = {"entity": 0.2, "split": 0.3, "household": 0.1, "group": 0.5, "flagged": 0.0}
GROUP_KIND_RISK = {"ring_like": 0.8, "mixed": 0.5, "several_households": 0.3, "single_household": 0.1}
SEVERITY = {"info": 0.1, "low": 0.3, "medium": 0.6, "high": 1.0, "critical": 1.0}
WEIGHTS = {"risk": 0.5, "uncertainty": 0.3, "size": 0.2}
COLUMNS = ("cluster_key", "kind", "size", "score", "priority", "record_ids", "entity_ids", "detail")


def _closeness(p: pd.Series) -> pd.Series:
    return 1.0 - (2.0 * p - 1.0).abs()


def severity_score(severity: pd.Series) -> pd.Series:
    """Flag severity as 0..1: words by `SEVERITY`, numbers above 1 on a 1-3 scale."""
    numeric = pd.to_numeric(severity, errors="coerce")
    words = severity.astype("string").str.lower().map(SEVERITY).astype(float)
    scaled = numeric.where(numeric <= 1, numeric / 3.0).clip(0, 1).astype(float)
    return scaled.fillna(words).fillna(0.0)


def build_queue(
    entities: pd.DataFrame,
    diagnostics: pd.DataFrame,
    households: pd.DataFrame,
    groups: pd.DataFrame,
    links: pd.DataFrame,
    flags: pd.DataFrame | None = None,
) -> pd.DataFrame:
    """Return the review queue, one row per item, columns `COLUMNS`, by priority descending.

    ``record_ids`` and ``entity_ids`` are sorted and ';'-joined; ``score`` is the item's
    deciding probability (lowest review link; weakest link of a split entity; mean probability
    of the links between a household's or group's entities); ``detail`` says why it is queued
    (split kind, group kind, household evidence).
    ``flags``, when given, has ``record_id``, ``flag``, ``severity``.
    """
    code, entity_ids, _ = entity_codes(entities)
    n_ent = len(entity_ids)
    a = links["rec_a"].to_numpy(dtype=np.int64)
    b = links["rec_b"].to_numpy(dtype=np.int64)
    prob = links["prob"].to_numpy(dtype=np.float64)
    ea, eb = code[a], code[b]
    parts: dict[str, tuple[np.ndarray, np.ndarray, pd.DataFrame]] = {}  # kind: (e, item, facts)

    # entity: components of entities joined by review links
    review = (links["link_type"] == REVIEW).to_numpy(dtype=bool) & (ea != eb)
    if review.any():
        lab = components(n_ent, ea[review], eb[review])
        touched = np.unique(np.concatenate([ea[review], eb[review]]))
        clusters = np.unique(lab[touched])
        item = np.searchsorted(clusters, lab[touched])
        p = pd.Series(prob[review])
        by = np.searchsorted(clusters, lab[ea[review]])
        facts = pd.DataFrame({"score": p.groupby(by).min(), "uncertainty": _closeness(p).groupby(by).max()})
        facts["detail"] = "review_links"
        parts["entity"] = (touched, item, facts)

    # split: entities with a split suggestion
    diag = diagnostics[diagnostics["split_kind"].notna().to_numpy(dtype=bool)] if len(diagnostics) else diagnostics
    if len(diag):
        diag = diag.reset_index(drop=True)
        e = entity_ids.get_indexer(diag["entity_id"])
        n_cut = diag["cut_links"].str.count(";").astype(float) + 1.0
        closeness = _closeness(diag["cut_weight"].astype(float) / n_cut)
        facts = pd.DataFrame(
            {
                "score": diag["min_prob"].astype(float).to_numpy(),
                "uncertainty": closeness.where(diag["split_kind"] != "conflict", 0.5).to_numpy(),
                "detail": diag["split_kind"].to_numpy(dtype=object),
            }
        )
        parts["split"] = (e, np.arange(len(diag)), facts)

    # household and group items: link probabilities between their member entities
    for kind, frame, id_col, detail_col in (
        ("household", households, "household_id", "evidence"),
        ("group", groups, "group_id", "group_kind"),
    ):
        if frame is None or len(frame) == 0:
            continue
        if kind == "group":
            frame = frame[(frame["group_kind"] != "single_household").to_numpy(dtype=bool)]
        e = entity_ids.get_indexer(frame["entity_id"])
        item, names = pd.factorize(frame[id_col])
        label = np.full(n_ent, -1, dtype=np.int64)
        label[e] = item
        between = (label[ea] >= 0) & (label[ea] == label[eb]) & (ea != eb)
        p = pd.Series(prob[between])
        by = label[ea][between]
        facts = pd.DataFrame(index=pd.RangeIndex(len(names)))
        facts["score"] = p.groupby(by).mean()
        facts["uncertainty"] = _closeness(p).groupby(by).max()
        first = np.unique(item, return_index=True)[1]
        facts["detail"] = frame[detail_col].to_numpy(dtype=object)[first]
        parts[kind] = (e, item, facts)

    severity = _record_severity(flags, entities)
    if severity is not None:
        flagged = np.unique(code[severity > 0])
        covered = np.zeros(n_ent, dtype=bool)
        for e, _, _ in parts.values():
            covered[e] = True
        lonely = flagged[~covered[flagged]]
        if len(lonely):
            facts = pd.DataFrame({"score": np.nan, "uncertainty": 0.0, "detail": "flagged_records"}, index=range(len(lonely)))
            parts["flagged"] = (lonely, np.arange(len(lonely)), facts)
    return _finish(parts, code, entity_ids, entities, severity)


def _record_severity(flags: pd.DataFrame | None, entities: pd.DataFrame) -> np.ndarray | None:
    """Highest flag severity (0..1) per rec, or None without flags."""
    if flags is None or len(flags) == 0:
        return None
    score = severity_score(flags["severity"]).groupby(flags["record_id"].astype("string").to_numpy()).max()
    texts, _ = record_texts(entities)
    where = pc.index_in(texts, value_set=arrow_text(score.index).cast(texts.type))  # each record's flags
    where = where.to_numpy(zero_copy_only=False)
    found = ~np.isnan(where.astype(float))
    out = np.zeros(len(texts), dtype=float)
    out[found] = score.to_numpy(dtype=float)[where[found].astype(np.int64)]
    return out


def _finish(parts, code, entity_ids, entities, severity) -> pd.DataFrame:
    """Expand items to records, name them, score priority and sort."""
    if not parts:
        return pd.DataFrame({c: pd.Series(dtype="string") for c in COLUMNS}).astype(
            {"size": "int64", "score": "float64", "priority": "float64"}
        )
    by_entity = np.argsort(code, kind="stable")
    starts = np.concatenate([[0], np.cumsum(np.bincount(code, minlength=len(entity_ids)))])
    entity_rank = index_rank(entity_ids)
    entity_texts = arrow_text(entity_ids)
    record_text, record_rank = record_texts(entities)
    record_hash = record_hashes(entities)
    tables = []
    for kind, (e, item, facts) in parts.items():
        e = np.asarray(e, dtype=np.int64)
        item = np.asarray(item, dtype=np.int64)
        size = starts[e + 1] - starts[e]
        recs = by_entity[np.repeat(starts[e], size) + np.arange(size.sum()) - np.repeat(np.cumsum(size) - size, size)]
        rec_item = np.repeat(item, size)
        named = member_names_at(rec_item, recs, record_text, record_rank, record_hash, PREFIXES[kind])
        order = np.lexsort((entity_rank[e], item))
        labels, joined = join_runs_arrow(item[order], entity_texts.take(pa.array(e[order])))
        risk = np.full(len(named), KIND_RISK[kind])
        if kind == "group":
            risk = facts["detail"].map(GROUP_KIND_RISK).fillna(KIND_RISK["group"]).to_numpy()[named["group"].to_numpy()]
        if severity is not None:
            worst = pd.Series(severity[recs]).groupby(rec_item).max()
            risk = np.maximum(risk, worst.reindex(named["group"]).fillna(0.0).to_numpy())
        table = pd.DataFrame(
            {
                "cluster_key": named["key"].array,
                "kind": kind,
                "size": named["size"].to_numpy(),
                "score": facts["score"].to_numpy(dtype=float)[named["group"].to_numpy()],
                "uncertainty": facts["uncertainty"].fillna(0.0).to_numpy(dtype=float)[named["group"].to_numpy()],
                "risk": risk,
                "record_ids": named["record_ids"].array,
                "entity_ids": pd.arrays.ArrowStringArray(
                    joined.take(pa.array(np.searchsorted(labels, named["group"].to_numpy())))),
                "detail": facts["detail"].to_numpy(dtype=object)[named["group"].to_numpy()],
            }
        )
        tables.append(table)
    out = pd.concat(tables, ignore_index=True)
    size_term = np.minimum(1.0, np.log2(out["size"].to_numpy(dtype=float)) / 6.0)
    priority = 100.0 * (
        WEIGHTS["risk"] * out["risk"].to_numpy()
        + WEIGHTS["uncertainty"] * out["uncertainty"].to_numpy()
        + WEIGHTS["size"] * size_term
    )
    out["priority"] = np.round(priority, 2)
    out = out.sort_values(["priority", "cluster_key"], ascending=[False, True], kind="stable").reset_index(drop=True)
    out = out.astype({c: "string" for c in ("cluster_key", "kind", "record_ids", "entity_ids", "detail")})
    return out[list(COLUMNS)]
