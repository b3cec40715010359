"""Tests for resolve.normalise.dates: formats, day/month order by country, ambiguity, the
Gregorian calendar, plausibility against a fixed ``today``, placeholders, timestamps and
invariants."""

from __future__ import annotations

import calendar
import datetime as dt

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.normalise import STATUSES
from resolve.normalise.dates import (
    PLACEHOLDER_DATES,
    REASONS,
    normalise_dates,
    parse_timestamps,
)

TODAY = dt.date(2025, 6, 15)  # fixed, so that results do not depend on the day the tests run


def one(raw, country="US", today=TODAY, **kw) -> dict:
    """Normalise one value and return its row as a dict (NA as None)."""
    row = normalise_dates(pd.Series([raw], dtype="string"), country, today, **kw).iloc[0]
    return {k: None if pd.isna(v) else v.item() if isinstance(v, np.generic) else v
            for k, v in row.items()}


def iso(values, country="US", today=TODAY, **kw) -> list:
    out = normalise_dates(pd.Series(values, dtype="string"), country, today, **kw)
    return [None if pd.isna(v) else v for v in out["value"]]


# --- Formats ---------------------------------------------------------------------------------

@pytest.mark.parametrize("raw", [
    "2001-02-03", "2001/02/03", "2001.02.03", "20010203", "2001-2-3", "3 Feb 2001",
    "Feb 3 2001", "February 3, 2001", "03-FEB-2001", "3-feb-01", "3rd February 2001",
    "Saturday, 3 February 2001", "2001-Feb-03", "Feb. 3, 2001", "3 of February 2001",
    "2001-02-03T00:00:00", "2001-02-03 00:00:00", "2001-02-03T10:20:30.123Z",
    "02/03/2001 12:00 AM", "  2001-02-03  ",
])
def test_formats_read_as_3_february_2001(raw):
    assert iso([raw]) == ["2001-02-03"]  # US order for the numeric day/month forms


def test_fullwidth_digits_are_read():
    assert iso(["２００１-０２-０３"]) == ["2001-02-03"]


def test_month_names_in_full_and_short():
    raw = [f"1 {calendar.month_name[m]} 2001" for m in range(1, 13)]
    raw += [f"{calendar.month_abbr[m]} 1, 2001" for m in range(1, 13)]
    assert iso(raw) == [f"2001-{m:02d}-01" for m in range(1, 13)] * 2
    assert iso(["3 Sept 2001"]) == ["2001-09-03"]


# --- Day/month order by country ---------------------------------------------------------------

@pytest.mark.parametrize("country, expected", [
    ("US", "2001-03-02"),  # month first (common knowledge)
    ("PH", "2001-03-02"),  # month first (from memory)
    ("CA", "2001-03-02"),  # our choice for Canada, which uses both orders
    ("GB", "2001-02-03"),  # day first (common knowledge)
    ("FR", "2001-02-03"),
    ("DE", "2001-02-03"),
])
def test_numeric_order_follows_country(country, expected):
    for raw in ["03/02/2001", "3-2-2001", "03.02.2001", "03022001"]:
        assert one(raw, country)["value"] == expected
        assert one(raw, country)["ambiguous"] is True


def test_country_series_with_missing_uses_default_order():
    raw = pd.Series(["03/02/2001"] * 4, dtype="string")
    out = normalise_dates(raw, pd.Series(["GB", None, "uk", "US"], dtype="string"), TODAY,
                          default_country="FR")
    assert list(out["value"]) == ["2001-02-03", "2001-02-03", "2001-02-03", "2001-03-02"]


def test_month_first_countries_can_be_changed():
    assert one("03/02/2001", "CA", month_first_countries=frozenset({"US"}))["value"] == "2001-02-03"


def test_only_possible_reading_is_used_and_not_ambiguous():
    assert one("25/12/2001", "US") == one("12/25/2001", "GB")
    assert one("25/12/2001", "US")["value"] == "2001-12-25"
    assert one("25/12/2001", "US")["ambiguous"] is False


def test_same_day_and_month_is_not_ambiguous():
    assert one("12/12/2001")["ambiguous"] is False


def test_year_first_and_month_names_are_never_ambiguous():
    assert one("2001-03-02")["ambiguous"] is False
    assert one("3 Feb 2001", "GB")["ambiguous"] is False


# --- Two-digit years ---------------------------------------------------------------------------

@pytest.mark.parametrize("raw, expected", [
    ("01/02/03", "2003-01-02"),
    ("01/02/25", "2025-01-02"),  # not after today's two-digit year (25): this century
    ("01/02/26", "1926-01-02"),  # after it: the previous century (birth dates are past)
    ("01/02/00", "2000-01-02"),
    ("3 Feb 99", "1999-02-03"),
])
def test_two_digit_year_pivot(raw, expected):
    assert one(raw)["value"] == expected


