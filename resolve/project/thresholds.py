"""Match thresholds chosen by a reviewer, kept in the project for the next run.

The workbench's thresholds screen lets a reviewer try other auto-accept and review thresholds
by re-clustering the stored links. `save_thresholds` keeps the chosen pair in
``<project>/thresholds.toml`` (owner-only) and writes an audit entry; `resolve run` uses them
when no ``--auto-threshold`` / ``--review-threshold`` option is given, instead of the fitted
model's own.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

from resolve.errors import ProjectError
from resolve.project.runs import write_private_text

THRESHOLDS_FILE = "thresholds.toml"


def load_thresholds(project_path: str | Path) -> dict[str, float] | None:
    """The saved ``{"auto": .., "review": ..}``, or None when none were saved."""
    path = Path(project_path) / THRESHOLDS_FILE
    if not path.exists():
        return None
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8")).get("thresholds", {})
        auto, review = float(data["auto"]), float(data["review"])
    except (tomllib.TOMLDecodeError, UnicodeDecodeError, KeyError, TypeError, ValueError):
        raise ProjectError(f"{path} is damaged; delete it or fix its [thresholds] table.") from None
    if not 0.0 <= review <= auto <= 1.0:
        raise ProjectError(f"{path}: thresholds must satisfy 0 <= review <= auto <= 1.")
    return {"auto": auto, "review": review}


def save_thresholds(project_path: str | Path, auto: float, review: float, reviewer: str,
                    store=None) -> None:
    """Keep the thresholds for the next run and record who chose them in the audit log.

    ``store`` is an open `ReviewStore` to reuse (the workbench has one); else one is opened.
    """
    from resolve.project.audit import append_entry
    from resolve.project.store import ReviewStore

    if not 0.0 <= review <= auto <= 1.0:
        raise ProjectError("thresholds must satisfy 0 <= review <= auto <= 1.")
    path = Path(project_path)
    text = (f"# Chosen on the thresholds screen by {reviewer}; used by the next 'resolve run'.\n"
            f"[thresholds]\nauto = {auto!r}\nreview = {review!r}\n")
    owned = store is None
    store = ReviewStore.open(path) if owned else store
    try:
        with store.atomic():
            append_entry(store, reviewer, "thresholds_saved", "project",
                         {"auto": float(auto), "review": float(review)})
            write_private_text(path / THRESHOLDS_FILE, text)
    finally:
        if owned:
            store.close()
