"""Phone numbers: E.164 form, validity, number type, region and extension for a whole column.

Why this module exists: phones link records (one person's duplicates, a household's
landline, a ring of applicants sharing one mobile), so every record's phones must be
reduced to one canonical form before they are compared, and dummy values such as
``000-000-0000`` or ``555-555-5555`` must be recognised before they chain strangers
together. The reference for what is a valid number is the phonenumbers package (a port of
libphonenumber). Calling it once per string is too slow for millions of phones, so plainly
written numbers go through `resolve.normalise.phone_fast`, which replays the library's own
rules on whole arrays; everything else goes to phonenumbers once per distinct value.

Rules that are ours, not the library's (see docs/normalisation.md):
- letters anywhere in the number (outside an extension label) make it invalid, so vanity
  numbers and notes such as "call after 6" are not silently turned into digits;
- an E.164 number holds at most 15 digits (ITU-T E.164);
- one digit repeated, a run such as 1234567890, and the NANP fiction range 555-0100..0199
  are placeholders.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import phonenumbers
import pyarrow as pa
import pyarrow.compute as pc
from phonenumbers import NumberParseException, PhoneNumberType, ValidationResult

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, VALID
from resolve.normalise import phone_fast as fast

E164_MAX_DIGITS = 15  # ITU-T E.164: country code plus national number, at most 15 digits
MAX_INPUT_CHARS = 250  # longer strings are refused by phonenumbers; left to it
PLACEHOLDER_MIN_DIGITS = 6  # repeated-digit and sequence rules apply from this length

NUMBER_TYPES = {
    PhoneNumberType.FIXED_LINE: "fixed_line",
    PhoneNumberType.MOBILE: "mobile",
    PhoneNumberType.FIXED_LINE_OR_MOBILE: "fixed_line_or_mobile",
    PhoneNumberType.TOLL_FREE: "toll_free",
    PhoneNumberType.PREMIUM_RATE: "premium_rate",
    PhoneNumberType.SHARED_COST: "shared_cost",
    PhoneNumberType.VOIP: "voip",
    PhoneNumberType.PERSONAL_NUMBER: "personal_number",
    PhoneNumberType.PAGER: "pager",
    PhoneNumberType.UAN: "uan",
    PhoneNumberType.VOICEMAIL: "voicemail",
    PhoneNumberType.UNKNOWN: "unknown",
}

# Reason codes (the `reason` column). Kept in one place so docs and tests can list them.
REASONS = (
    "not_a_number",
    "has_letters",
    "unknown_country_code",
    "too_short",
    "too_long",
    "invalid_length",
    "local_number_only",
    "invalid_for_region",
    "no_value_text",
    "repeated_digit",
    "sequential_digits",
    "reserved_fiction_range",
)

# Text meaning "no phone", compared after lower-casing and dropping everything but letters.
NO_VALUE_WORDS = frozenset(
    {
        "none", "na", "nil", "null", "unknown", "nophone", "nonumber", "nophonenumber",
        "notgiven", "notprovided", "notavailable", "unavailable", "notapplicable",
        "refused", "declined", "tbc", "tba", "tbd", "x", "xx", "xxx", "nomobile",
    }
)  # fmt: skip

# Plainly written: optional brackets, an optional leading plus, digits and separators.
_SIMPLE = r"^[ (\[]*\+?[0-9 ().\-/\[\]]*$"
# A trailing extension: "x123", "ext. 123", "extension 12", "#123", ";ext=123".
_EXTENSION = (
    r"(?i)^(?P<main>.*?[0-9)\]])[\s,;-]*(?:e?xt(?:ension|n)?|x|#)\s*[.:=#-]?\s*"
    r"(?P<ext>[0-9]{1,10})\s*#?$"
)

_REASON_CODE = {None: 0, **{name: i + 1 for i, name in enumerate(REASONS)}}
_STATUSES = [VALID, INVALID, PLACEHOLDER, MISSING]
_STATUS_CODE = {name: i + 1 for i, name in enumerate(_STATUSES)}
_TYPE_LABELS = list(NUMBER_TYPES.values())
_TYPE_CODE = np.zeros(100, dtype=np.int8)
for _i, _t in enumerate(NUMBER_TYPES):
    _TYPE_CODE[_t] = _i + 1

_PARSE_ERRORS = {
    NumberParseException.INVALID_COUNTRY_CODE: _REASON_CODE["unknown_country_code"],
    NumberParseException.NOT_A_NUMBER: _REASON_CODE["not_a_number"],
    NumberParseException.TOO_SHORT_AFTER_IDD: _REASON_CODE["too_short"],
    NumberParseException.TOO_SHORT_NSN: _REASON_CODE["too_short"],
    NumberParseException.TOO_LONG: _REASON_CODE["too_long"],
}
_FAST_ERRORS = np.zeros(8, dtype=np.int8)
_FAST_ERRORS[fast.ERR_TOO_SHORT] = _REASON_CODE["too_short"]
_FAST_ERRORS[fast.ERR_TOO_LONG] = _REASON_CODE["too_long"]
_FAST_ERRORS[fast.ERR_UNKNOWN_CC] = _REASON_CODE["unknown_country_code"]
# Why a parsed number is not valid, from the library's length verdict (ValidationResult).
_LENGTH_REASON_CODES = np.full(8, _REASON_CODE["invalid_for_region"], dtype=np.int8)
_LENGTH_REASON_CODES[ValidationResult.IS_POSSIBLE_LOCAL_ONLY] = _REASON_CODE["local_number_only"]
_LENGTH_REASON_CODES[ValidationResult.TOO_SHORT] = _REASON_CODE["too_short"]
_LENGTH_REASON_CODES[ValidationResult.TOO_LONG] = _REASON_CODE["too_long"]
_LENGTH_REASON_CODES[ValidationResult.INVALID_LENGTH] = _REASON_CODE["invalid_length"]
_LENGTH_REASON_CODES[ValidationResult.INVALID_COUNTRY_CODE] = _REASON_CODE["unknown_country_code"]

# Text kinds after the first pass, and the result of the kinds decided by the text alone.
_EMPTY, _SIMPLE_KIND, _NO_DIGITS, _NO_VALUE, _LETTERS, _OTHER = range(6)
_KIND_RESULT = {
    _LETTERS: (INVALID, "has_letters"),
    _NO_DIGITS: (INVALID, "not_a_number"),
    _NO_VALUE: (PLACEHOLDER, "no_value_text"),
    _EMPTY: (MISSING, None),
}

OUTPUT_COLUMNS = ("value", "status", "reason", "extension", "number_type", "region")


def normalise_phones(raw: pd.Series, region: pd.Series | str = "US") -> pd.DataFrame:
    """Normalise a column of phone numbers to E.164 with status, reason, type and region.

    ``region`` is the default region for numbers written without a country code: one ISO
    3166 alpha-2 code for all rows, or a Series of codes aligned with ``raw`` (the record's
    country); missing or unknown codes in the Series fall back to "US".

    Returns a DataFrame with the index of ``raw`` and the columns ``value`` (E.164, filled for
    valid numbers and placeholders), ``status``, ``reason``, ``extension`` (digits),
    ``number_type`` and ``region`` (the number's own region; "001" for non-geographic codes).
    """
    return _normalise(raw, region)


def _normalise(raw: pd.Series, region, *, fast_path: bool = True) -> pd.DataFrame:
    """`normalise_phones`, with a switch that sends everything to the reference library."""
    regions, region_names = _region_codes(raw, region)
    # The first pass reads each present value where it stands: phones are nearly all
    # distinct, so hashing the text to find repeats costs more than it saves. Repeats are
    # met one step later, where texts with the same digits share one number to parse.
    text = _arrow_strings(raw.astype(pd.StringDtype("pyarrow")))
    present = text.is_valid().to_numpy(zero_copy_only=False)
    text_codes = np.full(len(text), -1, dtype=np.int64)
    text_codes[present] = np.arange(int(present.sum()), dtype=np.int64)
    prepared_texts = text if present.all() else text.filter(pa.array(present))
    prepared = _prepare(prepared_texts)
    if not fast_path:
        prepared["kind"][prepared["kind"] == _SIMPLE_KIND] = _OTHER

    # Work once per distinct (digits as written, default region): "(415) 555-0123" and
    # "415.555.0123" are one number to parse.
    number_codes, number_text = _number_keys(prepared, prepared_texts)
    record_number = np.append(number_codes, -1)[text_codes]  # missing records (-1) stay -1
    if len(region_names) == 1:  # every number code is used by some record already
        pair_codes, pair_keys = record_number, np.arange(len(number_text), dtype=np.int64)
    else:
        present = record_number >= 0
        pair_codes = np.full(len(record_number), -1, dtype=np.int64)  # missing records: -1
        codes, pair_keys = pd.factorize(
            record_number[present] * len(region_names) + regions[present]
        )
        pair_codes[present] = codes
        pair_keys = np.asarray(pair_keys, dtype=np.int64)
    pair_text = number_text[pair_keys // len(region_names)]
    pair_region = pair_keys % len(region_names)

    per_pair = _normalise_pairs(prepared, pair_text, pair_region, region_names)
    return _gather(per_pair, pair_codes, prepared["extension"], text_codes, raw.index)


_DIGIT_PLUS_ONE = np.zeros(256, dtype=np.uint64)
_DIGIT_PLUS_ONE[fast.ZERO : fast.ZERO + 10] = np.arange(1, 11, dtype=np.uint64)
_BYTE_PAIR = np.arange(65536, dtype=np.uint32)
_LOW_BYTE = (_BYTE_PAIR & 255) if np.little_endian else (_BYTE_PAIR >> 8)
_HIGH_BYTE = (_BYTE_PAIR >> 8) if np.little_endian else (_BYTE_PAIR & 255)
# Key contribution of digit columns 2j and 2j+1 together, indexed by the two bytes as uint16.
_BASE11_PAIRS = [
    _DIGIT_PLUS_ONE[_LOW_BYTE] * np.uint64(11 ** (17 - 2 * j))
    + _DIGIT_PLUS_ONE[_HIGH_BYTE] * np.uint64(11 ** (16 - 2 * j))
    for j in range(9)
]


def _arrow_strings(uniques) -> pa.Array:
    """The values of a pandas Series or Index as one Arrow large_string array."""
    arr = pa.array(uniques.array)
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks() if arr.num_chunks else pa.array([], arr.type)
    return arr.cast(pa.large_string())


def _number_keys(prepared: dict, texts: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    """A code per distinct text, shared by plainly written texts with the same digits and plus.

    Returns the code of every text and, per code, one text that carries it. ``texts`` are
    the raw texts (repeats allowed): repeats of a text that is not plainly written share
    one code, so the reference library sees each distinct one once.
    """
    kind, matrix, count, plus = (prepared[k] for k in ("kind", "matrix", "count", "plus"))
    n = len(kind)
    same_digits = np.flatnonzero((kind == _SIMPLE_KIND) & (count <= 18))
    codes = np.empty(n, dtype=np.int64)
    first = np.zeros(0, dtype=np.int64)
    if len(same_digits):
        # Base 11 with digit d written as d + 1 and 0 for "no digit": 18 digits and the plus
        # flag fit one unsigned 64-bit key (2 * 11**18 < 2**64), so no collisions.
        pairs = np.ascontiguousarray(matrix[same_digits]).view(np.uint16)  # columns 2j, 2j+1
        key = plus[same_digits].astype(np.uint64) * np.uint64(11**18)
        for j in range(9):
            key += _BASE11_PAIRS[j][pairs[:, j]]
        number, uniques = pd.factorize(key)
        number = np.asarray(number, dtype=np.int64)
        codes[same_digits] = number
        first = np.empty(len(uniques), dtype=np.int64)
        first[number[::-1]] = same_digits[::-1]  # any text of the code will do; keep the first
    others = np.setdiff1d(np.arange(n), same_digits, assume_unique=True)
    if len(others) == 0:
        return codes, first
    encoded = pc.dictionary_encode(texts.take(pa.array(others)))
    repeat = encoded.indices.to_numpy(zero_copy_only=False).astype(np.int64)
    carrier = np.empty(len(encoded.dictionary), dtype=np.int64)
    carrier[repeat[::-1]] = others[::-1]  # the first text of each distinct value
    codes[others] = len(first) + repeat
    return codes, np.concatenate([first, carrier])


def _region_codes(raw: pd.Series, region: pd.Series | str) -> tuple[np.ndarray, list[str]]:
    """Per-record index into a list of validated default regions."""
    supported = phonenumbers.SUPPORTED_REGIONS
    if isinstance(region, str) or region is None:
        code = (region or "US").strip().upper()
        if code not in supported:
            raise InputError(
                f"Default phone region {region!r} is not a known ISO 3166 alpha-2 code; "
                "pass one such as 'US' or 'GB'."
            )
        return np.zeros(len(raw), dtype=np.int64), [code]
    if len(region) != len(raw):
        raise InputError(
            "The phone region column must have one entry per phone value; pass the "
            "record's country column aligned with the phone column."
        )
    codes, names = pd.factorize(region.astype(pd.StringDtype("pyarrow")))
    names = [str(n).strip().upper() for n in names]
    known = [n in supported for n in names]
    out_names = ["US"] + [n for n, ok in zip(names, known) if ok and n != "US"]
    lookup = np.array([out_names.index(n) if ok else 0 for n, ok in zip(names, known)] + [0])
    return lookup[np.asarray(codes)], out_names  # code -1 (missing) picks the last entry: US


def _prepare(texts: pa.Array) -> dict:
    """First pass over distinct strings: trim, split the extension, sort into kinds."""
    n = len(texts)
    trimmed = pc.utf8_trim_whitespace(texts)
    kind = np.full(n, _OTHER, dtype=np.int8)
    kind[pc.equal(trimmed, "").to_numpy(zero_copy_only=False)] = _EMPTY
    simple = pc.match_substring_regex(trimmed, _SIMPLE).to_numpy(zero_copy_only=False)
    simple &= kind != _EMPTY

    main = trimmed
    extension = pa.nulls(n, pa.large_string())
    rest = np.flatnonzero(~simple & (kind != _EMPTY))
    if len(rest):
        sub = trimmed.take(pa.array(rest))
        found = pc.extract_regex(sub, _EXTENSION)
        hit = found.is_valid().to_numpy(zero_copy_only=False)
        sub_main = pc.if_else(hit, found.field("main"), sub)
        sub_ext = pc.if_else(hit, found.field("ext"), pa.scalar(None, pa.string()))
        now_simple = pc.match_substring_regex(sub_main, _SIMPLE).to_numpy(zero_copy_only=False)
        has_digit = pc.match_substring_regex(sub_main, r"\p{Nd}").to_numpy(zero_copy_only=False)
        has_letter = pc.match_substring_regex(sub_main, r"\pL").to_numpy(zero_copy_only=False)
        sub_kind = np.full(len(rest), _OTHER, dtype=np.int8)
        sub_kind[has_letter] = _LETTERS
        sub_kind[now_simple] = _SIMPLE_KIND
        no_digit = ~has_digit
        if no_digit.any():
            words = pc.utf8_lower(sub_main.filter(pa.array(no_digit)))
            words = pc.replace_substring_regex(words, r"[^\pL]", "")
            marker = pc.is_in(words, value_set=pa.array(sorted(NO_VALUE_WORDS)))
            marker = pc.or_(marker, pc.equal(words, "")).to_numpy(zero_copy_only=False)
            sub_kind[np.flatnonzero(no_digit)] = np.where(marker, _NO_VALUE, _NO_DIGITS)
        kind[rest] = sub_kind
        simple[rest] = now_simple
        rows = np.zeros(n, dtype=bool)
        rows[rest] = True
        main = pc.replace_with_mask(trimmed, pa.array(rows), sub_main.cast(pa.large_string()))
        extension = pc.replace_with_mask(extension, pa.array(rows), sub_ext.cast(pa.large_string()))
    kind[simple] = _SIMPLE_KIND

    too_long = pc.greater(pc.utf8_length(main), MAX_INPUT_CHARS).to_numpy(zero_copy_only=False)
    kind[simple & too_long] = _OTHER
    simple &= ~too_long

    matrix = np.zeros((n, fast.WIDTH), dtype=np.uint8)
    count = np.zeros(n, dtype=np.int32)
    plus = np.zeros(n, dtype=bool)
    if simple.any():
        matrix, count = fast.digit_matrix(main)  # only the plainly written rows are used
        plus = pc.match_substring(main, "+").to_numpy(zero_copy_only=False) & simple
        kind[simple & (count == 0)] = _NO_VALUE  # only brackets and dashes: "--", "()"
    return {
        "kind": kind,
        "main": main,
        "extension": extension,
        "matrix": matrix,
        "count": count,
        "plus": plus,
    }


def _parse_slow(text: str, region: str) -> dict:
    """One value through phonenumbers itself (the reference library)."""
    digits = phonenumbers.normalize_digits_only(text)
    try:
        number = phonenumbers.parse(text, region)
    except NumberParseException as exc:
        error = _PARSE_ERRORS.get(exc.error_type, _REASON_CODE["not_a_number"])
        return {"error": error, "digits": digits}
    except Exception:  # the library should not raise others; never let one value stop a run
        return {"error": _REASON_CODE["not_a_number"], "digits": digits}
    return {
        "error": 0,
        "digits": digits,
        "country_code": number.country_code,
        "nsn": phonenumbers.national_significant_number(number),
        "region": phonenumbers.region_code_for_number(number),
        "type": phonenumbers.number_type(number),
        "possible": phonenumbers.is_possible_number_with_reason(number),
        "extension": number.extension or None,
    }


def _normalise_pairs(prepared, pair_text, pair_region, region_names) -> dict:
    """Parse, validate and judge every distinct (string, default region) pair."""
    n = len(pair_text)
    kind = prepared["kind"][pair_text]
    state = np.full(n, fast.FALLBACK, dtype=np.int8)
    error = np.zeros(n, dtype=np.int8)  # reason code of a parse error
    cc = np.zeros(n, dtype=np.int32)
    nsn = np.zeros((n, fast.WIDTH), dtype=np.uint8)
    nsn_len = np.zeros(n, dtype=np.int32)
    region = np.full(n, -1, dtype=np.int16)  # index into fast.REGIONS
    types = np.full(n, PhoneNumberType.UNKNOWN, dtype=np.int16)
    possible = np.zeros(n, dtype=np.int8)
    found_extensions = {}  # text -> extension only the reference library recognised

    # Fast path, one default region at a time.
    for r, name in enumerate(region_names):
        rows = np.flatnonzero((kind == _SIMPLE_KIND) & (pair_region == r))
        if len(rows) == 0:
            continue
        t = pair_text[rows]
        result = fast.parse_digits(
            prepared["matrix"][t], prepared["count"][t], prepared["plus"][t], name
        )
        state[rows] = result.state
        cc[rows] = result.country_code
        nsn[rows], nsn_len[rows] = result.nsn, result.nsn_len
        error[rows] = _FAST_ERRORS[result.error]
        # Rows that failed to parse keep their raw digits for the placeholder rules.
        failed = result.state == fast.ERROR
        nsn[rows[failed]] = prepared["matrix"][t[failed]]
        nsn_len[rows[failed]] = np.minimum(prepared["count"][t[failed]], fast.WIDTH)

    parsed = np.flatnonzero(state == fast.PARSED)
    if len(parsed):
        region[parsed], types[parsed] = fast.classify(cc[parsed], nsn[parsed], nsn_len[parsed])
        possible[parsed] = fast.possible_length_result(cc[parsed], nsn_len[parsed])

    # Slow path: the reference library, once per distinct (string, region) left over.
    slow = np.flatnonzero(((kind == _SIMPLE_KIND) | (kind == _OTHER)) & (state == fast.FALLBACK))
    if len(slow):
        mains = prepared["main"].take(pa.array(pair_text[slow])).to_pylist()
        for i, text, r in zip(slow, mains, pair_region[slow]):
            out = _parse_slow(text, region_names[r])
            if out["error"]:
                state[i], error[i] = fast.ERROR, out["error"]
                body = out["digits"].encode("ascii", "replace")[: fast.WIDTH]
            else:
                state[i], cc[i] = fast.PARSED, out["country_code"]
                body = out["nsn"].encode("ascii", "replace")[: fast.WIDTH]
            nsn[i] = 0
            nsn[i, : len(body)] = np.frombuffer(body, dtype=np.uint8)
            nsn_len[i] = len(body)
            if out["error"]:
                continue
            region[i] = fast.REGION_INDEX.get(out["region"], -1)
            types[i], possible[i] = out["type"], out["possible"]
            if out["extension"]:
                found_extensions[int(pair_text[i])] = out["extension"]
    if found_extensions:
        prepared["extension"] = _fill_extensions(prepared["extension"], found_extensions)

    # For rows that failed to parse, nsn holds the raw digits (used by placeholder rules).
    return _judge(kind, state, error, cc, nsn, nsn_len, region, types, possible)


def _fill_extensions(extension: pa.Array, found: dict) -> pa.Array:
    """Fill extensions the reference library split off where our own rule found none."""
    values = extension.to_pylist()
    for i, ext in found.items():
        if values[i] is None:
            values[i] = ext
    return pa.array(values, type=pa.large_string())


def _placeholder_reason(cc, check, check_len, parsed) -> np.ndarray:
    """Placeholder reason code per row (0 when the digits look like a real number)."""
    out = np.zeros(len(check_len), dtype=np.int8)
    # Cheap first look at three digits, then the full test on the few candidates.
    step01 = (check[:, 1].astype(np.int16) - check[:, 0]) % 10
    step12 = (check[:, 2].astype(np.int16) - check[:, 1]) % 10
    cand = (step01 == step12) & ((step01 == 0) | (step01 == 1) | (step01 == 9))
    cand = np.flatnonzero(cand & (check_len >= PLACEHOLDER_MIN_DIGITS))
    if len(cand):
        c, c_len = check[cand].astype(np.int16), check_len[cand]
        cols = np.arange(c.shape[1])[None, :]
        pair_inside = cols[:, 1:] < c_len[:, None]
        step = (c[:, 1:] - c[:, :-1]) % 10
        same = ((step == 0) | ~pair_inside).all(axis=1)
        up = ((step == 1) | ~pair_inside).all(axis=1)
        down = ((step == 9) | ~pair_inside).all(axis=1)
        out[cand[up | down]] = _REASON_CODE["sequential_digits"]
        out[cand[same]] = _REASON_CODE["repeated_digit"]
    # NANP 555-0100..555-0199 is reserved for fiction (CHECKS.md, NANP numbering rules).
    nanp = np.flatnonzero(parsed & (cc == 1) & ((check_len == 10) | (check_len == 7)))
    if len(nanp):
        fiction_code = np.frombuffer(b"55501", dtype=np.uint8)
        c, c_len = check[nanp], check_len[nanp]
        ten = (c_len == 10) & (c[:, 3:8] == fiction_code).all(axis=1)
        seven = (c_len == 7) & (c[:, 0:5] == fiction_code).all(axis=1)
        out[nanp[ten | seven]] = _REASON_CODE["reserved_fiction_range"]
    return out


def _judge(kind, state, error, cc, nsn, nsn_len, region, types, possible) -> dict:
    """Status, reason and value per pair from the parse results and our own rules."""
    n = len(kind)
    status = np.full(n, _STATUS_CODE[INVALID], dtype=np.int8)
    reason = np.zeros(n, dtype=np.int8)
    parsed = state == fast.PARSED
    errors = (state == fast.ERROR) & ((kind == _SIMPLE_KIND) | (kind == _OTHER))

    reason[errors] = error[errors]
    reason[parsed] = _LENGTH_REASON_CODES[np.clip(possible[parsed], 0, 7)]
    cc_digits = np.where(cc >= 100, 3, np.where(cc >= 10, 2, 1))
    over_15 = parsed & (cc_digits + nsn_len > E164_MAX_DIGITS)
    reason[over_15] = _REASON_CODE["too_long"]
    good = parsed & (types != PhoneNumberType.UNKNOWN) & ~over_15
    status[good], reason[good] = _STATUS_CODE[VALID], 0

    dummy = _placeholder_reason(cc, nsn, nsn_len, parsed)
    dummy[~(parsed | errors)] = 0
    status[dummy > 0], reason[dummy > 0] = _STATUS_CODE[PLACEHOLDER], dummy[dummy > 0]

    for k, (st, why) in _KIND_RESULT.items():
        rows = kind == k
        status[rows], reason[rows] = _STATUS_CODE[st], _REASON_CODE[why]

    has_value = parsed & ((status == _STATUS_CODE[VALID]) | (status == _STATUS_CODE[PLACEHOLDER]))
    has_value &= ~over_15
    value = pa.nulls(n, pa.string())
    rows = np.flatnonzero(has_value)
    if len(rows):
        filled = fast.e164_strings(cc[rows], nsn[rows], nsn_len[rows])
        where = np.full(n, len(rows), dtype=np.int64)
        where[rows] = np.arange(len(rows))
        value = pa.concat_arrays([filled, pa.nulls(1, pa.string())]).take(pa.array(where))

    type_code = _TYPE_CODE[np.clip(types, 0, 99)]
    type_code[kind == _EMPTY] = 0
    region = np.where(parsed, region, -1)
    return {
        "value": value,
        "status": status,
        "reason": reason,
        "number_type": type_code,
        "region": region,
    }


def _spread_codes(codes: np.ndarray, labels: list, rows: np.ndarray) -> pa.Array:
    """Integer codes (0 = null) spread over records; ``rows`` picks a code per record."""
    dictionary = pa.array([None, *labels], type=pa.large_string())
    return dictionary.take(pa.array(np.append(codes, 0).astype(np.int32)[rows]))


def _spread_strings(values: pa.Array, rows: np.ndarray) -> pa.Array:
    """Strings spread over records; ``rows`` picks one per record (len(values): null)."""
    if values.null_count == len(values):
        return pa.nulls(len(rows), pa.large_string())
    values = pa.concat_arrays([values.cast(pa.large_string()), pa.nulls(1, pa.large_string())])
    return values.take(pa.array(rows))


def _gather(per_pair, pair_codes, text_extension, text_codes, index) -> pd.DataFrame:
    """Spread the per-pair and per-text results back over the records."""
    n_pairs = len(per_pair["status"])
    rows = np.where(pair_codes < 0, n_pairs, pair_codes).astype(np.int32)
    text_rows = np.where(text_codes < 0, len(text_extension), text_codes).astype(np.int32)
    arrays = {
        "value": _spread_strings(per_pair["value"], rows),
        "status": _spread_codes(per_pair["status"], _STATUSES, rows),
        "reason": _spread_codes(per_pair["reason"], list(REASONS), rows),
        "extension": _spread_strings(text_extension, text_rows),
        "number_type": _spread_codes(per_pair["number_type"], _TYPE_LABELS, rows),
        "region": _spread_codes(per_pair["region"] + 1, list(fast.REGIONS), rows),
    }
    if (pair_codes < 0).any():
        arrays["status"] = pc.if_else(pa.array(pair_codes < 0), MISSING, arrays["status"])
    return pd.DataFrame(
        {name: pd.Series(pd.arrays.ArrowStringArray(arrays[name]), index=index, copy=False)
         for name in OUTPUT_COLUMNS},
        index=index,
        copy=False,
    )  # fmt: skip
