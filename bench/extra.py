"""Extra figures for `make bench`: decision recording and the review workbench at 1M records.

Each runs its own script in a subprocess (bench/decision_speed.py, bench/tui_speed.py), on a
synthetic 1,000,000-record project those scripts build, and its printed figures are kept as
lines in the results. Set BENCH_EXTRA=0 to skip them.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

SCRIPTS = {"decisions": "bench.decision_speed", "review_workbench": "bench.tui_speed"}


def extra_benchmarks(cache: Path, seed: int) -> dict:
    if os.environ.get("BENCH_EXTRA", "1") == "0":
        return {}
    out = {}
    for name, module in SCRIPTS.items():
        proc = subprocess.run([sys.executable, "-m", module], capture_output=True, text=True,
                              cwd=Path(__file__).resolve().parent.parent)
        lines = [ln for ln in proc.stdout.splitlines() if ln.strip()]
        out[name] = lines[-60:] if proc.returncode == 0 else [f"failed: {proc.stderr[-300:]}"]
    return out
