"""Array-at-a-time phone parsing that reproduces the reference library's decisions.

Why this module exists: ``phonenumbers.parse`` costs tens of microseconds per string, which
is minutes for a customer book of millions of phones. Most phones in an extract are written
plainly (digits, spaces, dots, dashes, brackets, perhaps a leading ``+``), and for those the
library's work is a fixed sequence of steps driven by its metadata: strip an international
prefix (``+``, ``00``, ``011``...), read a 1-3 digit country calling code, strip a national
trunk prefix, then match the national significant number against the region's number
patterns. This module runs those same steps on whole arrays: digits live in a fixed-width
byte matrix (one row per distinct string) and the metadata regular expressions run through
Arrow's RE2 engine (``pyarrow.compute``), grouped by region.

Whatever the arrays cannot settle exactly (odd prefixes, regions whose national prefix rule
rewrites digits, fewer than 3 or more than 20 digits) is marked ``FALLBACK`` and the caller
hands it to phonenumbers itself, once per distinct value. A test compares both paths on the
example numbers of every region and number type, in several written formats.

All metadata is read from the installed phonenumbers package, so a metadata update changes
both paths together.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from phonenumbers import (
    COUNTRY_CODE_TO_REGION_CODE,
    SUPPORTED_REGIONS,
    PhoneNumberType,
    ValidationResult,
)
from phonenumbers.phonemetadata import PhoneMetadata

from resolve.normalise.phone_digits import (  # the digit-matrix helpers live there
    WIDTH,
    ZERO,
    _drop_prefix,
    _regex_match,
    _regex_prefix,
    _starts_with,
    digit_matrix,
    e164_strings,
    to_arrow,
)

MAX_NSN = 17  # longest national significant number the reference library accepts

# Row states returned by `parse_digits`.
PARSED = 0
FALLBACK = 1
ERROR = 2

# Error codes for rows in state ERROR (the reason the reference library would raise).
ERR_TOO_SHORT = 1
ERR_TOO_LONG = 2
ERR_UNKNOWN_CC = 3

UNKNOWN = PhoneNumberType.UNKNOWN
_SPECIAL_TYPES = (  # the order in which the reference library tests number types
    ("premium_rate", PhoneNumberType.PREMIUM_RATE),
    ("toll_free", PhoneNumberType.TOLL_FREE),
    ("shared_cost", PhoneNumberType.SHARED_COST),
    ("voip", PhoneNumberType.VOIP),
    ("personal_number", PhoneNumberType.PERSONAL_NUMBER),
    ("pager", PhoneNumberType.PAGER),
    ("uan", PhoneNumberType.UAN),
    ("voicemail", PhoneNumberType.VOICEMAIL),
)
_LENGTH_TABLE = 64
_DIGITS_ONLY = re.compile(r"\d+")
_CALLING_CODE_OK = np.zeros(1000, dtype=bool)
for _cc in COUNTRY_CODE_TO_REGION_CODE:
    _CALLING_CODE_OK[_cc] = True


@dataclass(frozen=True)
class PatternDesc:
    """One number-type description: an anchored RE2 pattern and the lengths it allows."""

    pattern: str
    lengths: np.ndarray  # bool, indexed by national number length


@dataclass(frozen=True)
class RegionRules:
    """The parsing and validation rules of one region (or non-geographic calling code)."""

    region: str
    country_code: int
    idd: str | None  # international dialling prefix, RE2 syntax, unanchored
    idd_literal: bytes | None  # the same when it is a plain digit string
    npp: str | None  # national prefix for parsing
    npp_literals: tuple[bytes, ...] | None  # the same when it is an alternation of digit strings
    npp_supported: bool  # False when the rule rewrites digits (left to the slow path)
    general_pattern: str | None  # anchored general pattern, no length check
    general: PatternDesc | None  # general description with its lengths
    length_result: np.ndarray  # ValidationResult by length, for the general description
    special: tuple[tuple[int, PatternDesc], ...]
    fixed_line: PatternDesc | None
    mobile: PatternDesc | None
    same_mobile_and_fixed_line: bool
    leading_digits: str | None  # prefix-anchored


def _anchored(pattern: str) -> str:
    return "^(?:" + pattern + ")$"


def _desc(desc) -> PatternDesc | None:
    """Turn a metadata number description into a PatternDesc (None if it can match nothing)."""
    if desc is None or not desc.national_number_pattern:
        return None
    lengths = np.ones(_LENGTH_TABLE, dtype=bool)
    if len(desc.possible_length) > 0:
        lengths[:] = False
        for n in desc.possible_length:
            if 0 <= n < _LENGTH_TABLE:
                lengths[n] = True
        if not lengths.any():
            return None
    return PatternDesc(_anchored(desc.national_number_pattern), lengths)


def _length_results(metadata) -> np.ndarray:
    """The library's length test for the general description, tabulated by length."""
    general = metadata.general_desc
    possible = general.possible_length
    local = general.possible_length_local_only
    out = np.full(_LENGTH_TABLE, ValidationResult.INVALID_LENGTH, dtype=np.int8)
    for n in range(_LENGTH_TABLE):
        if n in local:
            out[n] = ValidationResult.IS_POSSIBLE_LOCAL_ONLY
        elif possible[0] == n:
            out[n] = ValidationResult.IS_POSSIBLE
        elif possible[0] > n:
            out[n] = ValidationResult.TOO_SHORT
        elif possible[-1] < n:
            out[n] = ValidationResult.TOO_LONG
        elif n in possible[1:]:
            out[n] = ValidationResult.IS_POSSIBLE
    return out


