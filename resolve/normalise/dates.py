"""Birth-date normaliser (and the account-opening timestamp reader) for whole columns.

A birth date is half of most fuzzy matching keys (name sound + birth date) and the field that
tells a shared or fabricated identity apart: people carrying one national ID with different
birth dates. Extracts write dates every way (2001-02-03, 03/02/2001, 3 Feb 2001, 20010203,
with or without a time), and 03/02/2001 means 3 February in London and 2 March in New York.
This module reads them all into ISO 8601 text, says which readings were ambiguous, and marks
dates that cannot be a living customer's birth date (impossible, in the future, over 120
years ago) or that stand for "unknown" (1900-01-01 and friends).

Birth dates repeat a lot, so parsing runs once per distinct string (`on_distinct`): each
format is a regular expression extracted over the distinct values, and the dates are checked
with numpy. docs/normalisation.md lists every rule and its source.
"""

from __future__ import annotations

import datetime as dt
import re

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise import INVALID, MISSING, PLACEHOLDER, STATUSES, VALID
from resolve.normalise.distinct import on_distinct
from resolve.normalise.national_id import country_codes, labels_from_codes

# Countries that write the month first (03/02/2001 = March 2). US and territories, PH, FM, MH,
# PW from memory; CA is our choice: Canada uses both orders, and ambiguous readings are
# flagged either way. Every other country reads day first.
MONTH_FIRST_COUNTRIES = frozenset({"US", "AS", "GU", "MP", "PR", "VI", "UM", "PH", "FM", "MH",
                                   "PW", "CA"})
# Dates that systems and clerks enter for "unknown" (common practice). 1970-01-01 (the Unix
# epoch) is deliberately not listed: real people were born on it. 0000-00-00 (a database
# zero date) is also treated as a placeholder, with no value.
PLACEHOLDER_DATES = frozenset({"1900-01-01", "1901-01-01", "0001-01-01", "9999-12-31",
                               "1111-11-11", "1899-12-30", "1899-12-31", "1753-01-01"})
MAX_AGE_YEARS = 120

UNREADABLE = "unreadable"
IMPOSSIBLE_DATE = "impossible_date"
IN_FUTURE = "in_future"
IMPLAUSIBLE_AGE = "implausible_age"
PLACEHOLDER_DATE = "placeholder_date"
REASONS = (UNREADABLE, IMPOSSIBLE_DATE, IN_FUTURE, IMPLAUSIBLE_AGE, PLACEHOLDER_DATE)
_R = {name: np.int8(i) for i, name in enumerate(REASONS)}
_S = {name: np.int8(i) for i, name in enumerate(STATUSES)}

MONTHS = {name: i + 1 for i, names in enumerate([
    ("JAN", "JANUARY"), ("FEB", "FEBRUARY"), ("MAR", "MARCH"), ("APR", "APRIL"), ("MAY",),
    ("JUN", "JUNE"), ("JUL", "JULY"), ("AUG", "AUGUST"), ("SEP", "SEPT", "SEPTEMBER"),
    ("OCT", "OCTOBER"), ("NOV", "NOVEMBER"), ("DEC", "DECEMBER")]) for name in names}

_SEP = r"[-/. ]"
_LOOSE = r"[-/., ]*"
_Y = r"(?P<y>[0-9]{4}|[0-9]{2})"
_MON = r"(?P<mon>[A-Z]{3,9})\.?"
# Date layouts, tried in order; the first that matches a value is used. Named groups:
# y year, m month, d day, mon English month name, p/q two numbers whose day/month order
# depends on the country ("flex").
PATTERNS = (
    ("year_first", rf"^(?P<y>[0-9]{{4}}){_SEP}(?P<m>[0-9]{{1,2}}){_SEP}(?P<d>[0-9]{{1,2}})$"),
    ("eight_digits", r"^(?P<y>[0-9]{4})(?P<m>[0-9]{2})(?P<d>[0-9]{2})$"),
    ("year_last", rf"^(?P<p>[0-9]{{1,2}}){_SEP}(?P<q>[0-9]{{1,2}}){_SEP}{_Y}$"),
    ("day_name_year", rf"^(?P<d>[0-9]{{1,2}}){_LOOSE}{_MON}{_LOOSE}{_Y}$"),
    ("name_day_year", rf"^{_MON}{_LOOSE}(?P<d>[0-9]{{1,2}}){_LOOSE}[-/., ]{_Y}$"),
    ("year_name_day", rf"^(?P<y>[0-9]{{4}}){_LOOSE}{_MON}{_LOOSE}(?P<d>[0-9]{{1,2}})$"),
)
_TIME = (r"^(?P<date>.*?)(?:T|\s+)(?P<h>[0-9]{1,2}):(?P<mi>[0-9]{2})"
         r"(?::(?P<s>[0-9]{2})(?:[.,](?P<frac>[0-9]{1,9}))?)?"
         r"\s*(?:(?P<ap>[AP])\.?M\.?)?\s*(?P<zone>Z|UTC|GMT|[+-][0-9]{2}:?[0-9]{2})?$")
