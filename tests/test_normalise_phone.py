"""Tests for resolve.normalise.phone (and its array fast path, resolve.normalise.phone_fast).

The reference library is phonenumbers (CHECKS.md: "the library is the reference; its metadata
version decides the exact numbers, so read them at test time"). The fast path must give the
same country code, national number, region, number type and length verdict as
phonenumbers.parse / region_code_for_number / number_type / is_possible_number_with_reason
for every region's example numbers, written in several formats.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import phonenumbers
import pyarrow as pa
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from phonenumbers import PhoneNumberFormat

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, STATUSES, VALID
from resolve.normalise import phone
from resolve.normalise import phone_fast as fast
from resolve.normalise.phone import NUMBER_TYPES, REASONS, normalise_phones

REGIONS = sorted(phonenumbers.SUPPORTED_REGIONS)
COLUMNS = ["value", "status", "reason", "extension", "number_type", "region"]


def norm(values, region="US"):
    return normalise_phones(pd.Series(values, dtype="string"), region)


def one(text, region="US"):
    return norm([text], region).iloc[0]


def e164(number) -> str:
    return phonenumbers.format_number(number, PhoneNumberFormat.E164)


def written_forms(number) -> set[str]:
    """A number as people write it: E.164, international, national, 00 prefix, dashes."""
    international = phonenumbers.format_number(number, PhoneNumberFormat.INTERNATIONAL)
    national = phonenumbers.format_number(number, PhoneNumberFormat.NATIONAL)
    plain = e164(number)
    return {
        plain,
        international,
        national,
        "00" + plain[1:],
        international.replace(" ", "-"),
        national.replace(" ", ""),
        "011 " + plain[1:],
        plain[1:],
    }


def example_corpus() -> list[tuple[str, str]]:
    """(text, default region) for every region's example number of every type."""
    cases = []
    for position, region in enumerate(REGIONS):
        defaults = sorted({region, "US", "GB"} if position % 3 == 0 else {region, "US"})
        for number_type in NUMBER_TYPES:
            example = phonenumbers.example_number_for_type(region, number_type)
            if example is None:
                continue
            for text in sorted(written_forms(example)):
                for default in defaults:
                    cases.append((text, default))
    for code in sorted(phonenumbers.COUNTRY_CODES_FOR_NON_GEO_REGIONS):
        example = phonenumbers.example_number_for_non_geo_entity(code)
        if example is not None:
            for text in sorted(written_forms(example)):
                cases.append((text, "US"))
    return cases


CORPUS = example_corpus()


def reference(text: str, region: str):
    """What phonenumbers itself says: an error kind, or the parsed facts."""
    errors = {
        phonenumbers.NumberParseException.TOO_SHORT_AFTER_IDD: "too_short",
        phonenumbers.NumberParseException.TOO_SHORT_NSN: "too_short",
        phonenumbers.NumberParseException.TOO_LONG: "too_long",
        phonenumbers.NumberParseException.INVALID_COUNTRY_CODE: "unknown_country_code",
    }
    try:
        number = phonenumbers.parse(text, region)
    except phonenumbers.NumberParseException as exc:
        return ("error", errors.get(exc.error_type, "not_a_number"))
    return (
        number.country_code,
        phonenumbers.national_significant_number(number),
        phonenumbers.region_code_for_number(number),
        int(phonenumbers.number_type(number)),
        int(phonenumbers.is_possible_number_with_reason(number)),
    )


