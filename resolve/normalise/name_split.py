"""The full-name split (`name_parts.split_full_name`) run on whole Arrow arrays.

Extracts that hold one name column can carry hundreds of thousands of distinct full names,
and splitting each in Python costs seconds. This module gives the same answers array-wise
for plainly written names, the bulk of any extract: ASCII letters, digits, spaces and the
punctuation ``. , ' -``. For those the Python rules reduce to regular expressions and a few
counts per token (word), all of which Arrow and numpy compute for every value at once:

- titles off the front and suffixes off the end use the very patterns of `name_parts`;
- "Family, Given" when a comma is present;
- otherwise the value is cut into tokens and one cut position is chosen per value:
  a leading run of ALL-CAPS words is the family name, a trailing initial puts the family
  name first, the first particle (or the word before a "y") starts the family name, and
  by default the last token is the family name.

Everything else (other characters, where Python's Unicode rules for case, white space and
word boundaries would need to be matched) goes to `split_full_name` itself, once per
distinct value. Tests compare both paths on generated and hand-written names.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise.name_parts import (
    GENERATION_PATTERN,
    GENERATIONAL,
    PARTICLES,
    SUFFIX_PATTERN,
    TITLE_PATTERN,
    split_full_name,
)
from resolve.normalise.textkeys import replace_where

STRING = pa.large_string()
# Values the array path decides: ASCII letters and digits, spaces and . , ' -
PLAIN_NAME = r"^[A-Za-z0-9 .,'\-]+$"
# Token classes (ASCII only, as the gate guarantees). An upper-case word has no lower-case
# letter and at least two letters, as `_is_upper_word` in name_parts asks.
_UPPER_WORD = r"^[^a-z]*[A-Z][^a-z]*[A-Z][^a-z]*$"
_VOWEL = r"[AEIOUYaeiouy]"
_INITIAL = r"^[A-Za-z0-9_]\.?$"
_NO_CUT = np.iinfo(np.int64).max


def split_full_names(values: pa.Array) -> dict[str, pa.Array | np.ndarray]:
    """Split every full name like `split_full_name`, plus whether it keeps its casing.

    Returns ``given_part``, ``family_part`` and ``suffix`` (Arrow ``large_string`` arrays,
    null where `split_full_name` gives None) and ``keep_case`` (numpy bool: the value is
    neither all upper case nor all lower case, as ``str.isupper``/``str.islower`` say).
    """
    values = values.cast(STRING) if values.type != STRING else values
    n = len(values)
    plain = pc.fill_null(pc.match_substring_regex(values, pattern=PLAIN_NAME), False)
    plain_np = plain.to_numpy(zero_copy_only=False)
    given = family = suffix = pa.nulls(n, STRING)
    keep_case = np.zeros(n, dtype=bool)
    if plain_np.any():
        sub = pc.filter(values, plain)
        parts = _split_plain(sub)
        given = pc.replace_with_mask(given, plain, parts["given"])
        family = pc.replace_with_mask(family, plain, parts["family"])
        suffix = pc.replace_with_mask(suffix, plain, parts["suffix"])
        upper = pc.match_substring_regex(sub, pattern="[A-Z]").to_numpy(zero_copy_only=False)
        lower = pc.match_substring_regex(sub, pattern="[a-z]").to_numpy(zero_copy_only=False)
        keep_case[plain_np] = upper == lower  # both cases, or no letter at all
    rest = np.flatnonzero(~plain_np)
    if len(rest):
        texts = values.take(pa.array(rest)).to_pylist()
        rows = [split_full_name(v) if v else (None, None, None) for v in texts]
        mask = pa.array(~plain_np)
        given = pc.replace_with_mask(given, mask, pa.array([r[0] for r in rows], STRING))
        family = pc.replace_with_mask(family, mask, pa.array([r[1] for r in rows], STRING))
        suffix = pc.replace_with_mask(suffix, mask, pa.array([r[2] for r in rows], STRING))
        keep_case[rest] = [bool(v) and not v.isupper() and not v.islower() for v in texts]
    return {"given_part": given, "family_part": family, "suffix": suffix,
            "keep_case": keep_case}


def _null_blank(arr: pa.Array) -> pa.Array:
    return pc.if_else(pc.equal(arr, ""), pa.scalar(None, STRING), arr)


def _squeeze(arr: pa.Array) -> pa.Array:
    """Runs of spaces to one, ends trimmed (white space is only ' ' in plain names)."""
    return pc.utf8_trim(replace_where(arr, "  ", " {2,}", " "), characters=" ")


def _split_plain(raw: pa.Array) -> dict[str, pa.Array]:
    """`split_full_name` for values that match ``PLAIN_NAME``."""
    n = len(raw)
    s = _squeeze(raw)
    s = pc.utf8_trim(replace_where(s, TITLE_PATTERN, TITLE_PATTERN, ""), characters=" ")
    s, suffix = _cut_suffix(s)

    given = pa.nulls(n, STRING)
    family = pa.nulls(n, STRING)
    # "Family, Given": cut at the first comma; later commas in the given part are spaces.
    comma = pc.fill_null(pc.match_substring(s, ","), False)
    if pc.any(comma).as_py():
        halves = pc.split_pattern(pc.filter(s, comma), pattern=",", max_splits=1)
        fam = _null_blank(pc.utf8_trim(pc.list_element(halves, 0), characters=" "))
        rest = pc.replace_substring(pc.list_element(halves, 1), pattern=",", replacement=" ")
        giv = _null_blank(_squeeze(rest))
        given = pc.replace_with_mask(given, comma, giv)
        family = pc.replace_with_mask(family, comma, fam)
    # One token: a family name alone. Several: cut between tokens.
    spaced = pc.fill_null(pc.match_substring(s, " "), False)
    filled = pc.invert(pc.or_(comma, pc.equal(s, "")))
    single = pc.and_(filled, pc.invert(spaced))
    family = pc.if_else(single, s, family)
    several = pc.and_(filled, spaced)
    if pc.any(several).as_py():
        giv, fam = _cut_tokens(pc.filter(s, several))
        given = pc.replace_with_mask(given, several, giv)
        family = pc.replace_with_mask(family, several, fam)
    return {"given": given, "family": family, "suffix": suffix}


def _cut_suffix(s: pa.Array) -> tuple[pa.Array, pa.Array]:
    """Suffixes off the end: (rest, kept generational suffix or null).

    The stem must keep something besides spaces and commas. Capturing the groups is slow
    (a lazy stem), so only the values that match at all are captured.
    """
    suffix = pa.nulls(len(s), STRING)
    hit = pc.fill_null(pc.match_substring_regex(s, pattern=SUFFIX_PATTERN), False)
    if not pc.any(hit).as_py():
        return s, suffix
    sub = pc.filter(s, hit)
    found = pc.extract_regex(sub, pattern=SUFFIX_PATTERN)
    stem, run = pc.struct_field(found, [0]), pc.struct_field(found, [1])
    usable = pc.fill_null(pc.match_substring_regex(stem, pattern=r"[^ ,]"), False)
    rest = pc.if_else(usable, pc.utf8_trim(stem, characters=" "), sub)
    gen = pc.utf8_lower(pc.struct_field(pc.extract_regex(run, pattern=GENERATION_PATTERN), [0]))
    kept = pc.take(pa.array(list(GENERATIONAL.values()), STRING),
                   pc.index_in(gen, value_set=pa.array(list(GENERATIONAL), STRING)))
    kept = pc.if_else(usable, kept, pa.scalar(None, STRING))
    return (pc.replace_with_mask(s, hit, rest.cast(STRING)),
            pc.replace_with_mask(suffix, hit, kept.cast(STRING)))


def _cut_tokens(s: pa.Array) -> tuple[pa.Array, pa.Array]:
    """(given, family) for names of two or more tokens with single spaces and no comma."""
    lists = pc.split_pattern(s, pattern=" ")
    offsets = lists.offsets.to_numpy().astype(np.int64)
    offsets = offsets - offsets[0]
    flat = lists.flatten()
    m = len(s)
    count = np.diff(offsets)
    owner = np.repeat(np.arange(m), count)
    pos = np.arange(len(flat)) - offsets[owner]

    def test(arr) -> np.ndarray:
        return pc.fill_null(arr, False).to_numpy(zero_copy_only=False)

    upper = test(pc.match_substring_regex(flat, pattern=_UPPER_WORD))
    vowel = test(pc.match_substring_regex(flat, pattern=_VOWEL)) | test(pc.equal(flat, "NG"))
    initial = test(pc.match_substring_regex(flat, pattern=_INITIAL))
    word = pc.utf8_rtrim(pc.utf8_lower(flat), characters=".")
    particle = test(pc.is_in(word, value_set=pa.array(list(PARTICLES), STRING)))
    is_y = test(pc.equal(word, "y"))

    # A leading run of upper-case words (each with a vowel, or "NG") followed only by
    # words that are not upper case is a family name written first ("DUPONT Jean").
    run = count.copy()
    not_upper = np.flatnonzero(~upper)
    np.minimum.at(run, owner[not_upper], pos[not_upper])
    in_run = pos < run[owner]
    no_vowel = np.bincount(owner[in_run & ~vowel], minlength=m) > 0
    upper_after = np.bincount(owner[upper & (pos > run[owner])], minlength=m) > 0
    caps = (run > 0) & (run < count) & ~no_vowel & ~upper_after
    # "Smith J": a trailing initial, unless the first token is an initial too.
    first, last = offsets[:-1], offsets[1:] - 1
    trailing_initial = initial[last] & ~initial[first]
    # The first particle from the second token on, or a "y" from the third token on (its
    # family name starts one token earlier), neither of them the last token.
    inner = (pos >= 1) & (pos <= count[owner] - 2)
    cut_at = np.where(particle & inner, pos, _NO_CUT)
    cut_at = np.where(is_y & inner & (pos >= 2), pos - 1, cut_at)
    particle_cut = np.full(m, _NO_CUT, dtype=np.int64)
    np.minimum.at(particle_cut, owner, cut_at)

    family_first = caps | trailing_initial
    cut = np.where(caps, run, np.where(trailing_initial, 1,
                                       np.where(particle_cut < _NO_CUT, particle_cut, count - 1)))
    head_rows = pos < cut[owner]
    head = _join_tokens(flat, head_rows, cut)
    tail = _join_tokens(flat, ~head_rows, count - cut)
    head = pc.if_else(pa.array(caps), pc.utf8_title(head), head)
    ff = pa.array(family_first)
    return pc.if_else(ff, tail, head), pc.if_else(ff, head, tail)


def _join_tokens(flat: pa.Array, rows: np.ndarray, counts: np.ndarray) -> pa.Array:
    """Join the selected tokens of each value with single spaces (counts: tokens per value)."""
    offsets = np.zeros(len(counts) + 1, dtype=np.int32)
    np.cumsum(counts, out=offsets[1:])
    picked = pc.filter(flat, pa.array(rows))
    lists = pa.ListArray.from_arrays(pa.array(offsets), picked)
    return pc.binary_join(lists, pa.scalar(" ", STRING)).cast(STRING)