_WEEKDAY = r"^(?:MON|TUE|WED|THU|FRI|SAT|SUN)[A-Z]*\.?,?\s*"
# The usual ISO 8601 timestamp; for it the groups of _TIME are these code-unit ranges.
_ISO_SECONDS = r"^[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}$"
_ISO_CUTS = {"date": (0, 10), "h": (11, 13), "mi": (14, 16), "s": (17, 19)}
_STRING = pd.StringDtype("pyarrow")
_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
_MONTH_NAMES = pa.array(list(MONTHS))
_MONTH_NUMBER = np.array([0] + list(MONTHS.values()))  # index_in result + 1 -> month (0: none)


def normalise_dates(
    raw: pd.Series,
    country: pd.Series | str = "US",
    today: dt.date | None = None,
    *,
    earliest_year: int = 1900,
    default_country: str = "US",
    month_first_countries: frozenset[str] = MONTH_FIRST_COUNTRIES,
    placeholders: frozenset[str] = PLACEHOLDER_DATES,
) -> pd.DataFrame:
    """Normalise birth dates to ISO 8601 text with status, reason and ambiguity.

    ``country`` (ISO-2 per record, <NA> -> ``default_country``, or one code for all) decides
    whether 03/02/2001 is read month first. ``today`` (default: the current date) anchors the
    two-digit-year pivot and the in-future and 120-year checks; years before
    ``earliest_year`` are implausible too. Returns a frame aligned with ``raw`` with columns
    ``value``, ``status``, ``reason``, ``ambiguous``, ``year``, ``month``, ``day``.
    """
    raw = pd.Series(raw).astype(_STRING)
    today = today or dt.date.today()
    ctry = country_codes(country, raw.index, default_country)

    def read(values: pd.Series, month_first: np.ndarray) -> pd.DataFrame:
        return _read_birth_dates(values, month_first, today, earliest_year, placeholders)

    if isinstance(ctry, pd.Series) and len(ctry) and ctry.nunique() == 1:
        ctry = str(ctry.iloc[0])  # one country: no need to pair values with it
    if isinstance(ctry, str):
        first = ctry in month_first_countries
        coded = on_distinct(raw, lambda v: read(v, np.full(len(v), first)))
    else:
        order = pd.Series(np.where(ctry.isin(month_first_countries), "M", "D"), index=raw.index)
        coded = on_distinct(raw, lambda f: read(f["value"], (f["extra"] == "M").to_numpy()),
                            extra=order)
    coded["status"] = labels_from_codes(coded["status"].to_numpy(), STATUSES).set_axis(raw.index)
    coded["reason"] = labels_from_codes(coded["reason"].to_numpy(), REASONS).set_axis(raw.index)
    return coded


def parse_timestamps(raw: pd.Series, *, day_first: bool = False,
                     today: dt.date | None = None) -> pd.Series:
    """Read timestamps (e.g. account opening dates) into ``datetime64[ns]``; NaT when unreadable.

    Same formats as `normalise_dates`, with an optional time of day (24-hour or AM/PM, seconds
    and fractions optional). A time with an offset (``Z``, ``+02:00``) is converted to UTC;
    a time without one is kept as written. Numeric day/month order is month first unless
    ``day_first``; a reading that is impossible in that order is tried the other way round.
    ``today`` (default: the current date) anchors the two-digit-year pivot. Moments outside
    what ``datetime64[ns]`` holds (years 1677-2262) are NaT.
    """
    raw = pd.Series(raw).astype(_STRING)
    today = today or dt.date.today()

    def read(values: pd.Series) -> pd.DataFrame:
        parts = _read_parts(values, today)
        y, m, d, _ = _choose_order(parts, np.full(len(values), not day_first))
        ok = (parts["matched"] & _is_date(y, m, d) & (parts["hour"] < 24)
              & (parts["minute"] < 60) & (parts["sec"] < 60))
        days = _days_from_civil(np.where(ok, y, 1970), np.where(ok, m, 1), np.where(ok, d, 1))
        seconds = (days * 86400 + parts["hour"] * 3600 + parts["minute"] * 60 + parts["sec"]
                   - parts["offset"] * 60)
        inside = ok & (np.abs(seconds) <= 9_223_372_035)  # datetime64[ns]: 1677-09-21..2262-04-11
        nanos = np.where(inside, seconds, 0) * 1_000_000_000 + parts["nanos"]
        stamps = np.where(inside, nanos, np.iinfo(np.int64).min)  # int64 minimum is NaT
        return pd.DataFrame({"t": stamps.view("datetime64[ns]")}, index=values.index)

    return on_distinct(raw, read)["t"].rename(raw.name)