def fast_path(cases: list[tuple[str, str]]) -> list:
    """The array path's facts for each case, or None where it hands over to phonenumbers."""
    texts = pa.array([t for t, _ in cases], type=pa.large_string())
    prepared = phone._prepare(texts)
    out: list = [None] * len(cases)
    defaults = np.array([r for _, r in cases])
    for region in sorted(set(defaults)):
        rows = np.flatnonzero((defaults == region) & (prepared["kind"] == phone._SIMPLE_KIND))
        if len(rows) == 0:
            continue
        result = fast.parse_digits(
            prepared["matrix"][rows], prepared["count"][rows], prepared["plus"][rows], region
        )
        ok = np.flatnonzero(result.state == fast.PARSED)
        regions, types = fast.classify(result.country_code[ok], result.nsn[ok], result.nsn_len[ok])
        possible = fast.possible_length_result(result.country_code[ok], result.nsn_len[ok])
        errors = {fast.ERR_TOO_SHORT: "too_short", fast.ERR_TOO_LONG: "too_long",
                  fast.ERR_UNKNOWN_CC: "unknown_country_code"}  # fmt: skip
        for j, i in enumerate(rows):
            if result.state[j] == fast.ERROR:
                out[i] = ("error", errors[int(result.error[j])])
            elif result.state[j] == fast.PARSED:
                k = int(np.searchsorted(ok, j))
                out[i] = (
                    int(result.country_code[j]),
                    bytes(result.nsn[j, : result.nsn_len[j]]).decode(),
                    fast.REGIONS[regions[k]] if regions[k] >= 0 else None,
                    int(types[k]),
                    int(possible[k]),
                )
    return out


# --- reference-library agreement (CHECKS.md: phonenumbers is the reference) -------------


def test_fast_path_agrees_with_phonenumbers_on_every_example_number():
    # CHECKS.md: example_number_for_type(region, type) values, read at test time.
    results = fast_path(CORPUS)
    handled = [(case, got) for case, got in zip(CORPUS, results) if got is not None]
    assert len(handled) > 0.9 * len(CORPUS)  # the fast path really carries the load
    expected = [reference(*case) for case, _ in handled]
    differences = [(case, got, want) for (case, got), want in zip(handled, expected)
                   if got != want]  # fmt: skip
    assert differences == []


def test_fast_path_agrees_with_phonenumbers_on_random_digits():
    rng = np.random.default_rng(20240611)
    prefixes = ["", "+", "00", "011", "0", "1", "+1", "+44", "+0", "0011"]
    cases = []
    for _ in range(4000):
        digits = "".join(rng.choice(list("0123456789"), rng.integers(3, 19)))
        region = REGIONS[rng.integers(len(REGIONS))] if rng.random() < 0.5 else "US"
        cases.append((prefixes[rng.integers(len(prefixes))] + digits, region))
    results = fast_path(cases)
    handled = [(case, got) for case, got in zip(cases, results) if got is not None]
    expected = [reference(*case) for case, _ in handled]
    differences = [(case, got, want) for (case, got), want in zip(handled, expected)
                   if got != want]  # fmt: skip
    assert differences == []


def test_whole_column_is_the_same_with_and_without_the_fast_path():
    cases = CORPUS[::7] + [
        ("(415) 555-2671 x12", "US"), ("0000000000", "US"), ("123-456-7890", "US"),
        ("+1 212 555 0150", "US"), ("n/a", "GB"), ("1-800-FLOWERS", "US"), ("", "US"),
        ("07700 900123", "GB"), ("+44 (0) 20 8366 1177", "US"), ("12", "US"),
    ]  # fmt: skip
    raw = pd.Series([t for t, _ in cases], dtype="string")
    region = pd.Series([r for _, r in cases], dtype="string")
    with_fast = phone._normalise(raw, region, fast_path=True)
    reference_only = phone._normalise(raw, region, fast_path=False)
    pd.testing.assert_frame_equal(with_fast, reference_only)


def test_example_numbers_of_many_regions_are_valid_and_in_e164():
    # CHECKS.md: phonenumbers.example_number(region) is valid to the reference library.
    examples = {r: n for r in REGIONS if (n := phonenumbers.example_number(r)) is not None}
    national = [phonenumbers.format_number(n, PhoneNumberFormat.NATIONAL)
                for n in examples.values()]  # fmt: skip
    result = normalise_phones(pd.Series(national), pd.Series(list(examples)))
    checked = 0
    for (region, example), (_, row) in zip(examples.items(), result.iterrows()):
        if row["status"] == PLACEHOLDER:  # e.g. 12345678 examples: our own rule
            assert row["reason"] in {"sequential_digits", "repeated_digit",
                                     "reserved_fiction_range"}  # fmt: skip
            continue
        assert row["status"] == VALID, region
        assert row["value"] == e164(example)
        assert row["region"] == phonenumbers.region_code_for_number(example)
        assert row["number_type"] == NUMBER_TYPES[phonenumbers.number_type(example)]
        checked += 1
    assert checked >= 20


