"""Time the cluster, signals and save stages on a saved 1M-record run, and check the outputs.

Not a test: run it by hand (``.venv/bin/python -m bench.downstream_speed [--check]``). The
stages after scoring are measured on fixed inputs (a copy of a run folder: people,
identifiers, typed links as ``pairs``, hubs, plus the tables the save stage writes), so a
change to clustering, signals or saving can be timed without re-running the whole pipeline,
and its outputs compared with the reference tables of that run. The calls are made exactly
as `resolve.pipeline.run_pipeline` makes them (no must-link or cannot-link decisions and no
previous run, as in the reference run), and the save goes to a temporary project. The link
stage (`type_links`) is re-run from the stored scores first and timed apart: it is not one of
the three stages, but it is checked too and shares work with them.

``--check`` compares every output table with the reference: the same columns, the same row
order, and (after sorting by the table's key columns) the same values, and the saved Parquet
files' column types; differences are listed, not raised. ``--early`` writes the tables known
before clustering in the background from the start (`resolve.project.runs.RunWriter`), as a
pipeline could. ``--profile NAME`` runs one function under cProfile and prints its top
entries. Timings on a shared machine are noisy: ``--repeat 2`` keeps the better of two (the
shared codes of `resolve.clusters.codes` are dropped before each run, so both runs start
cold). Peak memory is the process's maximum resident set size.
"""

from __future__ import annotations

import argparse
import cProfile
import datetime as dt
import gc
import json
import os
import pstats
import resource
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow.parquet as pq

FIXTURE = Path("/work/notes/fixture-1m")
INPUTS = ("people", "identifiers", "pairs", "hubs", "records", "quarantine", "blocking_report")
OUTPUTS = {  # table: key columns that identify a row
    "pairs": ["rec_a", "rec_b"],
    "entities": ["rec"],
    "diagnostics": ["entity_id"],
    "households": ["entity_id"],
    "groups": ["entity_id"],
    "overlaps": ["entity_a", "entity_b"],
    "flags": ["record_id", "flag", "reason"],
    "queue": ["cluster_key"],
}


def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def load(folder: Path, names=INPUTS) -> dict[str, pd.DataFrame]:
    """Read tables the way `resolve.project.runs.Run.table` does."""
    return {name: pq.read_table(folder / f"{name}.parquet").to_pandas() for name in names}


