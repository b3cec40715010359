"""Personal-name normaliser: display forms, matching keys, nickname roots and sound codes.

Names are the weakest identifier in a customer book: people shorten them (Bill for William),
spell them several ways (Catherine / Katherine), write accents or not, add titles and
suffixes, and systems store them in one column or two. This module turns given and family
names (or a single full-name column) into the aligned columns the later stages compare:
display forms, folded keys, the family core without particles, a nickname root and a
phonetic code, plus a status and reason per record. Every rule and its source is listed in
docs/normalisation.md ("Names").

The work runs once per distinct value (``on_distinct``) with Arrow compute kernels. The split
of a full name runs array-wise for plainly written names (``name_split``) and calls
``name_parts.split_full_name`` only for the rest; the phonetic code (jellyfish) calls Python
once per distinct key.
"""

from __future__ import annotations

import functools
from importlib import resources

import jellyfish
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, VALID
from resolve.normalise.name_parts import (
    CORE_PARTICLES,
    GENERATION_PATTERN,
    GENERATIONAL,
    KEY_SUFFIX_PATTERN,
    KEY_TITLE_PATTERN,
    NO_MIDDLE,
    PLACEHOLDER_PAIRS,
    PLACEHOLDER_PHRASES,
    PLACEHOLDER_WORDS,
    SUFFIX_PATTERN,
    TITLE_PATTERN,
)
from resolve.normalise.name_split import split_full_names
from resolve.normalise.textkeys import (
    distinct_codes,
    gather,
    STRING,
    match_key,
    repeated_character,
    replace_where,
    strings,
    tidy,
    title_if_one_case,
    to_arrow,
    to_series,
)

OUTPUT_COLUMNS = (
    "value", "status", "reason", "given", "middle", "family", "suffix", "given_key",
    "middle_key", "family_key", "family_core", "family_first", "given_root", "given_initial",
    "given_phonetic", "family_phonetic",
)

# Part status codes, ordered so that the larger code wins when a record has two parts.
_MISSING, _VALID, _INVALID, _PLACEHOLDER = 0, 1, 2, 3
_STATUS_NAMES = np.array([MISSING, VALID, INVALID, PLACEHOLDER], dtype=object)
# Reason codes (a contract with docs/normalisation.md).
REASONS = ("", "no_name", "digits_in_name", "single_letter", "placeholder_name")
_R = {name: i for i, name in enumerate(REASONS)}

_CORE_RE = r"^(?P<particles>(?:(?:" + "|".join(CORE_PARTICLES) + r")[ -]+)+)(?P<core>.+)$"
# Placeholder pairs as a lookup table over (given word, family word) positions.
_PAIR_GIVEN = tuple(sorted({p.split(" ")[0] for p in PLACEHOLDER_PAIRS}))
_PAIR_FAMILY = tuple(sorted({p.split(" ")[1] for p in PLACEHOLDER_PAIRS}))
_PAIR_TABLE = np.zeros((len(_PAIR_GIVEN) + 1, len(_PAIR_FAMILY) + 1), dtype=bool)
for _pair in PLACEHOLDER_PAIRS:
    _gw, _fw = _pair.split(" ")
    _PAIR_TABLE[_PAIR_GIVEN.index(_gw) + 1, _PAIR_FAMILY.index(_fw) + 1] = True
_NA_SLASH_RE = r"(?i)^n\s*[/.]\s*[ak]\.?$"  # "N/A", "n.a.", "N/K" written with a separator