def _read_birth_dates(values: pd.Series, month_first: np.ndarray, today: dt.date,
                      earliest_year: int, placeholders: frozenset[str]) -> pd.DataFrame:
    """Status, reason, ISO value and parts for distinct values with their reading order."""
    parts = _read_parts(values, today)
    y, m, d, ambiguous = _choose_order(parts, month_first)
    k = len(values)
    status = np.full(k, _S[VALID], dtype=np.int8)
    reason = np.full(k, -1, dtype=np.int8)
    readable = parts["matched"]
    real = readable & _is_date(y, m, d)
    zero = readable & (y == 0) & (m == 0) & (d == 0)
    iso = _iso_text(y, m, d, real)
    listed = pa.array(sorted(placeholders), pa.large_string())
    listed = real & _flag(pc.is_in(iso, value_set=listed))
    ymd = y.astype(np.int64) * 10000 + m * 100 + d
    today_ymd = today.year * 10000 + today.month * 100 + today.day
    oldest_ymd = today_ymd - MAX_AGE_YEARS * 10000  # exactly 120 years ago is still plausible
    rules = (  # later rules win; each applies to dates that were read
        (real & ((ymd < oldest_ymd) | (y < earliest_year)), INVALID, IMPLAUSIBLE_AGE),
        (real & (ymd > today_ymd), INVALID, IN_FUTURE),
        (listed, PLACEHOLDER, PLACEHOLDER_DATE),
        (readable & ~real, INVALID, IMPOSSIBLE_DATE),
        (zero, PLACEHOLDER, PLACEHOLDER_DATE),
        (~readable, INVALID, UNREADABLE),
        (parts["blank"], MISSING, None),
    )
    for rows, st, why in rules:
        status[rows] = _S[st]
        reason[rows] = -1 if why is None else _R[why]

    def part(x: np.ndarray) -> pd.arrays.IntegerArray:
        return pd.arrays.IntegerArray(np.where(real, x, 0).astype(np.int16), mask=~real)

    return pd.DataFrame({"value": _STRING.__from_arrow__(iso), "status": status, "reason": reason,
                         "ambiguous": ambiguous & real, "year": part(y), "month": part(m),
                         "day": part(d)}, index=values.index)