# --- Calendar: Gregorian rules (ISO 8601 uses the Gregorian calendar) -------------------------

def test_leap_days():
    # Gregorian rule (common knowledge, ISO 8601): divisible by 4, except centuries not
    # divisible by 400. 2000 is a leap year, 1900 is not.
    assert one("2000-02-29")["status"] == "valid"
    assert one("1900-02-29")["status"] == "invalid"
    assert one("1900-02-29")["reason"] == "impossible_date"


def test_leap_years_agree_with_python_calendar():
    years = list(range(1583, 2401))  # Python's calendar module: proleptic Gregorian
    out = normalise_dates(pd.Series([f"{y}-02-29" for y in years]), "US", TODAY)
    possible = out["reason"].fillna("") != "impossible_date"
    assert list(possible) == [calendar.isleap(y) for y in years]
    assert list(out["value"].notna()) == [calendar.isleap(y) for y in years]


@pytest.mark.parametrize("raw", ["31/02/2001", "13/13/2001", "2001-02-30", "2001-04-31",
                                 "2001-00-10", "2001-01-00", "31 Apr 2001", "0/0/2001"])
def test_impossible_dates(raw):
    assert one(raw) == {"value": None, "status": "invalid", "reason": "impossible_date",
                        "ambiguous": False, "year": None, "month": None, "day": None}


@settings(max_examples=100, deadline=None)
@given(st.integers(1, 9999), st.integers(0, 13), st.integers(0, 32))
def test_real_dates_agree_with_python_datetime(y, m, d):
    try:
        dt.date(y, m, d)
        real = True
    except ValueError:
        real = False
    row = one(f"{y:04d}-{m:02d}-{d:02d}")  # past/future/placeholder rules may apply as well
    assert (row["reason"] == "impossible_date") == (not real)
    assert (row["value"] is not None) == real or (y, m, d) == (0, 0, 0)


# --- Plausibility against today -------------------------------------------------------------

def test_in_future_and_today():
    assert one("2025-06-16")["reason"] == "in_future"
    assert one("2025-06-15")["status"] == "valid"


def test_over_120_years_is_implausible():
    assert one("1905-06-15")["status"] == "valid"               # exactly 120 years before today
    assert one("1905-06-14")["reason"] == "implausible_age"     # one day more
    assert one("1905-06-14")["value"] == "1905-06-14"           # read, but not plausible


def test_earliest_year():
    assert one("1949-12-31", earliest_year=1950)["reason"] == "implausible_age"
    assert one("1950-01-01", earliest_year=1950)["status"] == "valid"


def test_default_today_is_the_current_date():
    tomorrow = dt.date.today() + dt.timedelta(days=1)
    assert one(tomorrow.isoformat(), today=None)["reason"] == "in_future"


# --- Placeholders (common practice) and missing values -----------------------------------------

@pytest.mark.parametrize("raw", sorted(PLACEHOLDER_DATES) + ["01/01/1900", "31-DEC-9999"])
def test_placeholder_dates(raw):
    row = one(raw, today=TODAY)
    assert (row["status"], row["reason"]) == ("placeholder", "placeholder_date")


def test_brief_placeholders_are_listed_and_epoch_is_not():
    listed_in_brief = {"1900-01-01", "1901-01-01", "0001-01-01", "9999-12-31", "1111-11-11"}
    assert listed_in_brief <= PLACEHOLDER_DATES
    assert one("1970-01-01")["status"] == "valid"


def test_zero_date_is_a_placeholder_without_value():
    assert one("0000-00-00") == {"value": None, "status": "placeholder",
                                      "reason": "placeholder_date", "ambiguous": False,
                                      "year": None, "month": None, "day": None}


def test_own_placeholder_list():
    assert one("1970-01-01", placeholders=frozenset({"1970-01-01"}))["status"] == "placeholder"


def test_missing_and_unreadable():
    out = normalise_dates(pd.Series([None, "", "  ", "unknown", "2001", "Feb 2001", "3 Foo 2001"],
                                    dtype="string"), "US", TODAY)
    assert list(out["status"]) == ["missing"] * 3 + ["invalid"] * 4
    assert list(out["reason"].fillna("-")) == ["-"] * 3 + ["unreadable"] * 4


# --- Output contract and invariants -------------------------------------------------------------

