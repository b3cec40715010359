"""Load what `evaluate` needs from a saved run, keyed by record IDs, and read a truth file."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from resolve.errors import InputError
from resolve.project import Project


def read_truth_csv(path: str | Path) -> pd.DataFrame:
    """Read a ground-truth CSV as text (blank cells stay blank strings)."""
    try:
        truth = pd.read_csv(path, dtype=str, keep_default_na=False)
    except (OSError, pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read truth file {path}: {exc}.") from None
    for col in ("record_id", "person_id"):
        if col not in truth.columns:
            raise InputError(f"truth file {path} has no '{col}' column.")
    return truth


def load_run_for_evaluation(project_dir: str | Path) -> dict[str, pd.DataFrame]:
    """Entities, record-level households, flags and scored pairs of the latest run."""
    run = Project.open(project_dir).latest_run()
    entities = run.table("entities", ["rec", "record_id", "entity_id"])
    rid = entities.sort_values("rec")["record_id"].to_numpy()
    households = run.table("households")
    hh = entities.merge(households[["entity_id", "household_id"]], on="entity_id")
    pairs = run.table("pairs", ["rec_a", "rec_b", "prob"])
    pairs = pd.DataFrame({"record_id_a": rid[pairs["rec_a"].to_numpy()],
                          "record_id_b": rid[pairs["rec_b"].to_numpy()],
                          "prob": pairs["prob"].to_numpy()})
    return {"entities": entities[["record_id", "entity_id"]],
            "households": hh[["record_id", "household_id"]],
            "flags": run.table("flags"), "pairs": pairs}
