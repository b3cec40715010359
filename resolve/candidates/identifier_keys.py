"""Identifier blocking keys: records that carry the same phone, email, national ID or address.

This is an inverted index over the identifier table: for each identifier kind, the usable
``key`` values are factorised and every value carried by two or more records becomes a block.
Rules:

- only rows whose status is allowed by the settings (``valid`` and, by default, ``invalid``)
  and whose ``key`` is present take part; the normaliser leaves ``key`` empty when a value is
  unusable;
- placeholders never block: a row marked ``placeholder`` is reported, and any other row with
  the same key is ignored too;
- a value carried by more distinct records than the key's cap is a hub: it produces no pairs
  and is reported with its record count.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from resolve.errors import ResolveError
from resolve.normalise import PLACEHOLDER
from resolve.candidates.groups import BlockPairs, block_pairs, factorize_text, members
from resolve.candidates.registry import IDENTIFIER_KINDS
from resolve.candidates.settings import BlockingSettings

REQUIRED = ("rec", "kind", "key", "status")


@dataclass
class NationalIds:
    """Per-row national ID codes left after placeholders and hubs, for the one-edit key."""

    code: np.ndarray     # code per kept row (-1: not usable for one-edit)
    rec: np.ndarray      # record per kept row
    uniques: pd.Series   # the distinct key strings, by code


@dataclass
class IdentifierBlocks:
    """What the identifier keys produced."""

    pairs: dict[str, BlockPairs]
    placeholders: pd.DataFrame  # kind, key, records
    national_ids: NationalIds | None


def _mask(series: pd.Series, value: str) -> np.ndarray:
    return series.eq(value).to_numpy(dtype=bool, na_value=False)


def check_identifiers(identifiers: pd.DataFrame | None, n_records: int) -> pd.DataFrame:
    """The identifier table restricted to what blocking reads, after checking its shape."""
    if identifiers is None:
        return pd.DataFrame({"rec": pd.Series([], dtype="int64"), "kind": [], "key": [],
                             "status": []})
    missing = [c for c in REQUIRED if c not in identifiers.columns]
    if missing:
        raise ResolveError(
            f"The identifier table lacks column '{missing[0]}'; pass the table made by "
            "resolve.normalise.records.normalise_records.")
    rec = pd.to_numeric(identifiers["rec"], errors="coerce")
    if len(rec) and (rec.isna().any() or rec.min() < 0 or rec.max() >= n_records):
        raise ResolveError(
            "The identifier table names records that are not in the people table; "
            "build both tables from the same run.")
    return identifiers


def _labels(identifiers: pd.DataFrame) -> pd.Series:
    """A readable value per row: the key, else the canonical value, else the raw text."""
    label = identifiers["key"].astype("string")
    for col in ("value", "raw"):
        if col in identifiers.columns:
            label = label.fillna(identifiers[col].astype("string"))
    return label


def _placeholders(identifiers: pd.DataFrame) -> pd.DataFrame:
    rows = identifiers.loc[_mask(identifiers["status"], PLACEHOLDER)]
    if rows.empty:
        return pd.DataFrame({"kind": pd.Series([], dtype="string"),
                             "key": pd.Series([], dtype="string"),
                             "records": pd.Series([], dtype="int64")})
    frame = pd.DataFrame({"kind": rows["kind"].astype("string").to_numpy(),
                          "key": _labels(rows).to_numpy(),
                          "rec": rows["rec"].to_numpy()}).dropna(subset=["kind", "key"])
    out = (frame.drop_duplicates().groupby(["kind", "key"], sort=True).size()
           .rename("records").reset_index())
    return out.astype({"kind": "string", "key": "string", "records": "int64"})


def identifier_blocks(identifiers: pd.DataFrame, n_records: int, settings: BlockingSettings,
                      selected: tuple[str, ...]) -> IdentifierBlocks:
    """Run the ``shared_<kind>`` keys in ``selected`` and keep national IDs for one-edit."""
    placeholders = _placeholders(identifiers)
    pairs: dict[str, BlockPairs] = {}
    national_ids = None
    need_ids = "national_id_one_edit" in selected
    kinds = [k for k in IDENTIFIER_KINDS
             if f"shared_{k}" in selected or (k == "national_id" and need_ids)]
    if not kinds or identifiers.empty:
        return IdentifierBlocks(pairs, placeholders, national_ids)
    status_ok = identifiers["status"].isin(list(settings.identifier_statuses)).to_numpy(
        dtype=bool, na_value=False)
    placeholder = _mask(identifiers["status"], PLACEHOLDER)
    has_key = identifiers["key"].notna().to_numpy()
    rec_all = identifiers["rec"].to_numpy(dtype=np.int64)
    for kind in kinds:
        # one kind at a time keeps the string hash table (the memory peak) a third the size
        of_kind = has_key & _mask(identifiers["kind"], kind)
        keyed = np.flatnonzero(of_kind)
        code, uniques = factorize_text(identifiers["key"][of_kind].astype("string"))
        banned = code[placeholder[keyed] & (code >= 0)]  # a placeholder's key never blocks
        code = np.where(status_ok[keyed] & ~np.isin(code, banned), code, -1)
        rec = rec_all[keyed]
        name = f"shared_{kind}"
        bp = block_pairs(members(code, rec, n_records),
                         lambda sizes, name=name: settings.cap(name, sizes))
        bp.dropped_labels = uniques.iloc[bp.dropped_ids].astype(str).tolist()
        if name in selected:
            pairs[name] = bp
        if kind == "national_id" and need_ids:
            if len(bp.dropped_ids):
                code = np.where(np.isin(code, bp.dropped_ids), -1, code)
            valid = code >= 0
            # renumber the national IDs densely so the one-edit index only sees their values
            id_code, id_rows = pd.factorize(code[valid])
            national_ids = NationalIds(code=np.asarray(id_code, dtype=np.int64), rec=rec[valid],
                                       uniques=uniques.iloc[np.asarray(id_rows)]
                                       .astype("string").reset_index(drop=True))
    return IdentifierBlocks(pairs, placeholders, national_ids)
