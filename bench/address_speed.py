"""Time the address normaliser on 1,000,000 records with about 600,000 distinct street lines.

Run: .venv/bin/python bench/address_speed.py [--records N] [--distinct K]
Street names and towns are invented with Faker (seeded); lines are varied the way extracts
vary them (case, street-type spelling, unit position). A benchmark, not a test.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd
from faker import Faker

from resolve.normalise.address import normalise_addresses

TYPES = ["Street", "St", "St.", "Avenue", "Ave", "Road", "Rd", "Lane", "Drive", "Dr", "Court",
         "Boulevard", "Place", "Way", "Terrace", "Circle"]
UNITS = ["", "", "", " Apt {u}", " #{u}", " Suite {u}", ", Unit {u}"]
# Less common shapes, about one line in eight: unit first, a town after a comma, PO boxes.
ODD = ["Apt {u}, {line}", "Flat {u}, {line}", "{line}, {town}", "PO Box {n}", "P.O. Box {n}",
       "{line} Bldg {u} Apt {n}", "{line} Rear", "2nd Floor, {line}"]


def make_addresses(records: int, distinct: int, seed: int = 11) -> pd.DataFrame:
    """Invented street, city, postcode columns with about ``distinct`` distinct street lines."""
    fake = Faker("en_US")
    Faker.seed(seed)
    rng = np.random.default_rng(seed)
    names = sorted({fake.street_name().rsplit(" ", 1)[0] for _ in range(3000)})
    towns = sorted({fake.city() for _ in range(800)})
    lines = set()
    while len(lines) < distinct:
        k = distinct - len(lines)
        nums = rng.integers(1, 9999, k)
        picks = rng.integers(0, len(names), k)
        types = rng.integers(0, len(TYPES), k)
        units = rng.integers(0, len(UNITS), k)
        upper = rng.random(k) < 0.2
        odd = rng.integers(0, 8 * len(ODD), k)
        for num, p, t, u, up, o in zip(nums, picks, types, units, upper, odd):
            line = f"{num} {names[p]} {TYPES[t]}"
            if o < len(ODD):
                line = ODD[o].format(u=int(num) % 40 + 1, line=line, town=towns[p % len(towns)],
                                     n=int(num) % 97 + 1)
            else:
                line += UNITS[u].format(u=int(num) % 40 + 1)
            lines.add(line.upper() if up else line)
    lines = np.array(sorted(lines), dtype=object)
    # Every distinct line appears at least once; the rest repeat (households, re-registrations).
    idx = np.concatenate([np.arange(len(lines)), rng.integers(0, len(lines), records - len(lines))])
    rng.shuffle(idx)
    town_of_line = rng.integers(0, len(towns), len(lines))
    zips = np.array([f"{z:05d}" for z in rng.integers(501, 99950, len(towns))], dtype=object)
    zip_form = rng.random(records)
    postcode = zips[town_of_line[idx]]
    postcode = np.where(zip_form < 0.1, [z.lstrip("0") for z in postcode], postcode)
    return pd.DataFrame({
        "street": pd.array(lines[idx], dtype="string"),
        "city": pd.array(np.array(towns, dtype=object)[town_of_line[idx]], dtype="string"),
        "postcode": pd.array(postcode, dtype="string"),
    })


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--distinct", type=int, default=600_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    df = make_addresses(args.records, args.distinct)
    print(f"records {len(df):,}; distinct street lines {df['street'].nunique():,}")
    normalise_addresses(df["street"].head(1000), df["city"].head(1000), df["postcode"].head(1000))
    times, cpu = [], []
    for _ in range(args.repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        out = normalise_addresses(df["street"], df["city"], df["postcode"], "US")
        times.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    print(f"normalise_addresses: best {min(times):.2f} s, runs "
          + ", ".join(f"{t:.2f}" for t in times)
          + f"; CPU time best {min(cpu):.2f} s (wall time is inflated when other jobs share "
          "the cores)")
    print(out["status"].value_counts().to_string())
    print(f"distinct address keys {out['address_key'].nunique():,}")


if __name__ == "__main__":
    main()