def _metadata(region: str, country_code: int):
    if region == "001":
        return PhoneMetadata.metadata_for_nongeo_region(country_code, None)
    return PhoneMetadata.metadata_for_region(region, None)


@lru_cache(maxsize=None)
def rules_for(region: str, country_code: int | None = None) -> RegionRules | None:
    """Compile the rules of ``region`` (``"001"`` needs ``country_code``), or None if unknown."""
    metadata = _metadata(region, country_code or 0)
    if metadata is None or metadata.general_desc is None:
        return None
    idd = metadata.international_prefix or None
    npp = metadata.national_prefix_for_parsing or None
    npp_literals = None
    if npp is not None and re.fullmatch(r"\d+(?:\|\d+)*", npp):
        npp_literals = tuple(p.encode() for p in npp.split("|"))
    pattern = metadata.general_desc.national_number_pattern
    return RegionRules(
        region=region,
        country_code=metadata.country_code,
        idd=idd,
        idd_literal=idd.encode() if idd and _DIGITS_ONLY.fullmatch(idd) else None,
        npp=npp,
        npp_literals=npp_literals,
        npp_supported=not metadata.national_prefix_transform_rule,
        general_pattern=_anchored(pattern) if pattern else None,
        general=_desc(metadata.general_desc),
        length_result=_length_results(metadata),
        special=tuple(
            (code, d)
            for name, code in _SPECIAL_TYPES
            if (d := _desc(getattr(metadata, name))) is not None
        ),
        fixed_line=_desc(metadata.fixed_line),
        mobile=_desc(metadata.mobile),
        same_mobile_and_fixed_line=bool(metadata.same_mobile_and_fixed_line_pattern),
        leading_digits="^(?:" + metadata.leading_digits + ")" if metadata.leading_digits else None,
    )


def main_rules(country_code: int) -> RegionRules:
    """Rules of the main region of a calling code (the one the library parses with)."""
    region = COUNTRY_CODE_TO_REGION_CODE[country_code][0]
    return rules_for(region, country_code)


# ---------------------------------------------------------------------------------------
# Digit matrices: one row per string, ASCII digit bytes left-aligned, plus a length vector.