# --- CHECKS.md cases ---------------------------------------------------------------------


def test_python_phonenumbers_docstring_number():
    # CHECKS.md (python-phonenumbers docstring): +442083661177 is national "020 8366 1177",
    # international "+44 20 8366 1177", E.164 "+442083661177".
    for text in ["+442083661177", "020 8366 1177", "+44 20 8366 1177"]:
        result = one(text, "GB")
        assert result["value"] == "+442083661177"
        assert result["status"] == VALID
        assert pd.isna(result["reason"])
        assert result["region"] == "GB"
        assert result["number_type"] == "fixed_line"
    number = phonenumbers.parse("+442083661177")
    assert phonenumbers.format_number(number, PhoneNumberFormat.NATIONAL) == "020 8366 1177"


def test_e164_holds_at_most_15_digits():
    # CHECKS.md / ITU-T E.164: at most 15 digits. phonenumbers accepts longer national
    # numbers: this 16-digit German number is valid to it, and too long by our rule.
    number = phonenumbers.parse("+4930122805128220")
    assert phonenumbers.is_valid_number(number)
    result = one("+4930122805128220")
    assert result["status"] == INVALID
    assert result["reason"] == "too_long"
    assert pd.isna(result["value"])
    assert one("+49 30 12345678")["status"] == VALID  # 12 digits (common practice check)


def test_nanp_fiction_range_is_a_placeholder():
    # CHECKS.md: NANP 555-0100..555-0199 is reserved for fiction.
    for text in ["(212) 555-0100", "212-555-0150", "+1 212 555 0199", "555-0123"]:
        result = one(text)
        assert result["status"] == PLACEHOLDER, text
        assert result["reason"] == "reserved_fiction_range"
    for text in ["212-555-0200", "212-555-0099"]:
        assert one(text)["status"] == VALID


def test_ofcom_drama_numbers_are_not_valid():
    # CHECKS.md: Ofcom drama numbers (07700 900000-900999) are possible but not valid.
    result = one("07700 900123", "GB")
    assert result["status"] == INVALID
    assert result["reason"] == "invalid_for_region"


# --- formats --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text",
    ["(415) 555-2671", "415-555-2671", "415.555.2671", "4155552671", "+1 415 555 2671",
     "1-415-555-2671", "+14155552671", "1 (415) 555-2671", "  415 555 2671  ", "415/555-2671",
     "[415] 555 2671"],
)  # fmt: skip
def test_nanp_written_forms(text):
    result = one(text)
    assert result["value"] == "+14155552671"
    assert result["status"] == VALID
    assert result["number_type"] == "fixed_line_or_mobile"
    assert result["region"] == "US"


@pytest.mark.parametrize(
    ("text", "region"),
    [("011 44 20 8366 1177", "US"), ("00 44 20 8366 1177", "GB"), ("0044 20 8366 1177", "DE"),
     ("+44 (0) 20 8366 1177", "US"), ("020 8366 1177", "GB"), ("44 20 8366 1177", "GB")],
)  # fmt: skip
def test_international_prefixes_and_trunk_prefix(text, region):
    # 011 is the NANP international prefix and 00 the one used in GB and DE (the library's
    # metadata); the trunk 0 after +44 is dropped as the library does.
    assert one(text, region)["value"] == "+442083661177"


