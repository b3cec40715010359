"""The first page of the work list, read with pyarrow alone so it reaches the screen first.

Starting the workbench on a large project, most of the wait is loading pandas, not reading
the queue. This module finds the project's latest finished run by the same rule as
`resolve.project.Project.runs` (a ``runs/run-NNNN`` folder holding ``manifest.json``; names
sort in run order) and reads the first page of its queue with pyarrow only, so the page is
drawn while pandas loads in the same worker. Everything after the first page goes through
`tui.data` and the library.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

COLUMNS = ("cluster_key", "kind", "size", "score", "priority", "record_ids", "detail")


@dataclass
class FirstPage:
    """The run's ID, the number of queue items and the first rows (plain dicts)."""

    run_id: str
    total: int
    rows: list[dict]


def latest_run_dir(project_dir: Path) -> Path | None:
    """The newest finished run folder, or None (the library then says what is wrong)."""
    base = Path(project_dir) / "runs"
    if not base.is_dir():
        return None
    found = sorted(d.name for d in base.iterdir()
                   if d.is_dir() and d.name.startswith("run-") and (d / "manifest.json").exists())
    return base / found[-1] if found else None


def first_page(project_dir: Path, size: int) -> FirstPage | None:
    """The first ``size`` queue items of the latest run, or None when there is nothing to read."""
    import pyarrow.parquet as pq

    run = latest_run_dir(project_dir)
    if run is None or not (run / "queue.parquet").exists():
        return None
    # ParquetFile reads without the dataset layer, which would cost more to load than the read
    queue = pq.ParquetFile(run / "queue.parquet")
    names = set(queue.schema_arrow.names)
    table = queue.read(columns=[c for c in COLUMNS if c in names])
    return FirstPage(run.name, table.num_rows, table.slice(0, size).to_pylist())
