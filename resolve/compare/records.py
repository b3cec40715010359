"""One run's records prepared for pair comparison: every per-record code in one matrix.

`prepare_records` factorises the people columns and lays out identifier values once per run.
All per-record integers the comparisons need (name codes, packed birth date, address codes,
identifier slots) go into one row-major int32 matrix, so aligning a chunk of pairs is two
`numpy.take` calls (one for ``rec_a``, one for ``rec_b``) instead of dozens of scattered
gathers. Pairs are compared in chunks to keep memory flat on large runs.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np
import pandas as pd

from resolve.compare.address import AddressTables, address_tables, compare_addresses
from resolve.compare.align import CompareSettings, record_positions
from resolve.compare.dates import compare_birth_dates, date_parts
from resolve.compare.identifiers import (
    IdentifierSlots,
    compare_emails,
    compare_national_ids,
    compare_phones,
)
from resolve.compare.levels import FIELDS
from resolve.compare.names import NameTables, compare_names, compare_suffix, name_tables

#: Pairs aligned per step: small enough for the aligned block to stay in the CPU cache.
CHUNK = 65_536


class AlignedColumns(dict):
    """Column name -> values for a block of aligned records, copied out on first use.

    A column of the row block is a strided view; arithmetic on strided views is several
    times slower than on contiguous arrays, so each column is made contiguous once.
    """

    def __init__(self, rows: np.ndarray, index: dict[str, int]) -> None:
        super().__init__()
        self._rows = rows
        self._index = index

    def __missing__(self, name: str) -> np.ndarray:
        column = np.ascontiguousarray(self._rows[:, self._index[name]])
        self[name] = column
        return column


@dataclass
class PreparedRecords:
    """One run's people and identifiers, factorised for fast pair comparison."""

    people: pd.DataFrame
    n: int
    names: NameTables
    addresses: AddressTables
    identifiers: dict[str, IdentifierSlots]
    matrix: np.ndarray
    column_index: dict[str, int]
    settings: CompareSettings
    cache: dict[str, Any] = field(default_factory=dict, repr=False)

    def align(self, recs: np.ndarray) -> "AlignedColumns":
        """The per-record columns of ``recs`` (gathered as one block of rows)."""
        return AlignedColumns(np.take(self.matrix, recs, axis=0), self.column_index)

    def compare(self, a: np.ndarray, b: np.ndarray) -> dict[str, np.ndarray]:
        """Levels per field (int8 arrays) for the pairs ``(a[i], b[i])`` of record positions."""
        out = {spec.name: np.empty(a.shape[0], dtype=np.int8) for spec in FIELDS}
        for start in range(0, a.shape[0], CHUNK):
            part = slice(start, start + CHUNK)
            for name, levels in self._compare_chunk(a[part], b[part]).items():
                out[name][part] = levels
        return out

    def rarest_shared(self, kind: str, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Code of the rarest ``kind`` value each pair shares (-1 where none), chunk by chunk."""
        slots = self.identifiers[kind]
        out = np.empty(a.shape[0], dtype=np.int64)
        for start in range(0, a.shape[0], CHUNK):
            part = slice(start, start + CHUNK)
            out[part] = slots.shared(self.align(a[part]), self.align(b[part]))[1]
        return out

    def _compare_chunk(self, a: np.ndarray, b: np.ndarray) -> dict[str, np.ndarray]:
        A, B = self.align(a), self.align(b)
        ids = self.identifiers
        given, family = compare_names(self.names, A, B, self.settings)
        return {
            "given_name": given,
            "family_name": family,
            "suffix": compare_suffix(A, B),
            "birth_date": compare_birth_dates(A["birth"], B["birth"]),
            "national_id": compare_national_ids(ids["national_id"], A, B),
            "phone": compare_phones(ids["phone"], A, B),
            "email": compare_emails(ids["email"], A, B),
            "address": compare_addresses(self.addresses, A, B, self.settings),
        }


def prepare_records(
    people: pd.DataFrame,
    identifiers: pd.DataFrame,
    settings: CompareSettings | Mapping[str, Any] | None = None,
) -> PreparedRecords:
    """Factorise the people columns and lay out identifier values once per run."""
    cfg = CompareSettings.coerce(settings)
    people = record_positions(people)
    n = len(people)
    names = name_tables(people)
    addresses = address_tables(people)
    ids = {
        kind: IdentifierSlots.build(identifiers, kind, n, cfg)
        for kind in ("phone", "email", "national_id")
    }
    columns: dict[str, np.ndarray] = {}
    columns.update(names.columns)
    columns["birth"] = date_parts(people)
    columns.update(addresses.columns)
    for slots in ids.values():
        columns.update(slots.columns(cfg))
    index = {name: j for j, name in enumerate(columns)}
    matrix = np.empty((n, len(columns)), dtype=np.int32)
    arrays = [np.asarray(columns[name], dtype=np.int32) for name in index]
    for start in range(0, n, 16_384):  # block by block: the transposition stays in cache
        part = slice(start, start + 16_384)
        matrix[part] = np.stack([col[part] for col in arrays], axis=1)
    return PreparedRecords(
        people=people,
        n=n,
        names=names,
        addresses=addresses,
        identifiers=ids,
        matrix=matrix,
        column_index=index,
        settings=cfg,
    )


def as_prepared(
    people: "pd.DataFrame | PreparedRecords",
    identifiers: pd.DataFrame | None = None,
    settings: CompareSettings | Mapping[str, Any] | None = None,
) -> PreparedRecords:
    """``people`` as `PreparedRecords`: passed through when already prepared (then
    ``identifiers`` and ``settings`` are ignored), else prepared with ``identifiers`` (an
    empty identifier table when None)."""
    if isinstance(people, PreparedRecords):
        return people
    if identifiers is None:
        identifiers = pd.DataFrame(columns=["rec", "kind", "key", "status", "detail"])
    return prepare_records(people, identifiers, settings)
