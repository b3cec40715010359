"""Explain one pair of a saved run by record IDs (what `resolve explain` prints).

Loads the run's people and identifier tables and its saved model, finds the two records by
their IDs and hands them to `resolve.scoring.explain_pair`. National IDs stay masked.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.errors import InputError
from resolve.project import Project


def explain_records(project_dir, record_a: str, record_b: str) -> pd.DataFrame:
    """Field-by-field evidence for two records of the project's latest run."""
    from resolve.scoring import MatchModel, explain_pair

    run = Project.open(project_dir).latest_run()
    people = run.table("people")
    ids = people["record_id"].astype(str).to_numpy()
    recs = []
    for rid in (record_a, record_b):
        hit = np.flatnonzero(ids == rid)
        if not len(hit):
            raise InputError(f"record '{rid}' is not in run {run.run_id}; check the record ID.")
        recs.append(int(hit[0]))
    model = MatchModel.load(run.path / "model.json")
    return explain_pair(recs[0], recs[1], people, run.table("identifiers"), model,
                        keys=_stored_keys(run, *recs))


def _stored_keys(run, a: int, b: int) -> int | None:
    """The blocking-key mask stored for this pair, or None when blocking did not propose it."""
    hit = run.table("pairs", ["keys"], filters=[("rec_a", "==", min(a, b)),
                                                ("rec_b", "==", max(a, b))])
    return int(hit["keys"].iloc[0]) if len(hit) else None


def format_explanation(table: pd.DataFrame, record_a: str, record_b: str) -> str:
    """Plain-text table of an explanation, weights in bits (log2 odds)."""
    from resolve.report import _table

    rows = []
    for r in table.itertuples(index=False):
        if r.field in ("prior", "total"):
            continue
        m = "" if pd.isna(r.m) else f"{r.m:.4f}"
        u = "" if pd.isna(r.u) else f"{r.u:.6f}" + (" tf" if r.tf_adjusted else "")
        rows.append([r.field, r.label, r.value_a, r.value_b, m, u, f"{r.weight:+.2f}"])
    prior = table[table["field"] == "prior"].iloc[0]
    total = table[table["field"] == "total"].iloc[0]
    out = [f"Evidence for {record_a} vs {record_b} (weights in bits; positive = same person)", ""]
    out.append(_table(["field", "level", record_a, record_b, "m", "u", "weight"], rows))
    out += ["", f"prior {prior['weight']:+.2f} ({prior['label']})",
            f"total {total['weight']:+.2f}   match probability {total['probability']:.4f}",
            "A score is a lead for human review, not a finding."]
    return "\n".join(out)
