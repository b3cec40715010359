"""Column-wise text helpers shared by the name and address normalisers.

Names and addresses both need the same few steps before they can be compared: tidy the white
space, fold accents (``é`` -> ``e``, ``ß`` -> ``ss``), lower-case and drop punctuation. These
helpers do that on whole pyarrow string arrays with Arrow compute kernels (RE2 regular
expressions), so that the normalisers never loop over values in Python.

Accent folding follows Unicode Standard Annex #15 (Normalization Forms): the NFKD form splits
a letter such as ``é`` into ``e`` plus a combining accent, and the combining marks (general
category Mn) are then removed. Marks are removed only after Latin, Greek and Cyrillic letters:
in other scripts (Japanese kana, Indic vowel signs) a combining mark changes the sound and
removing it would merge different names. A few Latin letters have no decomposition
(``ø``, ``ł``, ``ß``, ``æ`` ...); an explicit table maps them.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise.distinct import on_distinct

# Letters that NFKD leaves whole, with their usual plain-Latin spelling (common practice).
FOLD_TABLE: dict[str, str] = {
    "ß": "ss", "ẞ": "SS", "ø": "o", "Ø": "O", "ł": "l", "Ł": "L", "æ": "ae", "Æ": "AE",
    "œ": "oe", "Œ": "OE", "đ": "d", "Đ": "D", "ð": "d", "Ð": "D", "þ": "th", "Þ": "TH",
    "ı": "i", "ħ": "h", "Ħ": "H", "ŧ": "t", "Ŧ": "T", "ŋ": "n", "Ŋ": "N", "ĸ": "k",
    "ƒ": "f", "ɨ": "i", "ʉ": "u", "ǥ": "g", "Ǥ": "G", "ƚ": "l", "ƶ": "z", "Ƶ": "Z",
}
_FOLD_CLASS = "[" + "".join(FOLD_TABLE) + "]"

# Apostrophes, hyphens and dots join the parts of a name: O'Neil -> oneil, Smith-Jones ->
# smithjones, St. -> st. Every other character that is not a letter or digit separates words.
APOSTROPHES = "'’‘`´ʼʻ"
HYPHENS = "\\-‐‑‒–—―"
_JOINERS = "[" + APOSTROPHES + ".]"
_HYPHEN = "[" + HYPHENS + "]"


# pandas' Arrow-backed ``string`` dtype stores large_string; working in the same type avoids
# a copy at every hand-over between pandas and Arrow.
STRING = pa.large_string()


def to_arrow(values: pd.Series) -> pa.Array:
    """Return the values of a Series as one pyarrow large_string array (nulls for missing)."""
    arr = pa.array(values.astype("string").array)
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks() if arr.num_chunks != 1 else arr.chunk(0)
    return arr if arr.type == STRING else arr.cast(STRING)


def to_series(arr: pa.Array | pa.ChunkedArray, index: pd.Index | None = None) -> pd.Series:
    """Wrap a pyarrow string array as a pandas ``string`` Series (missing shown as <NA>)."""
    if arr.type != STRING:
        arr = arr.cast(STRING)
    return pd.Series(pd.arrays.ArrowStringArray(pa.chunked_array([arr])), index=index)


def strings(values: list) -> pa.Array:
    """A Python list of str/None as an Arrow array of the working string type."""
    return pa.array(values, STRING)


def blank_to_null(arr: pa.Array) -> pa.Array:
    """Turn empty strings into nulls."""
    return pc.if_else(pc.equal(arr, ""), pa.scalar(None, arr.type), arr)


def tidy(arr: pa.Array) -> pa.Array:
    """Collapse runs of white space to one space, trim the ends, empty -> null."""
    arr = replace_where(arr, r"\s\s|[^ \S]", r"\s+", " ")
    return blank_to_null(pc.utf8_trim_whitespace(arr))


def replace_where(arr: pa.Array, gate: str, pattern: str, replacement: str) -> pa.Array:
    """Regex replace, run only on the values that match ``gate``.

    Matching (a DFA scan) is much cheaper than replacing (which rebuilds every string), and
    most values need no change, so the replace runs on the matching subset only.
    """
    hit = pc.fill_null(pc.match_substring_regex(arr, pattern=gate), False)
    if not pc.any(hit).as_py():
        return arr
    fixed = pc.replace_substring_regex(
        pc.filter(arr, hit), pattern=pattern, replacement=replacement
    )
    return pc.replace_with_mask(arr, hit, fixed.cast(arr.type))


def extract_where(
    arr: pa.Array, pattern: str, gate: str | None = None, *, most: bool = False
) -> dict[str, pa.Array]:
    """Named groups of ``pattern`` (null where it does not match) plus ``_hit`` (bool).

    The capture-free match (``gate``, default the pattern itself) decides which values are
    worth the slower extraction; only those are extracted. With ``most`` (when most values
    are expected to match) the gate is skipped. Empty groups come back as null.
    """
    n = len(arr)
    names = _group_names(pattern)
    if most:
        found = pc.extract_regex(arr, pattern=pattern)
        out = {
            name: blank_to_null(pc.struct_field(found, [i]).cast(STRING))
            for i, name in enumerate(names)
        }
        out["_hit"] = pc.fill_null(pc.is_valid(found), False)
        return out
    hit = pc.fill_null(pc.match_substring_regex(arr, pattern=gate or pattern), False)
    out = {name: pa.nulls(n, STRING) for name in names}
    if pc.any(hit).as_py():
        found = pc.extract_regex(pc.filter(arr, hit), pattern=pattern)
        ok = pc.is_valid(found)
        hit = pc.replace_with_mask(hit, hit, ok)
        for i, name in enumerate(names):
            field = blank_to_null(pc.struct_field(found, [i]).cast(STRING))
            out[name] = pc.replace_with_mask(
                out[name], pc.fill_null(hit, False), pc.filter(field, ok)
            )
    out["_hit"] = hit
    return out


def _group_names(pattern: str) -> list[str]:
    """Names of the named groups of a pattern, in order."""
    return re.findall(r"\(\?P<(\w+)>", pattern)


def fold(arr: pa.Array) -> pa.Array:
    """Fold accents (UAX #15 NFKD, combining marks removed) and map undecomposed letters.

    Only values holding a non-ASCII character are touched; the rest pass through unchanged.
    """
    non_ascii = pc.fill_null(pc.match_substring_regex(arr, pattern=r"[^\x00-\x7f]"), False)
    if not pc.any(non_ascii).as_py():
        return arr
    sub = pc.filter(arr, non_ascii)
    sub = pc.utf8_normalize(sub, form="NFKD")
    sub = pc.replace_substring_regex(
        sub, pattern=r"([\p{Latin}\p{Greek}\p{Cyrillic}])\p{Mn}+", replacement=r"\1"
    )
    special = pc.fill_null(pc.match_substring_regex(sub, pattern=_FOLD_CLASS), False)
    if pc.any(special).as_py():
        for letter, plain in FOLD_TABLE.items():
            sub = pc.replace_substring(sub, pattern=letter, replacement=plain)
    # Recompose what is left (marks kept in other scripts) so keys stay readable.
    sub = pc.utf8_normalize(sub, form="NFC")
    # Put the folded values back in their positions.
    return pc.replace_with_mask(arr, non_ascii, sub.cast(arr.type))


def match_key(arr: pa.Array, *, keep_hyphens: bool = False) -> pa.Array:
    """Matching key: folded, lower-case, apostrophes/dots (and hyphens) removed, one space.

    With ``keep_hyphens`` a hyphen becomes ``-`` (so that callers can still see where a
    hyphenated name splits); otherwise it is removed. Empty results become null.

    The key of a key is the key itself. ASCII text gets there in one pass; text with other
    characters can need another (removing an apostrophe can leave an accent next to a
    letter, lower-casing can reveal a letter the fold table maps), so those values are
    passed again until they stop changing.
    """
    out = _key_once(arr, keep_hyphens)
    for _ in range(3):
        odd = pc.fill_null(pc.match_substring_regex(out, pattern=r"[^\x00-\x7f]"), False)
        if not pc.any(odd).as_py():
            break
        sub = pc.filter(out, odd)
        again = _key_once(sub, keep_hyphens)
        changed = pc.fill_null(pc.not_equal(sub, again), True)
        if not pc.any(changed).as_py():
            break
        out = pc.replace_with_mask(out, odd, again.cast(out.type))
    return out


def _key_once(arr: pa.Array, keep_hyphens: bool) -> pa.Array:
    arr = pc.utf8_lower(fold(arr))
    arr = replace_where(arr, _JOINERS, _JOINERS, "")
    arr = replace_where(arr, _HYPHEN, _HYPHEN, "-" if keep_hyphens else "")
    keep = r"[^\p{L}\p{M}\p{N}\- ]+" if keep_hyphens else r"[^\p{L}\p{M}\p{N} ]+"
    arr = replace_where(arr, keep, keep, " ")
    # A mark that follows no letter (after a space, a digit, the start) carries nothing.
    arr = replace_where(arr, r"(?:^|[^\p{L}\p{M}])\p{M}", r"(^|[^\p{L}\p{M}])\p{M}+", r"\1")
    if keep_hyphens:
        arr = replace_where(arr, r" -|- |--|^-|-$", r" *-[ -]*", "-")
        arr = replace_where(arr, r"^-|-$", r"^-+|-+$", "")
    return tidy(arr)


def title_if_one_case(arr: pa.Array) -> pa.Array:
    """Title-case values written ALL UPPER or all lower; keep mixed-case values as written."""
    one_case = pc.or_(pc.utf8_is_upper(arr), pc.utf8_is_lower(arr))
    return pc.if_else(pc.fill_null(one_case, False), pc.utf8_title(arr), arr)


def repeated_character(arr: pa.Array, min_length: int = 3) -> pa.Array:
    """True where a value is one character repeated at least ``min_length`` times ("xxx")."""
    length = pc.utf8_length(arr)
    first = pc.utf8_slice_codeunits(arr, 0, 1)
    same = pc.equal(pc.binary_repeat(first, length), arr)
    return pc.fill_null(pc.and_(same, pc.greater_equal(length, min_length)), False)


def distinct_codes(values: pd.Series) -> tuple[np.ndarray, pd.Series]:
    """Positions into the distinct values, and the distinct values, found by ``on_distinct``.

    ``on_distinct`` gathers a whole result frame with pandas ``iloc``; for wide string
    results at a million rows that gather costs more than the work itself. Asking it only
    for each value's distinct position lets the normalisers gather their string columns
    with Arrow ``take`` (``gather``), keeping the same distinct-value rules (one <NA> value,
    first-seen order).
    """
    seen: dict[str, pd.Series] = {}

    def positions(uniques: pd.Series) -> pd.DataFrame:
        seen["uniques"] = uniques
        return pd.DataFrame({"pos": np.arange(len(uniques), dtype=np.int64)}, index=uniques.index)

    codes = on_distinct(values, positions)["pos"].to_numpy(dtype=np.int64)
    uniques = seen.get("uniques", pd.Series([], dtype="string"))
    return codes, uniques


def gather(arr: pa.Array, codes: np.ndarray) -> pa.Array:
    """``arr[codes]`` with Arrow take; a code equal to ``len(arr)`` gives null."""
    codes = np.asarray(codes, dtype=np.int64)
    beyond = codes >= len(arr)
    if beyond.any():
        return pc.take(arr, pa.array(np.where(beyond, 0, codes), mask=beyond))
    return pc.take(arr, pa.array(codes))
