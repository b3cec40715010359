"""Integer codes for the identifier table, built from codes the cluster stage already made.

Every risk rule groups identifiers by the value they share (kind + key) and by their kind,
status, reason and type. At a million records that is four million strings to hash, and the
cluster stage has just hashed the same key and type columns (`resolve.clusters.codes` keeps
those codes for as long as the columns live). This module derives the rules' codes from them,
cleaning each distinct text once (trimmed, blanks as missing) rather than every row, and
numbers the shared values in order of first appearance exactly as factorising the cleaned
text row by row would, so that run-local labels (``hub-00001``) do not change.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.clusters.codes import arrow_data, first_seen_codes, take_text, text_codes


def clean_text(values: pd.Series) -> pd.Series:
    """Text trimmed, with blanks as missing (string dtype)."""
    s = values.astype("string").str.strip()
    return s.mask(s == "")


def factorized(values: pd.Series) -> tuple[np.ndarray, pd.Index]:
    """``pd.factorize(values)`` (codes, -1 for missing; uniques in order of first appearance),
    from the shared codes for Arrow text and from the category codes for a categorical."""
    if isinstance(values.dtype, pd.CategoricalDtype):
        codes, seen = first_seen_codes(values.cat.codes.to_numpy(), len(values.cat.categories))
        return codes, pd.Index(values.cat.categories.take(seen))
    return text_codes(values)


def category(frame: pd.DataFrame, column: str) -> pd.Categorical:
    """A low-cardinality text column (kind, status, reason, type) as a categorical, stripped
    and with blanks as missing, cleaned once per distinct value."""
    if column not in frame.columns:
        return pd.Categorical([pd.NA] * len(frame), categories=pd.Index([], dtype="string"))
    codes, uniques = factorized(frame[column])
    clean = clean_text(pd.Series(uniques))
    again, categories = pd.factorize(clean, use_na_sentinel=True)
    final = np.where(codes >= 0, np.append(again, -1)[codes], -1)
    return pd.Categorical.from_codes(final, categories=pd.Index(categories, dtype="string"))


def _first_rows(codes: np.ndarray) -> np.ndarray:
    """Rows where a code first appears, for codes numbered in order of first appearance
    (each such row holds a code above every code before it)."""
    if len(codes) == 0:
        return np.zeros(0, dtype=np.int64)
    before = np.concatenate([[-1], np.maximum.accumulate(codes)[:-1]])
    return np.flatnonzero(codes > before)


def text_code(identifiers: pd.DataFrame) -> np.ndarray:
    """Per row, a code of the cleaned key (the cleaned value when the key is missing), -1
    when both are missing, numbered in order of first appearance: the codes of
    ``pd.factorize(clean_text(key).fillna(clean_text(value)))``."""
    n = len(identifiers)
    raw, uniques = text_codes(identifiers["key"])  # raw keys, shared with the cluster stage
    texts = pd.Series(uniques, dtype="string")
    merged = None
    if clean_already(_arrow_text(texts)):
        code = raw.copy()  # the usual case: every key is clean, each keeps its code
    else:
        merged, found = pd.factorize(clean_text(texts), use_na_sentinel=True)
        code = np.append(merged, -1)[raw]
        texts = pd.Series(found, dtype="string")
    fill = np.flatnonzero(code < 0)
    if len(fill) and "value" in identifiers.columns:
        code[fill] = _codes_among(clean_text(take_text(identifiers["value"], fill)), texts)
    # the codes are now one per text, not yet in order of first appearance
    width = int(code.max(initial=-1)) + 1
    first = np.full(width, n, dtype=np.int64)  # the first row of each code
    leads = _first_rows(raw)
    if merged is None:
        first[: len(leads)] = leads  # key codes are numbered by first appearance already
    else:
        np.minimum.at(first, code[leads][code[leads] >= 0], leads[code[leads] >= 0])
    filled = fill[code[fill] >= 0]
    np.minimum.at(first, code[filled], filled)
    rank = _rank(first, None if merged is not None else np.unique(code[filled]))
    return np.where(code >= 0, np.append(rank, -1)[code], -1)


def _rank(first: np.ndarray, moved: np.ndarray | None) -> np.ndarray:
    """Rank of each code by its first row (all distinct). With ``moved``, the codes whose first
    row is not in code order already (the others are): a merge instead of a full sort."""
    width = len(first)
    rank = np.empty(width, dtype=np.int64)
    if moved is None:
        rank[np.argsort(first, kind="stable")] = np.arange(width)
        return rank
    stays = np.ones(width, dtype=bool)
    stays[moved] = False
    base = np.flatnonzero(stays)
    moved = moved[np.argsort(first[moved], kind="stable")]
    rank[moved] = np.searchsorted(first[base], first[moved]) + np.arange(len(moved))
    rank[base] = np.arange(len(base)) + np.searchsorted(first[moved], first[base])
    return rank


def clean_already(texts: pa.Array | pa.ChunkedArray) -> bool:
    """Whether `clean_text` would leave every text as it is: none missing or blank, none
    starting or ending with white space (looked at, not rewritten)."""
    if texts.null_count:
        return False
    if len(texts) == 0:
        return True
    if pc.min(pc.utf8_length(texts)).as_py() == 0:
        return False
    ends = (pc.utf8_slice_codeunits(texts, 0, 1), pc.utf8_slice_codeunits(texts, -1))
    return not any(pc.any(pc.utf8_is_space(end)).as_py() for end in ends)


def _arrow_text(values: pd.Series) -> pa.Array | pa.ChunkedArray:
    """The Arrow data of a string Series (no copy when it is Arrow-backed; chunks kept)."""
    data = arrow_data(values)
    if data is None:
        data = pa.array(values.astype("string").to_numpy(dtype=object, na_value=None), type=pa.string())
    return data


def _codes_among(values: pd.Series, texts: pd.Series) -> np.ndarray:
    """Codes for ``values`` consistent with ``texts`` (distinct): position ``i`` for a value
    equal to ``texts[i]``, a new code past them for any other, -1 for missing. Only the few
    distinct ``values`` are hashed; every text is looked up among them."""
    codes, distinct = pd.factorize(values)
    if len(distinct) == 0:
        return codes.astype(np.int64)
    haystack = _arrow_text(texts)
    lookup = _arrow_text(pd.Series(distinct, dtype="string")).cast(haystack.type)
    where = pc.index_in(haystack, value_set=lookup)
    if isinstance(where, pa.ChunkedArray):
        where = where.combine_chunks()
    found = np.flatnonzero(where.is_valid().to_numpy(zero_copy_only=False))
    code_of = len(texts) + np.arange(len(distinct), dtype=np.int64)
    code_of[where.take(pa.array(found)).to_numpy(zero_copy_only=False)] = found
    return np.where(codes >= 0, np.append(code_of, -1)[codes], -1)


def shared_value_codes(identifiers: pd.DataFrame, kind: pd.Categorical) -> np.ndarray:
    """``kid`` per row: a code of (kind, cleaned key or value), -1 when there is no text,
    numbered in order of first appearance."""
    text = text_code(identifiers)
    kinds = kind.codes.astype(np.int64)
    rows = np.flatnonzero(text >= 0)
    if len(rows) == 0:
        return text
    # when every text comes with one known kind only, the (kind, text) codes are the text codes
    some_kind = np.full(int(text.max()) + 1, -2, dtype=np.int64)
    some_kind[text[rows]] = kinds[rows]  # any row's kind will do for the test below
    if (kinds[rows] >= 0).all() and (some_kind[text[rows]] == kinds[rows]).all():
        return text
    wide = np.where(text >= 0, text * (len(kind.categories) + 1) + kinds, -1)
    return first_seen_codes(wide)[0]
