"""Time `find_candidates` on invented data: by default 1,000,000 records.

Run with ``.venv/bin/python -m bench.blocking_speed [--records N] [--seed S]``.

The data are built with numpy from made-up syllables and random digits (no real names).
80% of the records are distinct invented persons; the other 20% are noisy copies of one of
them (a new phone or mailbox, a moved home, a shortened family name, day and month swapped,
a national ID with one digit changed, no national ID), each copy sharing only some values
with its original; 3% of all records have no birth date. On top: households share a landline
and an address, a call-centre number sits on 3,000 records, a placeholder mailbox on 1% of
records, and 1900-01-01 is used as a default birth date on 500 records.

The timing runs in a fresh subprocess after the tables are loaded from a Parquet cache
(bench/cache/), so the peak memory figure is the blocking stage's own plus the loaded tables.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
CACHE = HERE / "cache"
SYLLABLES = np.array("ka ri to ne sa mi lo ve da pe ru shi an el or is ta mo ha ji be co fu ge"
                     .split())


def _words(rng: np.random.Generator, n: int, lo: int, hi: int) -> np.ndarray:
    lengths = rng.integers(lo, hi + 1, size=n)
    out = np.full(n, "", dtype=object)
    for k in range(hi):
        out = np.where(lengths > k, out + SYLLABLES[rng.integers(0, SYLLABLES.size, n)], out)
    return out


def _sound(words: pd.Series) -> pd.Series:
    """A crude invented sound code: first letter plus the consonants, vowels dropped, 4 chars."""
    s = words.astype("string")
    rest = s.str.slice(1).str.replace(r"[aeiouy]", "", regex=True)
    return (s.str.slice(0, 1) + rest).str.slice(0, 4).str.upper()


def _digits(rng: np.random.Generator, n: int, width: int) -> pd.Series:
    return pd.Series(rng.integers(0, 10 ** width, n)).astype("string").str.zfill(width)


def _mutate_char(rng: np.random.Generator, s: pd.Series) -> pd.Series:
    """Change one random character position to a random digit/letter ('substitution')."""
    obj = s.to_numpy(dtype=object)
    pos = rng.integers(0, 9, len(obj))
    repl = np.array(list("0123456789"))[rng.integers(0, 10, len(obj))]
    out = [x[:p] + r + x[p + 1:] for x, p, r in zip(obj, pos, repl)]
    return pd.Series(out, dtype="string")


def make_tables(n: int, seed: int = 7) -> tuple[pd.DataFrame, pd.DataFrame]:
    """People and identifier tables of the contract's shape for ``n`` invented records."""
    rng = np.random.default_rng(seed)
    base_n = int(n * 0.8)
    dup_n = n - base_n
    given_pool = _words(rng, 5_000, 2, 3)
    family_pool = _words(rng, 80_000, 2, 4)
    street_pool = _words(rng, 20_000, 2, 3)

    # 1. distinct persons
    # skewed like real name lists (the most common family name ~2%, given name ~3%)
    given = given_pool[(given_pool.size * rng.random(base_n) ** 2.5).astype(np.int64)]
    family = family_pool[(family_pool.size * rng.random(base_n) ** 3).astype(np.int64)]
    year = rng.integers(1930, 2006, base_n)
    month = rng.integers(1, 13, base_n)
    day = rng.integers(1, 29, base_n)
    household = rng.integers(0, int(base_n * 0.75), base_n)  # ~25% share a household
    phone1 = _digits(rng, base_n, 10)
    phone2 = _digits(rng, int(base_n * 0.75), 10).to_numpy()[household]  # landline by household
    email1 = pd.Series(np.arange(base_n)).astype("string")
    email2 = pd.Series(np.arange(base_n) + base_n).astype("string")
    nid = _digits(rng, base_n, 9)
    postcode_of_house = rng.integers(0, 30_000, int(base_n * 0.75))
    house_no = rng.integers(1, 400, int(base_n * 0.75))
    street_of_house = street_pool[rng.integers(0, street_pool.size, int(base_n * 0.75))]

    # 2. duplicates: copies of a random person with noise, sharing only some values
    src = rng.integers(0, base_n, dup_n)
    idx = np.concatenate([np.arange(base_n), src])
    is_dup = np.r_[np.zeros(base_n, bool), np.ones(dup_n, bool)]
    g = given[idx].copy()
    f = family[idx].copy()
    y, m, d = year[idx].copy(), month[idx].copy(), day[idx].copy()
    r = rng.random((8, n))
    typo = is_dup & (r[0] < 0.15)
    f = np.where(typo, pd.Series(f).str.slice(0, -1).to_numpy(dtype=object), f)
    swap = is_dup & (r[1] < 0.05) & (d <= 12)
    m, d = np.where(swap, d, m), np.where(swap, m, d)
    p1 = phone1.to_numpy()[idx].copy()
    new_phone = is_dup & (r[2] < 0.5)
    p1[new_phone] = _digits(rng, int(new_phone.sum()), 10).to_numpy()
    e1 = email1.to_numpy()[idx].copy()
    new_mail = is_dup & (r[3] < 0.5)
    e1[new_mail] = pd.Series(np.arange(int(new_mail.sum())) + 2 * n).astype("string").to_numpy()
    e2 = email2.to_numpy()[idx].copy()
    e2[is_dup] = pd.Series(np.arange(dup_n) + 3 * n).astype("string").to_numpy()
    ids = nid.to_numpy()[idx].copy()
    id_typo = is_dup & (r[4] < 0.05)
    ids[id_typo] = _mutate_char(rng, pd.Series(ids[id_typo], dtype="string")).to_numpy()
    no_id = is_dup & (r[5] < 0.3)
    hh = household[idx]
    moved = is_dup & (r[6] < 0.4)
    hh = np.where(moved, rng.integers(0, int(base_n * 0.75), n), hh)
    p2 = phone2[idx]

    s = "string"
    gs = pd.Series(g, dtype=s)
    fs = pd.Series(f, dtype=s)
    bd = (pd.Series(y).astype(s) + "-" + pd.Series(m).astype(s).str.zfill(2) + "-"
          + pd.Series(d).astype(s).str.zfill(2))
    default_date = rng.choice(n, 500, replace=False)
    bd.iloc[default_date] = "1900-01-01"
    no_birth = r[7] < 0.03  # 3% of records carry no birth date at all
    bd[no_birth] = pd.NA
    postcode = ("P" + pd.Series(postcode_of_house[hh]).astype(s))
    people = pd.DataFrame({
        "record_id": ("C" + pd.Series(np.arange(n)).astype(s)).array,
        "given_key": gs.array, "given_root": gs.array, "given_initial": gs.str.slice(0, 1).array,
        "given_phonetic": _sound(gs).array,
        "family_key": fs.array, "family_core": fs.array,
        "family_first": fs.str.split(" ").str[0].astype(s).array,
        "family_phonetic": _sound(fs).array,
        "birth_date": bd.array,
        "birth_year": pd.array(np.where(no_birth, None, y), dtype="Int16"),
        "birth_month": pd.array(np.where(no_birth, None, m), dtype="Int8"),
        "birth_day": pd.array(np.where(no_birth, None, d), dtype="Int8"),
        "house_number": pd.Series(house_no[hh]).astype(s).array,
        "street_name": pd.Series(street_of_house[hh], dtype=s).array,
        "postcode": postcode.array, "country": pd.array(["US"] * n, dtype=s),
    }, index=pd.RangeIndex(n, name="rec"))
    people["address_key"] = (people["house_number"] + "|" + people["street_name"] + "|"
                             + people["postcode"])

    rec = np.arange(n, dtype=np.int32)
    phone_1 = "+1" + pd.Series(p1, dtype=s)
    phone_2 = "+1" + pd.Series(p2, dtype=s)
    call_centre = rng.choice(n, 3_000, replace=False)
    phone_2.iloc[call_centre] = "+18005550100"
    email_1 = "u" + pd.Series(e1, dtype=s) + "@mail.test"
    email_2 = "v" + pd.Series(e2, dtype=s) + "@post.test"
    placeholder = rng.random(n) < 0.01
    email_2[placeholder] = pd.NA
    nat = ("us_ssn:" + pd.Series(ids, dtype=s))
    nat[no_id] = pd.NA
    kinds = ["phone", "phone", "email", "email", "national_id", "address"]
    keys = [phone_1, phone_2, email_1, email_2, nat, people["address_key"].reset_index(drop=True)]
    status = [np.full(n, "valid", dtype=object) for _ in kinds]
    status[3] = np.where(placeholder, "placeholder", "valid").astype(object)
    status[4] = np.where(no_id, "missing", np.where(id_typo, "invalid", "valid")).astype(object)
    identifiers = pd.DataFrame({
        "rec": np.tile(rec, len(kinds)),
        "kind": pd.Categorical(np.repeat(kinds, n)),
        "key": pd.concat(keys, ignore_index=True).astype(s),
        "status": pd.Categorical(np.concatenate(status)),
    })
    return people, identifiers


