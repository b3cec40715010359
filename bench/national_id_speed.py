"""Time the national ID normaliser on 1,000,000 invented IDs, mostly US SSNs (~95% distinct).

Usage: .venv/bin/python -m bench.national_id_speed [N]   (not a test)
Prints one line per case with the best of three runs (wall-clock and CPU time). The IDs are
random digit strings in mixed formats (invented, not taken from any records); about 5% of
the IDs repeat, as shared IDs would.
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd

from resolve.normalise.national_id import normalise_national_ids


def invented_ids(n: int, seed: int = 7) -> tuple[pd.Series, pd.Series]:
    """``n`` IDs (about 95% distinct) and a country per record (mostly US, some blank)."""
    rng = np.random.default_rng(seed)
    distinct = int(n * 0.95)
    digits = rng.integers(0, 10, size=(distinct, 9)).astype(np.uint8) + 48
    plain = digits.view("S9").ravel().astype(str)
    ids = plain[rng.integers(0, distinct, size=n)]
    ids[: distinct] = plain  # every distinct value appears at least once
    style = rng.random(n)
    dashed = style < 0.5
    ids = ids.astype(object)
    ids[dashed] = [f"{s[:3]}-{s[3:5]}-{s[5:]}" for s in ids[dashed]]
    spaced = (style >= 0.5) & (style < 0.6)
    ids[spaced] = [f"{s[:3]} {s[3:5]} {s[5:]}" for s in ids[spaced]]
    ids[style > 0.995] = "000-00-0000"
    ids[(style > 0.99) & (style <= 0.995)] = None
    country = np.where(rng.random(n) < 0.97, "US", None).astype(object)
    country[rng.random(n) < 0.01] = "CA"
    order = rng.permutation(n)
    return (pd.Series(ids[order], dtype="string"), pd.Series(country[order], dtype="string"))


def best_of(runs: int, func) -> str:
    """Best wall-clock and CPU time of ``runs`` calls, as text.

    CPU time is printed too because the benchmark machine may be shared: wall-clock time then
    includes waiting for a core.
    """
    wall, cpu = [], []
    for _ in range(runs):
        start, start_cpu = time.perf_counter(), time.process_time()
        func()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return f"{min(wall):.2f} s wall, {min(cpu):.2f} s CPU"


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    ids, country = invented_ids(n)
    distinct = ids.nunique()
    print(f"{n:,} IDs, {distinct:,} distinct ({distinct / n:.0%})")
    one_country = best_of(3, lambda: normalise_national_ids(ids, "US"))
    per_record = best_of(3, lambda: normalise_national_ids(ids, country))
    print(f"one country for all (country='US'):  {one_country}")
    print(f"country per record (Series, 97% US): {per_record}")


if __name__ == "__main__":
    main()