def normalise_names(
    given: pd.Series | None,
    family: pd.Series | None,
    full: pd.Series | None = None,
) -> pd.DataFrame:
    """Normalise personal names into display forms, matching keys, status and reason.

    ``given``, ``family`` and ``full`` are aligned Series (same index); any may be None.
    A full name is split (best guess, see ``split_full_name``) only for records whose given
    and family names are both blank. Returns a frame with the index of the inputs and the
    columns in ``OUTPUT_COLUMNS``: display forms (``given``, ``middle``, ``family``), the
    kept generational ``suffix`` (jr, sr, ii, iii, iv), keys (``given_key``, ``middle_key``,
    ``family_key``, ``family_core`` without leading particles, ``family_first`` its first
    word), ``given_root`` (nickname root), ``given_initial``, metaphone codes, and
    ``status`` / ``reason``. Keys of a part that is a placeholder are <NA>.
    """
    parts = [p for p in (given, family, full) if p is not None]
    if not parts:
        raise InputError("Pass at least one name column (given, family or full name).")
    index = parts[0].index
    for p in parts[1:]:
        if len(p) != len(index) or not p.index.equals(index):
            raise InputError(
                "The name columns must come from the same table; align them on one index first."
            )
    n = len(index)
    g_codes, g_values = _distinct(given, n)
    f_codes, f_values = _distinct(family, n)
    g_extra = f_extra = suffix_extra = strings([])
    g_keep = f_keep = np.zeros(0, dtype=bool)
    if full is not None:
        blank_g = _blank(g_values)[g_codes]
        blank_f = _blank(f_values)[f_codes]
        u_codes, u_values = _distinct(full, n)
        use_full = blank_g & blank_f & ~_blank(u_values)[u_codes]
        if use_full.any():
            # Split each distinct full name once; its parts join the distinct given and
            # family values as extra entries, so no string is handled per record. Many
            # full names share a given (or family) part, and a part's result depends only
            # on its text, its casing flag and (given parts) the suffix cut from the full
            # name, so each distinct combination is one extra entry.
            used = np.unique(u_codes[use_full])
            split = _split_full_names(pc.take(u_values, pa.array(used)))
            slot = np.searchsorted(used, u_codes[use_full])
            keep_case = split["keep_case"]
            g_rows, g_first = _distinct_rows(split["given_part"], keep_case, split["suffix"])
            f_rows, f_first = _distinct_rows(split["family_part"], keep_case)
            g_codes = g_codes.copy()
            f_codes = f_codes.copy()
            g_codes[use_full] = len(g_values) + g_rows[slot]
            f_codes[use_full] = len(f_values) + f_rows[slot]
            g_extra = pc.take(split["given_part"], pa.array(g_first))
            suffix_extra = pc.take(split["suffix"], pa.array(g_first))
            f_extra = pc.take(split["family_part"], pa.array(f_first))
            g_keep, f_keep = keep_case[g_first], keep_case[f_first]
    # Parts cut from a full name written in mixed case keep the casing of the full name.
    gp = _given_parts(pa.concat_arrays([g_values, g_extra]),
                      np.concatenate([np.zeros(len(g_values), dtype=bool), g_keep]))
    fp = _family_parts(pa.concat_arrays([f_values, f_extra]),
                       np.concatenate([np.zeros(len(f_values), dtype=bool), f_keep]))
    # A suffix written in a full name ("John Smith Jr") was cut off by the split.
    tail = len(g_values)
    gp["suffix"] = pa.concat_arrays(
        [gp["suffix"].slice(0, tail), pc.coalesce(suffix_extra, gp["suffix"].slice(tail))]
    )
    out = _combine(g_codes, gp, f_codes, fp)
    out.index = index
    return out


def _distinct(values: pd.Series | None, n: int) -> tuple[np.ndarray, pa.Array]:
    """Codes into the distinct raw values, and those values as an Arrow array."""
    if values is None:
        return np.zeros(n, dtype=np.int64), pa.nulls(1, STRING)
    codes, uniques = distinct_codes(values.astype("string"))
    return codes, to_arrow(uniques)


def _distinct_rows(texts: pa.Array, *more) -> tuple[np.ndarray, np.ndarray]:
    """Distinct combinations of aligned columns: (code per row, first row of each code).

    ``texts`` and any further Arrow string columns are dictionary-encoded (null is a value
    of its own); numpy bool columns are taken as they are.
    """
    key = np.zeros(len(texts), dtype=np.int64)
    for column in (texts, *more):
        if isinstance(column, np.ndarray):
            codes, width = column.astype(np.int64), 2
        else:
            encoded = pc.dictionary_encode(column)
            width = len(encoded.dictionary) + 1
            codes = pc.fill_null(encoded.indices, width - 1).to_numpy(zero_copy_only=False)
        key = key * width + codes
    rows, uniques = pd.factorize(key)
    first = np.empty(len(uniques), dtype=np.int64)
    first[rows[::-1]] = np.arange(len(rows) - 1, -1, -1)
    return np.asarray(rows, dtype=np.int64), first


