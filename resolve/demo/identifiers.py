"""Vectorised generation of national IDs, phone numbers and email addresses for the demo.

Genuine customers must carry identifiers that the reference libraries call valid (python-stdnum
for IDs, phonenumbers for phones), otherwise every later measurement of the normalisers would be
measuring the demo's mistakes. The rules are applied to whole numpy arrays: digits are drawn
in valid ranges and check digits computed, never by trying numbers one at a time.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.demo.pools import Pools
from resolve.demo.vec import arrow, assemble, choose, padded, scatter, text

# python-stdnum's us.ssn refuses these three published sample numbers (see CHECKS.md).
_SSN_REFUSED = np.array([78051120, 457555462, 219099999], dtype=np.int64)
_ALLOWED_AREAS = np.setdiff1d(np.arange(1, 900), [666])


def ssn_numbers(rng: np.random.Generator, n: int) -> np.ndarray:
    """Valid-looking SSNs as integers: area 001-899 except 666, group 01-99, serial 0001-9999.

    Rules: SSA randomisation notes as summarised in CHECKS.md (areas 000, 666 and 900-999,
    group 00 and serial 0000 are never assigned).
    """
    area = _ALLOWED_AREAS[rng.integers(0, len(_ALLOWED_AREAS), n)]
    group = rng.integers(1, 100, n)
    serial = rng.integers(1, 10000, n)
    value = area * 1_000_000 + group * 10_000 + serial
    refused = np.isin(value, _SSN_REFUSED)
    return np.where(refused, value + 1, value)


def never_issued_ssns(rng: np.random.Generator, n: int) -> pd.Series:
    """SSNs that are never assigned: area 000, area 666, 9xx outside ITIN groups, or group 00."""
    kind = rng.integers(0, 4, n)
    area = np.select(
        [kind == 0, kind == 1, kind == 2],
        [np.zeros(n, dtype=np.int64), np.full(n, 666), rng.integers(900, 1000, n)],
        default=_ALLOWED_AREAS[rng.integers(0, len(_ALLOWED_AREAS), n)],
    )
    # ITIN groups are 50-65, 70-88, 90-92 and 94-99 (stdnum.us.itin); 10-49 is never an ITIN.
    group = np.where(kind == 3, 0, np.where(kind == 2, rng.integers(10, 50, n), rng.integers(1, 100, n)))
    serial = rng.integers(1, 10000, n)
    return padded(area * 1_000_000 + group * 10_000 + serial, 9)


def ssns(rng: np.random.Generator, n: int) -> pd.Series:
    """Valid-looking SSNs as 9-digit text."""
    return padded(ssn_numbers(rng, n), 9)


def ninos(rng: np.random.Generator, n: int, pools: Pools) -> pd.Series:
    """UK National Insurance numbers: allowed prefix, six digits, suffix A-D (HMRC NIM39110)."""
    prefix = text(choose(rng, pools.nino_prefixes, n))
    digits = padded(rng.integers(0, 1_000_000, n), 6)
    suffix = text(choose(rng, np.array(list("ABCD"), dtype=object), n))
    return prefix + digits + suffix


def sins(rng: np.random.Generator, n: int) -> pd.Series:
    """Canadian SINs with a Luhn check digit; first digit 1-7 (0 and 8 are refused by stdnum)."""
    body = np.empty((n, 8), dtype=np.int64)
    body[:, 0] = rng.integers(1, 8, n)
    body[:, 1:] = rng.integers(0, 10, (n, 7))
    doubled = body[:, 1::2] * 2  # 2nd, 4th, 6th and 8th digits are doubled (Luhn, 9 digits)
    doubled = np.where(doubled > 9, doubled - 9, doubled)
    total = body[:, 0::2].sum(axis=1) + doubled.sum(axis=1)
    check = (10 - total % 10) % 10
    weights = 10 ** np.arange(8, 0, -1, dtype=np.int64)
    return padded((body * weights).sum(axis=1) + check, 9)


def national_ids(rng: np.random.Generator, country: np.ndarray, pools: Pools) -> pd.Series:
    """One valid national ID per person in the form of its country (SSN, NINO or SIN)."""
    country = np.asarray(country, dtype=object)
    pieces = []
    for code, make in (("US", lambda k: ssns(rng, k)), ("GB", lambda k: ninos(rng, k, pools)),
                       ("CA", lambda k: sins(rng, k))):
        where = np.flatnonzero(country == code)
        if len(where):
            pieces.append((where, make(len(where))))
    out = assemble(len(country), pieces)
    return unique_values(out, country, lambda idx: national_ids(rng, country[idx], pools))


def phone_numbers(rng: np.random.Generator, country: np.ndarray, pools: Pools,
                  kind: str = "mobile") -> np.ndarray:
    """Phone numbers as E.164 digits in an int64 (country code first), valid for each country.

    US and Canada: a valid area code, exchange 200-999 without N11 codes and without 555;
    UK: a 4-digit block checked at pool build (07xxx for mobiles, 01/02 for landlines).
    """
    country = np.asarray(country, dtype=object)
    out = np.zeros(len(country), dtype=np.int64)
    for code in ("US", "CA"):
        where = np.flatnonzero(country == code)
        k = len(where)
        if not k:
            continue
        area = pools.area_codes[code][rng.integers(0, len(pools.area_codes[code]), k)]
        exchange = rng.integers(200, 1000, k)
        exchange = np.where(exchange % 100 == 11, exchange + 1, exchange)
        exchange = np.where(exchange == 555, 556, exchange)
        out[where] = 10_000_000_000 + area * 10_000_000 + exchange * 10_000 + rng.integers(0, 10000, k)
    where = np.flatnonzero(country == "GB")
    if len(where):
        blocks = pools.gb_mobile_blocks if kind == "mobile" else pools.gb_landline_blocks
        start = blocks[rng.integers(0, len(blocks), len(where))]
        out[where] = 440_000_000_000 + start * 1_000_000 + rng.integers(0, 1_000_000, len(where))
    return out


def e164_text(numbers: np.ndarray) -> pd.Series:
    """E.164 text ("+1..." / "+44...") of int64 phone numbers; 0 means none (empty text)."""
    numbers = np.asarray(numbers, dtype=np.int64)
    s = "+" + pd.Series(numbers).astype("str")
    return s.where(numbers > 0, "")


def e164_numbers(values: pd.Series) -> np.ndarray:
    """int64 digits of E.164 text (0 where empty or not E.164)."""
    arr = pc.fill_null(arrow(values), "")
    digits = pc.utf8_slice_codeunits(arr, 1)
    ok = pc.and_(pc.starts_with(arr, "+"), pc.match_substring_regex(digits, r"^[0-9]{6,15}$"))
    digits = pc.if_else(ok, digits, "0")
    return pc.cast(digits, pa.int64()).to_numpy(zero_copy_only=False)


def phones(rng: np.random.Generator, country: np.ndarray, pools: Pools, kind: str = "mobile") -> pd.Series:
    """Phone numbers in E.164 text form, valid for each person's country."""
    return e164_text(phone_numbers(rng, country, pools, kind))