def run_stages(tables: dict[str, pd.DataFrame], today: dt.date, thresholds: dict, project_dir: Path,
               timings: dict[str, float], profile: str | None = None, early: bool = False) -> dict[str, pd.DataFrame]:
    """Cluster, signals and save as in `run_pipeline`; fills ``timings`` per function.

    With ``early`` the tables known before clustering are handed to a `RunWriter` right after
    linking and written in the background while the stages compute (a proposed pipeline
    change); ``save_run`` then times adding the outputs and finishing the run."""
    from resolve.clusters import build_entities, build_groups, build_households, build_queue, entity_diagnostics
    from resolve.links import type_links
    from resolve.project import Project
    from resolve.signals import compute_signals

    people, identifiers, scored, hubs = (tables[n] for n in ("people", "identifiers", "pairs", "hubs"))

    def timed(name, func, *args, **kwargs):
        gc.collect()
        start = time.perf_counter()
        if profile == name:
            prof = cProfile.Profile()
            out = prof.runcall(func, *args, **kwargs)
        else:
            out = func(*args, **kwargs)
        timings[name] = time.perf_counter() - start
        if profile == name:
            pstats.Stats(prof).sort_stats("cumulative").print_stats(45)
        return out

    # the link stage, as the pipeline runs it just before: it is timed apart (not one of the
    # three stages) but it is the first to factorise the identifier keys the others reuse
    scored = scored.drop(columns=["link_type", "reasons"])
    links = timed("type_links", type_links, scored, people, identifiers, thresholds, hubs)
    project = Project.create(project_dir)
    inputs = {"records": tables["records"], "quarantine": tables["quarantine"], "people": people,
              "identifiers": identifiers, "pairs": links, "hubs": hubs, "blocking_report": tables["blocking_report"]}
    writer = None
    if early:
        writer = project.start_run()
        for name, frame in inputs.items():
            writer.add(name, frame)
    entities = timed("build_entities", build_entities, people, links, None, None)
    diagnostics = timed("entity_diagnostics", entity_diagnostics, entities, links)
    households = timed("build_households", build_households, entities, links, identifiers, people, hubs)
    groups, overlaps = timed("build_groups", build_groups, entities, links, identifiers, hubs)
    flags = timed("compute_signals", compute_signals, people, identifiers, entities, links, groups,
                  rules=None, today=today)
    queue = timed("build_queue", build_queue, entities, diagnostics, households, groups, links, flags)
    outputs = {"entities": entities, "diagnostics": diagnostics, "households": households,
               "groups": groups, "overlaps": overlaps, "flags": flags, "queue": queue}
    manifest = {"created": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"), "bench": True}
    documents = {"model.json": {"bench": True}}
    if writer is None:
        timed("save_run", project.save_run, {**inputs, **outputs}, manifest, documents=documents)
    else:
        def finish():
            for name, frame in outputs.items():
                writer.add(name, frame)
            return writer.finish(manifest, documents)

        timed("save_run", finish)
    return {"pairs": links, **outputs}


def _sorted(frame: pd.DataFrame, keys: list[str]) -> pd.DataFrame:
    return frame.sort_values(keys, kind="stable").reset_index(drop=True)


def _column_differences(name: str, column: str, got: pd.Series, want: pd.Series) -> list[str]:
    if pd.api.types.is_float_dtype(want.dtype) or pd.api.types.is_float_dtype(got.dtype):
        a = pd.to_numeric(got, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
        b = pd.to_numeric(want, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
        same = (a == b) | (np.isnan(a) & np.isnan(b))
        close = same | np.isclose(a, b, rtol=1e-12, atol=1e-12)
        if close.all() and not same.all():
            return [f"{name}.{column}: {int((~same).sum())} values differ below 1e-12"]
        same = close
    else:
        a = got.astype("string").fillna("\x00<NA>")
        b = want.astype("string").fillna("\x00<NA>")
        same = (a.to_numpy() == b.to_numpy())
    if same.all():
        return []
    bad = np.flatnonzero(~same)
    first = bad[0]
    return [f"{name}.{column}: {len(bad)} values differ, e.g. row {first}: got {got.iloc[first]!r}, "
            f"reference {want.iloc[first]!r}"]


def compare(outputs: dict[str, pd.DataFrame], reference: dict[str, pd.DataFrame],
            saved: dict[str, pd.DataFrame] | None = None) -> list[str]:
    """Differences between ``outputs`` and the reference tables (empty when identical)."""
    problems = []
    for name, keys in OUTPUTS.items():
        got, want = outputs[name], reference[name]
        if list(got.columns) != list(want.columns):
            problems.append(f"{name}: columns {list(got.columns)} vs reference {list(want.columns)}")
            continue
        if len(got) != len(want):
            problems.append(f"{name}: {len(got)} rows vs reference {len(want)}")
            continue
        if not got[keys].astype("string").reset_index(drop=True).equals(want[keys].astype("string")):
            problems.append(f"{name}: row order differs from the reference (values compared sorted)")
        a, b = _sorted(got, keys), _sorted(want, keys)
        for column in want.columns:
            problems += _column_differences(name, column, a[column], b[column])
        if saved is not None:
            if saved[name].dtypes.astype(str).tolist() != want.dtypes.astype(str).tolist():
                problems.append(f"{name}: saved dtypes {saved[name].dtypes.astype(str).tolist()} vs "
                                f"reference {want.dtypes.astype(str).tolist()}")
    return problems


def main() -> None:
    from resolve.clusters.codes import forget_all

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--fixture", type=Path, default=FIXTURE)
    parser.add_argument("--check", action="store_true", help="compare every output with the reference")
    parser.add_argument("--repeat", type=int, default=1, help="runs; the best time per function is kept")
    parser.add_argument("--profile", default=None, help="cProfile one function, e.g. compute_signals")
    parser.add_argument("--early", action="store_true",
                        help="write the input tables in the background from the start (RunWriter)")
    args = parser.parse_args()
    manifest = json.loads((args.fixture / "manifest.json").read_text())
    today = dt.date.fromisoformat(manifest["settings"]["today"])
    start = time.perf_counter()
    tables = load(args.fixture)
    print(f"inputs read in {time.perf_counter() - start:.1f} s; "
          f"{len(tables['people']):,} records, {len(tables['identifiers']):,} identifiers, "
          f"{len(tables['pairs']):,} links; RSS peak so far {_rss_mb():,.0f} MB", flush=True)
    best: dict[str, float] = {}
    for attempt in range(args.repeat):
        forget_all()  # each run starts without the codes a previous run kept
        timings: dict[str, float] = {}
        with tempfile.TemporaryDirectory(prefix="downstream-") as tmp:
            outputs = run_stages(tables, today, manifest["thresholds"], Path(tmp) / "project", timings,
                                 args.profile, args.early)
            run_dir = Path(tmp) / "project" / "runs" / "run-0001"
            if args.check and attempt == args.repeat - 1:
                saved = load(run_dir, list(OUTPUTS))
                schemas = {name: pq.read_schema(run_dir / f"{name}.parquet") for name in INPUTS + tuple(OUTPUTS)}
        for name, seconds in timings.items():
            best[name] = min(best.get(name, seconds), seconds)
        print(f"run {attempt + 1}: " + ", ".join(f"{k} {v:.2f}" for k, v in timings.items()), flush=True)
    stages = {
        "cluster": ("build_entities", "entity_diagnostics", "build_households", "build_groups"),
        "signals": ("compute_signals", "build_queue"),
        "save": ("save_run",),
    }
    print(f"\n{'function':<20} {'best s':>8}   (type_links is the link stage, not one of the three)")
    for name, seconds in best.items():
        print(f"{name:<20} {seconds:8.2f}")
    for stage, names in stages.items():
        print(f"{'stage ' + stage:<20} {sum(best[n] for n in names):8.2f}")
    print(f"{'three stages':<20} {sum(best[n] for names in stages.values() for n in names):8.2f}")
    print(f"peak RSS {_rss_mb():,.0f} MB; load {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    if args.check:
        reference = load(args.fixture, list(OUTPUTS))
        problems = compare(outputs, reference, saved)
        for name, schema in schemas.items():  # the saved files keep the reference's column types
            want = pq.read_schema(args.fixture / f"{name}.parquet")
            if [(f.name, str(f.type)) for f in schema] != [(f.name, str(f.type)) for f in want]:
                problems.append(f"{name}.parquet: schema {schema.remove_metadata()} vs reference "
                                f"{want.remove_metadata()}")
        print("check: identical to the reference" if not problems else "check: differences found")
        for line in problems:
            print("  " + line)


if __name__ == "__main__":
    main()
