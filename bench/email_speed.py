"""Time `normalise_emails` on two million generated email addresses (not a test).

Usage: .venv/bin/python -m bench.email_speed [--rows N] [--seed S]

The addresses are invented from Faker's name and word lists (seeded): first.last,
initial+last, name with digits, some "+tag" subaddresses and capitals, mostly at large
consumer providers, the rest at made-up company domains, with a few internationalised
addresses, dummy values and typing errors; about three quarters are distinct. Prints the
time of `normalise_emails`, and the time email-validator alone would take per distinct
value, measured on a sample and extrapolated.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd
from email_validator import EmailNotValidError, validate_email
from faker import Faker

from resolve.normalise.email import normalise_emails

PROVIDERS = ["gmail.com", "yahoo.com", "hotmail.com", "outlook.com", "icloud.com", "aol.com",
             "googlemail.com", "protonmail.com", "live.com", "comcast.net"]  # fmt: skip
PROVIDER_SHARE = [0.32, 0.14, 0.08, 0.06, 0.04, 0.03, 0.01, 0.01, 0.02, 0.02]


def generate(rows: int, seed: int = 11) -> pd.Series:
    """Raw email strings as an Arrow-backed string Series."""
    fake = Faker("en_US")
    Faker.seed(seed)
    rng = np.random.default_rng(seed)
    first = np.array(sorted({fake.first_name().lower() for _ in range(3000)}), dtype=object)
    last = np.array(sorted({fake.last_name().lower() for _ in range(3000)}), dtype=object)
    words = sorted({fake.word().lower() for _ in range(3000)})
    companies = np.array([f"{a}{b}.{t}" for a, b, t in zip(words, words[1:] + words[:1],
                          ["com", "co.uk", "org", "net", "io"] * 1000)], dtype=object)  # fmt: skip

    pool = int(rows * 1.2)
    f = pd.Series(first[rng.integers(0, len(first), pool)])
    la = pd.Series(last[rng.integers(0, len(last), pool)])
    digits = pd.Series(rng.integers(1, 9999, pool)).astype(str)
    style = rng.integers(0, 5, pool)
    local = np.select(
        [style == 0, style == 1, style == 2, style == 3],
        [f + "." + la, f.str[0] + la, f + la + digits, f + "_" + la],
        default=la + "." + f + digits,
    )
    domain = np.where(
        rng.random(pool) < sum(PROVIDER_SHARE),
        rng.choice(PROVIDERS, pool, p=np.array(PROVIDER_SHARE) / sum(PROVIDER_SHARE)),
        companies[rng.integers(0, len(companies), pool)],
    )
    pick = rng.integers(0, pool, rows)
    local = pd.Series(local[pick])
    domain = pd.Series(domain[pick])
    tag = rng.random(rows) < 0.05
    tags = np.array(words, dtype=object)[rng.integers(0, 100, tag.sum())]
    local[tag] = local[tag] + "+" + tags
    caps = rng.random(rows) < 0.1
    local[caps] = local[caps].str.title()
    out = (local + "@" + domain).to_numpy(dtype=object)
    odd = rng.random(rows)
    dummies = np.array(["none@none.com", "noemail@gmail.com", "n/a", "", "test@test.com",
                        "x@x.com", "john.smith@gmail", "john..smith@gmail.com",
                        "jane doe@yahoo.com", "jürgen.müller@gmx.de", "josé@correo.es",
                        "Jane Doe <jane.doe@gmail.com>", "noreply@example.com"])  # fmt: skip
    junk = odd < 0.02
    out[junk] = rng.choice(dummies, int(junk.sum()))
    return pd.Series(out, dtype="string")


def reference_seconds_per_value(values: list[str]) -> float:
    """email-validator alone, one value at a time."""
    start = time.process_time()
    for text in values:
        try:
            validate_email(text, check_deliverability=False)
        except EmailNotValidError:
            pass
    return (time.process_time() - start) / max(1, len(values))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=2_000_000)
    parser.add_argument("--seed", type=int, default=11)
    parser.add_argument("--sample", type=int, default=20_000)
    args = parser.parse_args()

    raw = generate(args.rows, args.seed)
    distinct = raw.nunique()
    print(f"rows {len(raw):,}  distinct strings {distinct:,} ({distinct / len(raw):.0%})")
    normalise_emails(raw.head(1000))  # warm up
    wall, cpu = time.perf_counter(), time.process_time()
    result = normalise_emails(raw)
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    print(f"normalise_emails: {wall:.2f} s wall, {cpu:.2f} s CPU")
    print(result.groupby(["status", "reason"], dropna=False).size().to_string())
    sample = raw.dropna().drop_duplicates().sample(args.sample, random_state=1).tolist()
    per_value = reference_seconds_per_value(sample)
    print(
        f"email-validator per value: {per_value * 1e6:.1f} us -> {per_value * distinct:.1f} s "
        f"for the distinct values, {per_value * len(raw):.1f} s for every row"
    )


if __name__ == "__main__":
    main()
