"""Write each record the way its channel writes it: the extract's columns as text.

Channel habits (not variations, so not tagged): the branch writes national phone formats,
month-first birth dates for US customers and day-first for UK and Canadian ones, SSNs with
dashes; the app stores E.164 phones, ISO dates and IDs without separators, and some customers
type their name in lower case; the card portfolio keeps the whole name in one upper-case ASCII
field ("SMITH, JOHN A" or "JOHN A SMITH"), abbreviates streets and writes dates as 03-FEB-1980.
Records flagged by `variation` use another format (date, phone or ID) or upper case.
All columns are built with Arrow-backed string operations on whole columns or code groups.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.demo.vec import assemble, choose, date_parts, fold_series, padded, text

MONTHS = np.array(["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"],
                  dtype=object)
COUNTRY_WORDS = {
    "branch": {"US": "USA", "GB": "United Kingdom", "CA": "Canada"},
    "app": {"US": "US", "GB": "GB", "CA": "CA"},
    "card_portfolio": {"US": "UNITED STATES", "GB": "UNITED KINGDOM", "CA": "CANADA"},
}


def pick(pairs: list[tuple[np.ndarray, pd.Series]], default: pd.Series) -> pd.Series:
    """Like numpy.select for text Series: the first true condition's value, else the default."""
    out = default
    for cond, value in reversed(pairs):
        out = value.where(cond, out)
    return out


def by_code(codes: np.ndarray, makers: dict) -> pd.Series:
    """Each row made by the maker of its code (makers take row positions, return text)."""
    pieces = []
    for code in np.unique(codes):
        if code >= 0:
            rows = np.flatnonzero(codes == code)
            pieces.append((rows, makers[int(code)](rows)))
    return assemble(len(codes), pieces)


def _habit(rng, channel: np.ndarray, options: dict[str, tuple[list[int], list[float]]]) -> np.ndarray:
    codes = np.zeros(len(channel), dtype=np.int64)
    for ch, (choices, probs) in options.items():
        rows = np.flatnonzero(channel == ch)
        codes[rows] = choose(rng, np.array(choices), len(rows), probs).astype(np.int64)
    return codes


def dates(rng, days: np.ndarray, channel: np.ndarray, country: np.ndarray, alt: np.ndarray,
          missing: np.ndarray) -> pd.Series:
    """Birth dates: 0 ISO, 1 month-first, 2 day-first, 3 '3 Feb 2001', 4 03-FEB-2001, 5 compact."""
    n = len(days)
    year, month, day = date_parts(days)
    domestic = np.where(country == "US", 1, 2)
    codes = np.select([channel == "branch", channel == "app"], [domestic, 0],
                      np.where(rng.random(n) < 0.7, 4, 3))
    alt_codes = choose(rng, np.array([0, 3, 4, 5, -9]), n).astype(np.int64)
    codes = np.where(alt, np.where(alt_codes == -9, domestic, alt_codes), codes)
    codes = np.where(missing, -1, codes)

    def ymd(rows):
        return padded(year[rows], 4), padded(month[rows], 2), padded(day[rows], 2)

    def mon(rows):
        return text(MONTHS[month[rows] - 1])

    makers = {
        0: lambda r: (lambda y, m, d: y + "-" + m + "-" + d)(*ymd(r)),
        1: lambda r: (lambda y, m, d: m + "/" + d + "/" + y)(*ymd(r)),
        2: lambda r: (lambda y, m, d: d + "/" + m + "/" + y)(*ymd(r)),
        3: lambda r: padded(day[r], 1) + " " + mon(r) + " " + padded(year[r], 4),
        4: lambda r: padded(day[r], 2) + "-" + mon(r).str.upper() + "-" + padded(year[r], 4),
        5: lambda r: (lambda y, m, d: y + m + d)(*ymd(r)),
    }
    return by_code(codes, makers)