@pytest.mark.parametrize(
    ("text", "extension"),
    [("415-555-2671 x123", "123"), ("415-555-2671 ext. 123", "123"), ("415-555-2671 #123", "123"),
     ("(415) 555-2671 extension 45", "45"), ("415 555 2671;ext=7", "7"), ("415.555.2671 X 9", "9"),
     ("415-555-2671 Ext:12", "12")],
)  # fmt: skip
def test_extensions_are_split_off(text, extension):
    result = one(text)
    assert result["extension"] == extension
    assert result["value"] == "+14155552671"
    assert result["status"] == VALID


def test_letters_make_a_number_invalid():
    for text in ["1-800-FLOWERS", "415 555 2671 call after 6", "tel 415 555 2671"]:
        result = one(text)
        assert result["status"] == INVALID, text
        assert result["reason"] == "has_letters"
        assert pd.isna(result["value"])


def test_unknown_country_code_and_short_numbers():
    assert one("+999 1234 5678")["reason"] == "unknown_country_code"
    assert one("011 999 1234 5678")["reason"] == "unknown_country_code"
    assert one("12")["reason"] == "too_short"
    assert one("415 555")["status"] == INVALID


def test_italian_leading_zero_is_kept():
    # The library keeps the leading 0 of Italian fixed lines in the national number.
    for text, region in [("+39 02 1234 5678", "US"), ("02 1234 5678", "IT")]:
        result = one(text, region)
        assert result["value"] == "+390212345678"
        assert result["status"] == VALID


def test_texts_are_grouped_by_digits_but_plus_and_leading_zeros_still_count():
    # Work is shared between texts with the same digits; the plus sign and leading zeros
    # are part of what is shared, so these must stay apart.
    result = norm(["+44 20 8366 1177", "44 20 8366 1177", "(442) 283-6611", "0442083661177",
                   "+44.20.8366.1177"])  # fmt: skip
    assert result["value"].iloc[0] == result["value"].iloc[4] == "+442083661177"
    assert result["status"].iloc[1] == INVALID  # 12 digits read as a US number
    assert result["value"].iloc[2] == "+14422836611"
    assert result["status"].iloc[3] == INVALID


# --- placeholders and missing values -------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "reason"),
    [("0000000000", "repeated_digit"), ("555-555-5555", "repeated_digit"),
     ("+44 7777 777777", "repeated_digit"), ("123-456-7890", "sequential_digits"),
     ("0123456789", "sequential_digits"), ("987-654-3210", "sequential_digits"),
     ("n/a", "no_value_text"), ("None", "no_value_text"), ("--", "no_value_text")],
)  # fmt: skip
def test_placeholders(text, reason):
    # Common practice: repeated digits and keyboard runs stand in for "no phone".
    result = one(text)
    assert result["status"] == PLACEHOLDER
    assert result["reason"] == reason


def test_missing_values():
    result = norm([None, "", "   "])
    assert (result["status"] == MISSING).all()
    assert result["reason"].isna().all()
    assert result["value"].isna().all()


def test_text_without_digits_is_not_a_number():
    assert one("call me")["reason"] == "not_a_number"


# --- interface ------------------------------------------------------------------------------


def test_output_columns_types_and_codes():
    result = norm(["415 555 2671", "0000000000", "xyz", None, "+44 20 8366 1177"])
    assert list(result.columns) == COLUMNS
    assert all(isinstance(t, pd.StringDtype) for t in result.dtypes)
    assert set(result["status"]) <= set(STATUSES)
    assert set(result["reason"].dropna()) <= set(REASONS)
    assert set(result["number_type"].dropna()) <= set(NUMBER_TYPES.values())


def test_index_is_kept_and_region_series_is_used():
    raw = pd.Series(["020 8366 1177", "020 8366 1177", "(415) 555-2671"], index=[10, 5, 7])
    region = pd.Series(["GB", None, "zz"], index=[10, 5, 7])
    result = normalise_phones(raw, region)
    assert list(result.index) == [10, 5, 7]
    assert result.loc[10, "value"] == "+442083661177"
    assert result.loc[5, "status"] == INVALID  # missing region: the US default applies
    assert result.loc[7, "value"] == "+14155552671"  # unknown code "ZZ": the US default