def _strip_national_prefix(matrix, lengths, rules: RegionRules):
    """The library's national-prefix step for rules without a digit rewrite."""
    if rules.npp is None or len(lengths) == 0:
        return matrix, lengths
    if rules.npp_literals is not None:
        k = np.zeros(len(lengths), dtype=np.int64)
        for literal in reversed(rules.npp_literals):  # first alternative wins
            k = np.where(_starts_with(matrix, lengths, literal), len(literal), k)
    else:
        _, k = _regex_prefix(matrix, lengths, rules.npp)
    rows = np.flatnonzero(k > 0)
    if len(rows) == 0:
        return matrix, lengths
    sub, sub_len = matrix[rows], lengths[rows]
    stripped, stripped_len = _drop_prefix(sub, sub_len, k[rows])
    viable_before = _regex_match(sub, sub_len, rules.general_pattern)
    viable_after = _regex_match(stripped, stripped_len, rules.general_pattern)
    take = ~(viable_before & ~viable_after)
    out, out_len = matrix.copy(), lengths.copy()
    out[rows[take]] = stripped[take]
    out_len[rows[take]] = stripped_len[take]
    return out, out_len


@dataclass
class ParsedDigits:
    """Result of `parse_digits` for n rows."""

    state: np.ndarray  # PARSED / FALLBACK / ERROR
    error: np.ndarray  # ERR_* for ERROR rows
    country_code: np.ndarray  # int32
    nsn: np.ndarray  # (n, WIDTH) national significant number digits
    nsn_len: np.ndarray


