"""National ID normaliser: one canonical compact form per ID, with a status and a reason.

One national ID carried by people whose names and birth dates disagree is a strong lead for a
shared or fabricated identity, and one person carrying two IDs is another. Both are found by
comparing IDs, so an ID must look the same however it was typed (dashes, spaces, lower case),
and numbers that can never belong to a person (never-issued ranges, bad check digits,
specimen and placeholder numbers) must be told apart so that they never join strangers.

The sharing key built later is ``<id_type>:<value>`` (see `national_id_keys`).

US SSN/ITIN, Canadian SIN and UK NINO, the bulk of most extracts, are checked on whole columns
with Arrow string operations and numpy. Every other type goes through python-stdnum once per
distinct value. docs/normalisation.md lists every rule with its source.
"""

from __future__ import annotations

import functools
import importlib
import tomllib
from importlib import resources

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from stdnum.exceptions import InvalidChecksum, InvalidComponent, InvalidFormat, InvalidLength

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, STATUSES, VALID
from resolve.normalise.distinct import on_distinct

# Our ID type codes: issuing country and the python-stdnum module that checks them (None: our
# own vectorised check only; python-stdnum 2.2 has no UK National Insurance number module).
ID_TYPES: dict[str, tuple[str, str | None]] = {
    "us_ssn": ("US", "stdnum.us.ssn"),
    "us_itin": ("US", "stdnum.us.itin"),
    "gb_nino": ("GB", None),
    "ca_sin": ("CA", "stdnum.ca.sin"),
    "nl_bsn": ("NL", "stdnum.nl.bsn"),
    "es_dni": ("ES", "stdnum.es.dni"),
    "es_nie": ("ES", "stdnum.es.nie"),
    "it_codicefiscale": ("IT", "stdnum.it.codicefiscale"),
    "fr_nir": ("FR", "stdnum.fr.nir"),
    "de_idnr": ("DE", "stdnum.de.idnr"),
    "se_personnummer": ("SE", "stdnum.se.personnummer"),
    "dk_cpr": ("DK", "stdnum.dk.cpr"),
    "no_fodselsnummer": ("NO", "stdnum.no.fodselsnummer"),
    "in_aadhaar": ("IN", "stdnum.in_.aadhaar"),
}
TYPE_CODES = tuple(ID_TYPES)
_COUNTRIES = tuple(sorted({c for c, _ in ID_TYPES.values()}))
# Country code per type code; the trailing -1 makes an unknown type (-1) map to -1.
_TYPE_COUNTRY = np.array([_COUNTRIES.index(ID_TYPES[t][0]) for t in TYPE_CODES] + [-1])
COUNTRY_TYPES = {ID_TYPES[t][0]: t for t in reversed(TYPE_CODES)}  # first listed type wins
TYPE_ALIASES = {
    "ssn": "us_ssn", "itin": "us_itin", "nino": "gb_nino", "ni": "gb_nino", "sin": "ca_sin",
    "bsn": "nl_bsn", "dni": "es_dni", "nie": "es_nie", "codice_fiscale": "it_codicefiscale",
    "nir": "fr_nir", "idnr": "de_idnr", "personnummer": "se_personnummer", "cpr": "dk_cpr",
    "fodselsnummer": "no_fodselsnummer", "aadhaar": "in_aadhaar",
}
COUNTRY_ALIASES = {
    "UK": "GB", "USA": "US", "GBR": "GB", "CAN": "CA", "NLD": "NL", "ESP": "ES", "ITA": "IT",
    "FRA": "FR", "DEU": "DE", "SWE": "SE", "DNK": "DK", "NOR": "NO", "IND": "IN",
}
# Types written with digits only: a value with letters in such a record may be moved to a
# letter-bearing type whose exact shape it has (see docs/normalisation.md, type detection).
DIGIT_TYPES = {"us_ssn", "ca_sin", "nl_bsn", "de_idnr", "dk_cpr", "no_fodselsnummer",
               "in_aadhaar", "se_personnummer"}
