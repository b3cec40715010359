"""Agreement levels for postal addresses, from the normalised address columns.

Exact agreement uses the `address_key` built by `resolve.normalise.address`. Below it, the
same house number in the same postcode catches a street written two ways, and a similar
street name (Jaro-Winkler) in the same postcode or city catches typos. The street
similarity is only computed for pairs that already share a postcode or a city.

Precedence: exact > same house number and postcode > close > different. Missing: one side
has neither an address key nor a street name.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from resolve.compare.align import CompareSettings, Vocabulary
from resolve.compare.levels import ADDRESS, DIFFERENT, MISSING

ADDRESS_COLUMNS = ("address_key", "house_number", "street_name", "postcode", "city")


@dataclass
class AddressTables:
    """Address columns as codes (one vocabulary per column) and the street-name vocabulary."""

    street: Vocabulary
    columns: dict[str, np.ndarray]


def address_tables(people: pd.DataFrame) -> AddressTables:
    """Factorise each address column on its own (columns are only compared like with like)."""
    vocabs = {col: Vocabulary.build(people, (col,)) for col in ADDRESS_COLUMNS}
    columns = {col: v.codes[col] for col, v in vocabs.items()}
    has = (columns["address_key"] >= 0) | (columns["street_name"] >= 0)
    columns["has_address"] = has.astype(np.int32)
    return AddressTables(street=vocabs["street_name"], columns=columns)


def compare_addresses(
    tables: AddressTables,
    A: dict[str, np.ndarray],
    B: dict[str, np.ndarray],
    settings: CompareSettings,
) -> np.ndarray:
    """Address levels (int8) for aligned pairs (see `AddressTables.columns`)."""
    ka, kb = A["address_key"], B["address_key"]
    out = np.where((A["has_address"] & B["has_address"]) > 0, DIFFERENT, MISSING).astype(np.int8)
    out[(ka >= 0) & (ka == kb)] = ADDRESS.code_of("exact")

    rows = np.flatnonzero(out == DIFFERENT)

    def same(col: str) -> np.ndarray:
        x, y = A[col][rows], B[col][rows]
        return (x >= 0) & (x == y)

    same_postcode = same("postcode")
    number_postcode = same_postcode & same("house_number")
    sa, sb = A["street_name"][rows], B["street_name"][rows]
    nearby = ~number_postcode & (sa >= 0) & (sb >= 0) & (same_postcode | same("city"))
    near = np.flatnonzero(nearby)
    sim = tables.street.jaro_winkler(sa[near], sb[near], settings.street_close)
    out[rows[near[sim >= settings.street_close]]] = ADDRESS.code_of("close")
    out[rows[number_postcode]] = ADDRESS.code_of("number_postcode")
    return out
