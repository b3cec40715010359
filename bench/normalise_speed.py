"""Time ingest + normalise on a large extract and, with --check, compare with saved tables.

Run: .venv/bin/python bench/normalise_speed.py [--csv PATH] [--mapping TOML] [--check]
     [--reference RUN_FOLDER] [--workers N] [--repeat N] [--keep-freed-memory]

Defaults are the 1,000,000-record demo extract (bench/cache/demo-1000000-7, made by
bench/run.py) and the mapping and reference run folder in /work/notes/fixture-1m (when
there is no mapping file, the mapping is detected from the headers as a run would). The
script prints the wall time of each ingest and normalise step, the CPU time, and the peak
resident memory of the process. With --check it compares ``records``, ``quarantine``,
``people`` and ``identifiers`` with the Parquet tables of a run folder, the way a run saves
them (Arrow tables without the pandas index; string and large_string count as one type),
and reports every column that differs. This is a benchmark, not a test: timings on a shared
machine are noisy, so run it twice and read the better figures.
"""

from __future__ import annotations

import argparse
import datetime as dt
import resource
import sys
import time
from pathlib import Path

import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

import resolve.ingest as ingest_module
from resolve.ingest import IngestSettings, read_inputs
from resolve.ingest.memory import keep_freed_memory
from resolve.normalise.records import NormaliseSettings, normalise_records

ROOT = Path(__file__).resolve().parent
DEFAULT_CSV = ROOT / "cache" / "demo-1000000-7" / "customers.csv"
DEFAULT_NOTES = Path("/work/notes/fixture-1m")
TABLES = ("records", "quarantine", "people", "identifiers")


def _timed_ingest(paths, mapping, timings: dict) -> ingest_module.IngestResult:
    """read_inputs with its three inner steps timed (wrapped for this run only)."""
    wrapped = {"read_any": "read file", "_map_rows": "map rows",
               "_quarantine_duplicate_ids": "duplicate IDs"}
    originals = {name: getattr(ingest_module, name) for name in wrapped}

    def wrap(name, label):
        inner = originals[name]

        def timed(*args, **kwargs):
            start = time.perf_counter()
            try:
                return inner(*args, **kwargs)
            finally:
                timings[label] = timings.get(label, 0.0) + time.perf_counter() - start
        return timed

    for name, label in wrapped.items():
        setattr(ingest_module, name, wrap(name, label))
    try:
        return read_inputs(paths, mapping, IngestSettings())
    finally:
        for name, inner in originals.items():
            setattr(ingest_module, name, inner)


def _normalised_table(frame) -> pa.Table:
    """A frame as a run folder saves it, with every string column as large_string."""
    table = pa.Table.from_pandas(frame, preserve_index=False)
    fields = []
    for f in table.schema:
        t = f.type
        if pa.types.is_string(t):
            t = pa.large_string()
        elif pa.types.is_dictionary(t) and pa.types.is_string(t.value_type):
            t = pa.dictionary(t.index_type, pa.large_string())
        fields.append(pa.field(f.name, t))
    return table.cast(pa.schema(fields)).replace_schema_metadata(None)


