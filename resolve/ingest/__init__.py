"""Ingest: read extract files, apply the column mapping, accept or quarantine every row.

`read_inputs` is the stage function. It returns the accepted records as a `RecordTable`
(docs/architecture.md) and a quarantine table in which every rejected row carries its file,
row number and a reason code. The row accounting (input rows = accepted + quarantined) is
checked here on every run; a mismatch is a bug and stops the run.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from resolve.errors import InputError, MappingError, ResolveError
from resolve.ingest import columns
from resolve.ingest.mapping import Mapping, detect_mapping, load_mapping
from resolve.ingest.readers import RawTable, read_any
from resolve.ingest.roles import MULTI_ROLES, ROLES

__all__ = ["IngestResult", "IngestSettings", "read_inputs", "Mapping", "load_mapping",
           "detect_mapping", "QUARANTINE_REASONS"]

QUARANTINE_REASONS = {
    "no_record_id": "the record ID is blank",
    "duplicate_record_id": "the record ID was already used by an earlier row",
    "wrong_field_count": "the row has more or fewer fields than the header",
    "unparseable_row": "the row could not be parsed",
    "bad_encoding": "the row holds bytes that are not valid text in the file's encoding",
    "field_too_long": "a field is longer than the size limit",
    "unreadable_birth_date": "the birth date is required but cannot be read",
}


@dataclass
class IngestSettings:
    """Options for reading inputs. ``max_field_chars`` guards against runaway fields."""

    encoding: str | None = None
    delimiter: str | None = None
    max_field_chars: int = 4096
    require_birth_date: bool = False
    detect_sample_rows: int = 2000


@dataclass
class IngestResult:
    records: pd.DataFrame
    quarantine: pd.DataFrame
    mapping: Mapping
    files: pd.DataFrame           # per file: file, rows, accepted, quarantined, encoding
    notes: list[str] = field(default_factory=list)

    @property
    def input_rows(self) -> int:
        return int(self.files["rows"].sum())


def read_inputs(paths: list[str | Path], mapping: Mapping | str | Path | None = None,
                settings: IngestSettings | None = None) -> IngestResult:
    """Read every input file, map columns to roles and accept or quarantine each row."""
    settings = settings or IngestSettings()
    if not paths:
        raise InputError("no input files given.")
    if isinstance(mapping, (str, Path)):
        mapping = load_mapping(mapping)
    raws = [read_any(p, encoding=settings.encoding, delimiter=settings.delimiter) for p in paths]
    detected = mapping is None
    if mapping is None:
        first = next((r for r in raws if len(r.frame.columns)), raws[0])
        mapping = detect_mapping(first.frame.head(settings.detect_sample_rows))
    all_headers = sorted({c for r in raws for c in r.frame.columns})
    try:
        mapping.validate(origin="the detected mapping" if detected else "the mapping")
    except MappingError as exc:
        if detected:
            raise MappingError(f"{exc} Columns found: {', '.join(all_headers)}.") from None
        raise
    named = {c for cols in mapping.columns.values() for c in cols}
    absent_everywhere = sorted(c for c in named if all(c not in r.frame.columns for r in raws))
    if absent_everywhere:
        raise MappingError(f"the mapping names column(s) not in any input: "
                           f"{', '.join(absent_everywhere)}; input columns are: "
                           f"{', '.join(all_headers)}.")
    parts, quarantines, file_rows, notes = [], [], [], []
    for raw in raws:
        rid = mapping.single("record_id")
        if len(raw.frame) and rid not in raw.frame.columns:
            raise MappingError(f"{raw.path.name} has no column '{rid}' for record_id.")
        table, quarantine = _map_rows(raw, mapping, settings)
        parts.append(table)
        quarantines.append(quarantine)
        missing_cols = sorted(c for c in named if c not in raw.frame.columns)
        if missing_cols and len(raws) > 1:
            notes.append(f"{raw.path.name} lacks column(s) {', '.join(missing_cols)}; "
                         f"treated as blank.")
        file_rows.append({"file": raw.path.name, "rows": raw.total_rows,
                          "accepted": len(table), "quarantined": len(quarantine),
                          "encoding": raw.encoding})
    if len(parts) == 1:
        records = parts[0]
    else:
        records = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame()
    quarantine = pd.concat(quarantines, ignore_index=True)
    records, dup_q = _quarantine_duplicate_ids(records)
    if len(dup_q):
        quarantine = pd.concat([quarantine, dup_q], ignore_index=True)
        for f in file_rows:
            moved = int((dup_q["file"] == f["file"]).sum())
            f["accepted"] -= moved
            f["quarantined"] += moved
    files = pd.DataFrame(file_rows)
    if int(files["rows"].sum()) != len(records) + len(quarantine):
        raise ResolveError(
            f"row accounting failed: {int(files['rows'].sum())} input rows but "
            f"{len(records)} accepted + {len(quarantine)} quarantined; please report this."
        )
    records.insert(0, "rec", np.arange(len(records), dtype=np.int32))
    quarantine = quarantine.sort_values(["file", "row_number"], kind="stable").reset_index(drop=True)
    return IngestResult(records, quarantine, mapping, files, notes + mapping_notes(mapping, detected))


def mapping_notes(mapping: Mapping, detected: bool) -> list[str]:
    return [f"mapping detected from headers ({len(mapping.columns)} roles)"] if detected else []


def _map_rows(raw: RawTable, mapping: Mapping, settings: IngestSettings):
    """Map one file's columns to roles and accept or quarantine each of its rows.

    Column work runs on the Arrow strings (`resolve.ingest.columns`); reasons are kept in
    numpy arrays and turned into a frame only for the rejected rows.
    """
    frame = raw.frame
    n = len(frame)
    empty = columns.blank(n)

    def col(name: str) -> pd.Series:
        if name in frame.columns:
            return columns.trimmed(frame[name])
        return empty

    out: dict[str, pd.Series] = {}
    rid_col = mapping.single("record_id")
    out["record_id"] = col(rid_col)
    out["source"] = columns.constant(raw.path.stem, n)
    out["file"] = columns.constant(raw.path.name, n)
    out["row_number"] = raw.row_numbers.reset_index(drop=True).astype("int64")
    for role in ROLES:
        if role.name == "record_id":
            continue
        cols = mapping.columns.get(role.name) or []
        if not cols:
            continue
        if role.name == "street":
            joined = None
            for c in cols:
                s = col(c)
                joined = s if joined is None else joined.str.cat(s, sep=", ", na_rep="").str.strip(", ")
            joined = joined.mask(joined == "")
            out["street"] = joined
        elif role.name in MULTI_ROLES:
            for i, c in enumerate(cols, start=1):
                out[f"{role.name}_{i}"] = col(c)
        elif role.name == "source":
            out["source_system"] = col(cols[0])
        else:
            out[role.name] = col(cols[0])
    table = pd.DataFrame(out)
    reason = np.full(n, None, dtype=object)
    detail = np.full(n, None, dtype=object)
    open_rows = np.ones(n, dtype=bool)  # rows with no reason yet
    # Field-size guard over every column read from the file (mapped or not).
    for c in frame.columns:
        too_long = columns.longer_than(frame[c], settings.max_field_chars) & open_rows
        if too_long.any():
            reason[too_long] = "field_too_long"
            detail[too_long] = f"column '{c}' is over {settings.max_field_chars} characters"
            open_rows &= ~too_long
    no_id = table["record_id"].isna().to_numpy() & open_rows
    reason[no_id] = "no_record_id"
    detail[no_id] = f"column '{rid_col}' is blank"
    open_rows &= ~no_id
    if settings.require_birth_date and "birth_date" in table.columns:
        from resolve.normalise.dates import normalise_dates

        dates = normalise_dates(table["birth_date"])
        bad = dates["status"].isin(["invalid", "missing"]).to_numpy() & open_rows
        reason[bad] = "unreadable_birth_date"
        detail[bad] = "birth date blank or not a date"
        open_rows &= ~bad
    rejected = ~open_rows
    q = pd.DataFrame({
        "file": table["file"][rejected], "row_number": table["row_number"][rejected],
        "record_id": table["record_id"][rejected],
        "reason": pd.Series(reason[rejected], index=table.index[rejected], dtype="string"),
        "detail": pd.Series(detail[rejected], index=table.index[rejected], dtype="string"),
    })
    if raw.rejected:
        early = pd.DataFrame(raw.rejected)
        early.insert(0, "file", raw.path.name)
        early.insert(2, "record_id", pd.NA)
        q = pd.concat([q, early], ignore_index=True)
    q = q.astype({"file": "string", "record_id": "string", "reason": "string", "detail": "string"})
    if not rejected.any():  # the usual case: no copy of the whole table
        return table, q
    return table[~rejected].reset_index(drop=True), q


def _quarantine_duplicate_ids(records: pd.DataFrame):
    if len(records) == 0 or columns.all_distinct(records["record_id"]):
        dup = np.zeros(len(records), dtype=bool)  # hashing once is enough to know
    else:
        dup = records["record_id"].duplicated(keep="first").to_numpy()
    if not dup.any():
        return records, pd.DataFrame(columns=["file", "row_number", "record_id", "reason", "detail"])
    first_row = records.drop_duplicates("record_id").set_index("record_id")
    d = records[dup]
    where = first_row.loc[d["record_id"], ["file", "row_number"]].reset_index(drop=True)
    q = pd.DataFrame({
        "file": d["file"].to_numpy(), "row_number": d["row_number"].to_numpy(),
        "record_id": d["record_id"].to_numpy(), "reason": "duplicate_record_id",
        "detail": ("same record ID as row " + where["row_number"].astype(str) + " of "
                   + where["file"].astype(str)).to_numpy(),
    })
    return records[~dup].reset_index(drop=True), q
