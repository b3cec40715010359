"""Agreement levels for birth dates, from the year, month and day columns.

Birth dates are typed by hand on most onboarding forms, so the near misses people make get
their own levels: day and month swapped (the US and European orders confused), a year off by
one, and one part mistyped. All checks are integer comparisons on aligned arrays.

Precedence: exact > day/month swapped > year off by one > one part differs > same year with
an incomplete date > different. Missing: no birth year on one side.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.compare.align import int_column
from resolve.compare.levels import BIRTH_DATE, DIFFERENT, MISSING


def date_parts(people: pd.DataFrame) -> np.ndarray:
    """Birth date per record packed into one int32: year << 9 | month << 5 | day.

    A missing month or day is stored as 0 (real months and days start at 1); a missing year
    makes the whole value -1. One small array gathers faster than three.
    """
    year = int_column(people, "birth_year")
    month = np.clip(int_column(people, "birth_month"), 0, 12)
    day = np.clip(int_column(people, "birth_day"), 0, 31)
    packed = (np.maximum(year, 0) << 9) | (month << 5) | day
    return np.where(year >= 0, packed, -1).astype(np.int32)


def compare_birth_dates(pa_: np.ndarray, pb_: np.ndarray) -> np.ndarray:
    """Birth-date levels (int8) from the packed dates of the two records of each pair."""
    code = BIRTH_DATE.code_of
    out = np.full(pa_.shape[0], DIFFERENT, dtype=np.int8)
    out[(pa_ < 0) | (pb_ < 0)] = MISSING
    present = np.flatnonzero(out != MISSING)
    x, y = pa_[present], pb_[present]
    ya, yb = x >> 9, y >> 9
    ma, mb = (x >> 5) & 15, (y >> 5) & 15
    da, db = x & 31, y & 31
    full = (ma > 0) & (mb > 0) & (da > 0) & (db > 0)
    same_y, same_m, same_d = ya == yb, ma == mb, da == db
    n_same = same_y.astype(np.int8) + same_m + same_d
    level = np.select(
        [
            full & (n_same == 3),
            full & same_y & (ma == db) & (da == mb) & (ma != da),
            full & same_m & same_d & (np.abs(ya - yb) == 1),
            full & (n_same == 2),
            ~full & same_y,
        ],
        [
            code("exact"),
            code("day_month_swapped"),
            code("year_off_by_one"),
            code("one_part"),
            code("same_year"),
        ],
        default=DIFFERENT,
    )
    out[present] = level
    return out
