"""Run folders inside a project: bulk results as Parquet plus a manifest.

Each `resolve run` writes a new folder ``runs/run-NNNN`` (numbers only grow) holding every
result table as Parquet and ``manifest.json`` (input file hashes, row counts, settings hash,
library versions, stage timings). The folder is written under a temporary name and renamed
when complete, so a crash never leaves a half-written run that looks finished. Files and
folders are created readable by the owner only: they hold personal data.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from resolve.errors import ProjectError

RUNS_DIR = "runs"
SETTINGS_FILE = "project.toml"
MAPPING_FILE = "mapping.toml"
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


@dataclass
class Run:
    """A finished run folder; tables are read lazily from Parquet."""

    run_id: str
    path: Path

    def has(self, name: str) -> bool:
        return (self.path / f"{name}.parquet").exists()

    def table(self, name: str, columns: list[str] | None = None) -> pd.DataFrame:
        p = self.path / f"{name}.parquet"
        if not p.exists():
            raise ProjectError(f"run {self.run_id} has no '{name}' table; re-run the pipeline.")
        return pq.read_table(p, columns=columns).to_pandas()

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

    def save_run(self, tables: dict[str, pd.DataFrame], manifest: dict,
                 documents: dict[str, dict] | None = None) -> Run:
        """Write tables as Parquet and the manifest; the run appears only when complete."""
        run_id = self.next_run_id()
        final = self.path / RUNS_DIR / run_id
        tmp = self.path / RUNS_DIR / f".{run_id}.partial"
        if tmp.exists():
            shutil.rmtree(tmp)
        _private_dir(tmp)
        for name, frame in tables.items():
            target = tmp / f"{name}.parquet"
            table = pa.Table.from_pandas(frame, preserve_index=False)
            pq.write_table(table, target, compression="zstd", row_group_size=131_072)
            os.chmod(target, 0o600)
        for name, doc in (documents or {}).items():
            write_private_text(tmp / name, json.dumps(doc, indent=2, sort_keys=True, default=str))
        manifest = dict(manifest, run_id=run_id, tables=sorted(tables),
                        libraries=library_versions())
        write_private_text(tmp / "manifest.json",
                           json.dumps(manifest, indent=2, sort_keys=True, default=str))
        os.replace(tmp, final)
        return Run(run_id, final)