SHAPES = (
    (r"[A-Z]{2}[0-9]{6}[A-Z]?", "gb_nino"),
    (r"[XYZ][0-9]{7}[A-Z]", "es_nie"),
    (r"[A-Z]{6}[0-9LMNPQRSTUV]{2}[A-Z][0-9LMNPQRSTUV]{2}[A-Z][0-9LMNPQRSTUV]{3}[A-Z]",
     "it_codicefiscale"),
)

BAD_FORMAT = "bad_format"
WRONG_LENGTH = "wrong_length"
BAD_CHECKSUM = "bad_checksum"
BAD_PREFIX = "bad_prefix"
BAD_SUFFIX = "bad_suffix"
MISSING_SUFFIX = "missing_suffix"
BAD_COMPONENT = "bad_component"
NEVER_ISSUED_AREA = "never_issued_area"
NEVER_ISSUED_GROUP = "never_issued_group"
NEVER_ISSUED_SERIAL = "never_issued_serial"
KNOWN_MISUSED = "known_misused"
UNKNOWN_TYPE = "unknown_type"
MASKED = "masked"
NO_DIGITS = "no_digits"
PLACEHOLDER_VALUE = "placeholder_value"
REASONS = (BAD_FORMAT, WRONG_LENGTH, BAD_CHECKSUM, BAD_PREFIX, BAD_SUFFIX, MISSING_SUFFIX,
           BAD_COMPONENT, NEVER_ISSUED_AREA, NEVER_ISSUED_GROUP, NEVER_ISSUED_SERIAL,
           KNOWN_MISUSED, UNKNOWN_TYPE, MASKED, NO_DIGITS, PLACEHOLDER_VALUE)
_R = {name: np.int8(i) for i, name in enumerate(REASONS)}
_S = {name: np.int8(i) for i, name in enumerate(STATUSES)}

# Separators removed anywhere in a value. '+' is kept: in a Swedish personnummer it marks a
# holder aged 100 or more.
SEPARATORS = r"[\s\p{Pd}\x{2212}./_:,]"
MASK_MARKS = r"[*#]|^X{3,}|X{3,}$"
_STRING = pd.StringDtype("pyarrow")


def _placeholder_digits() -> frozenset[str]:
    """Digit strings that stand for "no number" (common practice): one digit repeated, six or
    more times; 0123..., 1234... or 9876... runs of eight or more digits."""
    out = set(d * length for d in "0123456789" for length in range(6, 21))
    for length in range(8, 21):
        out.add(("0123456789" * 3)[:length])
        out.add(("1234567890" * 3)[:length])
        out.add(("9876543210" * 3)[:length])
    return frozenset(out)


PLACEHOLDER_DIGITS = _placeholder_digits()


@functools.cache
def misused_ids() -> dict[str, frozenset[str]]:
    """Known misused and specimen numbers by ID type (compacted), from data/misused_ids.toml."""
    text = resources.files("resolve").joinpath("data/misused_ids.toml").read_text("utf-8")
    table = tomllib.loads(text)
    out = {}
    for id_type, entries in table.items():
        if id_type not in ID_TYPES:
            raise InputError(f"misused_ids.toml lists unknown ID type {id_type!r}; "
                             "use a code from ID_TYPES.")
        out[id_type] = frozenset(
            "".join(ch for ch in e["number"].upper() if ch.isalnum()) for e in entries)
    return out


