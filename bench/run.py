"""`make bench`: generate demo extracts (cached by seed), run the pipeline, report figures.

For each size (100,000 and 1,000,000 records by default) the pipeline runs in a fresh
subprocess so that its peak memory (max RSS) is its own. Per stage wall time, records per
second, candidate pairs, peak memory and the evaluation figures against the demo ground truth
are printed as one table and written to bench/results.json. docs/benchmarks.md holds the
latest measured table and the machine it was measured on.

Usage: python -m bench.run [--sizes 100000,1000000] [--seed 7] [--only-size N]
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
CACHE = HERE / "cache"


def _generate(records: int, seed: int) -> Path:
    from resolve.demo import generate_demo

    out = CACHE / f"demo-{records}-{seed}"
    if not (out / "customers.csv").exists() or not (out / "truth.csv").exists():
        t = time.perf_counter()
        generate_demo(out, records=records, seed=seed)
        print(f"  generated {records:,} records in {time.perf_counter() - t:.1f}s", flush=True)
    return out


def measure_one(records: int, seed: int) -> dict:
    """Run in a subprocess: pipeline + evaluation for one size; returns figures."""
    import pandas as pd

    from resolve.evaluate import evaluate
    from resolve.pipeline import RunSettings, run_pipeline
    from resolve.project import Project

    from resolve.ingest.memory import keep_freed_memory

    keep_freed_memory()  # as `resolve run` does
    data = _generate(records, seed)
    project_dir = CACHE / f"project-{records}-{seed}"
    if project_dir.exists():
        import shutil

        shutil.rmtree(project_dir)
    t = time.perf_counter()
    summary = run_pipeline([data / "customers.csv"], project_dir,
                           settings=RunSettings(today="2026-12-01"))
    wall = time.perf_counter() - t
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    run = Project.open(project_dir).latest_run()
    truth = pd.read_csv(data / "truth.csv", dtype=str, keep_default_na=False)
    entities = run.table("entities", ["record_id", "entity_id"])
    households = run.table("households")
    hh_records = entities.merge(households[["entity_id", "household_id"]], on="entity_id")
    flags = run.table("flags")
    pairs = run.table("pairs", ["rec_a", "rec_b", "prob"])
    rid = entities.set_index("rec")["record_id"] if "rec" in entities else None
    if rid is None:
        rid = run.table("entities", ["rec", "record_id"]).set_index("rec")["record_id"]
    pairs = pd.DataFrame({"record_id_a": rid.to_numpy()[pairs["rec_a"].to_numpy()],
                          "record_id_b": rid.to_numpy()[pairs["rec_b"].to_numpy()],
                          "prob": pairs["prob"].to_numpy()})
    t = time.perf_counter()
    ev = evaluate(truth, entities, hh_records[["record_id", "household_id"]], flags, pairs)
    eval_s = time.perf_counter() - t
    return {
        "records": records, "wall_s": round(wall, 2), "records_per_s": round(records / wall),
        "peak_mb": round(peak_mb), "timings": summary.timings,
        "candidate_pairs": summary.candidate_pairs, "links": summary.links,
        "evaluation_s": round(eval_s, 2), "evaluation": ev,
    }


def _row(name, value):
    return f"  {name:<34}{value}"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(prog="make bench")
    ap.add_argument("--sizes", default=os.environ.get("BENCH_SIZES", "100000,1000000"))
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--only-size", type=int, default=None, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    CACHE.mkdir(parents=True, exist_ok=True)
    if args.only_size:
        print(json.dumps(measure_one(args.only_size, args.seed), default=str))
        return 0
    results = {"machine": {"python": platform.python_version(), "cpus": os.cpu_count(),
                           "platform": platform.platform()}, "runs": []}
    for size in [int(s) for s in args.sizes.split(",") if s]:
        print(f"size {size:,}:", flush=True)
        proc = subprocess.run([sys.executable, "-m", "bench.run", "--only-size", str(size),
                               "--seed", str(args.seed)], capture_output=True, text=True,
                              cwd=HERE.parent)
        if proc.returncode != 0:
            print(proc.stderr[-3000:], file=sys.stderr)
            return 1
        lines = proc.stdout.strip().splitlines()
        for line in lines[:-1]:
            print(line)
        res = json.loads(lines[-1])
        results["runs"].append(res)
        print(format_result(res), flush=True)
    from bench.extra import extra_benchmarks

    results["extra"] = extra_benchmarks(CACHE, args.seed)
    for name, lines in results["extra"].items():
        print(f"{name}:")
        for line in lines:
            print(f"  {line}")
    (HERE / "results.json").write_text(json.dumps(results, indent=2, default=str))
    print(f"wrote {HERE / 'results.json'}")
    return 0


def format_result(r: dict) -> str:
    ev = r["evaluation"]
    out = [_row("records", f"{r['records']:,}"),
           _row("pipeline wall", f"{r['wall_s']:.1f} s ({r['records_per_s']:,} records/s)"),
           _row("peak memory", f"{r['peak_mb']:,} MB")]
    for stage, secs in r["timings"].items():
        out.append(_row(f"  stage {stage}", f"{secs:.2f} s"))
    t = r["timings"]
    out.append(_row("ingest + normalise", f"{t.get('ingest', 0) + t.get('normalise', 0):.2f} s"))
    out.append(_row("candidates + compare + score",
                    f"{t.get('candidates', 0) + t.get('compare', 0) + t.get('score', 0):.2f} s"))
    out.append(_row("candidate pairs", f"{r['candidate_pairs']:,}"))
    sp = (ev.get("same_person") or {}).get("pairwise") or {}
    bc = (ev.get("same_person") or {}).get("bcubed") or {}
    hh = ev.get("households") or {}
    fl = ev.get("risk_flags") or {}
    bl = ev.get("blocking") or {}
    fmt = lambda v: "n/a" if v is None else f"{v:.4f}"  # noqa: E731
    out.append(_row("same-person pairwise P/R/F1",
                    f"{fmt(sp.get('precision'))} / {fmt(sp.get('recall'))} / {fmt(sp.get('f1'))}"))
    out.append(_row("same-person B-cubed P/R/F1",
                    f"{fmt(bc.get('precision'))} / {fmt(bc.get('recall'))} / {fmt(bc.get('f1'))}"))
    out.append(_row("household pairwise P/R/F1",
                    f"{fmt(hh.get('precision'))} / {fmt(hh.get('recall'))} / {fmt(hh.get('f1'))}"))
    out.append(_row("risk flags P/R",
                    f"{fmt(fl.get('precision'))} / {fmt(fl.get('recall'))}"))
    out.append(_row("blocking RR / PC",
                    f"{fmt(bl.get('reduction_ratio'))} / {fmt(bl.get('pairs_completeness'))}"))
    for t in ev.get("thresholds") or []:
        out.append(_row(f"  sweep t={t['threshold']}",
                        f"P {fmt(t['precision'])} R {fmt(t['recall'])} F1 {fmt(t['f1'])}"))
    out.append(_row("evaluation time", f"{r['evaluation_s']:.1f} s"))
    return "\n".join(out)


if __name__ == "__main__":
    sys.exit(main())
