"""Read and align the tables that evaluation compares: truth, entities, households, flags, pairs.

Truth files come from many hands (a generator, a spreadsheet, reviewer decisions), so every
identifier column is read as text, blanks count as missing, and a missing column or a repeated
record ID stops the evaluation with a sentence that says what to fix.

Everything after reading works on integer codes: each table's record IDs are looked up once
(Arrow's hash lookup, in C++) to positions in the truth table, and cluster IDs are factorised
to dense integers. A million records then cost a few hash passes and sorts, not string work.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.errors import InputError

TRUTH_COLUMNS = ("record_id", "person_id", "household_id", "ring_id", "label")


def text_column(frame: pd.DataFrame, column: str) -> pd.Series:
    """Column as pandas string dtype with surrounding spaces stripped and blanks as <NA>."""
    if column not in frame.columns:
        return pd.Series(pd.NA, index=frame.index, dtype="string")
    s = frame[column].astype("string").str.strip()
    return s.mask(s == "")


def require(frame: pd.DataFrame | None, columns: tuple[str, ...], name: str) -> None:
    """Raise InputError naming the first of ``columns`` that ``frame`` lacks."""
    if frame is None:
        raise InputError(f"The {name} table is missing; pass a DataFrame with {', '.join(columns)}.")
    for column in columns:
        if column not in frame.columns:
            raise InputError(
                f"The {name} table has no '{column}' column; it needs {', '.join(columns)}."
            )


def _repeated(ids: pd.Series, name: str) -> InputError:
    first = ids[ids.duplicated()].iloc[0]
    return InputError(
        f"The {name} table lists record_id '{first}' more than once; keep one row per record."
    )


def read_truth(truth: pd.DataFrame) -> pd.DataFrame:
    """Truth as text columns record_id, person_id, household_id, ring_id, label (lower case)."""
    require(truth, ("record_id", "person_id"), "truth")
    out = pd.DataFrame({c: text_column(truth, c) for c in TRUTH_COLUMNS})
    out["label"] = out["label"].str.lower()
    if len(out) == 0:
        raise InputError("The truth table holds no records; give at least one labelled record.")
    if out["record_id"].isna().any():
        raise InputError("The truth table has a blank record_id; every row needs one.")
    if pd.factorize(out["record_id"])[1].size != len(out):
        raise _repeated(out["record_id"], "truth")
    return out.reset_index(drop=True)


def _arrow(values: pd.Series) -> pa.Array:
    return pa.array(values.astype("string"), type=pa.large_string(), from_pandas=True)


def positions(truth_ids: pd.Series, ids: pd.Series) -> np.ndarray:
    """Position of each of ``ids`` in the truth table, -1 when absent or blank."""
    want, universe = _arrow(ids), _arrow(truth_ids)
    if len(want) == len(universe) and want.null_count == 0 and pc.all(pc.equal(want, universe)).as_py():
        return np.arange(len(want), dtype=np.int64)  # same records in the same order
    found = pc.index_in(want, value_set=universe).fill_null(-1)
    return np.asarray(found.to_numpy(zero_copy_only=False), dtype=np.int64)


def codes(values: pd.Series) -> np.ndarray:
    """Dense integer codes of a column, -1 where missing."""
    return pd.factorize(values, use_na_sentinel=True)[0].astype(np.int64)


def with_singletons(codes_: np.ndarray) -> np.ndarray:
    """Copy of ``codes_`` in which every -1 becomes a new cluster of its own."""
    out = np.asarray(codes_, dtype=np.int64).copy()
    missing = out < 0
    out[missing] = out.max(initial=-1) + 1 + np.arange(int(missing.sum()), dtype=np.int64)
    return out


def attach(truth_ids: pd.Series, frame: pd.DataFrame, value_col: str, name: str) -> np.ndarray:
    """Codes of ``frame[value_col]`` for each truth record (by record_id), -1 where absent.

    Raises InputError when the frame lists a truth record twice.
    """
    require(frame, ("record_id", value_col), name)
    pos = positions(truth_ids, text_column(frame, "record_id"))
    value = codes(text_column(frame, value_col))
    hit = pos >= 0
    if np.bincount(pos[hit], minlength=len(truth_ids)).max(initial=0) > 1:
        raise _repeated(text_column(frame, "record_id").dropna(), name)
    out = np.full(len(truth_ids), -1, dtype=np.int64)
    out[pos[hit]] = value[hit]
    return out


def modal(keys: np.ndarray, values: np.ndarray, n_keys: int) -> np.ndarray:
    """For each key 0..n_keys-1, the value code held by most of its rows, -1 when none.

    Rows whose value is -1 are ignored; ties go to the smallest value code.
    """
    ok = values >= 0
    k, v = keys[ok].astype(np.int64), values[ok].astype(np.int64)
    out = np.full(n_keys, -1, dtype=np.int64)
    if k.size == 0:
        return out
    width = int(v.max()) + 1
    cells, count = np.unique(k * width + v, return_counts=True)
    ck, cv = cells // width, cells % width
    order = np.lexsort((cv, -count, ck))
    ck, cv = ck[order], cv[order]
    first = np.r_[True, ck[1:] != ck[:-1]]
    out[ck[first]] = cv[first]
    return out


def pair_positions(pairs: pd.DataFrame, truth_ids: pd.Series) -> pd.DataFrame:
    """Candidate pairs as positions (a < b) in the truth table, deduplicated, self-pairs dropped.

    Pairs naming a record outside the truth table are left out. When a pair appears more than
    once its highest ``prob`` is kept.
    """
    require(pairs, ("record_id_a", "record_id_b"), "pairs")
    both = pd.concat([text_column(pairs, "record_id_a"), text_column(pairs, "record_id_b")])
    ab = positions(truth_ids, both)
    a, b = ab[: len(pairs)], ab[len(pairs):]
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    keep = (lo >= 0) & (lo != hi)
    n = np.int64(len(truth_ids))
    key = lo[keep] * n + hi[keep]
    order = np.argsort(key, kind="stable")
    key = key[order]
    starts = np.flatnonzero(np.r_[True, key[1:] != key[:-1]]) if key.size else np.zeros(0, np.int64)
    out = pd.DataFrame({"a": key[starts] // n, "b": key[starts] % n})
    if "prob" in pairs.columns:
        prob = pd.to_numeric(pairs["prob"], errors="coerce").to_numpy(dtype=np.float64)[keep][order]
        prob = np.nan_to_num(prob, nan=-np.inf)
        best = np.maximum.reduceat(prob, starts) if key.size else prob
        out["prob"] = np.where(np.isneginf(best), np.nan, best)
    return out