def country_codes(
    country: pd.Series | str | None, index: pd.Index, default: str
) -> pd.Series | str:
    """ISO-2 country codes (upper case; UK and common ISO-3 codes mapped), <NA> -> ``default``.

    A single code is returned as a string; a Series (one entry per record, matched by position)
    as a string Series on ``index``.
    """
    def one(code: object) -> str:
        code = default if code is None or code is pd.NA else str(code).strip().upper() or default
        return COUNTRY_ALIASES.get(code, code)

    default = one(default or "US")
    if country is None or isinstance(country, str):
        return one(country)
    if len(country) != len(index):
        raise InputError("The country column must have one entry per record; pass a single code "
                         "to use one country for all.")
    codes = pd.Series(pd.Series(country).astype(_STRING).array, index=index)
    mapped = on_distinct(codes, lambda u: pd.DataFrame({"c": [one(c) for c in u]}, dtype=_STRING))
    return mapped["c"]


def _type_code(name: object) -> str | None:
    """Our ID type code for an explicit type name or alias; None for <NA>, "?" when unknown."""
    if name is None or name is pd.NA or (isinstance(name, float) and np.isnan(name)):
        return None
    key = str(name).strip().lower().replace("-", "_").replace(" ", "_")
    key = TYPE_ALIASES.get(key, key)
    return key if key in ID_TYPES else "?"


def normalise_national_ids(
    raw: pd.Series,
    country: pd.Series | str = "US",
    id_type: pd.Series | str | None = None,
    *,
    default_country: str = "US",
) -> pd.DataFrame:
    """Normalise national IDs to a compact canonical form with status and reason.

    ``country`` is the issuing country per record (ISO-2; <NA> -> ``default_country``) or one
    code for all. ``id_type`` (our code, e.g. ``us_ssn``, or an alias such as ``ssn``) overrides
    detection from country and shape. Returns a frame aligned with ``raw`` with columns
    ``value``, ``status``, ``reason``, ``id_type`` and ``country``.
    """
    raw = pd.Series(raw).astype(_STRING)
    ctry = country_codes(country, raw.index, default_country)
    if isinstance(id_type, pd.Series):
        if len(id_type) != len(raw):
            raise InputError("The ID type column must have one entry per record; pass a single "
                             "type to use one type for all.")
        codes, names = pd.factorize(id_type.to_numpy())  # NA -> -1 -> "" (no explicit type)
        known = np.array([_type_code(n) or "" for n in names] + [""], dtype=object)
        types = pd.Series(known[codes], index=raw.index, dtype=_STRING)
    else:
        types = _type_code(id_type) or ""
    ctry, types = _scalar_if_constant(ctry), _scalar_if_constant(types)
    if isinstance(ctry, str) and isinstance(types, str):
        one = [(ctry, types)]
        coded = on_distinct(raw, lambda v: _normalise_distinct(v, np.zeros(len(v), np.int32), one))
    elif isinstance(types, str) and not _has_bar(ctry):
        # One explicit type (or none) for all: pair the values with the country alone
        # rather than build "country|type" text for every record.
        coded = on_distinct(raw, lambda frame: _normalise_with_countries(frame, types),
                            extra=ctry)
    else:
        coded = on_distinct(raw, _normalise_with_contexts, extra=ctry + "|" + types)
    # Low-cardinality columns travel as integer codes through on_distinct and become text
    # here: gathering small integers is much cheaper than gathering strings.
    type_codes = coded["id_type"].to_numpy()
    country = labels_from_codes(_TYPE_COUNTRY[type_codes], _COUNTRIES).set_axis(raw.index)
    unknown = type_codes < 0
    if unknown.any():
        country = country.mask(unknown, ctry)
    return pd.DataFrame({
        "value": coded["value"],
        "status": labels_from_codes(coded["status"].to_numpy(), STATUSES).set_axis(raw.index),
        "reason": labels_from_codes(coded["reason"].to_numpy(), REASONS).set_axis(raw.index),
        "id_type": labels_from_codes(type_codes, TYPE_CODES).set_axis(raw.index),
        "country": country,
    })


def _scalar_if_constant(values: pd.Series | str) -> pd.Series | str:
    """The single value of a Series that holds only one (so one context needs no pairing)."""
    if isinstance(values, pd.Series) and len(values) and values.nunique(dropna=False) == 1:
        return str(values.iloc[0])
    return values