def _read_parts(values: pd.Series, today: dt.date) -> dict[str, np.ndarray]:
    """Numbers read from each distinct value: year (pivoted), first and second number, layout.

    ``first``/``second`` are month/day, except for ``flex`` values where they are the two
    leading numbers, to be ordered by `_choose_order`. Two-digit years go to the current
    century unless that would put them after ``today``'s year, then to the one before.
    """
    text = pc.utf8_upper(pc.utf8_trim_whitespace(_arrow(values)))
    wide = np.flatnonzero(~_flag(pc.string_is_ascii(text)))
    if len(wide):  # fullwidth digits and the like become ASCII
        folded = pc.utf8_normalize(text.take(wide), "NFKC")
        text = pc.replace_with_mask(text, _mask(len(text), wide), folded)
    k = len(text)
    blank = ~_flag(pc.greater(pc.binary_length(text), 0))
    timed = _time_parts(text)
    has_time = timed["_hit"]
    date_text = pc.if_else(has_time, timed["date"], text)
    date_text = pc.replace_substring_regex(date_text, _WEEKDAY, "")
    date_text = pc.replace_substring_regex(date_text, r"([0-9])(?:ST|ND|RD|TH)\b", r"\1")
    date_text = pc.utf8_trim_whitespace(pc.replace_substring_regex(date_text, r"\bOF\b", " "))

    year, first, second = (np.full(k, -1, dtype=np.int64) for _ in range(3))
    two_digit, flex, matched = (np.zeros(k, dtype=bool) for _ in range(3))
    for layout, pattern in PATTERNS:
        todo = np.flatnonzero(~matched & ~blank)
        if not len(todo):
            break
        found = pc.extract_regex(date_text.take(todo), pattern)
        group = {name: pc.struct_field(found, name) for name in re.findall(r"\?P<(\w+)>", pattern)}
        hit = _flag(pc.is_valid(found))
        if "mon" in group:
            month = _MONTH_NUMBER[_ints(pc.index_in(group["mon"], value_set=_MONTH_NAMES)) + 1]
            hit &= month > 0
        rows = todo[hit]
        y = _ints(group["y"])[hit]
        if "p" in group:  # flex: p and q are day and month in the country's order
            a, b = _ints(group["p"])[hit], _ints(group["q"])[hit]
        else:
            a = (month if "mon" in group else _ints(group["m"]))[hit]
            b = _ints(group["d"])[hit]
        is_flex = np.full(len(rows), "p" in group)
        if layout == "eight_digits":  # no Y-M-D date: try day/month first, year last
            year_last, p, q = a * 100 + b, y // 100, y % 100
            other = ~_is_date(y, a, b) & (_is_date(year_last, p, q) | _is_date(year_last, q, p))
            y, a, b = np.where(other, year_last, y), np.where(other, p, a), np.where(other, q, b)
            is_flex |= other
        year[rows], first[rows], second[rows], flex[rows] = y, a, b, is_flex
        two_digit[rows] = _flag(pc.equal(pc.binary_length(group["y"]), 2))[hit]
        matched[rows] = True
    pivot = today.year % 100
    century = today.year - pivot
    year = np.where(two_digit, np.where(year > pivot, century - 100 + year, century + year), year)

    def number(name: str) -> np.ndarray:
        return np.maximum(_ints(timed[name]), 0)

    hour = number("h")
    ap = timed["ap"]
    pm, am = _flag(pc.equal(ap, "P")), _flag(pc.equal(ap, "A"))
    on_clock = (hour >= 1) & (hour <= 12)  # 12-hour times run 12:00 AM .. 11:59 PM
    hour = np.where(am | pm, np.where(on_clock, hour % 12 + 12 * pm, 99), hour)
    fraction = pc.utf8_rpad(pc.fill_null(timed["frac"], ""), 9, "0")
    return {"blank": blank, "matched": matched, "year": year, "first": first,
            "second": second, "flex": flex, "hour": hour, "minute": number("mi"),
            "sec": number("s"), "nanos": _ints(fraction),
            "offset": _offset_minutes(timed["zone"])}


def _time_parts(text: pa.Array) -> dict:
    """The groups of ``_TIME`` per value (null where it does not match) and ``_hit``.

    A time of day always holds a colon, so only values with one are looked at; most birth
    dates have none. Capturing groups costs far more than matching, so the usual ISO 8601
    shape ``YYYY-MM-DDTHH:MM:SS`` is cut at fixed places (the pattern's groups fall exactly
    there for it) and only the other values are captured with ``_TIME``.
    """
    n = len(text)
    names = re.findall(r"\?P<(\w+)>", _TIME)
    out = {name: pa.nulls(n, text.type) for name in names}
    out["_hit"] = np.zeros(n, dtype=bool)
    colon = pc.fill_null(pc.match_substring(text, ":"), False)
    if not pc.any(colon).as_py():
        return out
    sub = text.filter(colon)
    iso = _flag(pc.match_substring_regex(sub, _ISO_SECONDS))
    fields: dict[str, list] = {name: [] for name in names}
    hits = []
    if iso.any():
        plain = sub.filter(pa.array(iso))
        untaken = pa.repeat(pa.scalar("", text.type), len(plain))  # a group not taking part
        for name in names:
            cut = _ISO_CUTS.get(name)
            fields[name].append(pc.utf8_slice_codeunits(plain, *cut) if cut else untaken)
        hits.append(np.ones(len(plain), dtype=bool))
    if not iso.all():
        found = pc.extract_regex(sub.filter(pa.array(~iso)), _TIME)
        for name in names:
            fields[name].append(pc.struct_field(found, name))
        hits.append(_flag(pc.is_valid(found)))
    # Back in the order of the values with a colon: ISO ones first in the chunks, then the rest.
    where = np.empty(len(sub), dtype=np.int64)
    where[iso] = np.arange(int(iso.sum()))
    where[~iso] = int(iso.sum()) + np.arange(int((~iso).sum()))
    where = pa.array(where)
    for name in names:
        chunks = pa.chunked_array([f.cast(text.type) for f in fields[name]], text.type)
        out[name] = pc.replace_with_mask(out[name], colon,
                                         pc.take(chunks, where).combine_chunks())
    hit = np.zeros(n, dtype=bool)
    hit[colon.to_numpy(zero_copy_only=False)] = np.concatenate(hits)[where.to_numpy()]
    out["_hit"] = hit
    return out


