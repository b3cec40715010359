"""CSV files that are safe to open in a spreadsheet (formula injection, CWE-1236).

Export files hold values typed by customers and staff. A spreadsheet program runs a cell that
starts with ``=``, ``+``, ``-`` or ``@`` as a formula, and some treat a leading tab, carriage
return or NUL the same way, so a "name" such as ``=HYPERLINK(...)`` could act on the
analyst's machine. OWASP ASVS 5.0 requirement 1.2.10 asks for such cells to be escaped with a
leading single quote, and for RFC 4180 quoting otherwise (/work/shared/CHECKS.md).

Policy (docs/exports.md):

- every text cell that starts with one of ``= + - @``, tab, carriage return or NUL gets a
  leading ``'``: ``=1+1`` is written ``'=1+1``;
- exception: a cell that is entirely an E.164 phone number (``+`` then 2-15 digits, the
  first not 0; ITU-T E.164 allows at most 15) is written as is. It cannot hold a function or
  a reference, so it cannot run anything; escaping it would break every script that joins
  exports on the phone number. The trade-off: a spreadsheet may read it as the number
  15555550101 and drop the ``+``; import the column as text to keep it;
- numeric columns (probabilities, counts) are numbers, not text, and are left alone;
- RFC 4180 quoting (fields with commas, quotes or line breaks in double quotes) is done by
  the CSV writer; files are UTF-8 without a byte-order mark, lines end in ``\\n``.
"""

from __future__ import annotations

import os
from pathlib import Path

import pandas as pd

FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\0")
E164 = r"\+[1-9][0-9]{1,14}"
_START = r"^[=+\-@\t\r\x00]"


def escape_formulas(values: pd.Series) -> pd.Series:
    """Prefix ``'`` to text cells a spreadsheet would run as formulas (E.164 numbers excepted)."""
    s = values.astype("string")
    risky = s.str.contains(_START, regex=True) & ~s.str.fullmatch(E164)
    risky = risky.fillna(False).astype(bool)
    return s.mask(risky, "'" + s)


def is_text(series: pd.Series) -> bool:
    """True for columns holding text (object or string dtype)."""
    return pd.api.types.is_string_dtype(series.dtype) or series.dtype == object


def escape_frame(frame: pd.DataFrame) -> pd.DataFrame:
    """Escape every text column of ``frame`` (vectorised, one pass per column)."""
    out = frame.copy()
    for c in out.columns:
        if is_text(out[c]):
            out[c] = escape_formulas(out[c])
    return out


def open_private(path: str | Path, mode: str = "w"):
    """Open a file for writing readable by the owner only (exports hold personal data)."""
    path = Path(path)
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    os.chmod(path, 0o600)
    if "b" in mode:
        return os.fdopen(fd, mode)
    return os.fdopen(fd, mode, encoding="utf-8", newline="")


def write_csv(frame: pd.DataFrame, path: str | Path) -> int:
    """Write ``frame`` as a formula-safe CSV file (owner-only); returns the number of rows."""
    safe = escape_frame(frame)
    with open_private(path) as fh:
        safe.to_csv(fh, index=False, lineterminator="\n", na_rep="")
    return len(frame)