def national_id_keys(ids: pd.DataFrame) -> pd.Series:
    """The sharing key ``<id_type>:<value>`` per row (<NA> when either part is missing).

    The key is built for every status; callers keep only ``valid`` rows when they look for
    IDs shared across records.
    """
    return ids["id_type"].astype(_STRING).str.cat(ids["value"].astype(_STRING), sep=":")


def _has_bar(values: pd.Series) -> bool:
    """True when some value holds "|", the separator of the "country|type" contexts."""
    found = pc.match_substring(pa.array(values.astype(_STRING).array), "|")
    return bool(pc.any(found).as_py())


def _normalise_with_countries(frame: pd.DataFrame, id_type: str) -> pd.DataFrame:
    """`_normalise_with_contexts` when every record has the same explicit type (or none)."""
    codes, countries = pd.factorize(frame["extra"])
    pairs = [(str(c), id_type) for c in countries]
    return _normalise_distinct(frame["value"], codes.astype(np.int32), pairs)


def _normalise_with_contexts(frame: pd.DataFrame) -> pd.DataFrame:
    """`_normalise_distinct` for distinct (value, "country|explicit type") combinations."""
    codes, contexts = pd.factorize(frame["extra"])
    pairs = [tuple(str(c).split("|", 1)) for c in contexts]
    return _normalise_distinct(frame["value"], codes.astype(np.int32), pairs)


def _normalise_distinct(
    values: pd.Series, ctx: np.ndarray, contexts: list[tuple[str, str]]
) -> pd.DataFrame:
    """Normalise distinct values; ``contexts[ctx[i]]`` is value i's (country, explicit type)."""
    compact, plain = _compact(values)
    k = len(compact)
    missing = _flag(compact.isna() | (compact == ""))
    has_digit, has_letter, alnum = plain.copy(), np.zeros(k, bool), plain.copy()
    masked, se_plus = np.zeros(k, bool), np.zeros(k, bool)
    rest = np.flatnonzero(~plain & ~missing)
    if len(rest):
        other = compact.iloc[rest]
        has_digit[rest] = _flag(other.str.contains("[0-9]", regex=True))
        has_letter[rest] = _flag(other.str.contains("[A-Z]", regex=True))
        alnum[rest] = _flag(other.str.fullmatch("[0-9A-Z]+"))
        masked[rest] = _flag(other.str.contains(MASK_MARKS, regex=True))
        se_plus[rest] = _flag(other.str.fullmatch(r"[0-9]{6,8}\+[0-9]{4}"))
    nine = plain & _flag(compact.str.len() == 9)

    types = _detect_types(compact, ctx, contexts, nine, has_letter)
    reason = np.full(k, -1, dtype=np.int8)
    no_digits = ~missing & ~has_digit & ~masked
    reason[no_digits] = _R[NO_DIGITS]
    reason[masked] = _R[MASKED]
    bad = ~missing & ~no_digits & ~masked & ~alnum & ~se_plus
    reason[bad] = _R[BAD_FORMAT]
    checkable = ~missing & ~no_digits & ~masked & ~bad
    reason[checkable & (types < 0)] = _R[UNKNOWN_TYPE]

    value = compact.where(alnum & has_digit & ~masked)
    for code in np.unique(types[checkable & (types >= 0)]):
        rows = np.flatnonzero(checkable & (types == code))
        whole = len(rows) == k
        sub = compact if whole else compact.iloc[rows]
        checker = _FAST_CHECKS.get(TYPE_CODES[code])
        if checker is not None:
            reason[rows] = checker(sub, nine if whole else nine[rows])
        else:
            reason[rows], canonical = _stdnum_check(sub, TYPE_CODES[code])
            value.iloc[rows] = canonical
            value = value.where(~_flag(value.str.contains("[^0-9A-Z]", regex=True)))

    status = np.full(k, _S[VALID], dtype=np.int8)
    status[reason >= 0] = _S[INVALID]
    status[missing | no_digits] = _S[MISSING]
    placeholder = _placeholder_mask(value, has_letter)
    status[placeholder] = _S[PLACEHOLDER]
    reason[placeholder] = _R[PLACEHOLDER_VALUE]
    for id_type, numbers in misused_ids().items():
        hit = (types == TYPE_CODES.index(id_type)) & (status == _S[VALID])
        hit &= _flag(value.isin(numbers))
        status[hit] = _S[INVALID]
        reason[hit] = _R[KNOWN_MISUSED]

    types[missing | no_digits] = -1
    return pd.DataFrame({"value": value.astype(_STRING).array, "status": status,
                         "reason": reason, "id_type": types}, index=values.index)


