"""Postal-address normaliser: house number, unit, street name, postcode, city and a shared key.

A shared home is one of the main ways records connect: a person re-registering with a new
phone, a household, or a ring of made-up identities using one mail drop. Addresses are
written in many ways ("12 Main Street Apt 4B", "Apt 4B, 12 Main St", "12 MAIN ST #4B"), so
this module parses the street line into house number, unit and street name, puts street
types and directions into one short form (USPS Publication 28 abbreviations, from memory,
plus UK and Canadian terms; resolve/data/address_terms.csv), normalises the postcode
(``postcodes``) and builds ``address_key``, the value later used to find records that share
an address. The key is <NA> whenever the address is too incomplete to name one home, so that
a blank or partial address never links strangers. Rules: docs/normalisation.md ("Addresses").

The parsing runs once per distinct (street, country) pair with Arrow compute (RE2) kernels.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, VALID
from resolve.normalise.postcodes import (
    P_BAD,
    P_VALID,
    country_codes,
    pair_codes,
    postcode_parts,
)
from resolve.normalise import street as st
from resolve.normalise.street import address_terms, parse_streets, street_terms
from resolve.normalise.textkeys import (
    STRING,
    distinct_codes,
    gather,
    match_key,
    repeated_character,
    strings,
    to_arrow,
    to_series,
)

OUTPUT_COLUMNS = (
    "value", "status", "reason", "house_number", "unit", "street_name", "postcode", "city",
    "address_key", "po_box",
)
# Reason codes (a contract with docs/normalisation.md), in the order they are checked.
REASONS = (
    "", "no_address", "placeholder_address", "no_fixed_address", "no_street",
    "no_house_number", "bad_postcode", "no_postcode_or_city",
)
_R = {name: i for i, name in enumerate(REASONS)}
_STATUS_OF_REASON = np.array(
    [VALID, MISSING, PLACEHOLDER, PLACEHOLDER, INVALID, INVALID, INVALID, INVALID], dtype=object
)
# Street-line state -> reason code.
_STREET_REASON = np.array(
    [_R[""], _R["no_street"], _R["placeholder_address"], _R["no_fixed_address"],
     _R["no_street"], _R["no_house_number"]],
    dtype=np.int8,
)
_CITY_PLACEHOLDERS = strings(
    ["unknown", "unk", "na", "n a", "none", "null", "nil", "not known", "tbc", "tbd", "test",
     "city", "town", "any", "anytown", "same", "blank", "missing"]
)


def normalise_addresses(
    street: pd.Series | None,
    city: pd.Series | None = None,
    postcode: pd.Series | None = None,
    country: pd.Series | str = "US",
    *,
    default_country: str = "US",
) -> pd.DataFrame:
    """Normalise postal addresses and build the key used to find shared addresses.

    ``street`` is the street line (it may hold the unit and a PO box); ``city``,
    ``postcode`` and ``country`` are aligned Series (``country`` may be one code for all;
    blanks take ``default_country``). Returns a frame with the input index and the columns
    in ``OUTPUT_COLUMNS``: ``house_number``, ``unit`` (apartment/flat/suite number, or a
    designator and number for floors, buildings, lots ...), ``street_name`` (lower case,
    street type and directions abbreviated), ``postcode`` (normalised; <NA> when bad),
    ``city`` (key form), ``address_key``, ``po_box`` (bool), ``value`` (a readable
    canonical line), ``status`` and ``reason``.
    """
    parts = [p for p in (street, city, postcode) if p is not None]
    if not parts:
        raise InputError("Pass at least one address column (street, city or postcode).")
    index = parts[0].index
    others = parts[1:] + ([country] if isinstance(country, pd.Series) else [])
    for p in others:
        if len(p) != len(index) or not p.index.equals(index):
            raise InputError(
                "The address columns must come from the same table; align them on one index first."
            )
    n = len(index)
    c_codes, c_values = country_codes(country, n, default_country)

    # Street line: once per distinct (street, country) pair.
    s_codes, s_values = _distinct(street, n)
    rec_street, pair_street, pair_country = pair_codes(s_codes, c_codes)
    sp = parse_streets(
        pc.take(s_values, pa.array(pair_street)), pc.take(c_values, pa.array(pair_country))
    )

    # Postcode: once per distinct (postcode, country) pair.
    p_codes, p_values = _distinct(postcode, n)
    rec_post, pair_post, pair_pcountry = pair_codes(p_codes, c_codes)
    post_value, post_status = postcode_parts(
        pc.take(p_values, pa.array(pair_post)), pc.take(c_values, pa.array(pair_pcountry))
    )

    # City: once per distinct value.
    t_codes, t_values = _distinct(city, n)
    city_key = _city_keys(t_values)

    return _combine(index, gather(c_values, c_codes), rec_street, sp, rec_post, post_value,
                    post_status, t_codes, city_key)


def _distinct(values: pd.Series | None, n: int) -> tuple[np.ndarray, pa.Array]:
    if values is None:
        return np.zeros(n, dtype=np.int64), pa.nulls(1, STRING)
    codes, uniques = distinct_codes(values.astype("string"))
    return codes, to_arrow(uniques)


def _city_keys(values: pa.Array) -> pa.Array:
    """City in key form: folded, lower case, Saint/Mount/Fort shortened; placeholders null."""
    key = match_key(values)
    for word, short in (("saint", "st"), ("sainte", "ste"), ("mount", "mt"), ("fort", "ft")):
        key = pc.replace_substring_regex(key, pattern=rf"\b{word}\b", replacement=short)
    bad = pc.or_(
        pc.fill_null(pc.is_in(key, value_set=_CITY_PLACEHOLDERS), False),
        repeated_character(key),
    )
    return pc.if_else(bad, pa.scalar(None, STRING), key)


def _combine(
    index: pd.Index,
    countries: pa.Array,
    rec_street: np.ndarray,
    sp: dict,
    rec_post: np.ndarray,
    post_value: pa.Array,
    post_status: np.ndarray,
    t_codes: np.ndarray,
    city_key: pa.Array,
) -> pd.DataFrame:
    """Record-level status, reason, key and display line."""
    s_state = sp["state"][rec_street]
    p_state = post_status[rec_post]
    has_city = pc.is_valid(city_key).to_numpy(zero_copy_only=False)[t_codes]
    has_street = sp["present"][rec_street]
    has_post = p_state == P_VALID
    street_ok = s_state == st.OK

    reason = _STREET_REASON[s_state]
    reason = np.where(street_ok & (p_state == P_BAD), _R["bad_postcode"], reason)
    reason = np.where(street_ok & (p_state != P_BAD) & ~has_post & ~has_city,
                      _R["no_postcode_or_city"], reason)
    nothing = ~has_street & ~has_city & (p_state == 0)
    reason = np.where(nothing, _R["no_address"], reason).astype(np.int8)

    # The key needs a usable street line and a place: the postcode, else the city.
    keyed = street_ok & (has_post | has_city)
    postcode_col = gather(post_value, rec_post)
    city_col = gather(city_key, t_codes)
    place = pc.coalesce(postcode_col, city_col)
    street_part = gather(sp["key"], np.where(keyed, rec_street, len(sp["key"])))
    address_key = pc.binary_join_element_wise(
        street_part, place, countries, pa.scalar("|", STRING)
    )
    placeholder = (reason == _R["placeholder_address"]) | (reason == _R["no_fixed_address"])
    show = np.where(placeholder, len(sp["key"]), rec_street)
    line = gather(sp["line"], show)
    place_line = pc.utf8_trim(pc.binary_join_element_wise(
        city_col, postcode_col, pa.scalar(" ", STRING), null_handling="replace",
        null_replacement="",
    ), " ")
    value = pc.binary_join_element_wise(
        line, place_line, pa.scalar(", ", STRING), null_handling="replace", null_replacement=""
    )
    value = pc.utf8_trim(value, characters=", ")
    blank = pc.or_(pc.equal(value, ""), pa.array(placeholder))
    value = pc.if_else(blank, pa.scalar(None, STRING), value)

    out = {
        "value": value,
        "status": pc.take(strings(list(_STATUS_OF_REASON)), pa.array(reason)),
        "reason": pc.take(strings([None, *REASONS[1:]]), pa.array(reason)),
        "house_number": gather(sp["house_number"], show),
        "unit": gather(sp["unit"], show),
        "street_name": gather(sp["street_name"], show),
        "postcode": postcode_col,
        "city": city_col,
        "address_key": address_key,
    }
    frame = pd.DataFrame({k: to_series(v) for k, v in out.items()})
    frame["po_box"] = sp["po_box"][rec_street]
    frame.index = index
    return frame[list(OUTPUT_COLUMNS)]


__all__ = ["normalise_addresses", "address_terms", "street_terms", "OUTPUT_COLUMNS", "REASONS"]
