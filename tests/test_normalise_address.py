"""Tests for the address normaliser (resolve.normalise.address, street, postcodes)."""

from __future__ import annotations

import pandas as pd
import pyarrow as pa
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from resolve.errors import InputError
from resolve.normalise import STATUSES
from resolve.normalise.address import OUTPUT_COLUMNS, normalise_addresses
from resolve.normalise.postcodes import normalise_postcodes, pair_codes
from resolve.normalise.street import address_terms, map_words, street_terms


def one(street, city="Springfield", postcode="02134", country="US") -> dict:
    """Normalise a single address and return its row as a dict (None for <NA>)."""
    s = lambda v: pd.Series([v], dtype="string")  # noqa: E731
    out = normalise_addresses(s(street), s(city), s(postcode), country)
    return {k: (None if pd.isna(v) else v) for k, v in out.iloc[0].to_dict().items()}


def postcode(raw: str, country: str) -> str | None:
    value = normalise_postcodes(pd.Series([raw]), country)["value"].iloc[0]
    return None if pd.isna(value) else value


# --- shape and alignment ------------------------------------------------------------------


def test_columns_dtypes_and_index_are_kept():
    idx = pd.Index([7, 3, 3])
    street = pd.Series(["12 Main St", None, "PO Box 9"], index=idx)
    city = pd.Series(["Springfield", "Springfield", None], index=idx)
    out = normalise_addresses(street, city, None, "US")
    assert list(out.columns) == list(OUTPUT_COLUMNS)
    assert out.index.equals(idx)
    assert str(out["po_box"].dtype) == "bool"
    assert all(str(out[c].dtype) == "string" for c in OUTPUT_COLUMNS if c != "po_box")
    assert out["po_box"].tolist() == [False, False, True]


def test_needs_one_column_and_one_index():
    with pytest.raises(InputError):
        normalise_addresses(None, None, None)
    with pytest.raises(InputError):
        normalise_addresses(pd.Series(["1 A St"], index=[1]), pd.Series(["X"], index=[2]))


def test_empty_input():
    out = normalise_addresses(pd.Series([], dtype="string"), pd.Series([], dtype="string"))
    assert len(out) == 0 and list(out.columns) == list(OUTPUT_COLUMNS)


def test_nothing_is_missing():
    row = one(None, None, None)
    assert (row["status"], row["reason"], row["address_key"]) == ("missing", "no_address", None)


# --- street types, directions and units (USPS Publication 28, from memory) -----------------


@pytest.mark.parametrize(
    "word, abbreviation",
    [
        # USPS Pub 28 Appendix C1, street suffixes (from memory).
        ("street", "st"), ("avenue", "ave"), ("boulevard", "blvd"), ("road", "rd"),
        ("drive", "dr"), ("lane", "ln"), ("court", "ct"), ("place", "pl"), ("circle", "cir"),
        ("highway", "hwy"), ("parkway", "pkwy"), ("terrace", "ter"), ("square", "sq"),
        ("trail", "trl"), ("expressway", "expy"), ("heights", "hts"), ("crossing", "xing"),
        ("way", "way"), ("av", "ave"), ("strt", "st"),
        # USPS Pub 28 directionals (from memory).
        ("north", "n"), ("southwest", "sw"), ("east", "e"),
        # UK and Canadian terms (common practice; Canada Post, from memory).
        ("close", "cl"), ("crescent", "cres"), ("chemin", "ch"),
    ],
)
def test_street_words(word, abbreviation):
    assert map_words(pa.array([f"main {word}"], pa.large_string()), *street_terms())[0].as_py() \
        == f"main {abbreviation}"