def _compact(values: pd.Series) -> tuple[pd.Series, np.ndarray]:
    """Upper-case values without separators, and a mask of values that are plain digits.

    Dashes are removed with a fast literal replace first; only values that are not then plain
    ASCII digits go through Unicode folding and the full separator pattern.
    """
    arr = pc.replace_substring(_arrow(values), "-", "")
    compact = _series(arr)
    plain = _flag(_series(pc.ascii_is_decimal(arr)))
    rest = np.flatnonzero(~plain & compact.notna().to_numpy())
    if len(rest):
        text = compact.iloc[rest]
        wide = np.flatnonzero(~_flag(text.str.isascii()))
        if len(wide):  # fullwidth digits and the like become ASCII
            text.iloc[wide] = text.iloc[wide].str.normalize("NFKC")
        text = text.str.upper().str.replace(SEPARATORS, "", regex=True)
        compact.iloc[rest] = text
        plain[rest] = _flag(_series(pc.ascii_is_decimal(_arrow(text))))
    return compact, plain


def _detect_types(compact: pd.Series, ctx: np.ndarray, contexts: list[tuple[str, str]],
                  nine: np.ndarray, has_letter: np.ndarray) -> np.ndarray:
    """ID type code per value (index into TYPE_CODES, -1 unknown): explicit, country, shape."""
    def code(name: str | None) -> int:
        return TYPE_CODES.index(name) if name in ID_TYPES else -1

    base = np.array([code(COUNTRY_TYPES.get(c)) for c, _ in contexts], dtype=np.int8)[ctx]
    given = np.array([bool(t) for _, t in contexts])[ctx]
    types = np.where(given, np.array([code(t) for _, t in contexts], dtype=np.int8)[ctx], base)
    itin = ~given & (base == code("us_ssn")) & nine & _flag(compact.str.startswith("9"))
    types[itin] = code("us_itin")
    spanish = np.flatnonzero(~given & (base == code("es_dni")) & has_letter)
    types[spanish[_flag(compact.iloc[spanish].str.match("[XYZ]"))]] = code("es_nie")
    digit_types = np.isin(base, [code(t) for t in DIGIT_TYPES]) | (base < 0)
    rows = np.flatnonzero(~given & digit_types & has_letter)
    lettered = compact.iloc[rows]
    for pattern, id_type in SHAPES:
        types[rows[_flag(lettered.str.fullmatch(pattern))]] = code(id_type)
    return types


def _ssn_reasons(sub: pd.Series, nine: np.ndarray) -> np.ndarray:
    """US SSN: nine digits; area 000, 666, 900-999, group 00, serial 0000 never issued."""
    reason, d = _nine_digits(sub, nine)
    area = d[:, 0].astype(np.int16) * 100 + d[:, 1] * 10 + d[:, 2]
    group = d[:, 3] * 10 + d[:, 4]
    serial = (d[:, 5:9].astype(np.int16) * np.array([1000, 100, 10, 1], dtype=np.int16)).sum(1)
    r = np.full(len(d), -1, dtype=np.int8)
    r[serial == 0] = _R[NEVER_ISSUED_SERIAL]
    r[group == 0] = _R[NEVER_ISSUED_GROUP]
    r[(area == 0) | (area == 666) | (area >= 900)] = _R[NEVER_ISSUED_AREA]
    reason[nine] = r
    return reason