def opened(rng, days: np.ndarray, channel: np.ndarray) -> pd.Series:
    """Account opening as the channel stores it (ISO date, ISO timestamp, or month-first)."""
    year, month, day = date_parts(days)
    codes = np.select([channel == "branch", channel == "app"], [0, 1], 2)
    secs = rng.integers(7 * 3600, 23 * 3600, len(days))

    def iso(r):
        return padded(year[r], 4) + "-" + padded(month[r], 2) + "-" + padded(day[r], 2)

    def stamp(r):
        s = secs[r]
        return iso(r) + "T" + padded(s // 3600, 2) + ":" + padded(s // 60 % 60, 2) + ":" + padded(s % 60, 2)

    def us(r):
        return padded(month[r], 2) + "/" + padded(day[r], 2) + "/" + padded(year[r], 4)

    return by_code(codes, {0: iso, 1: stamp, 2: us})


def phone_codes(rng, channel: np.ndarray, country: np.ndarray, alt: np.ndarray) -> np.ndarray:
    """The format code per record (one code for both phone columns of a record)."""
    n = len(channel)
    nanp = _habit(rng, channel, {"branch": ([0, 1], [0.6, 0.4]), "app": ([3, 6], [0.6, 0.4]),
                                 "card_portfolio": ([5, 2, 4], [0.4, 0.3, 0.3])})
    gb = _habit(rng, channel, {"branch": ([0], [1.0]), "app": ([3, 6], [0.6, 0.4]),
                               "card_portfolio": ([4], [1.0])})
    codes = np.where(country == "GB", gb, nanp)
    alt_nanp = choose(rng, np.arange(9), n).astype(np.int64)
    alt_gb = choose(rng, np.array([0, 3, 4, 6, 7, 8, 9]), n).astype(np.int64)
    return np.where(alt, np.where(country == "GB", alt_gb, alt_nanp), codes)


NANP_CODES = range(0, 9)
UK_CODES = (0, 3, 4, 6, 7, 8, 9)


def _nanp(nsn: pd.Series, code: int) -> pd.Series:
    a, e, line = nsn.str.slice(0, 3), nsn.str.slice(3, 6), nsn.str.slice(6)
    return {
        0: lambda: "(" + a + ") " + e + "-" + line,
        1: lambda: a + "-" + e + "-" + line,
        2: lambda: a + "." + e + "." + line,
        3: lambda: "+1" + nsn,
        4: lambda: "+1 " + a + "-" + e + "-" + line,
        5: lambda: "1-" + a + "-" + e + "-" + line,
        6: lambda: nsn,
        7: lambda: "001 " + a + " " + e + " " + line,
        8: lambda: "+1 (" + a + ") " + e + "-" + line,
    }[code]()


def _uk(nsn: pd.Series, code: int) -> pd.Series:
    spaced = nsn.str.slice(0, 4) + " " + nsn.str.slice(4)
    if code == 0:
        london = nsn.str.startswith("20").to_numpy()
        return ("0" + nsn.str.slice(0, 2) + " " + nsn.str.slice(2, 6) + " " + nsn.str.slice(6)).where(
            london, "0" + spaced)
    return {3: lambda: "+44" + nsn, 4: lambda: "+44 " + spaced, 6: lambda: "0" + nsn,
            7: lambda: "0044 " + spaced, 8: lambda: "011 44 " + spaced,
            9: lambda: "+44 (0)" + spaced}[code]()


def phones(e164: pd.Series, codes: np.ndarray) -> pd.Series:
    """E.164 numbers written in format ``codes`` (NANP and UK layouts); blanks stay blank."""
    e164 = text(e164)
    has = (e164 != "").to_numpy()
    gb = e164.str.startswith("+44").to_numpy()
    # A record's code follows its country; a number from elsewhere (a US call-centre number on
    # a UK record) falls back to that number's national layout when the code has no match.
    codes = np.where(gb & ~np.isin(codes, list(UK_CODES)), 0, codes)
    codes = np.where(~gb & ~np.isin(codes, list(NANP_CODES)), 0, codes)
    keys = np.where(has, np.where(gb, 100, 0) + codes, -1)

    def maker(key):
        return lambda r: (_uk(e164.iloc[r].str.slice(3), key - 100) if key >= 100
                          else _nanp(e164.iloc[r].str.slice(2), key))

    return by_code(keys, {int(k): maker(int(k)) for k in np.unique(keys) if k >= 0})


def national_ids(rng, nid: pd.Series, country: np.ndarray, channel: np.ndarray, alt: np.ndarray) -> pd.Series:
    """National IDs as each channel writes them (dashes, spaces or none)."""
    nid = text(nid)
    n = len(nid)
    codes = _habit(rng, channel, {"branch": ([0], [1.0]), "app": ([1], [1.0]),
                                  "card_portfolio": ([2, 0], [0.5, 0.5])})
    codes = np.where(alt, rng.integers(0, 3, n), codes)
    layouts = {
        "US": (lambda v: v.str.slice(0, 3) + "-" + v.str.slice(3, 5) + "-" + v.str.slice(5),
               lambda v: v,
               lambda v: v.str.slice(0, 3) + " " + v.str.slice(3, 5) + " " + v.str.slice(5)),
        "GB": (lambda v: v.str.slice(0, 2) + " " + v.str.slice(2, 4) + " " + v.str.slice(4, 6) + " "
               + v.str.slice(6, 8) + " " + v.str.slice(8),
               lambda v: v,
               lambda v: v.str.slice(0, 2) + " " + v.str.slice(2, 8) + " " + v.str.slice(8)),
        "CA": (lambda v: v.str.slice(0, 3) + " " + v.str.slice(3, 6) + " " + v.str.slice(6),
               lambda v: v,
               lambda v: v.str.slice(0, 3) + "-" + v.str.slice(3, 6) + "-" + v.str.slice(6)),
    }
    has = (nid != "").to_numpy()
    keys = np.full(n, -1, dtype=np.int64)
    for i, c in enumerate(layouts):
        keys = np.where(has & (country == c), i * 10 + codes, keys)

    def maker(key):
        return lambda r: list(layouts.values())[key // 10][key % 10](nid.iloc[r])

    return by_code(keys, {int(k): maker(int(k)) for k in np.unique(keys) if k >= 0})


def _stray(rng, s: pd.Series, flag: np.ndarray) -> pd.Series:
    """Stray spaces: a trailing space, a leading space or a doubled inner space."""
    if not flag.any():
        return s
    kind = rng.integers(0, 3, len(s))
    doubled = s.str.replace(" ", "  ", n=1, regex=False)
    doubled = doubled.where(doubled != s, s + " ")
    spaced = pick([(kind == 0, s + " "), (kind == 1, " " + s)], doubled)
    return spaced.where(flag & (s != "").to_numpy(), s)


def names(rng, r: pd.DataFrame) -> tuple[pd.Series, pd.Series, pd.Series]:
    """First Name, Surname and Customer Name columns."""
    n = len(r)
    channel = r["channel"].to_numpy()
    card = channel == "card_portfolio"
    given, middle, family, suffix = (text(r[c]) for c in ("given", "middle", "family", "suffix"))
    show_suffix = (suffix != "").to_numpy() & (rng.random(n) < 0.6)
    family_out = (family + " " + suffix).where(show_suffix, family)
    upper = r["upper"].to_numpy()
    lower = (channel == "app") & (rng.random(n) < 0.06) & ~upper
    first = pick([(upper, given.str.upper()), (lower, given.str.lower())], given)
    last = pick([(upper, family_out.str.upper()), (lower, family_out.str.lower())], family_out)
    stray = r["stray"].to_numpy()
    first = _stray(rng, first, stray & (rng.random(n) < 0.5))
    last = _stray(rng, last, stray)
    with_mid = (middle != "").to_numpy() & (rng.random(n) < 0.4)
    given_mid = (given + " " + middle.str.slice(0, 1)).where(with_mid, given)
    inverted = rng.random(n) < 0.3
    full = (family_out + ", " + given_mid).where(inverted, given_mid + " " + family_out)
    full = _stray(rng, fold_series(full.str.upper()), stray)
    empty = text(np.full(n, "", dtype=object))
    return empty.where(card, first), empty.where(card, last), full.where(card, empty)


def addresses(rng, r: pd.DataFrame) -> tuple[pd.Series, pd.Series, pd.Series, pd.Series]:
    """Address Line 1, Town, ZIP/Postcode and Country columns."""
    n = len(r)
    channel = r["channel"].to_numpy()
    country = r["country"].to_numpy()
    card = channel == "card_portfolio"
    short = card | r["abbrev"].to_numpy()
    street = text(r["street_short"]).where(short, text(r["street"]))
    house, unit = text(r["house"]), text(r["unit"])
    has_unit = (unit != "").to_numpy()
    base = house + " " + street
    gb = country == "GB"
    newline = gb & has_unit & ~card & (rng.random(n) < 0.03)
    line = pick([(~has_unit, base), (card, base + " " + unit), (newline, unit + "\n" + base),
                 (gb, unit + ", " + base)], base + ", " + unit)
    line = line.where((text(r["street"]) != "").to_numpy(), "")
    upper = card | r["upper"].to_numpy()
    town = text(r["city"])
    line = fold_series(line.str.upper()).where(upper, line)
    town = fold_series(town.str.upper()).where(upper, town)
    words = np.full(n, "", dtype=object)
    for ch, mapping in COUNTRY_WORDS.items():
        for c, word in mapping.items():
            words[(channel == ch) & (country == c)] = word
    words[(channel == "branch") & (country == "US") & (rng.random(n) < 0.4)] = ""
    return line, town, text(r["postcode"]), text(words)


def emails(rng, r: pd.DataFrame) -> tuple[pd.Series, pd.Series]:
    """E-mail and Alt Email; the card portfolio stores about half of them in upper case."""
    shout = (r["channel"].to_numpy() == "card_portfolio") & (rng.random(len(r)) < 0.5)
    main, alt = text(r["email"]), text(r["alt_email"])
    return main.str.upper().where(shout, main), alt.str.upper().where(shout, alt)


def render(rng: np.random.Generator, r: pd.DataFrame) -> dict[str, pd.Series]:
    """All extract columns except the record number, keyed by header."""
    channel = r["channel"].to_numpy()
    country = r["country"].to_numpy()
    first, last, full = names(rng, r)
    line, town, postcode, country_word = addresses(rng, r)
    codes = phone_codes(rng, channel, country, r["alt_phone"].to_numpy())
    main_mail, alt_mail = emails(rng, r)
    nid = text(r["nid"])
    return {
        "Channel": text(r["channel"]),
        "First Name": first,
        "Surname": last,
        "Customer Name": full,
        "DOB": dates(rng, r["birth"].to_numpy(), channel, country, r["alt_date"].to_numpy(),
                     r["birth_missing"].to_numpy()),
        "Mobile": phones(r["mobile"], codes),
        "Home Tel": phones(r["landline"], codes),
        "E-mail": main_mail,
        "Alt Email": alt_mail,
        "SSN/TIN": national_ids(rng, nid, country, channel, r["alt_id"].to_numpy()),
        "ID Country": text(r["country"]).where((nid != "").to_numpy(), ""),
        "Address Line 1": line,
        "Town": town,
        "ZIP/Postcode": postcode,
        "Country": country_word,
        "Opened": opened(rng, r["created"].to_numpy(), channel),
    }