def is_in(values: pd.Series, taken: pd.Series) -> np.ndarray:
    """Membership test through Arrow (pandas' own goes through Python for Arrow strings)."""
    found = pc.is_in(arrow(values), value_set=arrow(taken))
    return pc.fill_null(found, False).to_numpy(zero_copy_only=False).astype(bool)


def unique_values(values: pd.Series, country: np.ndarray, regenerate, rounds: int = 20) -> pd.Series:
    """Redraw values that collide with an earlier one (unintended sharing between strangers)."""
    values = text(values)
    for _ in range(rounds):
        dup = (values.duplicated() & (values != "")).to_numpy()
        if not dup.any():
            break
        idx = np.flatnonzero(dup)
        values = scatter(values, idx, regenerate(idx))
    return values


def unique_phones(rng: np.random.Generator, country: np.ndarray, pools: Pools, kind: str,
                  taken: pd.Series | None = None) -> pd.Series:
    """Phones (E.164 text) with no collision among themselves nor with ``taken`` numbers."""
    country = np.asarray(country, dtype=object)
    numbers = phone_numbers(rng, country, pools, kind)
    taken_numbers = e164_numbers(taken) if taken is not None and len(taken) else np.array([], dtype=np.int64)
    for _ in range(20):
        clash = pd.Series(numbers).duplicated().to_numpy().copy()
        if len(taken_numbers):  # hash the few new numbers, scan the many taken ones once
            hit = taken_numbers[pd.Series(taken_numbers).isin(numbers).to_numpy()]
            clash |= np.isin(numbers, hit)
        if not clash.any():
            break
        idx = np.flatnonzero(clash)
        numbers[idx] = phone_numbers(rng, country[idx], pools, kind)
    return e164_text(numbers)