def _itin_reasons(sub: pd.Series, nine: np.ndarray) -> np.ndarray:
    """US ITIN: nine digits starting with 9; group 70-99 except 89 and 93 (python-stdnum ranges)."""
    reason, d = _nine_digits(sub, nine)
    group = d[:, 3] * 10 + d[:, 4]
    r = np.full(len(d), -1, dtype=np.int8)
    r[(group < 70) | (group == 89) | (group == 93)] = _R[NEVER_ISSUED_GROUP]
    r[d[:, 0] != 9] = _R[BAD_PREFIX]
    reason[nine] = r
    return reason


def _sin_reasons(sub: pd.Series, nine: np.ndarray) -> np.ndarray:
    """Canadian SIN: nine digits, first digit not 0 or 8, Luhn check digit."""
    reason, d = _nine_digits(sub, nine)
    doubled = d[:, 1::2].astype(np.int16) * 2
    doubled -= 9 * (doubled > 9)
    total = d[:, 0::2].sum(1, dtype=np.int16) + doubled.sum(1)
    r = np.full(len(d), -1, dtype=np.int8)
    r[total % 10 != 0] = _R[BAD_CHECKSUM]
    r[(d[:, 0] == 0) | (d[:, 0] == 8)] = _R[BAD_PREFIX]
    reason[nine] = r
    return reason


def _nino_reasons(sub: pd.Series, nine: np.ndarray) -> np.ndarray:
    """UK National Insurance number, HMRC NIM39110: prefix letters and suffix A-D."""
    shape = _flag(sub.str.fullmatch("[A-Z]{2}[0-9]{6}[A-Z]?"))
    reason = np.where(_flag(sub.str.fullmatch("[A-Z]{2}[0-9]+[A-Z]?")), _R[WRONG_LENGTH],
                      _R[BAD_FORMAT]).astype(np.int8)
    ok = sub[shape]
    r = np.full(len(ok), -1, dtype=np.int8)
    suffix = ok.str.slice(8)
    r[_flag(~suffix.isin(list("ABCD")))] = _R[BAD_SUFFIX]
    r[_flag(suffix == "")] = _R[MISSING_SUFFIX]
    prefix = ok.str.slice(0, 2)
    bad_prefix = (ok.str.slice(0, 1).isin(list("DFIQUV")) | ok.str.slice(1, 2).isin(list("DFIQUVO"))
                  | prefix.isin(["BG", "GB", "KN", "NK", "NT", "TN", "ZZ"]))
    r[_flag(bad_prefix)] = _R[BAD_PREFIX]
    reason[shape] = r
    return reason


_FAST_CHECKS = {"us_ssn": _ssn_reasons, "us_itin": _itin_reasons, "ca_sin": _sin_reasons,
                "gb_nino": _nino_reasons}
_EXCEPTION_REASONS = ((InvalidLength, WRONG_LENGTH), (InvalidFormat, BAD_FORMAT),
                      (InvalidChecksum, BAD_CHECKSUM), (InvalidComponent, BAD_COMPONENT))


def _stdnum_check(sub: pd.Series, id_type: str) -> tuple[np.ndarray, list[str]]:
    """Check distinct values with python-stdnum; reason codes and canonical compact values."""
    module = importlib.import_module(ID_TYPES[id_type][1])
    reasons, values = [], []
    for number in sub.tolist():
        reason = -1
        try:
            module.validate(number)
        except Exception as exc:  # python-stdnum may raise plain errors on odd input
            code = next((c for cls, c in _EXCEPTION_REASONS if isinstance(exc, cls)), BAD_FORMAT)
            reason = _R[code]
        try:
            compact = module.compact(number)
        except Exception:
            compact = number
        if id_type == "se_personnummer":
            compact = compact.replace("-", "").replace("+", "")
            if reason < 0:  # 12-digit form with the century, so 10- and 12-digit forms agree
                compact = f"{module.get_birth_date(number).year // 100:02d}{compact[-10:]}"
        reasons.append(reason)
        values.append(compact)
    return np.array(reasons, dtype=np.int8), values