def parse_digits(
    matrix: np.ndarray, lengths: np.ndarray, plus: np.ndarray, region: str
) -> ParsedDigits:
    """Parse digit rows written in ``region`` the way ``phonenumbers.parse`` would.

    ``plus`` says whether the written number began with ``+``. Rows the arrays cannot
    settle exactly are returned in state FALLBACK.
    """
    n = len(lengths)
    state = np.zeros(n, dtype=np.int8)
    error = np.zeros(n, dtype=np.int8)
    cc = np.zeros(n, dtype=np.int32)
    nsn, nsn_len = matrix.copy(), lengths.astype(np.int32).copy()
    home = rules_for(region)
    # Calling code whose main region's rules strip the national prefix (-1: the home region).
    plan = np.full(n, -1, dtype=np.int32)

    state[(lengths < 3) | (lengths > WIDTH)] = FALLBACK
    live = state == PARSED

    # 1. International prefix: a leading plus, or the home region's dialling prefix.
    intl = live & plus
    maybe_idd = np.flatnonzero(live & ~plus)
    if home.idd is not None and len(maybe_idd):
        sub, sub_len = nsn[maybe_idd], nsn_len[maybe_idd]
        if home.idd_literal is not None:
            matched = _starts_with(sub, sub_len, home.idd_literal)
            k = np.where(matched, len(home.idd_literal), 0)
        else:
            matched, k = _regex_prefix(sub, sub_len, home.idd)
        # A calling code never starts with 0, so "prefix then 0" is not read as a prefix.
        next_digit = sub[np.arange(len(k)), np.minimum(k, WIDTH - 1)]
        matched &= ~((k < sub_len) & (next_digit == ZERO))
        rows = maybe_idd[matched]
        nsn[rows], nsn_len[rows] = _drop_prefix(sub[matched], sub_len[matched], k[matched])
        intl[rows] = True

    # 2. Calling code after an international prefix.
    rows = np.flatnonzero(intl)
    if len(rows):
        sub, sub_len = nsn[rows], nsn_len[rows]
        short = sub_len <= 2
        error[rows[short]] = ERR_TOO_SHORT
        state[rows[short]] = ERROR
        digits = sub[:, :3].astype(np.int32) - ZERO
        c1, c2 = digits[:, 0], digits[:, 0] * 10 + digits[:, 1]
        c3 = c2 * 10 + digits[:, 2]
        ok1 = _CALLING_CODE_OK[np.clip(c1, 0, 999)] & (sub_len >= 1)
        ok2 = _CALLING_CODE_OK[np.clip(c2, 0, 999)] & (sub_len >= 2)
        ok3 = _CALLING_CODE_OK[np.clip(c3, 0, 999)] & (sub_len >= 3)
        k = np.where(ok1, 1, np.where(ok2, 2, np.where(ok3, 3, 0)))
        k[digits[:, 0] == 0] = 0
        code = np.where(k == 1, c1, np.where(k == 2, c2, c3))
        none = ~short & (k == 0)
        with_plus = plus[rows]
        # After "+", an unreadable code makes the library retry without the plus: slow path.
        state[rows[none & with_plus]] = FALLBACK
        state[rows[none & ~with_plus]] = ERROR
        error[rows[none & ~with_plus]] = ERR_UNKNOWN_CC
        good = ~short & (k > 0)
        g = rows[good]
        cc[g] = code[good]
        nsn[g], nsn_len[g] = _drop_prefix(sub[good], sub_len[good], k[good])
        plan[g] = cc[g]

    # 3. No international prefix: the home region, unless the digits start with its own
    #    calling code and read better without it.
    rows = np.flatnonzero(live & ~intl)
    if len(rows):
        if not home.npp_supported:
            state[rows] = FALLBACK
        else:
            cc[rows] = home.country_code
            own = str(home.country_code).encode()
            sub, sub_len = nsn[rows], nsn_len[rows]
            starts = np.flatnonzero(_starts_with(sub, sub_len, own))
            if len(starts):
                s, s_len = sub[starts], sub_len[starts]
                pot, pot_len = _drop_prefix(s, s_len, len(own))
                pot, pot_len = _strip_national_prefix(pot, pot_len, home)
                better = ~_regex_match(s, s_len, home.general_pattern) & _regex_match(
                    pot, pot_len, home.general_pattern
                )
                better |= home.length_result[np.minimum(s_len, _LENGTH_TABLE - 1)] == (
                    ValidationResult.TOO_LONG
                )
                chosen = rows[starts[better]]
                nsn[chosen], nsn_len[chosen] = pot[better], pot_len[better]
                plan[chosen] = home.country_code

    # 4. National prefix, kept only if what remains has a possible length.
    parsed = state == PARSED
    short = parsed & (nsn_len < 2)
    state[short], error[short] = ERROR, ERR_TOO_SHORT
    parsed &= ~short
    for key in np.unique(plan[parsed]):
        rows = np.flatnonzero(parsed & (plan == key))
        rules = home if key == -1 else main_rules(int(key))
        if rules.region == home.region:
            rules = home
        if not rules.npp_supported:
            state[rows] = FALLBACK
            continue
        pot, pot_len = _strip_national_prefix(nsn[rows], nsn_len[rows], rules)
        result = rules.length_result[np.minimum(pot_len, _LENGTH_TABLE - 1)]
        keep = ~np.isin(
            result,
            [
                ValidationResult.TOO_SHORT,
                ValidationResult.IS_POSSIBLE_LOCAL_ONLY,
                ValidationResult.INVALID_LENGTH,
            ],
        )
        nsn[rows[keep]], nsn_len[rows[keep]] = pot[keep], pot_len[keep]

    too_long = (state == PARSED) & (nsn_len > MAX_NSN)
    state[too_long], error[too_long] = ERROR, ERR_TOO_LONG
    return ParsedDigits(state, error, cc, nsn, nsn_len)


# ---------------------------------------------------------------------------------------
# Validation: region of the number and its type, from the region's number patterns.


