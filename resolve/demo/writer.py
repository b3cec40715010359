"""Order the records, number them per channel, and write the extract, the truth and a README.

The extract looks like three systems' files stacked one after another (branch, app, card
portfolio), each in opening order and numbered in its own style. The truth file lists the same
rows in the same order. CSV is written column-wise through Arrow with minimal quoting (only
fields holding commas, quotes or newlines are quoted, quotes doubled), UTF-8 and LF line ends,
so the bytes depend only on the data; pandas' own writer gives the same bytes, more slowly.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.demo.settings import (
    CARD_BUSINESS, CHANNELS, EXTRACT_COLUMNS, HARD_CASES, INSTITUTION, LABELS, REFERENCE_DATE,
    TRUTH_COLUMNS, DemoRates,
)
from resolve.demo.vec import arrow, padded, scatter, text


def order_rows(rng: np.random.Generator, channel: np.ndarray, created: np.ndarray) -> np.ndarray:
    """Row order: channel blocks (branch, app, card portfolio), each by opening day."""
    rank = np.select([channel == c for c in CHANNELS], np.arange(len(CHANNELS)), len(CHANNELS))
    return np.lexsort((rng.random(len(channel)), created, rank))


def record_ids(channel: np.ndarray) -> np.ndarray:
    """Per-channel numbering: branch 10000001.., app APP-0000001.., card BF-00000001.."""
    out = np.full(len(channel), "", dtype=object)
    styles = {
        "branch": lambda k: padded(10_000_001 + np.arange(k), 8),
        "app": lambda k: "APP-" + padded(1 + np.arange(k), 7),
        "card_portfolio": lambda k: "BF-" + padded(1 + np.arange(k), 8),
    }
    for ch, make in styles.items():
        rows = np.flatnonzero(channel == ch)
        out[rows] = make(len(rows)).to_numpy()
    return out


def _ids(prefix: str, keys: np.ndarray, width: int) -> np.ndarray:
    """Stable IDs numbered by first appearance; negative keys mean none (blank)."""
    keys = np.asarray(keys, dtype=np.int64)
    has = keys >= 0
    out = np.full(len(keys), "", dtype=object)
    if has.any():
        codes, _ = pd.factorize(keys[has])
        out[has] = (prefix + padded(codes + 1, width)).to_numpy()
    return out


def truth_table(r: pd.DataFrame, record_id: np.ndarray) -> pd.DataFrame:
    """The ground truth, one row per extract row (same order)."""
    ring = r["ring"].to_numpy()
    return pd.DataFrame({
        "record_id": text(record_id),
        "person_id": text(_ids("P", r["person"].to_numpy(), 7)),
        "household_id": text(_ids("H", r["household"].to_numpy(), 6)),
        "ring_id": text(_ids("R", ring, 5)),
        "label": text(r["label"].to_numpy()),
        "hard_case": text(r["hard_case"].to_numpy()),
        "variation": text(r["variation"].to_numpy()),
        "clean_national_id": text(r["clean_nid"].to_numpy()),
        "clean_id_country": text(np.where(r["clean_nid"].to_numpy() != "", r["country"].to_numpy(), "")),
    })[list(TRUTH_COLUMNS)]


CHUNK_ROWS = 100_000


def _csv_cells(values) -> pa.Array:
    """One column as CSV cells: quoted (quotes doubled) only when it holds a comma, quote or newline."""
    arr = pc.fill_null(arrow(values), "")
    needs = pc.match_substring(arr, ",")
    for mark in ('"', "\n", "\r"):
        needs = pc.or_(needs, pc.match_substring(arr, mark))
    rows = np.flatnonzero(needs.to_numpy(zero_copy_only=False))
    if not len(rows):
        return arr
    sub = pc.replace_substring(arr.take(pa.array(rows)), '"', '""')
    mark = pa.scalar('"', pa.large_string())
    quoted = pc.binary_join_element_wise(mark, sub, mark, pa.scalar("", pa.large_string()))
    return arrow(scatter(arr, rows, quoted))


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    """UTF-8 CSV with minimal quoting (RFC 4180 style) and LF line ends, built column-wise."""
    header = ",".join(
        '"' + c.replace('"', '""') + '"' if any(ch in c for ch in '",\r\n') else c for c in frame.columns
    )
    comma = pa.scalar(",", pa.large_string())
    newline = pa.scalar("\n", pa.large_string())
    empty = pa.scalar("", pa.large_string())
    cells = [_csv_cells(frame[c]) for c in frame.columns]
    with open(path, "wb") as handle:
        handle.write((header + "\n").encode("utf-8"))
        for start in range(0, len(frame), CHUNK_ROWS):  # bounded memory for large extracts
            part = [c.slice(start, CHUNK_ROWS) for c in cells]
            lines = pc.binary_join_element_wise(*part, comma)
            lines = pc.binary_join_element_wise(lines, empty, newline)  # each line ends in LF
            handle.write(_text_bytes(lines))


def _text_bytes(arr: pa.Array) -> memoryview:
    """The UTF-8 bytes of all strings of ``arr`` back to back (no Python string per row)."""
    arr = arr.cast(pa.large_string())
    offsets = np.frombuffer(arr.buffers()[1], dtype=np.int64)
    first, last = int(offsets[arr.offset]), int(offsets[arr.offset + len(arr)])
    return memoryview(arr.buffers()[2])[first:last]


def readme_text(records: int, persons: int, households: int, rings: int, seed: int,
                labels: dict[str, int], rates: DemoRates) -> str:
    """One paragraph describing the scenario and what the files hold."""
    label_text = ", ".join(f"{v:,} {k}" for k, v in labels.items() if v)
    return (
        f"Demo scenario (invented; no real people or institutions). {INSTITUTION}, a regional "
        f"credit union, has acquired {CARD_BUSINESS} and must merge the card portfolio's "
        f"customer file with its own branch and app onboarding records before a KYC refresh. "
        f"customers.csv is the combined extract as of {REFERENCE_DATE.isoformat()}: "
        f"{records:,} records from three channels (branch, app, card_portfolio) describing "
        f"{persons:,} persons, including {households:,} households and {rings:,} synthetic "
        f"identity rings. The card portfolio often lacks the national ID "
        f"({rates.card_missing_id_share:.0%} of its records) and writes the whole name in upper "
        f"case in one field; the app has more typos and +tag emails; the branch writes national "
        f"phone formats. truth.csv gives, for every record, the person, household and ring it "
        f"belongs to, its label ({label_text}), any hard case, the variations applied and the "
        f"clean national ID. Generated with seed {seed}; the same seed and settings give the "
        f"same files byte for byte. Links and flags found in this data are leads for practice, "
        f"not findings about anyone.\n"
    )


def write_all(out_dir: Path, extract: pd.DataFrame, truth: pd.DataFrame, readme: str) -> dict[str, Path]:
    """Write customers.csv, truth.csv and README.txt; returns their paths."""
    out_dir.mkdir(parents=True, exist_ok=True)
    files = {
        "extract": out_dir / "customers.csv",
        "truth": out_dir / "truth.csv",
        "readme": out_dir / "README.txt",
    }
    write_csv(extract[list(EXTRACT_COLUMNS)], files["extract"])
    write_csv(truth, files["truth"])
    files["readme"].write_text(readme, encoding="utf-8", newline="\n")
    return files


def count_labels(truth: pd.DataFrame) -> tuple[dict[str, int], dict[str, int]]:
    """Records per label (every label listed) and per hard-case kind."""
    labels = truth["label"].value_counts()
    hard = truth["hard_case"].value_counts()
    return ({k: int(labels.get(k, 0)) for k in LABELS}, {k: int(hard.get(k, 0)) for k in HARD_CASES})
