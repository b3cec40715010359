"""Person blocking keys: records that agree on a combination of name, birth-date and postcode.

Duplicates often share no identifier at all (a new phone, no email on one record, a national
ID missing from the older system), so these keys find them from the person fields instead.
Each key (listed in `registry`) names the `people` columns that must all be present and equal;
a record missing any of them takes no part in that key. Two keys pair only records whose
values are swapped: given and family name, or birth day and month.

Columns are factorised once and shared between keys; a key's block code is the combination of
its columns' codes, so no strings are built per record.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.candidates.groups import (BlockPairs, block_pairs, combine_codes, empty_pairs,
                                       factor_codes, members, two_sided_pairs)
from resolve.candidates.registry import KEY_SPECS
from resolve.candidates.settings import BlockingSettings


class _Columns:
    """Factorised `people` columns, computed on first use."""

    def __init__(self, people: pd.DataFrame):
        self.people = people
        self._codes: dict[str, np.ndarray] = {}

    def has(self, name: str) -> bool:
        return name in self.people.columns

    def codes(self, name: str) -> np.ndarray:
        if name not in self._codes:
            self._codes[name] = factor_codes(self.people[name])
        return self._codes[name]

    def ints(self, name: str) -> np.ndarray:
        """Integer column with -1 for missing."""
        col = pd.to_numeric(self.people[name], errors="coerce").astype("Float64")
        return col.fillna(-1).to_numpy(dtype=np.float64).astype(np.int64)

    def names_shared_vocabulary(self, first: str, second: str) -> tuple[np.ndarray, np.ndarray]:
        """Codes for two name columns drawn from one vocabulary, so values compare across them."""
        n = len(self.people)
        both = pd.concat([self.people[first], self.people[second]], ignore_index=True)
        codes = factor_codes(both.astype("string"))
        # codes from the joint vocabulary are valid codes for each column on its own too
        self._codes.setdefault(first, codes[:n])
        self._codes.setdefault(second, codes[n:])
        return self._codes[first], self._codes[second]


def _labels(people: pd.DataFrame, columns: tuple[str, ...], recs: np.ndarray) -> list[str]:
    """Readable block values: the columns of one record per block joined by ' | '."""
    if len(recs) == 0:
        return []
    rows = people.iloc[np.asarray(recs, dtype=np.int64)][list(columns)].astype("string")
    return rows.fillna("").agg(" | ".join, axis=1).tolist()


def person_blocks(people: pd.DataFrame, settings: BlockingSettings, selected: tuple[str, ...]
                  ) -> tuple[dict[str, BlockPairs], dict[str, str]]:
    """Run the person keys in ``selected``; returns their pairs and a note per skipped key.

    ``people`` must be in ``rec`` order (row i is record i).
    """
    n = len(people)
    rec = np.arange(n, dtype=np.int64)
    cols = _Columns(people)
    out: dict[str, BlockPairs] = {}
    notes: dict[str, str] = {}
    swap = [KEY_SPECS[k] for k in selected if KEY_SPECS[k].mode == "swap_names"]
    if swap and all(cols.has(c) for c in swap[0].columns[:2]):
        cols.names_shared_vocabulary(*swap[0].columns[:2])  # before the columns' own codes
    for name in selected:
        spec = KEY_SPECS[name]
        if spec.source != "person":
            continue
        absent = [c for c in spec.columns if not cols.has(c)]
        if absent:
            notes[name] = f"skipped: the people table has no column {absent[0]}"
            out[name] = empty_pairs()
            continue

        def cap_of(sizes, name=name):
            return settings.cap(name, sizes)

        if spec.mode == "equal":
            block = combine_codes(*(cols.codes(c) for c in spec.columns))
            bp = block_pairs(members(block, rec, n), cap_of)
        elif spec.mode == "swap_names":
            given_col, family_col, date_col = spec.columns
            g, f = cols.names_shared_vocabulary(given_col, family_col)
            lo, hi = np.minimum(g, f), np.maximum(g, f)
            side = np.where((g < 0) | (f < 0) | (g == f), -1, (g > f).astype(np.int64))
            block = combine_codes(lo, hi, cols.codes(date_col))
            bp = two_sided_pairs(block, side, rec, n, cap_of)
        elif spec.mode == "swap_day_month":
            given_col, family_col, year_col, month_col, day_col = spec.columns
            month, day = cols.ints(month_col), cols.ints(day_col)
            side = np.where((month < 0) | (day < 0) | (month == day), -1,
                            (month > day).astype(np.int64))
            block = combine_codes(cols.codes(given_col), cols.codes(family_col),
                                  cols.ints(year_col), np.minimum(month, day),
                                  np.maximum(month, day))
            bp = two_sided_pairs(block, side, rec, n, cap_of)
        elif spec.mode == "one_missing":
            *name_cols, optional = spec.columns
            block = combine_codes(*(cols.codes(c) for c in name_cols))
            side = (cols.codes(optional) >= 0).astype(np.int64)  # 0: value missing
            bp = two_sided_pairs(block, side, rec, n, cap_of, within_first=True)
        else:  # pragma: no cover - the registry only holds the modes above
            raise AssertionError(spec.mode)
        bp.dropped_labels = _labels(people, spec.columns, bp.dropped_rec)
        out[name] = bp
    return out, notes