def _matches(arr: pa.Array, lengths: np.ndarray, rows: np.ndarray, desc: PatternDesc | None):
    """Bool array over ``rows`` (indices into arr): full match of ``desc`` incl. its lengths."""
    out = np.zeros(len(rows), dtype=bool)
    if desc is None or len(rows) == 0:
        return out
    ok_len = desc.lengths[np.minimum(lengths[rows], _LENGTH_TABLE - 1)]
    cand = rows[ok_len]
    if len(cand) == 0:
        return out
    if 2 * len(cand) >= len(arr):  # cheaper to match everything than to copy a subset
        hit = pc.match_substring_regex(arr, desc.pattern).to_numpy(zero_copy_only=False)
        out[ok_len] = hit[cand]
    else:
        sub = arr.take(pa.array(cand))
        out[ok_len] = pc.match_substring_regex(sub, desc.pattern).to_numpy(zero_copy_only=False)
    return out


def number_types(arr: pa.Array, lengths: np.ndarray, rows: np.ndarray, rules: RegionRules):
    """The library's number-type decision for ``arr[rows]`` under ``rules``."""
    out = np.full(len(rows), UNKNOWN, dtype=np.int16)
    undecided = _matches(arr, lengths, rows, rules.general)
    for code, desc in rules.special:
        hit = np.zeros(len(rows), dtype=bool)
        hit[undecided] = _matches(arr, lengths, rows[undecided], desc)
        out[hit] = code
        undecided &= ~hit
    fixed = np.zeros(len(rows), dtype=bool)
    fixed[undecided] = _matches(arr, lengths, rows[undecided], rules.fixed_line)
    if rules.same_mobile_and_fixed_line:
        out[fixed] = PhoneNumberType.FIXED_LINE_OR_MOBILE
    else:
        both = np.zeros(len(rows), dtype=bool)
        both[fixed] = _matches(arr, lengths, rows[fixed], rules.mobile)
        out[fixed] = PhoneNumberType.FIXED_LINE
        out[both] = PhoneNumberType.FIXED_LINE_OR_MOBILE
        rest = undecided & ~fixed
        mobile = np.zeros(len(rows), dtype=bool)
        mobile[rest] = _matches(arr, lengths, rows[rest], rules.mobile)
        out[mobile] = PhoneNumberType.MOBILE
    return out


REGIONS = tuple(sorted(SUPPORTED_REGIONS)) + ("001",)
"""Region codes `classify` returns, by position (-1: no region fits)."""
REGION_INDEX = {name: i for i, name in enumerate(REGIONS)}


@lru_cache(maxsize=None)
def _prefix_width(pattern: str) -> int | None:
    """Longest text a prefix pattern can consume, when small and known (else None)."""
    try:
        from re import _parser  # the standard library's own pattern parser

        width = _parser.parse(pattern).getwidth()[1]
    except Exception:  # pragma: no cover - other Python versions
        return None
    return width if width <= 8 else None


class _LeadingDigits:
    """Prefix tests of leading-digit patterns, made once per distinct leading digits.

    Built for the rows of one calling code that the main region did not claim; for a
    pattern that can read at most k digits, the match depends only on the first k digits,
    so it runs on the few distinct prefixes instead of every number.
    """

    def __init__(self, matrix: np.ndarray, lengths: np.ndarray, rows: np.ndarray):
        self.matrix, self.lengths, self.rows = matrix, lengths, rows
        self._tables: dict[int, tuple[np.ndarray, pa.Array, np.ndarray]] = {}

    def _table(self, width: int):
        if width not in self._tables:
            used = np.minimum(self.lengths, width)
            value = np.zeros(len(used), dtype=np.int64)
            for col in range(width):
                digit = self.matrix[:, col].astype(np.int64) - ZERO
                value = np.where(col < used, value * 10 + digit, value)
            inverse, keys = pd.factorize(value * 16 + used)
            first = np.zeros(len(keys), dtype=np.int64)
            first[inverse[::-1]] = np.arange(len(inverse))[::-1]
            prefixes = to_arrow(self.matrix[first, :width], used[first])
            self._tables[width] = (np.asarray(inverse), prefixes)
        return self._tables[width]

    def match(self, rows: np.ndarray, pattern: str) -> np.ndarray:
        """Prefix match for ``rows`` (a sorted subset of the rows given at construction)."""
        width = _prefix_width(pattern)
        pos = np.searchsorted(self.rows, rows)
        if width is None:
            return _regex_match(self.matrix[pos], self.lengths[pos], pattern)
        inverse, prefixes = self._table(width)
        hits = pc.match_substring_regex(prefixes, pattern).to_numpy(zero_copy_only=False)
        return hits[inverse[pos]]