def _domains(rng: np.random.Generator, country: np.ndarray, pools: Pools,
             invented_share: float = 0.3) -> np.ndarray:
    n = len(country)
    out = choose(rng, pools.invented_domains, n)
    consumer = rng.random(n) >= invented_share
    for code, (domains, cum) in pools.consumer_domains.items():
        where = np.flatnonzero(consumer & (country == code))
        if len(where):
            idx = np.searchsorted(cum, rng.random(len(where)), side="right")
            out[where] = domains[np.minimum(idx, len(domains) - 1)]
    return out


def personal_emails(rng: np.random.Generator, given_word: pd.Series, family_word: pd.Series,
                    birth_year: np.ndarray, country: np.ndarray, pools: Pools) -> pd.Series:
    """Personal addresses from the person's name: given.family, gfamily, given_family87, ..."""
    n = len(given_word)
    g, f = text(given_word), text(family_word)
    yy = padded(np.asarray(birth_year) % 100, 2)
    num = padded(rng.integers(1, 1000, n), 1)
    pattern = rng.integers(0, 8, n)
    forms = {
        0: lambda r: g.iloc[r] + "." + f.iloc[r],
        1: lambda r: g.iloc[r] + f.iloc[r],
        2: lambda r: g.iloc[r] + "_" + f.iloc[r],
        3: lambda r: g.iloc[r].str.slice(0, 1) + f.iloc[r],
        4: lambda r: f.iloc[r] + "." + g.iloc[r],
        5: lambda r: g.iloc[r] + "." + f.iloc[r] + num.iloc[r],
        6: lambda r: g.iloc[r] + num.iloc[r] + num.iloc[r],
        7: lambda r: g.iloc[r] + f.iloc[r] + yy.iloc[r],
    }
    pieces = []
    for k, form in forms.items():
        rows = np.flatnonzero(pattern == k)
        if len(rows):
            pieces.append((rows, form(rows)))
    local = assemble(n, pieces)
    domains = text(_domains(rng, np.asarray(country, dtype=object), pools))
    emails = local + "@" + domains
    return unique_values(
        emails, np.asarray(country, dtype=object),
        lambda idx: local.iloc[idx].reset_index(drop=True)
        + padded(rng.integers(2, 100_000, len(idx)), 1) + "@" + domains.iloc[idx].reset_index(drop=True),
    )


def work_emails(rng: np.random.Generator, given_word: pd.Series, family_word: pd.Series,
                pools: Pools) -> pd.Series:
    """Work addresses at invented employers' domains (first.last@employer)."""
    n = len(given_word)
    local = text(given_word) + "." + text(family_word)
    domains = text(choose(rng, pools.work_domains, n))
    emails = local + "@" + domains
    return unique_values(
        emails, np.zeros(n, dtype=object),
        lambda idx: local.iloc[idx].reset_index(drop=True)
        + padded(rng.integers(2, 1000, len(idx)), 1) + "@" + domains.iloc[idx].reset_index(drop=True),
    )