def test_output_contract():
    raw = pd.Series(["2001-02-03", None, "1900-02-29"], index=["a", "b", "c"], dtype="string")
    out = normalise_dates(raw, "US", TODAY)
    assert list(out.columns) == ["value", "status", "reason", "ambiguous", "year", "month", "day"]
    assert list(out.index) == ["a", "b", "c"]
    assert str(out["value"].dtype) == "string" and str(out["status"].dtype) == "string"
    assert out["ambiguous"].dtype == bool
    assert all(str(out[c].dtype) == "Int16" for c in ("year", "month", "day"))
    assert set(out["status"]) <= set(STATUSES)
    assert set(out["reason"].dropna()) <= set(REASONS)
    assert (out["year"].iloc[0], out["month"].iloc[0], out["day"].iloc[0]) == (2001, 2, 3)


DATES = st.dates(min_value=dt.date(1906, 1, 1), max_value=TODAY)
WRITTEN = st.sampled_from(["%Y-%m-%d", "%m/%d/%Y", "%d %b %Y", "%B %d, %Y", "%Y%m%d",
                           "%d-%b-%y", "%Y-%m-%dT%H:%M:%S"])


@settings(max_examples=60, deadline=None)
@given(DATES, WRITTEN, st.sampled_from(["US", "GB", "CA", "IN"]))
def test_normalising_the_iso_output_returns_it_unchanged(day, written, country):
    raw = day.strftime(written)
    first = one(raw, "US")
    if written not in ("%m/%d/%Y", "%d-%b-%y"):  # the others name the date unambiguously
        assert first["value"] == day.isoformat()
    again = one(first["value"], country)
    assert again == first | {"ambiguous": False}


@settings(max_examples=60, deadline=None)
@given(st.lists(st.text(max_size=30), max_size=8), st.sampled_from(["US", "GB", "ZZ"]))
def test_never_raises_and_is_deterministic(values, country):
    raw = pd.Series(values, dtype="string")
    out = normalise_dates(raw, country, TODAY)
    assert len(out) == len(raw)
    assert (out["value"].notna() == out["year"].notna()).all()
    assert out.loc[out["status"] == "valid", "value"].notna().all()
    pd.testing.assert_frame_equal(out, normalise_dates(raw.copy(), country, TODAY))
    parse_timestamps(raw)


# --- Timestamps ----------------------------------------------------------------------------------

def test_timestamps_with_times_and_offsets():
    raw = pd.Series(["2001-02-03T04:05:06Z", "2001-02-03T04:05:06+02:00", "02/03/2001 12:00 AM",
                     "02/03/2001 12:30 PM", "02/03/2001 1:05 pm", "2001-02-03 04:05:06.123456",
                     "2001-02-03", "13:30 PM 2001", None, "02/03/2001 13:30 PM"], dtype="string")
    out = parse_timestamps(raw, today=TODAY)
    assert out.dtype == "datetime64[ns]"
    expected = ["2001-02-03 04:05:06", "2001-02-03 02:05:06", "2001-02-03 00:00:00",
                "2001-02-03 12:30:00", "2001-02-03 13:05:00", "2001-02-03 04:05:06.123456",
                "2001-02-03 00:00:00", None, None, None]
    assert [None if pd.isna(t) else t for t in out] == [
        None if e is None else pd.Timestamp(e) for e in expected]


def test_timestamps_day_first():
    raw = pd.Series(["02/03/2001 10:00", "25/12/2001"], dtype="string")
    assert list(parse_timestamps(raw, day_first=True)) == [pd.Timestamp("2001-03-02 10:00"),
                                                           pd.Timestamp("2001-12-25")]


def test_timestamps_outside_the_nanosecond_range_are_nat():
    assert parse_timestamps(pd.Series(["1500-01-01", "2300-01-01"], dtype="string")).isna().all()


@settings(max_examples=100, deadline=None)
@given(st.datetimes(min_value=dt.datetime(1678, 1, 2), max_value=dt.datetime(2261, 12, 30)),
       st.integers(-12 * 60, 14 * 60))
def test_iso_timestamps_agree_with_pandas(moment, offset):
    # pandas' own ISO 8601 parser is the outside reference for times with an offset.
    zone = dt.timezone(dt.timedelta(minutes=offset))
    text = moment.replace(tzinfo=zone).isoformat()
    ours = parse_timestamps(pd.Series([text], dtype="string")).iloc[0]
    theirs = pd.to_datetime(text, utc=True).tz_localize(None)
    assert ours == theirs


def test_timestamp_days_agree_with_numpy():
    days = np.arange(-100_000, 100_000, 997)
    dates = days.astype("datetime64[D]")
    text = pd.Series(np.datetime_as_string(dates), dtype="string")
    assert (parse_timestamps(text).to_numpy() == dates.astype("datetime64[ns]")).all()