def _blank(values: pa.Array) -> np.ndarray:
    """True for null or white-space-only values."""
    return pc.is_null(tidy(values)).to_numpy(zero_copy_only=False)


def _split_full_names(values: pa.Array) -> dict[str, pa.Array]:
    """Split each distinct full name: array-wise for plain names, else in Python per value."""
    return split_full_names(values)


def _strip_suffix(arr: pa.Array) -> tuple[pa.Array, pa.Array]:
    """Remove trailing generational suffixes and post-nominals; return (text, kept suffix)."""
    found = pc.extract_regex(arr, pattern=SUFFIX_PATTERN)
    stem = pc.struct_field(found, [0])
    run = pc.struct_field(found, [1])
    usable = pc.fill_null(pc.match_substring_regex(stem, pattern=r"[^\s,]"), False)
    text = pc.if_else(usable, pc.utf8_rtrim(stem, characters=" ,"), arr)
    gen = pc.struct_field(pc.extract_regex(run, pattern=GENERATION_PATTERN), [0])
    gen = pc.if_else(usable, pc.utf8_lower(gen), pa.scalar(None, STRING))
    keys = strings(list(GENERATIONAL))
    kept = strings(list(GENERATIONAL.values()))
    return tidy(text), pc.take(kept, pc.index_in(gen, value_set=keys))


