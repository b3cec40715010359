"""Postcode and country normalisation for the address normaliser.

A postcode is the strongest part of an address for finding records that share a home, and the
part spreadsheets damage most (a US ZIP "02134" saved as the number 2134). This module puts
postcodes into one written form per country and says when one cannot be right:

- US: five-digit ZIP, from ZIP or ZIP+4; leading zeros lost by a spreadsheet are put back
  (4 digits -> one zero, 3 digits -> two, 8 digits of ZIP+4 -> one); "2134.0" from a float
  column is read as 2134 (common practice).
- GB: upper case, one space before the three-character inward code ("SW1A 1AA"), checked
  against the Royal Mail postcode shape (from memory): outward code A9, A99, AA9, AA99, A9A
  or AA9A with Q, V, X never first and I, J, Z never second; inward code a digit and two
  letters, never C, I, K, M, O or V. "GIR 0AA" is accepted.
- CA: "K1A 0B1" shape A1A 1A1; the letters D, F, I, O, Q and U are never used, and W and Z
  never first (Canada Post; from memory).
- Any other country: upper case, single spaces, kept when it has 2 to 10 letters, digits,
  spaces or hyphens including a digit; otherwise reported as bad. Not checked further.

Countries are written as ISO 3166-1 alpha-2 codes; a few common names and three-letter codes
are mapped (``COUNTRY_ALIASES``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise import INVALID, MISSING, PLACEHOLDER, VALID
from resolve.normalise.textkeys import (
    STRING,
    distinct_codes,
    gather,
    strings,
    tidy,
    to_arrow,
    to_series,
)

COUNTRY_ALIASES = {
    "USA": "US", "U S": "US", "U S A": "US", "UNITED STATES": "US",
    "UNITED STATES OF AMERICA": "US", "AMERICA": "US",
    "UK": "GB", "GBR": "GB", "U K": "GB", "UNITED KINGDOM": "GB", "GREAT BRITAIN": "GB",
    "ENGLAND": "GB", "SCOTLAND": "GB", "WALES": "GB", "NORTHERN IRELAND": "GB",
    "CAN": "CA", "CANADA": "CA",
    "AUS": "AU", "AUSTRALIA": "AU", "NZL": "NZ", "NEW ZEALAND": "NZ",
    "IRL": "IE", "IRELAND": "IE", "EIRE": "IE",
    "DEU": "DE", "GERMANY": "DE", "FRA": "FR", "FRANCE": "FR", "ESP": "ES", "SPAIN": "ES",
    "ITA": "IT", "ITALY": "IT", "MEX": "MX", "MEXICO": "MX", "NLD": "NL", "NETHERLANDS": "NL",
}

# Status codes shared with the address normaliser.
P_MISSING, P_VALID, P_BAD, P_PLACEHOLDER = 0, 1, 2, 3
_STATUS_NAMES = [MISSING, VALID, INVALID, PLACEHOLDER]

_GB = (
    r"^(?P<out>GIR|[A-PR-UWYZ](?:[0-9][0-9A-Z]?|[A-HK-Y][0-9][0-9A-Z]?))"
    r"(?P<in>[0-9][ABD-HJLNP-UW-Z]{2})$"
)
_CA = r"^(?P<a>[ABCEGHJ-NPRSTVXY][0-9][ABCEGHJ-NPRSTV-Z])(?P<b>[0-9][ABCEGHJ-NPRSTV-Z][0-9])$"
_US = r"^(?P<zip>[0-9]{3,9})$"
_OTHER = r"^[A-Z0-9 -]{2,10}$"
_PLACEHOLDERS = strings(
    ["NA", "N/A", "N A", "NONE", "NULL", "UNKNOWN", "TBC", "TBD", "XXX", "XXXXX", "00000",
     "000000", "0000", "0", "-", "?", "NIL", "NOT KNOWN"]
)


def country_codes(
    country: pd.Series | str | None, n: int, default: str = "US"
) -> tuple[np.ndarray, pa.Array]:
    """Country of each record as (codes, distinct upper-case country codes).

    ``values[codes]`` is the country of each record; blank values take ``default``. Two
    spellings of one country ("USA", "US") may stay separate entries of ``values``.
    """
    if country is None or isinstance(country, str):
        return np.zeros(n, dtype=np.int64), strings([_country_value(country or default)])
    codes, uniques = distinct_codes(country.astype("string"))
    raw = tidy(pc.utf8_upper(to_arrow(uniques)))
    raw = tidy(pc.replace_substring_regex(raw, pattern=r"[.,]", replacement=" "))
    mapped = pc.take(
        strings(list(COUNTRY_ALIASES.values())),
        pc.index_in(raw, value_set=strings(list(COUNTRY_ALIASES))),
    )
    return codes, pc.fill_null(pc.coalesce(mapped, raw), _country_value(default))


def _country_value(text: str) -> str:
    key = " ".join(text.upper().replace(".", " ").replace(",", " ").split())
    return COUNTRY_ALIASES.get(key, key)


def postcode_parts(values: pa.Array, countries: pa.Array) -> tuple[pa.Array, np.ndarray]:
    """Normalise distinct (postcode, country) pairs: the written form and a status code."""
    n = len(values)
    text = tidy(pc.utf8_upper(values))
    status = np.where(pc.is_null(text).to_numpy(zero_copy_only=False), P_MISSING, P_BAD)
    out = pa.nulls(n, STRING)
    placeholder = pc.fill_null(pc.is_in(text, value_set=_PLACEHOLDERS), False)
    compact = pc.replace_substring_regex(text, pattern=r"[\s-]+", replacement="")

    # United States: digits only (a float column may add ".0").
    us = pc.fill_null(pc.equal(countries, "US"), False)
    digits = pc.replace_substring_regex(compact, pattern=r"^([0-9]+)\.0+$", replacement=r"\1")
    zip_found = pc.struct_field(pc.extract_regex(digits, pattern=_US), [0])
    length = pc.utf8_length(zip_found)
    padded = pc.if_else(
        pc.is_in(length, value_set=pa.array([3, 4, 8], pa.int32())),
        pc.utf8_lpad(zip_found, width=5, padding="0"),
        zip_found,
    )
    padded = pc.if_else(pc.equal(length, 8), pc.binary_join_element_wise(
        pa.scalar("0", STRING), zip_found, pa.scalar("", STRING)), padded)
    us_ok = pc.is_in(pc.utf8_length(padded), value_set=pa.array([5, 9], pa.int32()))
    us_value = pc.utf8_slice_codeunits(padded, 0, 5)
    us_ok = pc.and_(pc.fill_null(us_ok, False), pc.not_equal(us_value, "00000"))
    out = pc.if_else(pc.and_(us, us_ok), us_value, out)

    # Great Britain (and the Crown dependencies, which share the scheme).
    gb = pc.fill_null(pc.is_in(countries, value_set=strings(["GB", "IM", "JE", "GG"])), False)
    gb_found = pc.extract_regex(compact, pattern=_GB)
    gb_value = pc.binary_join_element_wise(
        pc.struct_field(gb_found, [0]), pc.struct_field(gb_found, [1]), pa.scalar(" ", STRING)
    )
    out = pc.if_else(pc.and_(gb, pc.is_valid(gb_value)), gb_value, out)

    # Canada.
    ca = pc.fill_null(pc.equal(countries, "CA"), False)
    ca_found = pc.extract_regex(compact, pattern=_CA)
    ca_value = pc.binary_join_element_wise(
        pc.struct_field(ca_found, [0]), pc.struct_field(ca_found, [1]), pa.scalar(" ", STRING)
    )
    out = pc.if_else(pc.and_(ca, pc.is_valid(ca_value)), ca_value, out)

    # Everywhere else: a tidy upper-case form holding a digit.
    other = pc.invert(pc.or_(pc.or_(us, gb), ca))
    other_ok = pc.and_(
        pc.fill_null(pc.match_substring_regex(text, pattern=_OTHER), False),
        pc.fill_null(pc.match_substring_regex(text, pattern=r"[0-9]"), False),
    )
    out = pc.if_else(pc.and_(other, other_ok), text, out)

    out = pc.if_else(placeholder, pa.scalar(None, STRING), out)
    status = np.where(pc.is_valid(out).to_numpy(zero_copy_only=False), P_VALID, status)
    status = np.where(placeholder.to_numpy(zero_copy_only=False), P_PLACEHOLDER, status)
    return out, status.astype(np.int8)


def pair_codes(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Distinct (a, b) code pairs: (codes per record, a of each pair, b of each pair).

    ``a`` and ``b`` are dense codes from ``distinct_codes`` (every value 0..max occurs).
    """
    if len(a) == 0:
        empty = np.zeros(0, dtype=np.int64)
        return empty, empty, empty
    width = int(b.max()) + 1
    if width == 1:  # one country for every record: the pairs are the a values themselves
        return a.astype(np.int64), np.arange(int(a.max()) + 1, dtype=np.int64), np.zeros(
            int(a.max()) + 1, dtype=np.int64
        )
    combined = a.astype(np.int64) * width + b
    span = (int(a.max()) + 1) * width
    if span <= 64 * len(a):  # dense table: linear time instead of a sort
        seen = np.zeros(span, dtype=bool)
        seen[combined] = True
        uniq = np.flatnonzero(seen)
        rank = np.cumsum(seen, dtype=np.int64) - 1
        return rank[combined], uniq // width, uniq % width
    uniq, inverse = np.unique(combined, return_inverse=True)
    return inverse.astype(np.int64), uniq // width, uniq % width


def normalise_postcodes(
    raw: pd.Series, country: pd.Series | str = "US", *, default_country: str = "US"
) -> pd.DataFrame:
    """Normalise postcodes for their countries; returns ``value``, ``status``, ``reason``.

    ``reason`` is ``bad_postcode`` when a postcode is present but cannot be right for its
    country, ``placeholder_postcode`` for fillers such as "N/A" or "00000".
    """
    n = len(raw)
    c_codes, c_values = country_codes(country, n, default_country)
    p_codes, p_values = distinct_codes(raw.astype("string"))
    codes, pa_idx, pc_idx = pair_codes(p_codes, c_codes)
    value, status = postcode_parts(
        pc.take(to_arrow(p_values), pa.array(pa_idx)), pc.take(c_values, pa.array(pc_idx))
    )
    rec_status = status[codes]
    reasons = np.array([None, None, "bad_postcode", "placeholder_postcode"], dtype=object)
    return pd.DataFrame(
        {
            "value": to_series(gather(value, codes)),
            "status": pd.array(np.array(_STATUS_NAMES, dtype=object)[rec_status], dtype="string"),
            "reason": pd.array(reasons[rec_status], dtype="string"),
        }
    ).set_axis(raw.index)