@pytest.mark.parametrize(
    "line, unit",
    [
        # USPS Pub 28 Appendix C2, secondary unit designators (from memory).
        ("12 Main St Apartment 4B", "4b"), ("12 Main St Suite 200", "200"),
        ("12 Main St Building 2", "bldg 2"), ("12 Main St Floor 3", "fl 3"),
        ("12 Main St Room 101", "rm 101"), ("12 Main St Lot 7", "lot 7"),
        ("12 Main St Trailer 9", "trlr 9"), ("12 Main St Basement", "bsmt"),
        ("12 Main St Rear", "rear"), ("12 Main St Penthouse", "ph"),
        ("12 Main St Unit C", "c"), ("12 Main St # 4", "4"), ("12 Main St PMB 456", "pmb 456"),
    ],
)
def test_unit_designators(line, unit):
    row = one(line)
    assert (row["house_number"], row["street_name"], row["unit"]) == ("12", "main st", unit)


def test_term_table_is_consistent():
    terms = address_terms()
    assert list(terms.columns) == ["term", "standard", "kind", "source"]
    assert set(terms["kind"]) == {"street_type", "directional", "word", "ordinal", "unit",
                                  "unit_no_number"}
    assert terms["source"].str.len().gt(0).all()
    street = terms[~terms["kind"].str.startswith("unit")]
    assert street["term"].is_unique
    # A standard form maps to itself: abbreviating twice changes nothing.
    standards = sorted(set(street["standard"]))
    mapped = map_words(pa.array(standards, pa.large_string()), *street_terms()).to_pylist()
    assert mapped == standards


# --- street-line shapes ----------------------------------------------------------------


def test_the_same_home_written_many_ways_gets_one_key():
    lines = ["12 Main Street Apt 4B", "Apt 4B, 12 Main St", "12 MAIN ST #4B",
             "12 Main St., Apartment 4b", "12 main st unit 4b", "12 Main St, Suite 4B",
             "  12  Main   Street  # 4B "]
    keys = {one(line)["address_key"] for line in lines}
    assert keys == {"12|main st|4b|02134|US"}


def test_uk_flat_first():
    row = one("Flat 3, 12 High Street", "London", "SW1A 1AA", "GB")
    assert (row["house_number"], row["unit"], row["street_name"]) == ("12", "3", "high st")
    assert one("Flat 3 Rose Court, 12 High St", "London", "sw1a1aa", "UK")["address_key"] == \
        "12|high st|3|SW1A 1AA|GB"


def test_uk_house_name():
    row = one("Rose Cottage, Mill Lane", "Ambridge", "AB1 2AB", "GB")
    assert (row["house_number"], row["street_name"], row["status"]) == (
        "rose cottage", "ml ln", "valid")
    # Without a second part there is nothing to tell the homes of one street apart.
    assert one("Mill Lane", "Ambridge", "AB1 2AB", "GB")["reason"] == "no_house_number"


def test_canada_unit_before_number():
    # Canada Post writes the unit before the civic number with a hyphen (from memory).
    row = one("101-123 Main St", "Ottawa", "K1A 0B1", "CA")
    assert (row["house_number"], row["unit"]) == ("123", "101")
    # Elsewhere the hyphen is a range of house numbers.
    assert one("12-14 Main St")["house_number"] == "12-14"


def test_house_number_forms():
    assert one("123 1/2 North Avenue")["house_number"] == "123 1/2"
    assert one("12A Main St")["house_number"] == "12a"
    assert one("Hauptstraße 5", "Berlin", "10115", "DE")["house_number"] == "5"
    assert one("Route 66", "Tucumcari", "88401")["reason"] == "no_house_number"


def test_po_box_and_rural_route():
    box = one("P.O. Box 123")
    assert (box["po_box"], box["house_number"], box["street_name"], box["status"]) == (
        True, "123", "po box", "valid")
    assert one("PO BOX 123")["address_key"] == box["address_key"] == "123|po box||02134|US"
    rural = one("RR 2 Box 15")
    assert (rural["po_box"], rural["house_number"], rural["street_name"]) == (False, "15", "rr 2")


def test_saint_mount_fort_and_accents():
    row = one("12 Saint Mary's Road NW", "Fort Worth", "76102")
    assert (row["street_name"], row["city"]) == ("st marys rd nw", "ft worth")
    assert one("1 Rue Ste-Catherine", "Montréal", "H3B 1A1", "CA")["city"] == "montreal"


