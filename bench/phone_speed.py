"""Time `normalise_phones` on two million generated phone strings (not a test).

Usage: .venv/bin/python -m bench.phone_speed [--rows N] [--seed S]

The strings are invented: random NANP numbers (mostly US, some Canadian), UK London and
mobile numbers, written in a dozen common formats, with some extensions and dummy values,
about three quarters of them distinct. Prints the time of `normalise_phones` with a
per-record region column and with one default region, and the time phonenumbers alone
would take (parse + is_valid_number + number_type + format_number per distinct value),
measured on a sample and extrapolated.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd
import phonenumbers

from resolve.normalise.phone import normalise_phones

CA_AREAS = np.array([204, 226, 236, 250, 289, 306, 403, 416, 418, 437, 438, 450, 506, 514,
                     519, 587, 604, 613, 647, 705, 709, 778, 780, 807, 819, 825, 867, 902,
                     905])  # fmt: skip


def _us_area_codes() -> np.ndarray:
    """Area codes the reference library accepts for the US (read from its metadata)."""
    valid = []
    for npa in range(201, 990):
        number = phonenumbers.parse(f"+1{npa}2345678")
        if phonenumbers.region_code_for_number(number) == "US":
            valid.append(npa)
    return np.array(valid)


def _digits(rng, low, high, size, width):
    return pd.Series(rng.integers(low, high, size)).astype(str).str.zfill(width)


def generate(rows: int, seed: int = 7) -> tuple[pd.Series, pd.Series]:
    """Raw phone strings and the record's country, as Arrow-backed string Series."""
    rng = np.random.default_rng(seed)
    pool = int(rows * 0.32)
    country = rng.choice(np.array(["US", "CA", "GB"]), size=pool, p=[0.85, 0.08, 0.07])
    area = pd.Series(rng.choice(_us_area_codes(), pool)).astype(str)
    unassigned = rng.random(pool) < 0.05  # some made-up area codes
    area[unassigned] = _digits(rng, 201, 990, int(unassigned.sum()), 3).to_numpy()
    is_ca = country == "CA"
    area[is_ca] = rng.choice(CA_AREAS, is_ca.sum()).astype(str)
    exchange = _digits(rng, 200, 1000, pool, 3)
    line = _digits(rng, 0, 10000, pool, 4)
    gb_mobile = "7" + _digits(rng, 400, 1000, pool, 3) + _digits(rng, 0, 1000000, pool, 6)
    gb_london = "20" + _digits(rng, 7000, 9000, pool, 4) + _digits(rng, 0, 10000, pool, 4)
    gb = np.where(rng.random(pool) < 0.6, gb_mobile, gb_london)

    pick = rng.integers(0, pool, rows)
    c = country[pick]
    a, e, ln, g = (pd.Series(np.asarray(x, dtype=object)[pick]) for x in (area, exchange, line, gb))
    fmt = rng.choice(10, rows, p=[0.3, 0.2, 0.05, 0.15, 0.1, 0.05, 0.05, 0.03, 0.04, 0.03])
    nanp = [
        "(" + a + ") " + e + "-" + ln,
        a + "-" + e + "-" + ln,
        a + "." + e + "." + ln,
        a + e + ln,
        "+1 " + a + " " + e + " " + ln,
        "1-" + a + "-" + e + "-" + ln,
        "+1" + a + e + ln,
        "1 (" + a + ") " + e + "-" + ln,
        a + " " + e + " " + ln,
        "(" + a + ")" + e + "-" + ln + " x" + ln.str[:3],
    ]
    uk = [
        "0" + g.str[:4] + " " + g.str[4:],
        "+44 " + g.str[:4] + " " + g.str[4:],
        "+44" + g,
        "0" + g,
        "0044 " + g,
        "+44 (0)" + g.str[:2] + " " + g.str[2:],
        "0" + g.str[:2] + " " + g.str[2:6] + " " + g.str[6:],
        "011 44 " + g,
        "+44-" + g.str[:3] + "-" + g.str[3:],
        "0" + g + " ext. 12",
    ]
    out = np.empty(rows, dtype=object)
    for k in range(10):
        rows_k = fmt == k
        us_k = rows_k & (c != "GB")
        uk_k = rows_k & (c == "GB")
        out[us_k] = np.asarray(nanp[k], dtype=object)[us_k]
        out[uk_k] = np.asarray(uk[k], dtype=object)[uk_k]
    junk = rng.random(rows)
    dummies = np.array(["0000000000", "555-555-5555", "n/a", "", "123-456-7890", "none",
                        "+1 (212) 555-0199", "1-800-FLOWERS", "9999999999",
                        "tel 555 1234"])  # fmt: skip
    out[junk < 0.02] = rng.choice(dummies, int((junk < 0.02).sum()))
    region = np.where(rng.random(rows) < 0.02, None, c)  # some records without a country
    return pd.Series(out, dtype="string"), pd.Series(region, dtype="string")


def reference_seconds_per_value(values: list[str], regions: list[str]) -> float:
    """phonenumbers alone: parse, validate, type and format one value."""
    start = time.process_time()
    for text, region in zip(values, regions):
        try:
            number = phonenumbers.parse(text, region or "US")
        except phonenumbers.NumberParseException:
            continue
        phonenumbers.is_valid_number(number)
        phonenumbers.number_type(number)
        phonenumbers.format_number(number, phonenumbers.PhoneNumberFormat.E164)
    return (time.process_time() - start) / max(1, len(values))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=2_000_000)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--sample", type=int, default=20_000)
    args = parser.parse_args()

    raw, region = generate(args.rows, args.seed)
    distinct = raw.nunique()
    print(f"rows {len(raw):,}  distinct strings {distinct:,} ({distinct / len(raw):.0%})")

    normalise_phones(raw.head(1000), region.head(1000))  # warm the metadata caches
    wall, cpu = time.perf_counter(), time.process_time()
    result = normalise_phones(raw, region)
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    print(f"normalise_phones, per-record region: {wall:.2f} s wall, {cpu:.2f} s CPU")
    wall, cpu = time.perf_counter(), time.process_time()
    normalise_phones(raw, "US")
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    print(f"normalise_phones, default region US: {wall:.2f} s wall, {cpu:.2f} s CPU")
    print(result["status"].value_counts().to_string())

    sample = raw.dropna().drop_duplicates().sample(args.sample, random_state=1)
    sample_regions = region.loc[sample.index].fillna("US")
    per_value = reference_seconds_per_value(sample.tolist(), sample_regions.tolist())
    print(
        f"phonenumbers per value: {per_value * 1e6:.1f} us -> {per_value * distinct:.1f} s "
        f"for the distinct values, {per_value * len(raw):.1f} s for every row"
    )


if __name__ == "__main__":
    main()