def _nine_digits(sub: pd.Series, nine: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Reasons pre-filled for values that are not nine digits, and the nine-digit matrix."""
    reason = np.full(len(sub), -1, dtype=np.int8)
    other = np.flatnonzero(~nine)
    if len(other):
        digits_only = _flag(sub.iloc[other].str.fullmatch("[0-9]+"))
        reason[other] = np.where(digits_only, _R[WRONG_LENGTH], _R[BAD_FORMAT])
    return reason, _digit_matrix(sub if len(other) == 0 else sub[nine], 9)


def _digit_matrix(sub: pd.Series, width: int) -> np.ndarray:
    """(n, width) uint8 digits of ASCII digit strings that all have ``width`` characters.

    Reads the Arrow string buffer directly: the strings are stored back to back, so the bytes
    between the first and last offset are the digits, row after row.
    """
    arr = _arrow(sub)
    if len(arr) == 0:
        return np.zeros((0, width), dtype=np.uint8)
    offset_type = np.int64 if pa.types.is_large_string(arr.type) else np.int32
    offsets = np.frombuffer(arr.buffers()[1], dtype=offset_type)
    offsets = offsets[arr.offset:arr.offset + len(arr) + 1]
    data = np.frombuffer(arr.buffers()[2], dtype=np.uint8)[offsets[0]:offsets[-1]]
    return data.reshape(-1, width) - np.uint8(48)


def _placeholder_mask(value: pd.Series, has_letter: np.ndarray) -> np.ndarray:
    """Values whose digits are a placeholder run (with at most three letters around them)."""
    mask = _flag(value.isin(PLACEHOLDER_DIGITS))
    rows = np.flatnonzero(has_letter & value.notna().to_numpy())
    if len(rows):
        lettered = value.iloc[rows]
        digits = lettered.str.replace("[A-Z]", "", regex=True)
        few_letters = (lettered.str.len() - digits.str.len()) <= 3
        mask[rows] = _flag(digits.isin(PLACEHOLDER_DIGITS) & few_letters)
    return mask


def _flag(s: pd.Series) -> np.ndarray:
    """A writable boolean numpy array from a nullable boolean Series (<NA> -> False)."""
    return np.array(s.to_numpy(dtype=bool, na_value=False), dtype=bool)


def _arrow(s: pd.Series) -> pa.Array:
    """The Arrow string array behind a string Series (one chunk)."""
    arr = pa.array(s.astype(_STRING).array)
    return arr.combine_chunks() if isinstance(arr, pa.ChunkedArray) else arr


def _series(arr: pa.Array) -> pd.Series:
    """A pandas Series over an Arrow array (string arrays as pandas ``string``)."""
    if pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type):
        return pd.Series(_STRING.__from_arrow__(arr.cast(pa.large_string())))
    return pd.Series(pd.ArrowDtype(arr.type).__from_arrow__(arr))


def labels_from_codes(codes: np.ndarray, labels: tuple[str, ...] | list[str]) -> pd.Series:
    """String Series from integer codes into ``labels`` (-1 -> <NA>), built in Arrow.

    Normalisers carry low-cardinality columns (status, reason, type) as small integers through
    `on_distinct` and turn them into text at the end: decoding in Arrow is far cheaper than
    gathering a million strings.
    """
    codes = np.asarray(codes, dtype=np.int32)
    indices = pa.array(codes, mask=codes < 0)
    decoded = pa.DictionaryArray.from_arrays(indices, pa.array(list(labels), pa.large_string()))
    return pd.Series(_STRING.__from_arrow__(decoded.cast(pa.large_string())))
