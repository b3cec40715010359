"""Per-field agreement levels for candidate record pairs.

`compare_pairs` turns candidate pairs into one small integer per field (`lvl_<field>`),
following the level catalogue in `resolve.compare.levels`: 0 missing, 1 different, higher
numbers for stronger agreement. The scoring stage turns levels into match weights.

The people and identifier tables are prepared once (`prepare_records`: values factorised to
integer codes, identifier values laid out per record); comparing any set of pairs against a
prepared run is then vectorised work over aligned arrays. The scoring stage reuses one
preparation to compare both the candidate pairs and a random sample of record pairs.
"""

from __future__ import annotations

from typing import Any, Mapping

import pandas as pd

from resolve.compare.align import CompareSettings, pair_arrays
from resolve.compare.levels import FIELD_BY_NAME, FIELDS, FieldSpec, Level, field_spec
from resolve.compare.records import PreparedRecords, as_prepared, prepare_records

__all__ = [
    "FIELDS",
    "FIELD_BY_NAME",
    "CompareSettings",
    "FieldSpec",
    "Level",
    "PreparedRecords",
    "compare_pairs",
    "field_spec",
    "level_columns",
    "prepare_records",
]


def level_columns() -> list[str]:
    """The `lvl_` column names `compare_pairs` adds, in catalogue order."""
    return [spec.column for spec in FIELDS]


def compare_pairs(
    pairs: pd.DataFrame,
    people: pd.DataFrame | PreparedRecords,
    identifiers: pd.DataFrame | None = None,
    settings: CompareSettings | Mapping[str, Any] | None = None,
) -> pd.DataFrame:
    """Add one int8 agreement-level column per field to the candidate pairs.

    ``pairs`` holds ``rec_a`` < ``rec_b`` (and any other columns, passed through, such as the
    blocking ``keys``). ``people`` is the normalised people table, or a `PreparedRecords` to
    reuse (then ``identifiers`` and ``settings`` are ignored). ``settings`` is a
    `CompareSettings` or a mapping of its field names. Returns a new frame: the pairs'
    columns followed by ``lvl_given_name``, ``lvl_family_name``, ``lvl_suffix``,
    ``lvl_birth_date``, ``lvl_national_id``, ``lvl_phone``, ``lvl_email``, ``lvl_address``.
    """
    prepared = as_prepared(people, identifiers, settings)
    a, b = pair_arrays(pairs, prepared.n)
    levels = prepared.compare(a, b)
    out = pairs.copy()
    for spec in FIELDS:
        out[spec.column] = levels[spec.name]
    return out