def test_lower_case_region_codes_are_accepted():
    assert one("020 8366 1177", "gb")["value"] == "+442083661177"
    result = normalise_phones(pd.Series(["020 8366 1177"]), pd.Series([" gb "]))
    assert result.loc[0, "value"] == "+442083661177"


def test_unknown_default_region_is_an_input_error():
    with pytest.raises(InputError):
        norm(["415 555 2671"], "XX")
    with pytest.raises(InputError):
        normalise_phones(pd.Series(["1"]), pd.Series(["US", "GB"]))


def test_empty_input():
    result = norm([])
    assert list(result.columns) == COLUMNS
    assert len(result) == 0


def test_object_dtype_input_and_repeats_are_deterministic():
    raw = pd.Series(["415 555 2671", None, "415.555.2671", "415 555 2671"], dtype=object)
    first, second = normalise_phones(raw), normalise_phones(raw)
    pd.testing.assert_frame_equal(first, second)
    assert first["value"].iloc[0] == first["value"].iloc[2] == first["value"].iloc[3]


# --- invariants (Hypothesis) ----------------------------------------------------------------

EXAMPLES = sorted({e164(n) for r in REGIONS for t in NUMBER_TYPES
                   if (n := phonenumbers.example_number_for_type(r, t)) is not None})  # fmt: skip
US_AREAS = [a for a in range(201, 990)
            if phonenumbers.region_code_for_number(phonenumbers.parse(f"+1{a}2345678")) == "US"]


@st.composite
def phone_like(draw):
    """Texts that are mostly plausible numbers in varied formats."""
    kind = draw(st.integers(0, 2))
    if kind == 0:
        number = phonenumbers.parse(draw(st.sampled_from(EXAMPLES)))
        fmt = draw(st.sampled_from([PhoneNumberFormat.E164, PhoneNumberFormat.INTERNATIONAL,
                                    PhoneNumberFormat.NATIONAL]))  # fmt: skip
        return phonenumbers.format_number(number, fmt)
    if kind == 1:
        area = draw(st.sampled_from(US_AREAS))
        exchange = draw(st.integers(200, 999))
        line = draw(st.integers(0, 9999))
        sep = draw(st.sampled_from(["-", ".", " ", ""]))
        start = draw(st.sampled_from(["", "+1 ", "1-", "("]))
        return f"{start}{area}{sep}{exchange}{sep}{line:04d}"
    return draw(st.text(alphabet="0123456789 +-().x#", max_size=24))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(phone_like(), min_size=1, max_size=30), st.sampled_from(["US", "GB", "CA", "DE"]))
def test_normalising_a_valid_value_returns_it(texts, region):
    first = norm(texts, region)
    valid = first[first["status"] == VALID]
    for other in (region, "JP"):
        again = norm(valid["value"].tolist(), other)
        assert again["value"].tolist() == valid["value"].tolist()
        assert (again["status"] == VALID).all()
        assert again["number_type"].tolist() == valid["number_type"].tolist()


@settings(max_examples=80, deadline=None)
@given(st.lists(st.one_of(st.none(), st.text(max_size=40)), max_size=20),
       st.sampled_from(["US", "GB", "IT", "BR", "AG"]))  # fmt: skip
def test_arbitrary_text_never_raises_and_keeps_the_index(texts, region):
    index = pd.Index([f"r{i}" for i in range(len(texts))][::-1])
    raw = pd.Series(texts, index=index, dtype="string")
    result = normalise_phones(raw, region)
    assert result.index.equals(raw.index)
    assert set(result["status"]) <= set(STATUSES)
    assert (result["status"][raw.isna()] == MISSING).all()
    has_value = result["value"].notna()
    assert result.loc[has_value, "value"].str.fullmatch(r"\+[1-9]\d{1,14}").all()
    assert result.loc[has_value, "status"].isin([VALID, PLACEHOLDER]).all()
    assert result["reason"].isna().eq(result["status"].isin([VALID, MISSING])).all()