# --- status, reason and when a key is given ----------------------------------------------


@pytest.mark.parametrize(
    "street, city, code, status, reason",
    [
        ("12 Main St", "Springfield", "02134", "valid", None),
        ("Unknown", "Springfield", "02134", "placeholder", "placeholder_address"),
        ("N/A", "Springfield", "02134", "placeholder", "placeholder_address"),
        ("123 Fake Street", "Springfield", "02134", "placeholder", "placeholder_address"),
        ("No Fixed Abode", None, None, "placeholder", "no_fixed_address"),
        ("General Delivery", "Springfield", "02134", "placeholder", "no_fixed_address"),
        (None, "Springfield", "02134", "invalid", "no_street"),
        ("Main Street", "Springfield", "02134", "invalid", "no_house_number"),
        ("12", "Springfield", "02134", "invalid", "no_street"),
        ("12 Main St", "Springfield", "ABCDE", "invalid", "bad_postcode"),
        ("12 Main St", None, None, "invalid", "no_postcode_or_city"),
    ],
)
def test_status_and_reason(street, city, code, status, reason):
    row = one(street, city, code)
    assert (row["status"], row["reason"]) == (status, reason)


def test_key_only_for_a_complete_address():
    assert one("12 Main St", None, None)["address_key"] is None
    assert one(None, "Springfield", "02134")["address_key"] is None
    assert one("Main Street")["address_key"] is None
    assert one("Unknown")["address_key"] is None
    # Without a usable postcode the city stands in.
    assert one("12 Main St", "Springfield", None)["address_key"] == "12|main st||springfield|US"
    assert one("12 Main St", "Springfield", "ABCDE")["address_key"] == "12|main st||springfield|US"


def test_placeholder_city_is_dropped():
    row = one("12 Main St", "Unknown", None)
    assert row["city"] is None and row["address_key"] is None


# --- postcodes ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "raw, expected",
    [
        ("02134", "02134"), ("02134-1234", "02134"), ("021341234", "02134"),
        ("2134", "02134"),  # a spreadsheet dropped the leading zero (common practice)
        ("2134.0", "02134"),  # a float column (common practice)
        ("501", "00501"), ("21341234", "02134"),
        ("ABCDE", None), ("123456", None), ("00000", None),
    ],
)
def test_us_zip(raw, expected):
    assert postcode(raw, "US") == expected


@pytest.mark.parametrize(
    "raw, expected",
    [
        # UK postcode shapes A9 9AA, A99 9AA, AA9 9AA, AA99 9AA, A9A 9AA, AA9A 9AA
        # (Royal Mail / ONS postcode format, from memory).
        ("M1 1AE", "M1 1AE"), ("B33 8TH", "B33 8TH"), ("CR2 6XH", "CR2 6XH"),
        ("DN55 1PT", "DN55 1PT"), ("W1A 0AX", "W1A 0AX"), ("EC1A 1BB", "EC1A 1BB"),
        ("sw1a1aa", "SW1A 1AA"), (" sw1a  1aa ", "SW1A 1AA"), ("GIR 0AA", "GIR 0AA"),
        ("QA1 1AA", None),  # Q is never the first letter
        ("AI1 1AA", None),  # I is never the second letter
        ("SW1A 1AC", None),  # C is never used in the inward code
        ("SW1A", None), ("12345", None),
    ],
)
def test_uk_postcode(raw, expected):
    assert postcode(raw, "GB") == expected


@pytest.mark.parametrize(
    "raw, expected",
    [
        # Canada Post: A1A 1A1, letters D F I O Q U never used, W and Z never first
        # (from memory).
        ("k1a0b1", "K1A 0B1"), ("K1A 0B1", "K1A 0B1"), ("H3B-1A1", "H3B 1A1"),
        ("D1A 0B1", None), ("K1A 0O1", None), ("W1A 0B1", None), ("Z1A 0B1", None),
        ("K1A 0U1", None), ("12345", None),
    ],
)
def test_canada_postcode(raw, expected):
    assert postcode(raw, "CA") == expected