def _groups(values: np.ndarray):
    """(value, positions) for each distinct value, positions in their original order."""
    codes, uniques = pd.factorize(values)
    codes = np.asarray(codes)
    if len(uniques) == 1:
        return [(uniques[0], np.arange(len(values)))]
    order = np.argsort(codes.astype(np.int16 if len(uniques) < 30000 else np.int64), kind="stable")
    bounds = np.concatenate([[0], np.cumsum(np.bincount(codes, minlength=len(uniques)))])
    return [(uniques[i], order[bounds[i] : bounds[i + 1]]) for i in range(len(uniques))]


def classify(country_code: np.ndarray, nsn: np.ndarray, nsn_len: np.ndarray):
    """Region (index into REGIONS, -1 when none fits) and number type of parsed numbers.

    Mirrors the library: a calling code with one region is that region; for a shared code
    (NANP +1, +44, +7, ...) the regions are tried in the library's order and the first whose
    leading digits match, or (without leading digits) whose patterns give a type, wins.
    """
    n = len(nsn_len)
    region = np.full(n, -1, dtype=np.int16)
    types = np.full(n, UNKNOWN, dtype=np.int16)
    for code, rows in _groups(country_code):
        code = int(code)
        sub, lengths = nsn[rows], nsn_len[rows]
        regions = COUNTRY_CODE_TO_REGION_CODE.get(code, ())
        if len(regions) == 1:
            region[rows] = REGION_INDEX[regions[0]]
            local = np.arange(len(rows))
            rules = rules_for(regions[0], code)
            types[rows] = number_types(to_arrow(sub, lengths), lengths, local, rules)
            continue
        remaining = np.arange(len(rows))
        base_rows, base = remaining, None  # Arrow copy of some superset of the remaining rows
        leading = None
        for name in regions:
            rules = rules_for(name, code)
            if rules is None or len(remaining) == 0:
                continue
            if rules.leading_digits is not None:
                if leading is None:
                    leading = _LeadingDigits(sub[remaining], lengths[remaining], remaining)
                hit = leading.match(remaining, rules.leading_digits)
                found = remaining[hit]
                if len(found):
                    types[rows[found]] = number_types(
                        to_arrow(sub[found], lengths[found]),
                        lengths[found],
                        np.arange(len(found)),
                        rules,
                    )
            else:
                if base is None or 3 * len(remaining) < 2 * len(base_rows):
                    base_rows = remaining
                    base = to_arrow(sub[base_rows], lengths[base_rows])
                pos = np.searchsorted(base_rows, remaining)
                found_types = number_types(base, lengths[base_rows], pos, rules)
                hit = found_types != UNKNOWN
                found = remaining[hit]
                types[rows[found]] = found_types[hit]
            region[rows[found]] = REGION_INDEX[name]
            remaining = remaining[~hit]
    return region, types


def possible_length_result(country_code: np.ndarray, nsn_len: np.ndarray) -> np.ndarray:
    """The library's possible-number length verdict (main region of the calling code)."""
    table = np.full((1000, _LENGTH_TABLE), ValidationResult.INVALID_COUNTRY_CODE, dtype=np.int8)
    for code in np.unique(country_code):
        if int(code) in COUNTRY_CODE_TO_REGION_CODE:
            table[int(code)] = main_rules(int(code)).length_result
    return table[np.clip(country_code, 0, 999), np.minimum(nsn_len, _LENGTH_TABLE - 1)]