def compare(name: str, mine, reference_path: Path) -> list[str]:
    """Differences between a frame and a saved table, as readable lines (empty: identical)."""
    saved = pq.read_table(reference_path)
    ref = _normalised_table(saved.to_pandas())
    got = _normalised_table(mine)
    problems = []
    # The pandas dtypes, as the run folder records them (e.g. Int16 vs int16, string vs str).
    want = {c["name"]: (c["pandas_type"], c["numpy_type"])
            for c in saved.schema.pandas_metadata["columns"]}
    have = {c["name"]: (c["pandas_type"], c["numpy_type"])
            for c in pa.Table.from_pandas(mine, preserve_index=False).schema
            .pandas_metadata["columns"]}
    for column, kind in want.items():
        if column in have and have[column] != kind:
            problems.append(f"{name}.{column}: pandas dtype {have[column]}, reference {kind}")
    if ref.num_rows != got.num_rows:
        problems.append(f"{name}: {got.num_rows} rows, reference {ref.num_rows}")
    if ref.column_names != got.column_names:
        problems.append(f"{name}: columns {got.column_names}, reference {ref.column_names}")
    for column in ref.column_names:
        if column not in got.column_names or ref.num_rows != got.num_rows:
            continue
        a, b = got.column(column), ref.column(column)
        if a.type != b.type:
            problems.append(f"{name}.{column}: type {a.type}, reference {b.type}")
            continue
        if a.equals(b):
            continue
        if pa.types.is_dictionary(a.type):
            a, b = a.cast(a.type.value_type), b.cast(b.type.value_type)
        same = pc.fill_null(pc.equal(a, b), False)
        same = pc.or_(same, pc.and_(pc.is_null(a), pc.is_null(b)))
        bad = pc.invert(same).to_numpy(zero_copy_only=False).nonzero()[0]
        if len(bad) == 0:
            problems.append(f"{name}.{column}: same values, different dictionary or chunks")
            continue
        examples = ", ".join(f"row {i}: {a[i].as_py()!r} vs {b[i].as_py()!r}" for i in bad[:3])
        problems.append(f"{name}.{column}: {len(bad)} rows differ ({examples})")
    return problems


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--csv", type=Path, default=DEFAULT_CSV)
    parser.add_argument("--mapping", type=Path, default=None,
                        help="mapping TOML (default: the reference folder's, else detected)")
    parser.add_argument("--reference", type=Path, default=DEFAULT_NOTES,
                        help="run folder holding the reference Parquet tables")
    parser.add_argument("--today", default="2026-12-01")
    parser.add_argument("--workers", type=int, default=None,
                        help="threads for the normaliser jobs (default: usable cores, max 4)")
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--check", action="store_true", help="compare with --reference")
    parser.add_argument("--keep-freed-memory", action="store_true",
                        help="let the C library reuse freed memory (resolve.ingest.memory)")
    args = parser.parse_args()
    if args.keep_freed_memory and not keep_freed_memory():
        print("the C library is not glibc: --keep-freed-memory changes nothing here")
    if not args.csv.exists():
        print(f"{args.csv} not found; make it with bench/run.py first.")
        return 2
    today = dt.date.fromisoformat(args.today)
    if args.mapping is None and (args.reference / "mapping.toml").exists():
        args.mapping = args.reference / "mapping.toml"
    ingest = norm = None
    for attempt in range(1, args.repeat + 1):
        ingest = norm = None  # free the previous run before timing the next
        timings: dict[str, float] = {}
        start, cpu = time.perf_counter(), time.process_time()
        ingest = _timed_ingest([args.csv], args.mapping, timings)
        ingest_wall = time.perf_counter() - start
        country = ingest.mapping.defaults.get("country", "US")
        steps: dict[str, float] = {}
        mid = time.perf_counter()
        norm = normalise_records(ingest.records,
                                 NormaliseSettings(default_country=country, today=today),
                                 timings=steps, workers=args.workers)
        normalise_wall = time.perf_counter() - mid
        total, cpu = time.perf_counter() - start, time.process_time() - cpu
        peak_kib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # Linux: KiB
        peak = peak_kib / 1024 / 1024
        print(f"run {attempt}: {len(ingest.records):,} records, "
              f"{len(norm.identifiers):,} identifier rows")
        print(f"  ingest     {ingest_wall:6.2f} s  " + "  ".join(
            f"{k} {v:.2f}" for k, v in timings.items()))
        print(f"  normalise  {normalise_wall:6.2f} s")
        for k, v in steps.items():
            print(f"    {k:14s} {v:6.2f} s")
        use = resource.getrusage(resource.RUSAGE_SELF)
        print(f"  total      {total:6.2f} s wall, {cpu:.2f} s CPU; peak RSS {peak:.2f} GiB "
              f"= {peak_kib * 1024 / 1e9:.2f} GB "
              f"(process so far: user {use.ru_utime:.1f} s, system {use.ru_stime:.1f} s)")
        if attempt > 1:
            print("  (the peak of a repeat includes memory kept from the runs before it)")
    if not args.check:
        return 0
    tables = {"records": ingest.records, "quarantine": ingest.quarantine,
              "people": norm.people, "identifiers": norm.identifiers}
    problems = []
    for name in TABLES:
        path = args.reference / f"{name}.parquet"
        if not path.exists():
            problems.append(f"{name}: no reference table at {path}")
            continue
        problems.extend(compare(name, tables[name], path))
    if problems:
        print("check: DIFFERENT")
        for line in problems:
            print("  " + line)
        return 1
    print(f"check: identical to {args.reference} ({', '.join(TABLES)})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
