"""Time the name normaliser on 1,000,000 records with about 50,000 distinct names.

Run: .venv/bin/python bench/names_speed.py [--records N] [--distinct K]
Names are invented with Faker (seeded) and varied in case and spacing the way extracts are.
This is a benchmark, not a test: it prints timings and checks nothing.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd
from faker import Faker

from resolve.normalise.names import normalise_names


def make_names(records: int, distinct: int, seed: int = 7) -> tuple[pd.Series, pd.Series]:
    """Invented given and family columns with about ``distinct`` distinct values each."""
    fake = Faker(["en_US", "en_GB", "es_ES", "fr_FR", "de_DE", "it_IT"])
    Faker.seed(seed)
    rng = np.random.default_rng(seed)
    given_pool = {fake.first_name() for _ in range(distinct // 4)}
    family_pool = {fake.last_name() for _ in range(distinct // 2)}
    given_pool, family_pool = sorted(given_pool), sorted(family_pool)

    def vary(pool: list[str], want: int) -> np.ndarray:
        out = set(pool)
        while len(out) < want:
            name = pool[rng.integers(len(pool))]
            style = rng.integers(4)
            out.add(name.upper() if style == 0 else name.lower() if style == 1
                    else f" {name} " if style == 2 else f"{name} {pool[rng.integers(len(pool))]}")
        return np.array(sorted(out), dtype=object)

    givens = vary(given_pool, distinct // 2)
    families = vary(family_pool, distinct // 2)

    # Every distinct value appears at least once; the rest follow a Zipf-like reuse
    # (common names are common).
    def draw(k: int, a: float) -> np.ndarray:
        common = np.minimum(rng.zipf(a, records - k) - 1, k - 1)
        picks = np.concatenate([np.arange(k), rng.permutation(k)[common]])
        return rng.permutation(picks)

    gi, fi = draw(len(givens), 1.3), draw(len(families), 1.2)
    return pd.Series(givens[gi], dtype="string"), pd.Series(families[fi], dtype="string")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--distinct", type=int, default=50_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    given, family = make_names(args.records, args.distinct)
    print(f"records {len(given):,}; distinct given {given.nunique():,}, "
          f"distinct family {family.nunique():,}")
    normalise_names(given.head(1000), family.head(1000))  # warm up (table load, regex compile)
    times, cpu = [], []
    for _ in range(args.repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        out = normalise_names(given, family)
        times.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    print(f"normalise_names: best {min(times):.2f} s, runs " + ", ".join(f"{t:.2f}" for t in times)
          + f"; CPU time best {min(cpu):.2f} s (wall time is inflated when other jobs share "
          "the cores)")
    print(out["status"].value_counts().to_string())


if __name__ == "__main__":
    main()
