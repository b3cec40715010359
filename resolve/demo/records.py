"""Spread genuine persons over extract records: channels, opening dates and duplicates.

A person's first record (the earliest opened) is the `genuine` record; every later record of
the same person is a `duplicate`, opened at another time and often in another channel. The
record table carries a copy of the person's clean values, which `variation` then changes.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.demo.settings import (
    APP_LAUNCH, CHANNELS, DUPLICATE, GENUINE, HISTORY_START, REFERENCE_DATE, DemoRates,
)
from resolve.demo.vec import choose, day_number, put, text

PERSON_COLUMNS = [
    "country", "origin", "sex", "given", "middle", "family", "suffix", "birth", "house",
    "unit", "street", "street_short", "city", "postcode", "mobile", "landline", "email",
    "alt_email", "nid", "household", "hard_case",
]
REF_DAY = day_number(REFERENCE_DATE)
START_DAY = day_number(HISTORY_START)
APP_DAY = day_number(APP_LAUNCH)
ADULT_DAYS = int(18 * 365.25)


def channel_probs(rates: DemoRates) -> list[float]:
    """Shares of branch, app and card portfolio records."""
    return [1.0 - rates.app_share - rates.card_share, rates.app_share, rates.card_share]


def opening_days(rng: np.random.Generator, channel: np.ndarray, birth: np.ndarray,
                 latest: int = REF_DAY) -> np.ndarray:
    """Account opening days over about 15 years; the app only after its launch; adults only."""
    n = len(channel)
    start = np.where(channel == "app", APP_DAY, START_DAY)
    day = start + (rng.random(n) * np.maximum(latest - start, 1)).astype(np.int64)
    adult = birth + ADULT_DAYS + rng.integers(0, 200, n)
    return np.minimum(np.maximum(day, adult), latest)


def expand(rng: np.random.Generator, persons: pd.DataFrame, n_duplicates: int,
           rates: DemoRates) -> pd.DataFrame:
    """One record per person plus ``n_duplicates`` later records spread over some persons."""
    n_p = len(persons)
    extra = np.zeros(n_p, dtype=np.int64)
    if n_duplicates and n_p:
        n_with = min(n_p, max(1, int(round(n_duplicates / 1.3))))
        with_dup = rng.choice(n_p, n_with, replace=False)
        extra[with_dup] = 1
        rest = n_duplicates - n_with
        if rest > 0:
            np.add.at(extra, rng.choice(with_dup, rest), 1)
    counts = 1 + extra
    person = np.repeat(np.arange(n_p), counts)
    rank = np.arange(len(person)) - np.repeat(np.cumsum(counts) - counts, counts)
    records = persons.iloc[person][PERSON_COLUMNS].reset_index(drop=True)
    records.insert(0, "person", person)
    records.insert(1, "rank", rank)
    channel = choose(rng, CHANNELS, len(person), channel_probs(rates))
    records.insert(2, "channel", text(channel))
    birth = records["birth"].to_numpy()
    first = rank == 0
    created = np.zeros(len(person), dtype=np.int64)
    created[first] = opening_days(rng, channel[first], birth[first], latest=REF_DAY - 30)
    first_of_person = created[first][person]
    later = ~first
    span = np.maximum(REF_DAY - first_of_person[later] - 1, 1)
    dup_day = first_of_person[later] + 1 + (rng.random(later.sum()) * span).astype(np.int64)
    dup_day = np.where(channel[later] == "app", np.maximum(dup_day, APP_DAY), dup_day)
    created[later] = np.minimum(dup_day, REF_DAY)
    records["created"] = created
    records["label"] = text(np.where(first, GENUINE, DUPLICATE).astype(object))
    records["ring"] = np.full(len(person), -1, dtype=np.int64)
    records["clean_nid"] = records["nid"]
    records["birth_missing"] = np.zeros(len(person), dtype=bool)
    return records


def recopy(records: pd.DataFrame, persons: pd.DataFrame, persons_changed: np.ndarray,
           columns: list[str] | None = None) -> np.ndarray:
    """Copy changed persons' clean values onto all their records; returns the record rows."""
    rows = np.flatnonzero(np.isin(records["person"].to_numpy(), persons_changed))
    if len(rows):
        cols = columns or PERSON_COLUMNS
        src = persons.iloc[records["person"].to_numpy()[rows]][cols]
        for col in cols:
            put(records, rows, col, src[col].to_numpy() if src[col].dtype != "str" else src[col])
        if "nid" in cols:
            put(records, rows, "clean_nid", src["nid"])
    return rows
