"""Run folders inside a project: bulk results as Parquet plus a manifest.

Each `resolve run` writes a new folder ``runs/run-NNNN`` (numbers only grow) holding every
result table as Parquet and ``manifest.json`` (input file hashes, row counts, settings hash,
library versions, stage timings). The folder is written under a temporary name and renamed
when complete, so a crash never leaves a half-written run that looks finished. Files and
folders are created readable by the owner only: they hold personal data.

Writing a million-record run is mostly string encoding, so `parquet_options` chooses per
column: dictionary encoding only where a sample of the column repeats values (trying a
dictionary on near-unique text such as record IDs or raw values costs time and then falls
back to plain anyway), and min/max statistics only on non-text columns (nothing here
filters on text statistics, and they are costly to compute). Tables are written in parallel
threads: pyarrow releases the GIL while it encodes and compresses.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from resolve.errors import ProjectError

RUNS_DIR = "runs"
SETTINGS_FILE = "project.toml"
MAPPING_FILE = "mapping.toml"
ROW_GROUP_SIZE = 131_072
DICTIONARY_SAMPLE = 16_384
"""Rows sampled (evenly spread) to decide whether a column is worth dictionary encoding."""
DICTIONARY_MAX_DISTINCT = 0.3
"""Dictionary-encode a column when at most this share of the sampled values are distinct."""
WRITE_THREADS = 4
LIBRARIES = ("resolve", "pandas", "pyarrow", "numpy", "scipy", "rapidfuzz", "networkx",
             "phonenumbers", "email-validator", "python-stdnum", "jellyfish")


def _private_dir(path: Path) -> None:
    path.mkdir(parents=True, exist_ok=True)
    os.chmod(path, 0o700)


def write_private_text(path: Path, text: str) -> None:
    """Write a text file readable by the owner only (created with mode 0600)."""
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(text)
    os.chmod(path, 0o600)


def file_sha256(path: str | Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def library_versions() -> dict[str, str]:
    out = {}
    for name in LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _is_text(kind: pa.DataType) -> bool:
    return (pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_binary(kind)
            or pa.types.is_large_binary(kind))


def parquet_options(table: pa.Table) -> dict:
    """`pyarrow.parquet.write_table` options for ``table``: which columns get a dictionary
    (categoricals always; others when a sample repeats values) and statistics (non-text)."""
    n = table.num_rows
    sample = pa.array(np.linspace(0, n - 1, min(n, DICTIONARY_SAMPLE)).astype(np.int64)) if n else None
    dictionary, statistics = [], []
    for name, column in zip(table.column_names, table.columns):
        if not _is_text(column.type):
            statistics.append(name)
        if pa.types.is_dictionary(column.type) or pa.types.is_nested(column.type):
            dictionary.append(name)  # pyarrow's own default for these
        elif n and pc.count_distinct(column.take(sample)).as_py() <= DICTIONARY_MAX_DISTINCT * len(sample):
            dictionary.append(name)
    return {"compression": "zstd", "row_group_size": ROW_GROUP_SIZE, "use_dictionary": dictionary,
            "write_statistics": statistics}


def write_parquet(frame: pd.DataFrame, target: Path) -> None:
    """Write one table as Parquet with `parquet_options`, readable by the owner only."""
    table = pa.Table.from_pandas(frame, preserve_index=False)
    pq.write_table(table, target, **parquet_options(table))
    os.chmod(target, 0o600)


@dataclass
class Run:
    """A finished run folder; tables are read lazily from Parquet."""

    run_id: str
    path: Path

    def has(self, name: str) -> bool:
        return (self.path / f"{name}.parquet").exists()

    def table(self, name: str, columns: list[str] | None = None,
              filters: list[tuple] | None = None) -> pd.DataFrame:
        """One saved table as pandas; ``filters`` (pyarrow's list of (column, op, value))
        keep only matching rows, skipping row groups whose statistics rule them out."""
        p = self.path / f"{name}.parquet"
        if not p.exists():
            raise ProjectError(f"run {self.run_id} has no '{name}' table; re-run the pipeline.")
        return pq.read_table(p, columns=columns, filters=filters).to_pandas()

    @property
    def manifest(self) -> dict:
        return json.loads((self.path / "manifest.json").read_text(encoding="utf-8"))

    def read_json(self, name: str) -> dict:
        return json.loads((self.path / name).read_text(encoding="utf-8"))


class Project:
    """A project folder. `Project.open` needs an existing one; `Project.create` makes it."""

    def __init__(self, path: str | Path):
        self.path = Path(path)

    @classmethod
    def create(cls, path: str | Path) -> "Project":
        p = Path(path)
        if p.exists() and not p.is_dir():
            raise ProjectError(f"{p} exists and is not a folder.")
        _private_dir(p)
        _private_dir(p / RUNS_DIR)
        return cls(p)

    @classmethod
    def open(cls, path: str | Path) -> "Project":
        p = Path(path)
        if not (p / RUNS_DIR).is_dir():
            raise ProjectError(f"{p} is not a resolve project; create one with "
                               f"'resolve run INPUT --project {p}'.")
        return cls(p)

    @property
    def mapping_path(self) -> Path:
        return self.path / MAPPING_FILE

    @property
    def settings_path(self) -> Path:
        return self.path / SETTINGS_FILE

    def runs(self) -> list[Run]:
        base = self.path / RUNS_DIR
        found = sorted(d.name for d in base.iterdir()
                       if d.is_dir() and d.name.startswith("run-") and (d / "manifest.json").exists())
        return [Run(name, base / name) for name in found]

    def latest_run(self) -> Run:
        runs = self.runs()
        if not runs:
            raise ProjectError(f"project {self.path} has no finished run; "
                               f"run 'resolve run INPUT --project {self.path}' first.")
        return runs[-1]

    def previous_run(self) -> Run | None:
        runs = self.runs()
        return runs[-1] if runs else None

    def next_run_id(self) -> str:
        base = self.path / RUNS_DIR
        numbers = [int(d.name.split("-")[1]) for d in base.iterdir()
                   if d.name.startswith("run-") and d.name.split("-")[1].isdigit()]
        return f"run-{(max(numbers) + 1) if numbers else 1:04d}"

    def start_run(self) -> "RunWriter":
        """Begin a new run folder whose tables are written in the background as they come
        (`RunWriter`); the run appears only when `RunWriter.finish` completes."""
        return RunWriter(self)

    def save_run(self, tables: dict[str, pd.DataFrame], manifest: dict,
                 documents: dict[str, dict] | None = None) -> Run:
        """Write tables as Parquet and the manifest; the run appears only when complete."""
        with self.start_run() as writer:
            # largest first, so that the last thread to finish is not the one left with a big table
            for name in sorted(tables, key=lambda name: -len(tables[name]) * max(len(tables[name].columns), 1)):
                writer.add(name, tables[name])
            return writer.finish(manifest, documents)


class RunWriter:
    """A run folder being written. Each table added goes to Parquet in a background thread
    at once (pyarrow encodes without holding the GIL), so a caller can hand over the tables
    it already has (records, identifiers, pairs) and keep computing the others meanwhile.
    `finish` waits for every table, writes the documents and the manifest and renames the
    folder: only then does the run appear. Used as a context manager, an error before
    `finish` removes the partial folder."""

    def __init__(self, project: Project):
        self.run_id = project.next_run_id()
        self.final = project.path / RUNS_DIR / self.run_id
        self.tmp = project.path / RUNS_DIR / f".{self.run_id}.partial"
        if self.tmp.exists():
            shutil.rmtree(self.tmp)
        _private_dir(self.tmp)
        self._pool = ThreadPoolExecutor(max(1, min(WRITE_THREADS, os.cpu_count() or 1)))
        self._pending: dict[str, object] = {}

    def add(self, name: str, frame: pd.DataFrame) -> None:
        """Start writing ``frame`` as table ``name``; the frame must not change until `finish`."""
        if name in self._pending:
            raise ProjectError(f"Table '{name}' was already added to run {self.run_id}; add each table once.")
        self._pending[name] = self._pool.submit(write_parquet, frame, self.tmp / f"{name}.parquet")

    def finish(self, manifest: dict, documents: dict[str, dict] | None = None) -> Run:
        """Wait for the tables, write documents and manifest, and make the run appear."""
        try:
            for done in self._pending.values():
                done.result()  # re-raises a writer's error
        finally:
            self._pool.shutdown(wait=True)
        for name, doc in (documents or {}).items():
            write_private_text(self.tmp / name, json.dumps(doc, indent=2, sort_keys=True, default=str))
        manifest = dict(manifest, run_id=self.run_id, tables=sorted(self._pending),
                        libraries=library_versions())
        write_private_text(self.tmp / "manifest.json",
                           json.dumps(manifest, indent=2, sort_keys=True, default=str))
        os.replace(self.tmp, self.final)
        return Run(self.run_id, self.final)

    def abandon(self) -> None:
        """Stop writing and remove the partial folder."""
        self._pool.shutdown(wait=True, cancel_futures=True)
        shutil.rmtree(self.tmp, ignore_errors=True)

    def __enter__(self) -> "RunWriter":
        return self

    def __exit__(self, kind, error, trace) -> None:
        if kind is not None:
            self.abandon()