def _choose_order(parts: dict, month_first: np.ndarray) -> tuple[np.ndarray, ...]:
    """Year, month, day and an ambiguity flag, reading ``flex`` values in the given order.

    When the preferred reading is impossible and the other one is a real date, the other one
    is used. ``ambiguous`` is set when both readings are real dates and differ.
    """
    y, a, b, flex = parts["year"], parts["first"], parts["second"], parts["flex"]
    as_md, as_dm = _is_date(y, a, b), _is_date(y, b, a)
    use_md = ~flex | np.where(month_first, as_md | ~as_dm, ~(as_dm | ~as_md))
    month, day = np.where(use_md, a, b), np.where(use_md, b, a)
    return y, month, day, flex & as_md & as_dm & (a != b)


def _is_date(y: np.ndarray, m: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Gregorian calendar check: month 1-12, day within the month, 29 February in leap years."""
    good_month = (m >= 1) & (m <= 12)
    leap = (y % 4 == 0) & ((y % 100 != 0) | (y % 400 == 0))
    last = _DAYS[np.clip(m, 1, 12) - 1] + ((m == 2) & leap)
    return good_month & (d >= 1) & (d <= last) & (y >= 1) & (y <= 9999)


def _days_from_civil(y: np.ndarray, m: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Days since 1970-01-01 for proleptic Gregorian dates (the era-based civil-day formula)."""
    y = y - (m <= 2)
    era = np.floor_divide(y, 400)
    yoe = y - era * 400
    doy = (153 * (m + np.where(m > 2, -3, 9)) + 2) // 5 + d - 1
    doe = yoe * 365 + yoe // 4 - yoe // 100 + doy
    return era * 146097 + doe - 719468


def _iso_text(y: np.ndarray, m: np.ndarray, d: np.ndarray, real: np.ndarray) -> pa.Array:
    """YYYY-MM-DD text for real dates, <NA> elsewhere (built in Arrow)."""
    def padded(x: np.ndarray, width: int) -> pa.Array:
        return pc.utf8_lpad(pc.cast(pa.array(x), pa.string()), width, "0")

    text = pc.binary_join_element_wise(padded(y, 4), padded(m, 2), padded(d, 2), "-")
    return pc.if_else(pa.array(real), text, pa.scalar(None, pa.string())).cast(pa.large_string())


def _offset_minutes(zone: pa.Array) -> np.ndarray:
    """Minutes east of UTC from ``Z``/``UTC``/``GMT``/``+hh:mm``/``-hhmm``; 0 when absent."""
    digits = pc.replace_substring_regex(pc.fill_null(zone, ""), r"[^0-9]", "")
    hours = _ints(pc.utf8_slice_codeunits(digits, 0, 2))
    minutes = _ints(pc.utf8_slice_codeunits(digits, 2, 4))
    sign = np.where(_flag(pc.starts_with(pc.fill_null(zone, ""), "-")), -1, 1)
    return sign * (np.maximum(hours, 0) * 60 + np.maximum(minutes, 0))


def _ints(arr: pa.Array) -> np.ndarray:
    """int64 array from an Arrow array of digit strings or integers (null or empty -> -1)."""
    if pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type):
        arr = pc.if_else(pc.equal(arr, ""), pa.scalar(None, arr.type), arr)
    return pc.fill_null(pc.cast(arr, pa.int64()), -1).to_numpy(zero_copy_only=False)


def _flag(arr: pa.Array) -> np.ndarray:
    """A writable boolean numpy array from an Arrow boolean array (null -> False)."""
    return np.array(pc.fill_null(arr, False).to_numpy(zero_copy_only=False), dtype=bool)


def _mask(n: int, rows: np.ndarray) -> pa.Array:
    """An Arrow boolean mask of length ``n``, true at ``rows``."""
    mask = np.zeros(n, dtype=bool)
    mask[rows] = True
    return pa.array(mask)


def _arrow(values: pd.Series) -> pa.Array:
    """The Arrow string array behind a Series (one chunk, large_string)."""
    arr = pa.array(values.astype(_STRING).array)
    arr = arr.combine_chunks() if isinstance(arr, pa.ChunkedArray) else arr
    return arr.cast(pa.large_string())
