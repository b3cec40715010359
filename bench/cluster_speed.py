"""Time link typing and clustering on a synthetic book of 1,000,000 records and ~3M pairs.

Not a test: run it by hand (``.venv/bin/python bench/cluster_speed.py [--records N]``). The
data is random numbers shaped like the real tables (people, identifiers, scored pairs): people
with one or more records, households sharing an address and sometimes a landline, random
low-probability candidate pairs, the per-field levels resolve.compare would write, and one
call-centre number on 1% of records that only the hub list knows about, so that every step
does realistic work. ``--all`` also times diagnostics, households, groups and the queue.
To time those stages and the saving of a run on the fixed 1M-record run folder, with a check
of every output against its reference tables, use ``bench/downstream_speed.py``.
"""

from __future__ import annotations

import argparse
import os
import time

import numpy as np
import pandas as pd

from resolve.compare.levels import (
    ADDRESS,
    BIRTH_DATE,
    DIFFERENT,
    EMAIL,
    FAMILY_NAME,
    GIVEN_NAME,
    MISSING,
    NATIONAL_ID,
    PHONE,
)


def _text(prefix: str, numbers: np.ndarray) -> pd.Series:
    return (prefix + pd.Series(numbers).astype("string")).astype("string")


def synthetic_book(n: int, seed: int = 0) -> tuple[pd.DataFrame, ...]:
    """Return (people, identifiers, pairs with levels and probabilities, hubs) for ``n`` records."""
    rng = np.random.default_rng(seed)
    person = np.sort(rng.integers(0, int(n * 0.7), n))  # ~0.7 people per record: duplicates
    _, person = np.unique(person, return_inverse=True)
    n_person = person.max() + 1
    home = rng.integers(0, int(n_person * 0.6), n_person)  # households of ~1.7 people
    given = rng.integers(0, 5000, n_person)
    family = rng.integers(0, 20000, n_person)
    birth = rng.integers(0, 25000, n_person)
    people = pd.DataFrame(
        {
            "record_id": _text("C", rng.permutation(n) + 10_000_000),
            "given_key": _text("g", given[person]),
            "given_root": _text("g", given[person]),
            "family_key": _text("f", family[person]),
            "family_core": _text("f", family[person]),
            "birth_date": _text("d", birth[person]),
            "address_key": _text("a", home[person]),
            "country": pd.Series(["US"] * n, dtype="string"),
            "created_at": pd.Series([pd.NA] * n, dtype="string"),
        }
    )
    rec = np.arange(n)
    has_nid = rng.random(n) < 0.8
    has_email = rng.random(n) < 0.7
    has_land = rng.random(n) < 0.3
    parts = [
        ("address", rec, _text("a", home[person]), "valid", pd.NA),
        ("phone", rec, _text("+1", 2_000_000_000 + person), "valid", "mobile"),
        ("phone", rec[has_land], _text("+1", 3_000_000_000 + home[person[has_land]]), "valid", "fixed_line"),
        ("email", rec[has_email], _text("m", person[has_email]) + "@example.com", "valid", pd.NA),
        ("national_id", rec[has_nid], _text("ssn:", 100_000_000 + person[has_nid]), "valid", "ssn"),
    ]
    identifiers = pd.concat(
        [
            pd.DataFrame({"rec": r, "kind": kind, "key": key.to_numpy(), "status": status, "detail": detail})
            for kind, r, key, status, detail in parts
        ],
        ignore_index=True,
    ).astype({"kind": "string", "key": "string", "status": "string", "detail": "string"})

    # pairs: consecutive records of one person (duplicates), consecutive records of one home
    # (households), then random pairs up to ~3 per record
    same = np.flatnonzero(person[1:] == person[:-1])
    order = np.argsort(home[person], kind="stable")
    hh = order[:-1][home[person[order[1:]]] == home[person[order[:-1]]]]
    hh_b = order[1:][home[person[order[1:]]] == home[person[order[:-1]]]]
    n_random = int(3.2 * n) - len(same) - len(hh)
    ra, rb = rng.integers(0, n, n_random), rng.integers(0, n, n_random)
    a = np.concatenate([same, hh, ra])
    b = np.concatenate([same + 1, hh_b, rb])
    a, b = np.minimum(a, b), np.maximum(a, b)
    keep = a != b
    key = np.unique(a[keep].astype(np.int64) * n + b[keep])
    a, b = (key // n).astype(np.int32), (key % n).astype(np.int32)
    same_person = person[a] == person[b]
    prob = np.where(same_person, rng.uniform(0.97, 1.0, len(a)), rng.beta(0.5, 6.0, len(a)))
    pairs = pd.DataFrame({"rec_a": a, "rec_b": b, "keys": np.ones(len(a), dtype=np.int32)})

    # per-field levels as resolve.compare would write them (exact agreement or different)
    def level(equal, both, exact):
        return np.where(both, np.where(equal, exact, DIFFERENT), MISSING).astype(np.int8)

    pa_, pb_ = person[a], person[b]
    same_home = home[pa_] == home[pb_]
    levels = {
        "given_name": level(given[pa_] == given[pb_], True, GIVEN_NAME.code_of("exact")),
        "family_name": level(family[pa_] == family[pb_], True, FAMILY_NAME.code_of("exact")),
        "suffix": level(False, False, 0),
        "birth_date": level(birth[pa_] == birth[pb_], True, BIRTH_DATE.code_of("exact")),
        "national_id": level(same_person, has_nid[a] & has_nid[b], NATIONAL_ID.code_of("exact")),
        "phone": np.where(
            same_person,
            PHONE.code_of("shared_mobile"),
            np.where(same_home & has_land[a] & has_land[b], PHONE.code_of("shared_fixed"), DIFFERENT),
        ).astype(np.int8),
        "email": level(same_person, has_email[a] & has_email[b], EMAIL.code_of("shared")),
        "address": level(same_home, True, ADDRESS.code_of("exact")),
    }
    # one call-centre number on 1% of records, which comparison does not know is a hub
    hub_holders = rng.choice(n, n // 100, replace=False)
    hub_rows = pd.DataFrame(
        {"rec": hub_holders, "kind": "phone", "key": "+18005550100", "status": "valid", "detail": "toll_free"}
    ).astype({"kind": "string", "key": "string", "status": "string", "detail": "string"})
    identifiers = pd.concat([identifiers, hub_rows], ignore_index=True)
    holds = np.zeros(n, dtype=bool)
    holds[hub_holders] = True
    both_hub = holds[a] & holds[b] & (levels["phone"] < PHONE.code_of("shared_fixed"))
    levels["phone"][both_hub] = PHONE.code_of("shared_fixed")
    for field, values in levels.items():
        pairs[f"lvl_{field}"] = values
    pairs["weight"] = np.log2(np.clip(prob, 1e-9, 1 - 1e-9) / np.clip(1 - prob, 1e-9, 1))
    pairs["prob"] = prob
    hubs = pd.DataFrame({"kind": ["phone"], "key": ["+18005550100"]}).astype("string")
    return people, identifiers, pairs, hubs


def main() -> None:
    from resolve.clusters import (
        build_entities,
        build_groups,
        build_households,
        build_queue,
        entity_diagnostics,
        stable_entity_ids,
    )
    from resolve.links import type_links

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--all", action="store_true", help="also time diagnostics, households, groups, queue")
    args = parser.parse_args()
    t = time.perf_counter()
    people, identifiers, pairs, hubs = synthetic_book(args.records)
    print(f"data: {len(people):,} records, {len(identifiers):,} identifiers, {len(pairs):,} pairs "
          f"(made in {time.perf_counter() - t:.1f} s)")
    timings = {}

    def timed(name, func, *a, **k):
        start, cpu = time.perf_counter(), time.process_time()
        out = func(*a, **k)
        timings[name] = time.perf_counter() - start
        print(f"{name:<20} {timings[name]:6.2f} s wall  {time.process_time() - cpu:6.2f} s cpu")
        return out

    links = timed("type_links", type_links, pairs, people, identifiers, {"auto": 0.99, "review": 0.5}, hubs)
    entities = timed("build_entities", build_entities, people, links)
    print(f"{'both':<20} {timings['type_links'] + timings['build_entities']:6.2f} s wall")
    print(f"machine load (1-minute average): {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    print(links["link_type"].value_counts().to_string())
    print(f"entities: {entities['entity_id'].nunique():,}")
    if args.all:
        diagnostics = timed("entity_diagnostics", entity_diagnostics, entities, links)
        households = timed("build_households", build_households, entities, links, identifiers, people, hubs)
        groups, _ = timed("build_groups", build_groups, entities, links, identifiers, hubs)
        queue = timed("build_queue", build_queue, entities, diagnostics, households, groups, links)
        timed("stable_entity_ids", stable_entity_ids, entities, entities)
        print(f"diagnostics rows {len(diagnostics):,}, households {households['household_id'].nunique():,}, "
              f"groups {groups['group_id'].nunique():,}, queue items {len(queue):,}")


if __name__ == "__main__":
    main()
