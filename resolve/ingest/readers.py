"""Read extract files (CSV, Parquet, JSON lines) into string tables, row by row accountable.

Every data row of every file ends up either in the returned table or in the returned list of
rejected rows with its row number and a reason; nothing is dropped silently. Rows are numbered
1-based from the first data row (the header is row 0), which is the same for CSV with
embedded newlines, Parquet and JSON lines.
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from resolve.errors import InputError

CSV_SUFFIXES = {".csv", ".txt", ".tsv", ".psv"}
PARQUET_SUFFIXES = {".parquet", ".pq"}
JSONL_SUFFIXES = {".jsonl", ".ndjson", ".json"}
DELIMITERS = ",;\t|"
# A file in which more than this share of rows is broken is not worth guessing at.
MAX_BROKEN_SHARE = 0.2
# Characters of the file's start used to find the delimiter and the header.
HEAD_CHARS = 65536
# Parse block for clean files: several blocks let Arrow parse on every core.
QUICK_BLOCK_BYTES = 1 << 24


@dataclass
class RawTable:
    """Rows of one input file as strings, plus the rows that could not be read."""

    path: Path
    frame: pd.DataFrame          # string columns; index irrelevant
    row_numbers: pd.Series        # 1-based data row number of each frame row
    rejected: list[dict] = field(default_factory=list)   # row_number, reason, detail
    total_rows: int = 0
    encoding: str = "utf-8"


def read_any(path: str | Path, *, encoding: str | None = None,
             delimiter: str | None = None) -> RawTable:
    """Read one input file by its suffix; raise InputError with a one-line reason if unreadable."""
    p = Path(path)
    if not p.exists():
        raise InputError(f"input file {p} does not exist.")
    if p.is_dir():
        raise InputError(f"input {p} is a folder; give the extract files themselves.")
    suffix = p.suffix.lower()
    try:
        if suffix in PARQUET_SUFFIXES:
            return _read_parquet(p)
        if suffix in JSONL_SUFFIXES:
            return _read_jsonl(p, encoding)
        return _read_csv(p, encoding, delimiter)
    except InputError:
        raise
    except (OSError, pa.ArrowException, ValueError) as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InputError(f"cannot read {p}: {first}.") from None


def _as_strings(table: pa.Table) -> pd.DataFrame:
    cols = {}
    for name in table.column_names:
        col = table.column(name)
        if not pa.types.is_string(col.type) and not pa.types.is_large_string(col.type):
            col = col.cast(pa.string()) if not pa.types.is_nested(col.type) else pa.array(
                [json.dumps(v) if v is not None else None for v in col.to_pylist()], pa.string())
        cols[name] = pd.Series(col.to_pandas(types_mapper=pd.ArrowDtype), name=name).astype("string")
    return pd.DataFrame(cols)


def _read_parquet(p: Path) -> RawTable:
    table = pq.read_table(p)
    frame = _as_strings(table)
    n = len(frame)
    return RawTable(p, frame, pd.Series(range(1, n + 1)), [], n, "parquet")


def _read_jsonl(p: Path, encoding: str | None) -> RawTable:
    text, bad_lines, enc = _decode(p, encoding)
    rows: list[dict] = []
    numbers: list[int] = []
    rejected: list[dict] = []
    number = 0
    for line in text.splitlines():
        if not line.strip():
            continue
        number += 1
        if number in bad_lines:
            rejected.append(_reject(number, "bad_encoding", "bytes that are not valid text"))
            continue
        try:
            obj = json.loads(line)
        except json.JSONDecodeError as exc:
            rejected.append(_reject(number, "unparseable_row", f"not valid JSON ({exc.msg})"))
            continue
        if not isinstance(obj, dict):
            rejected.append(_reject(number, "unparseable_row", "a JSON line that is not an object"))
            continue
        rows.append({k: (None if v is None else v if isinstance(v, str) else json.dumps(v)
                         if isinstance(v, (dict, list)) else str(v)) for k, v in obj.items()})
        numbers.append(number)
    frame = pd.DataFrame(rows).astype("string") if rows else pd.DataFrame()
    return RawTable(p, frame, pd.Series(numbers, dtype="int64"), rejected, number, enc)


def _reject(row_number: int, reason: str, detail: str) -> dict:
    return {"row_number": int(row_number), "reason": reason, "detail": detail}


def _decode(p: Path, encoding: str | None) -> tuple[str, set[int], str]:
    """Decode a text file; return text, the 1-based line numbers holding undecodable bytes."""
    raw = p.read_bytes()
    if encoding:
        try:
            return raw.decode(encoding), set(), encoding
        except (UnicodeDecodeError, LookupError) as exc:
            raise InputError(f"cannot decode {p} as {encoding}: {exc}.") from None
    if raw.startswith(b"\xef\xbb\xbf"):
        raw = raw[3:]
    elif raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return raw.decode("utf-16"), set(), "utf-16"
    try:
        return raw.decode("utf-8"), set(), "utf-8"
    except UnicodeDecodeError:
        pass
    lines = raw.split(b"\n")
    bad: set[int] = set()
    out = []
    for i, line in enumerate(lines):
        try:
            out.append(line.decode("utf-8"))
        except UnicodeDecodeError:
            bad.add(i)
            out.append(line.decode("utf-8", errors="replace"))
    if len(bad) > max(3, MAX_BROKEN_SHARE * len(lines)):
        raise InputError(
            f"{p} is not UTF-8 ({len(bad)} of {len(lines)} lines have other bytes); "
            f"re-run with --encoding cp1252 (or the file's real encoding)."
        )
    # bad holds 0-based physical line indexes; the CSV reader maps them to data rows.
    return "\n".join(out), bad, "utf-8 (some lines undecodable)"


def sniff_delimiter(head: str) -> str:
    """Pick the delimiter from the first lines of a file (comma when nothing else fits)."""
    try:
        return csv.Sniffer().sniff(head, delimiters=DELIMITERS).delimiter
    except csv.Error:
        counts = {d: head.splitlines()[0].count(d) if head else 0 for d in DELIMITERS}
        best = max(counts, key=counts.get)
        return best if counts[best] > 0 else ","


def _read_csv(p: Path, encoding: str | None, delimiter: str | None) -> RawTable:
    if encoding is None:
        quick = _read_csv_quick(p, delimiter)
        if quick is not None:
            return quick
    text, bad_physical, enc = _decode(p, encoding)
    if not text.strip():
        raise InputError(f"{p} is empty.")
    delim = delimiter or sniff_delimiter(text[:HEAD_CHARS])
    header_line = next(csv.reader(io.StringIO(text[:HEAD_CHARS]), delimiter=delim))
    headers = _unique_headers(header_line)
    data = text.encode("utf-8")
    read_opts = dict(block_size=max(1 << 22, min(len(data) + 1, 1 << 30)), skip_rows=1,
                     column_names=headers)
    conv = pacsv.ConvertOptions(column_types={h: pa.string() for h in headers},
                                strings_can_be_null=True, quoted_strings_can_be_null=True)
    broken: list[int] = []

    def on_invalid(row):  # called by Arrow for rows with the wrong number of fields
        broken.append(row.number)
        return "skip"

    parse = pacsv.ParseOptions(delimiter=delim, newlines_in_values=True,
                               invalid_row_handler=on_invalid)
    table = pacsv.read_csv(io.BytesIO(data), read_options=pacsv.ReadOptions(
        use_threads=True, **read_opts), parse_options=parse, convert_options=conv)
    total = table.num_rows + len(broken)
    rejected: list[dict] = []
    if broken:
        # Row numbers are only known single-threaded; broken files are rare, so read again.
        broken.clear()
        parse = pacsv.ParseOptions(delimiter=delim, newlines_in_values=True,
                                   invalid_row_handler=on_invalid)
        table = pacsv.read_csv(io.BytesIO(data), read_options=pacsv.ReadOptions(
            use_threads=False, **read_opts), parse_options=parse, convert_options=conv)
        if len(broken) > max(3, MAX_BROKEN_SHARE * total):
            raise InputError(
                f"{p}: {len(broken)} of {total} rows do not have {len(headers)} fields; "
                f"check the delimiter (try --delimiter) or the file's format."
            )
        # Arrow counts the skipped header as row 1, so data row k is Arrow's row k + 1.
        rejected = [_reject(n - 1, "wrong_field_count",
                            f"expected {len(headers)} fields") for n in broken]
    frame = _as_strings(table)
    all_numbers = np.arange(1, total + 1, dtype=np.int64)
    if rejected:
        all_numbers = all_numbers[~np.isin(all_numbers, [r["row_number"] for r in rejected])]
    row_numbers = pd.Series(all_numbers)
    if bad_physical:
        frame, row_numbers, enc_rejects = _drop_replacement_rows(frame, row_numbers)
        rejected.extend(enc_rejects)
    return RawTable(p, frame, row_numbers, rejected, total, enc)


def _utf8_head(raw: bytes, start: int) -> str | None:
    """The first ``HEAD_CHARS`` characters after ``start``, or None if those bytes are not UTF-8."""
    stop = start + 4 * HEAD_CHARS  # a character takes at most four bytes
    if stop < len(raw):
        while stop > start and (raw[stop] & 0xC0) == 0x80:  # back off to a character start
            stop -= 1
    try:
        return raw[start:stop].decode("utf-8")[:HEAD_CHARS]
    except UnicodeDecodeError:
        return None


def _read_csv_quick(p: Path, delimiter: str | None) -> RawTable | None:
    """Read a well-formed UTF-8 CSV straight from its bytes; None sends it to the full path.

    The full path decodes the whole file into Python text (to find undecodable lines) and
    encodes it back for the parser, which costs more than the parse itself at a million
    rows. A clean file needs neither: Arrow checks that every string field is valid UTF-8
    (the same strictness as Python's decoder), the header is checked here, and the parse
    runs on both cores in blocks. Anything unusual (another byte order mark, bytes that are
    not UTF-8, rows with the wrong number of fields, a quoted header) returns None, and the
    full path reads the file exactly as before.
    """
    raw = p.read_bytes()
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return None
    start = 3 if raw.startswith(b"\xef\xbb\xbf") else 0
    head = _utf8_head(raw, start)
    if head is None or not head.strip():
        return None
    end_of_header = head.find("\n")
    if end_of_header < 0 or '"' in head[:end_of_header]:
        return None  # the header row must lie in the checked text, unquoted
    delim = delimiter or sniff_delimiter(head)
    headers = _unique_headers(next(csv.reader(io.StringIO(head), delimiter=delim)))
    broken: list[int] = []

    def on_invalid(row):
        broken.append(row.number)
        return "skip"

    try:
        table = pacsv.read_csv(
            pa.BufferReader(pa.py_buffer(raw).slice(start)),
            read_options=pacsv.ReadOptions(use_threads=True, block_size=QUICK_BLOCK_BYTES,
                                           skip_rows=1, column_names=headers),
            parse_options=pacsv.ParseOptions(delimiter=delim, newlines_in_values=True,
                                             invalid_row_handler=on_invalid),
            convert_options=pacsv.ConvertOptions(
                column_types={h: pa.string() for h in headers}, strings_can_be_null=True,
                quoted_strings_can_be_null=True, check_utf8=True),
        )
    except pa.ArrowInvalid:
        return None
    if broken:
        return None
    frame = _as_strings(table.combine_chunks())
    n = len(frame)
    return RawTable(p, frame, pd.Series(np.arange(1, n + 1, dtype=np.int64)), [], n, "utf-8")


def _drop_replacement_rows(frame: pd.DataFrame, row_numbers: pd.Series):
    """Quarantine rows that hold U+FFFD, the mark left where bytes were not valid UTF-8."""
    hit = pd.Series(False, index=frame.index)
    for col in frame.columns:
        hit |= frame[col].str.contains("\ufffd", regex=False).fillna(False).astype(bool)
    rejects = [_reject(n, "bad_encoding", "bytes that are not valid UTF-8")
               for n in row_numbers[hit.to_numpy()].tolist()]
    keep = ~hit.to_numpy()
    return frame[keep].reset_index(drop=True), row_numbers[keep].reset_index(drop=True), rejects


def _unique_headers(names: list[str]) -> list[str]:
    seen: dict[str, int] = {}
    out = []
    for i, name in enumerate(names):
        name = name.strip() or f"column_{i + 1}"
        if name in seen:
            seen[name] += 1
            name = f"{name}_{seen[name]}"
        else:
            seen[name] = 1
        out.append(name)
    return out