def test_postcode_status_and_country_names():
    out = normalise_postcodes(pd.Series(["N/A", "ABCDE", None, "2134"]),
                              pd.Series(["usa", "United States", "US", "U.S.A."]))
    assert out["status"].tolist() == ["placeholder", "invalid", "missing", "valid"]
    assert out["reason"].tolist()[:2] == ["placeholder_postcode", "bad_postcode"]
    assert out["value"].tolist()[3] == "02134"


def test_pair_codes():
    codes, a, b = pair_codes(pd.Series([0, 1, 0, 1]).to_numpy(), pd.Series([0, 0, 0, 1]).to_numpy())
    assert codes.tolist() == [0, 1, 0, 2]
    assert list(zip(a.tolist(), b.tolist())) == [(0, 0), (1, 0), (1, 1)]


# --- properties ------------------------------------------------------------------------

texts = st.one_of(st.none(), st.text(max_size=40))
countries = st.sampled_from(["US", "GB", "CA", "AU", "DE", "uk", "Canada", None])


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(texts, texts, texts, countries), min_size=1, max_size=8))
def test_never_raises_and_stays_aligned(rows):
    idx = [f"r{i}" for i in range(len(rows))]
    street, city, code, country = (pd.Series(list(col), index=idx, dtype="string")
                                   for col in zip(*rows))
    out = normalise_addresses(street, city, code, country)
    assert out.index.equals(street.index)
    assert set(out["status"]) <= set(STATUSES)
    assert out.loc[out["status"] == "valid", "reason"].isna().all()
    assert out.loc[out["status"] != "valid", "reason"].notna().all()
    # A key never appears without a street line, and never for placeholders.
    assert out.loc[street.isna() | (out["status"] == "placeholder"), "address_key"].isna().all()


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(texts, countries), min_size=1, max_size=8))
def test_postcodes_are_idempotent(rows):
    raw, country = (pd.Series(list(col), dtype="string") for col in zip(*rows))
    first = normalise_postcodes(raw, country)
    again = normalise_postcodes(first["value"], country)
    had = first["value"].notna()
    assert again.loc[had, "value"].tolist() == first.loc[had, "value"].tolist()


street_words = st.sampled_from(["Main", "High", "Oak", "Saint Mary", "North", "Elm", "Mill",
                                "Fifth", "Church", "Park", "King George"])
types = st.sampled_from(["Street", "St.", "Avenue", "Road", "Lane", "Close", "Way", "Court",
                         "Boulevard", "Crescent", "Drive", ""])
units = st.sampled_from(["", " Apt 4B", " #12", ", Suite 200", " Unit C", " Rear", " Bldg 2 Apt 3"])


@settings(max_examples=150, deadline=None)
@given(st.integers(1, 99999), street_words, types, units, st.sampled_from(["US", "GB", "CA"]))
def test_canonical_line_is_stable(number, name, kind, unit, country):
    line = f"{number} {name} {kind}".strip() + unit
    first = one(line, "Springfield", None, country)
    if first["street_name"] is None:
        return
    # The readable line (before ", city") is itself an address line that parses the same.
    canonical = first["value"].split(", ")[0]
    again = one(canonical, "Springfield", None, country)
    for col in ("house_number", "street_name", "unit", "address_key", "status"):
        assert again[col] == first[col]


def test_deterministic():
    street = pd.Series(["12 Main St Apt 4", "PO Box 9", None, "Flat 2, 3 High St"] * 3)
    city = pd.Series(["A", "B", "C", "London"] * 3)
    code = pd.Series(["2134", "90210", None, "SW1A1AA"] * 3)
    country = pd.Series(["US", "US", "US", "GB"] * 3)
    pd.testing.assert_frame_equal(normalise_addresses(street, city, code, country),
                                  normalise_addresses(street, city, code, country))