def _part_status(key: pa.Array, display: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    """Status and reason codes for one name part (before record-level rules).

    ``display`` is the part as written once titles and suffixes are off: null means the
    part is missing; text whose key is empty (only punctuation) is a placeholder.
    """
    n = len(display)
    status = np.full(n, _VALID, dtype=np.int8)
    reason = np.zeros(n, dtype=np.int8)
    missing = pc.is_null(display).to_numpy(zero_copy_only=False)
    no_letters = (pc.is_null(key).to_numpy(zero_copy_only=False)) & ~missing
    digits = pc.fill_null(pc.match_substring_regex(key, pattern=r"\p{N}"), False)
    digits = digits.to_numpy(zero_copy_only=False)
    words = strings(sorted(PLACEHOLDER_WORDS | PLACEHOLDER_PHRASES))
    first = pc.struct_field(pc.extract_regex(key, pattern=r"^(?P<first>\S+)"), [0])
    placeholder = (
        pc.fill_null(pc.is_in(key, value_set=words), False).to_numpy(zero_copy_only=False)
        | pc.fill_null(pc.is_in(first, value_set=words), False).to_numpy(zero_copy_only=False)
        | repeated_character(key).to_numpy(zero_copy_only=False)
        | repeated_character(first).to_numpy(zero_copy_only=False)
        | pc.fill_null(pc.match_substring_regex(display, pattern=_NA_SLASH_RE), False)
        .to_numpy(zero_copy_only=False)
        | no_letters
    )
    status[digits] = _INVALID
    reason[digits] = _R["digits_in_name"]
    status[placeholder] = _PLACEHOLDER
    reason[placeholder] = _R["placeholder_name"]
    status[missing] = _MISSING
    reason[missing] = 0
    return status, reason


def _given_parts(raw: pa.Array, keep_case: np.ndarray) -> dict:
    """Columns for distinct given-name values: display, middle, keys, root, codes, status."""
    text = tidy(raw)
    text = tidy(pc.replace_substring_regex(text, pattern=TITLE_PATTERN, replacement=""))
    text, suffix = _strip_suffix(text)
    plain = text  # keys come from the text as written: title-casing is not reversible
    text = pc.if_else(pa.array(keep_case), text, title_if_one_case(text))
    # Drop tokens that hold no letter or digit ("- John"), then split first word / rest.
    written = text
    text = tidy(pc.replace_substring_regex(
        text, pattern=r"(?:^|\s)[^\p{L}\p{N}\s]+(?:\s|$)", replacement=" "))
    words = pc.extract_regex(text, pattern=r"^(?P<first>\S+)(?: (?P<rest>.+))?$")
    first = pc.struct_field(words, [0])
    first = pc.replace_substring_regex(first, pattern=r"^(\pL)\.$", replacement=r"\1")
    rest = blank_or(pc.struct_field(words, [1]))
    key_all = _key_without_affixes(match_key(plain))
    key_words = pc.extract_regex(key_all, pattern=r"^(?P<first>\S+)(?: (?P<rest>.+))?$")
    given_key = pc.struct_field(key_words, [0])
    middle_key = blank_or(pc.struct_field(key_words, [1]))
    no_middle = pc.fill_null(pc.is_in(middle_key, value_set=strings(sorted(NO_MIDDLE))), False)
    middle_key = pc.if_else(no_middle, pa.scalar(None, STRING), middle_key)
    rest = pc.if_else(no_middle, pa.scalar(None, STRING), rest)
    status, reason = _part_status(key_all, written)
    return {
        "given": first,
        "middle": rest,
        "given_key": given_key,
        "middle_key": middle_key,
        "given_root": _roots(given_key),
        "given_initial": blank_or(pc.utf8_slice_codeunits(given_key, 0, 1)),
        "given_phonetic": _phonetic(given_key),
        "suffix": suffix,
        "status": status,
        "reason": reason,
        "single": pc.fill_null(pc.equal(pc.utf8_length(given_key), 1), False)
        .to_numpy(zero_copy_only=False),
        "pair": _pair_codes(given_key, _PAIR_GIVEN),
    }


def _family_parts(raw: pa.Array, keep_case: np.ndarray) -> dict:
    """Columns for distinct family-name values: display, key, core, first word, codes."""
    text, suffix = _strip_suffix(tidy(raw))
    plain = text  # keys come from the text as written: title-casing is not reversible
    text = pc.if_else(pa.array(keep_case), text, title_if_one_case(text))
    key = _key_without_affixes(match_key(plain), titles=False)
    hyphened = _key_without_affixes(match_key(plain, keep_hyphens=True), titles=False)
    core_found = pc.struct_field(pc.extract_regex(hyphened, pattern=_CORE_RE), [1])
    core_h = pc.coalesce(core_found, hyphened)
    core = tidy(pc.replace_substring(core_h, pattern="-", replacement=""))
    family_first = pc.struct_field(pc.extract_regex(core_h, pattern=r"^(?P<first>[^ -]+)"), [0])
    status, reason = _part_status(key, text)
    single = pc.fill_null(pc.equal(pc.utf8_length(key), 1), False).to_numpy(zero_copy_only=False)
    fix = single & (status == _VALID)
    status[fix] = _INVALID
    reason[fix] = _R["single_letter"]
    compact = pc.replace_substring(core, pattern=" ", replacement="")
    return {
        "family": text,
        "family_key": key,
        "family_core": core,
        "family_first": family_first,
        "family_phonetic": _phonetic(compact),
        "suffix": suffix,
        "status": status,
        "reason": reason,
        "pair": _pair_codes(key, _PAIR_FAMILY),
    }


def _key_without_affixes(key: pa.Array, *, titles: bool = True) -> pa.Array:
    """Drop titles at the start (given names) and suffixes at the end of a key."""
    if titles:
        key = replace_where(key, KEY_TITLE_PATTERN, KEY_TITLE_PATTERN, "")
    key = replace_where(key, KEY_SUFFIX_PATTERN, KEY_SUFFIX_PATTERN, "")
    return blank_or(pc.utf8_trim(key, " "))


def blank_or(arr: pa.Array) -> pa.Array:
    """Empty strings -> null (regex groups that did not take part come back as "")."""
    return pc.if_else(pc.equal(arr, ""), pa.scalar(None, arr.type), arr)


@functools.lru_cache(maxsize=1)
def given_name_table() -> pd.DataFrame:
    """The given-name equivalence table (resolve/data/given_names.csv): variant, root, kind."""
    path = resources.files("resolve") / "data" / "given_names.csv"
    with path.open("r", encoding="utf-8") as handle:
        return pd.read_csv(handle, dtype="string", keep_default_na=False)


def _roots(keys: pa.Array) -> pa.Array:
    """Nickname root of each given key; the key itself when the table does not list it."""
    table = given_name_table()
    variants = strings(table["variant"].tolist())
    roots = strings(table["root"].tolist())
    found = pc.take(roots, pc.index_in(keys, value_set=variants))
    return pc.coalesce(found, keys)


def _phonetic(keys: pa.Array) -> pa.Array:
    """Metaphone code of each key, after reading a non-initial "y" as "i" (Meyer = Meier).

    Runs jellyfish once per distinct key (the caller passes distinct values).
    """
    prepared = pc.replace_substring_regex(keys, pattern=r"(\S)y", replacement=r"\1i")
    prepared = pc.replace_substring(prepared, pattern=" ", replacement="")
    codes = [jellyfish.metaphone(v) if v else None for v in prepared.to_pylist()]
    return blank_or(strings(codes))


def _pair_codes(keys: pa.Array, words: tuple[str, ...]) -> np.ndarray:
    """1-based position of each key in ``words`` (0 when absent), for the pair check."""
    pos = pc.index_in(keys, value_set=strings(list(words)))
    return pc.fill_null(pc.add(pos, 1), 0).to_numpy(zero_copy_only=False).astype(np.int16)


def _combine(g_codes: np.ndarray, gp: dict, f_codes: np.ndarray, fp: dict) -> pd.DataFrame:
    """Record-level status, reason, value and placeholder masking from the two parts."""
    g_status = gp["status"][g_codes]
    f_status = fp["status"][f_codes]
    status = np.maximum(g_status, f_status)
    reason = np.where(f_status >= g_status, fp["reason"][f_codes], gp["reason"][g_codes])
    # Whole-name placeholders ("John Doe") and a lone initial with no family name.
    is_pair = _PAIR_TABLE[gp["pair"][g_codes], fp["pair"][f_codes]]
    status = np.where(is_pair, _PLACEHOLDER, status)
    reason = np.where(is_pair, _R["placeholder_name"], reason)
    lone = gp["single"][g_codes] & (f_status == _MISSING) & (status == _VALID)
    status = np.where(lone, _INVALID, status)
    reason = np.where(lone, _R["single_letter"], reason)
    reason = np.where(status == _MISSING, _R["no_name"], reason)

    # Keys of placeholder parts point at the extra null row that ``gather`` adds.
    g_len, f_len = len(gp["status"]), len(fp["status"])
    g_hidden = np.where((gp["status"] == _PLACEHOLDER)[g_codes] | is_pair, g_len, g_codes)
    f_hidden = np.where((fp["status"] == _PLACEHOLDER)[f_codes] | is_pair, f_len, f_codes)
    cols: dict[str, pa.Array] = {}
    for col in ("given", "middle"):
        cols[col] = gather(gp[col], g_codes)
    cols["family"] = gather(fp["family"], f_codes)
    for col in ("given_key", "middle_key", "given_root", "given_phonetic"):
        cols[col] = gather(gp[col], g_hidden)
    for col in ("family_key", "family_core", "family_first", "family_phonetic"):
        cols[col] = gather(fp[col], f_hidden)
    cols["given_initial"] = gather(gp["given_initial"], g_hidden)
    # The family part's suffix wins; the given part's (or the full name's) fills in.
    g_has = pc.is_valid(gp["suffix"]).to_numpy(zero_copy_only=False)
    f_has = pc.is_valid(fp["suffix"]).to_numpy(zero_copy_only=False)
    if g_has.any() or f_has.any():
        cols["suffix"] = pc.coalesce(gather(fp["suffix"], f_codes), gather(gp["suffix"], g_codes))
    else:
        cols["suffix"] = pa.nulls(len(g_codes), STRING)
    joined = pc.binary_join_element_wise(
        cols["given"], cols["middle"], cols["family"], pa.scalar(" ", STRING),
        null_handling="replace", null_replacement="",
    )
    joined = pc.utf8_trim(pc.replace_substring(joined, pattern="  ", replacement=" "), " ")
    cols["value"] = blank_or(joined)
    cols["status"] = pc.take(strings(list(_STATUS_NAMES)), pa.array(status))
    cols["reason"] = pc.take(strings([None, *REASONS[1:]]), pa.array(reason))
    return pd.DataFrame({c: to_series(cols[c]) for c in OUTPUT_COLUMNS})
