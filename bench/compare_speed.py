"""Time `compare_pairs` on invented records: 1,000,000 people and 5,000,000 pairs.

Run with ``.venv/bin/python -m bench.compare_speed [--records N] [--pairs P]``. CPU time is
printed beside wall time because the machine may be shared (the load average is shown);
``--score`` also times `fit_model` and `score_pairs`. The data are random strings built
from syllables with a fixed seed (no real names). Half of the pairs are drawn inside small
groups that share a family name (like blocking output, many near misses), half uniformly
at random (nearly all different: the worst case for string similarity, since almost every
pair of names is distinct).
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np
import pandas as pd

from resolve.compare import compare_pairs, prepare_records

SYLLABLES = np.array(
    "ka ri to ne sa mi lo ve da pe ru shi an el or is ta mo ha ji be co fu ge".split()
)


def _words(rng: np.random.Generator, n: int, parts: tuple[int, int]) -> np.ndarray:
    lengths = rng.integers(parts[0], parts[1] + 1, size=n)
    out = np.full(n, "", dtype=object)
    for k in range(parts[1]):
        pick = SYLLABLES[rng.integers(0, SYLLABLES.size, size=n)]
        out = np.where(lengths > k, out + pick, out)
    return out


def make_people(n: int, seed: int = 7) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Invented people and identifier tables of the contract's shape."""
    rng = np.random.default_rng(seed)
    given_pool = _words(rng, 5_000, (2, 3))
    family_pool = _words(rng, 60_000, (2, 4))
    street_pool = _words(rng, 20_000, (2, 3))
    given = given_pool[rng.zipf(1.3, n) % given_pool.size]
    family = family_pool[rng.zipf(1.2, n) % family_pool.size]
    # sprinkle typos: drop one character in 5% of family names
    typo = rng.random(n) < 0.05
    family = np.where(typo, pd.Series(family).str.slice(1).to_numpy(object), family)
    year = rng.integers(1930, 2005, n)
    month = rng.integers(1, 13, n)
    day = rng.integers(1, 29, n)
    house = rng.integers(1, 300, n).astype(str)
    street = street_pool[rng.integers(0, street_pool.size, n)]
    postcode = np.char.add("P", (rng.integers(0, 5_000, n)).astype(str)).astype(object)
    city = np.char.add("C", (rng.integers(0, 500, n)).astype(str)).astype(object)
    s = "string"
    people = pd.DataFrame(
        {
            "record_id": pd.array(np.arange(n).astype(str), dtype=s),
            "given_key": pd.array(given, dtype=s),
            "given_root": pd.array(given, dtype=s),
            "given_initial": pd.array(pd.Series(given).str.slice(0, 1), dtype=s),
            "family_key": pd.array(family, dtype=s),
            "family_core": pd.array(family, dtype=s),
            "family_first": pd.array(family, dtype=s),
            "suffix": pd.array([None] * n, dtype=s),
            "birth_year": pd.array(year, dtype="Int16"),
            "birth_month": pd.array(month, dtype="Int8"),
            "birth_day": pd.array(day, dtype="Int8"),
            "house_number": pd.array(house, dtype=s),
            "street_name": pd.array(street, dtype=s),
            "postcode": pd.array(postcode, dtype=s),
            "city": pd.array(city, dtype=s),
        }
    )
    people["address_key"] = (
        people["house_number"] + "|" + people["street_name"] + "|" + people["postcode"]
    )
    phones = rng.integers(0, n, n)  # some numbers shared
    emails = rng.integers(0, 2 * n, n)
    ids = rng.integers(100_000_000, 999_999_999, n)
    rec = np.arange(n)
    identifiers = pd.DataFrame(
        {
            "rec": np.concatenate([rec, rec, rec]),
            "kind": np.repeat(["phone", "email", "national_id"], n),
            "key": np.concatenate(
                [
                    np.char.add("+1555", phones.astype(str)).astype(object),
                    np.char.add(np.char.add("u", emails.astype(str)), "@mail.test").astype(object),
                    np.char.add("us_ssn:", ids.astype(str)).astype(object),
                ]
            ),
            "status": "valid",
            "detail": np.concatenate(
                [np.where(rng.random(n) < 0.3, "fixed_line", "mobile"), [None] * n, ["ssn"] * n]
            ),
        }
    )
    identifiers = identifiers.astype({"kind": s, "key": s, "status": s, "detail": s})
    return people, identifiers


def make_pairs(people: pd.DataFrame, p: int, seed: int = 11) -> pd.DataFrame:
    """Half pairs within same-family-name groups, half uniformly random."""
    rng = np.random.default_rng(seed)
    n = len(people)
    order = np.argsort(people["family_key"].to_numpy(dtype=object), kind="stable")
    half = p // 2
    i = rng.integers(0, n - 20, half)
    a1, b1 = order[i], order[i + rng.integers(1, 20, half)]
    a2, b2 = rng.integers(0, n, p - half), rng.integers(0, n, p - half)
    a = np.concatenate([a1, a2])
    b = np.concatenate([b1, b2])
    keep = a != b
    lo, hi = np.minimum(a, b)[keep], np.maximum(a, b)[keep]
    return pd.DataFrame(
        {"rec_a": lo.astype(np.int32), "rec_b": hi.astype(np.int32), "keys": np.int32(1)}
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--pairs", type=int, default=5_000_000)
    parser.add_argument("--score", action="store_true", help="also time fit_model and score_pairs")
    args = parser.parse_args()

    people, identifiers = make_people(args.records)
    pairs = make_pairs(people, args.pairs)
    t0, c0 = time.perf_counter(), time.process_time()
    prepared = prepare_records(people, identifiers)
    t1, c1 = time.perf_counter(), time.process_time()
    compared = compare_pairs(pairs, prepared)
    t2, c2 = time.perf_counter(), time.process_time()
    print(f"records {len(people):,}  pairs {len(pairs):,}  load average {os.getloadavg()[0]:.1f}")
    print(f"prepare_records  wall {t1 - t0:6.2f} s  cpu {c1 - c0:6.2f} s")
    print(
        f"compare_pairs    wall {t2 - t1:6.2f} s  cpu {c2 - c1:6.2f} s"
        f"  ({len(pairs) / (t2 - t1) / 1e6:.2f} M pairs/s wall)"
    )
    if args.score:
        from resolve.scoring import fit_model, score_pairs

        t3, c3 = time.perf_counter(), time.process_time()
        model = fit_model(compared, prepared)
        t4, c4 = time.perf_counter(), time.process_time()
        score_pairs(compared, model, prepared)
        t5, c5 = time.perf_counter(), time.process_time()
        em = model.fit["em"]
        print(
            f"fit_model        wall {t4 - t3:6.2f} s  cpu {c4 - c3:6.2f} s"
            f"  ({model.fit['random_pairs']:,} random pairs, EM {em['iterations']} iterations,"
            f" {em['level_patterns']} level patterns)"
        )
        print(f"score_pairs      wall {t5 - t4:6.2f} s  cpu {c5 - c4:6.2f} s")
    print(compared.filter(like="lvl_").apply(lambda c: c.value_counts().sort_index()).fillna(0)
          .astype(int).to_string())


if __name__ == "__main__":
    main()
