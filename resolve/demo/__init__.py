"""Demo scenario generator: an invented customer extract with a ground-truth answer key.

Every later measurement of resolve (blocking recall, match quality, flags) is taken against
this scenario, so it is built to be known exactly: a fictional credit union merging an
acquired card portfolio with its branch and app records, with duplicates, households,
synthetic identity rings, placeholder values and hard cases at set rates. The extract
(`customers.csv`) uses header names of its own; `truth.csv` says what every record really is.
All people, institutions and domains are invented (drawn from Faker pools with a seed).

Public entry point: `generate_demo`.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from resolve.demo.hard_cases import apply_hard_cases
from resolve.demo.people import draw_persons, form_households
from resolve.demo.pools import build_pools
from resolve.demo.records import expand
from resolve.demo.render import render
from resolve.demo.rings import build_rings
from resolve.demo.settings import (
    CHANNELS, EXTRACT_COLUMNS, HARD_CASES, LABELS, TRUTH_COLUMNS, VARIATION_TAGS, DemoRates,
    DemoSettingsError, DemoSummary,
)
from resolve.demo.variation import add_placeholders, vary
from resolve.demo.vec import Tags, text
from resolve.demo.writer import count_labels, order_rows, readme_text, record_ids, truth_table, write_all

__all__ = [
    "generate_demo", "DemoRates", "DemoSummary", "DemoSettingsError", "CHANNELS", "LABELS",
    "HARD_CASES", "EXTRACT_COLUMNS", "TRUTH_COLUMNS", "VARIATION_TAGS",
]

MIN_RECORDS = 20
MAX_RECORDS = 20_000_000
_FLAGS = ("upper", "stray", "abbrev", "alt_date", "alt_phone", "alt_id")


def generate_demo(
    out_dir: str | Path,
    records: int = 10_000,
    seed: int = 7,
    rates: DemoRates | None = None,
    hard_cases: bool = True,
) -> DemoSummary:
    """Write ``customers.csv``, ``truth.csv`` and ``README.txt`` for the demo into ``out_dir``.

    ``records`` is the exact number of extract rows; ``seed`` fixes every random choice (the
    same seed and settings give byte-identical files); ``rates`` sets the shares and
    messiness rates (defaults: `DemoRates()`); ``hard_cases`` adds the small hard-case groups.
    Returns a `DemoSummary` with counts per label and hard case and the file paths.
    """
    if isinstance(records, bool) or not isinstance(records, (int, np.integer)):
        raise DemoSettingsError(f"The record count must be a whole number, not {records!r}.")
    if not MIN_RECORDS <= int(records) <= MAX_RECORDS:
        raise DemoSettingsError(
            f"The record count must be between {MIN_RECORDS:,} and {MAX_RECORDS:,}; "
            f"{int(records):,} was asked."
        )
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise DemoSettingsError(f"The seed must be a whole number of 0 or more, not {seed!r}.")
    records = int(records)
    rates = rates or DemoRates()
    pools = build_pools()
    rng = [np.random.default_rng(s) for s in np.random.SeedSequence(int(seed)).spawn(9)]

    n_ring_target = int(round(records * rates.ring_share))
    n_dup_target = int(round(records * rates.duplicate_share))
    n_persons = max(1, records - n_ring_target - n_dup_target)
    persons = draw_persons(rng[0], n_persons, rates, pools)
    next_household = form_households(rng[1], persons, rates.household_share, pools)
    rings, ring_tags, n_rings = build_rings(rng[2], n_ring_target, persons, pools, n_persons)
    n_dup = max(0, records - n_persons - len(rings))

    genuine = expand(rng[3], persons, n_dup, rates)
    tags = Tags(len(genuine))
    if hard_cases:
        apply_hard_cases(rng[4], persons, genuine, tags, rates.hard_case_share, pools, next_household)
    vary(rng[5], genuine, tags, rates, pools)
    add_placeholders(rng[6], genuine, tags, int(round(records * rates.placeholder_share)), pools)
    genuine["variation"] = tags.render().to_numpy()
    if len(rings):
        rings["variation"] = ring_tags.render().to_numpy()
        for flag in _FLAGS:
            rings[flag] = np.zeros(len(rings), dtype=bool)
        all_records = pd.concat([genuine, rings[genuine.columns]], ignore_index=True)
    else:
        all_records = genuine

    order = order_rows(rng[7], all_records["channel"].to_numpy(), all_records["created"].to_numpy())
    all_records = all_records.iloc[order].reset_index(drop=True)
    columns = render(rng[8], all_records)
    rid = record_ids(all_records["channel"].to_numpy())
    extract = pd.DataFrame({"Cust No": text(rid), **columns})
    truth = truth_table(all_records, rid)
    labels, hard = count_labels(truth)
    households = int(truth["household_id"][truth["household_id"] != ""].nunique())
    readme = readme_text(records, int(truth["person_id"].nunique()), households, n_rings, int(seed),
                         labels, rates)
    files = write_all(Path(out_dir), extract, truth, readme)
    return DemoSummary(
        out_dir=Path(out_dir),
        records=len(truth),
        persons=int(truth["person_id"].nunique()),
        households=households,
        rings=n_rings,
        seed=int(seed),
        labels=labels,
        hard_cases=hard,
        files=files,
    )