def _cached(n: int, seed: int) -> tuple[Path, Path]:
    CACHE.mkdir(parents=True, exist_ok=True)
    p, i = CACHE / f"blocking-people-{n}-{seed}.parquet", CACHE / f"blocking-ids-{n}-{seed}.parquet"
    if not (p.exists() and i.exists()):
        t = time.perf_counter()
        people, identifiers = make_tables(n, seed)
        people.to_parquet(p)
        identifiers.to_parquet(i)
        print(f"generated {n:,} records in {time.perf_counter() - t:.1f} s", flush=True)
    return p, i


def _measure(people_path: str, ids_path: str) -> dict:
    from resolve.candidates import find_candidates

    people = pd.read_parquet(people_path)
    identifiers = pd.read_parquet(ids_path)
    loaded = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    t, c = time.perf_counter(), time.process_time()
    result = find_candidates(people, identifiers)
    seconds, cpu = time.perf_counter() - t, time.process_time() - c
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    report = result.report[["blocking_key", "pairs", "unique_pairs", "blocks", "largest_block",
                            "cap", "dropped_blocks", "dropped_records"]]
    return {"records": len(people), "identifier_rows": len(identifiers), "seconds": seconds,
            "cpu_seconds": cpu, "load_average": os.getloadavg()[0],
            "pairs": len(result.pairs), "hubs": len(result.hubs),
            "reduction_ratio": result.totals["reduction_ratio"],
            "peak_mb_after_load": loaded, "peak_mb": peak,
            "report": report.astype(object).where(report.notna(), None).to_dict("records")}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--records", type=int, default=1_000_000)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--measure", nargs=2, help=argparse.SUPPRESS)
    parser.add_argument("--generate", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.measure:
        print(json.dumps(_measure(*args.measure)))
        return
    if args.generate:
        _cached(args.records, args.seed)
        return
    # both steps in child processes: Linux keeps a process's peak memory across exec, so a
    # parent that built the tables would pass its own peak on to the measuring child
    run = [sys.executable, "-m", "bench.blocking_speed", "--records", str(args.records),
           "--seed", str(args.seed)]
    subprocess.run(run + ["--generate"], check=True, cwd=HERE.parent)
    p, i = _cached(args.records, args.seed)
    out = subprocess.run(run + ["--measure", str(p), str(i)], capture_output=True, text=True,
                         check=True, cwd=HERE.parent)
    res = json.loads(out.stdout.strip().splitlines()[-1])
    print(f"records {res['records']:,}  identifier rows {res['identifier_rows']:,}")
    print(f"find_candidates  {res['seconds']:.2f} s wall, {res['cpu_seconds']:.2f} s CPU "
          f"(machine load average {res['load_average']:.1f})")
    print(f"candidate pairs {res['pairs']:,}   "
          f"hub rows {res['hubs']:,}   RR {res['reduction_ratio']:.8f}")
    print(f"peak memory {res['peak_mb']:.0f} MB (after loading the tables: "
          f"{res['peak_mb_after_load']:.0f} MB)")
    print(pd.DataFrame(res["report"]).to_string(index=False))


if __name__ == "__main__":
    main()
