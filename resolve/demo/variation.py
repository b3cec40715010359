"""Realistic differences between records of one person, and placeholder values.

Later records of a person (duplicates) get content changes at the configured rates: a typo,
a nickname, swapped names, a day/month swap, a new phone or email, an email written another
way, a transposed ID, a move. Every record may get everyday mess: blank fields, upper case,
stray spaces, an abbreviated street, a missing national ID (most often in the card portfolio).
Every change is recorded as a tag so the truth file says exactly what differs and why.
All changes run on whole columns (numpy / Arrow); none loops over records in Python.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.demo import identifiers as ids
from resolve.demo import tables
from resolve.demo.people import ADDRESS_COLUMNS, draw_addresses, words
from resolve.demo.pools import Pools
from resolve.demo.settings import PLACEHOLDER, DemoRates
from resolve.demo.vec import (
    Tags, arrow, put, chance, choose, date_parts, days_from_parts, exact_pick, fold_series, insert_at,
    one_edit, text, transpose_digits,
)

_FORMALS = pd.Index(list(tables.NICKNAMES))
_NICK_FLAT = np.array([n for v in tables.NICKNAMES.values() for n in v], dtype=object)
_NICK_COUNT = np.array([len(v) for v in tables.NICKNAMES.values()], dtype=np.int64)
_NICK_START = np.cumsum(_NICK_COUNT) - _NICK_COUNT
_ACCENT_FROM = pd.Index(list(tables.ACCENT_ADDED))
_ACCENT_TO = np.array(list(tables.ACCENT_ADDED.values()), dtype=object)


def _set(df: pd.DataFrame, rows: np.ndarray, col: str, values) -> None:
    put(df, rows, col, values)


def _vals(df: pd.DataFrame, col: str) -> np.ndarray:
    return df[col].to_numpy()


def _at(df: pd.DataFrame, col: str, rows: np.ndarray) -> np.ndarray:
    return df[col].iloc[rows].to_numpy()


def _is(df: pd.DataFrame, col: str, value: str) -> np.ndarray:
    return (df[col] == value).to_numpy()


def _index_in(df: pd.DataFrame, col: str, values: pd.Index) -> np.ndarray:
    """Position of each row's value in ``values`` (-1 when absent), through Arrow."""
    found = pc.index_in(arrow(df[col]), value_set=pa.array(list(values), type=pa.large_string()))
    return pc.fill_null(found, -1).to_numpy(zero_copy_only=False).astype(np.int64)


def _names(rng, records, tags, rates, free, channel) -> None:
    n = len(records)
    typo_rate = np.where(channel == "app", rates.app_typo_rate, rates.typo_rate)
    typo = free & (rng.random(n) < typo_rate)
    given_len = records["given"].str.len().to_numpy()
    on_given = typo & (rng.random(n) < 0.5) & (given_len >= 3)
    on_family = typo & ~on_given
    for col, mask, tag in (("given", on_given, "typo_given"), ("family", on_family, "typo_family")):
        rows = np.flatnonzero(mask)
        _set(records, rows, col, one_edit(_at(records, col, rows), rng))
        tags.add(tag, mask)

    formal = _index_in(records, "given", _FORMALS)
    nick = free & ~typo & (formal >= 0) & chance(rng, n, rates.nickname_rate)
    rows = np.flatnonzero(nick)
    f = formal[rows]
    pick = _NICK_START[f] + (rng.random(len(rows)) * _NICK_COUNT[f]).astype(np.int64)
    _set(records, rows, "given", _NICK_FLAT[pick])
    tags.add("nickname", nick)

    for col in ("given", "family"):
        values = text(records[col])
        folded = fold_series(values)
        accented = (folded != values).to_numpy()
        drop = free & accented & chance(rng, n, rates.accent_change_rate)
        rows = np.flatnonzero(drop)
        _set(records, rows, col, folded.iloc[rows])
        tags.add("accent_dropped", drop)
        target = _index_in(records, col, _ACCENT_FROM)
        add = free & ~drop & (target >= 0) & chance(rng, n, rates.accent_change_rate)
        rows = np.flatnonzero(add)
        _set(records, rows, col, _ACCENT_TO[target[rows]])
        tags.add("accent_added", add)

    swap = free & chance(rng, n, rates.name_swap_rate)
    rows = np.flatnonzero(swap)
    given, family = _at(records, "given", rows), _at(records, "family", rows)
    _set(records, rows, "given", family)
    _set(records, rows, "family", given)
    tags.add("names_swapped", swap)


def _birth(rng, records, tags, rates, free) -> None:
    birth = _vals(records, "birth")
    year, month, day = date_parts(birth)
    swap = free & (day <= 12) & (day != month) & chance(rng, len(records), rates.birth_date_swap_rate)
    rows = np.flatnonzero(swap)
    _set(records, rows, "birth", days_from_parts(year[rows], day[rows], month[rows]))
    tags.add("birth_day_month_swapped", swap)


def _contacts(rng, records, tags, rates, free, pools) -> None:
    n = len(records)
    country = _vals(records, "country")
    new_phone = free & ~_is(records, "mobile", "") & chance(rng, n, rates.phone_change_rate)
    rows = np.flatnonzero(new_phone)
    taken = pd.concat([records["mobile"], records["landline"]])
    fresh_phone = ids.unique_phones(rng, country[rows], pools, "mobile", taken=taken)
    _set(records, rows, "mobile", fresh_phone)
    tags.add("phone_new", new_phone)

    has_mail = ~_is(records, "email", "")
    new_mail = free & has_mail & chance(rng, n, rates.email_change_rate)
    rows = np.flatnonzero(new_mail)
    sub = records.iloc[rows]
    year = 1970 + (sub["birth"].to_numpy() // 365.25).astype(np.int64)
    fresh = ids.personal_emails(rng, words(sub["given"]), words(sub["family"]), year, country[rows], pools)
    clash = ids.is_in(fresh, records["email"])
    fresh = fresh.where(~clash, "my." + fresh)
    _set(records, rows, "email", fresh.to_numpy())
    tags.add("email_new", new_mail)

    variant = free & has_mail & ~new_mail & chance(rng, n, rates.email_variant_rate)
    rows = np.flatnonzero(variant)
    if len(rows):
        _email_variants(rng, records, tags, rows)


def _email_variants(rng, records, tags, rows) -> None:
    """Case changes, +tags (more in the app) and Gmail dots on the given rows' emails."""
    n = len(records)
    parts = text(records["email"].iloc[rows]).str.partition("@")
    local, domain = text(parts[0].to_numpy()), text(parts[2].to_numpy())
    gmail = domain.isin(["gmail.com", "googlemail.com"]).to_numpy()
    is_app = _at(records, "channel", rows) == "app"
    kind = np.where(rng.random(len(rows)) < np.where(is_app, 0.6, 0.3), 1, 0)
    kind = np.where(gmail & (rng.random(len(rows)) < 0.4), 2, kind)
    tag = text(choose(rng, tables.EMAIL_TAGS, len(rows)))
    dotted = local.str.contains(".", regex=False).to_numpy()
    dots = np.where(dotted, local.str.replace(".", "", regex=False).to_numpy(),
                    insert_at(local.to_numpy(), rng, "."))
    upper_all = rng.random(len(rows)) < 0.4
    cased = np.where(upper_all, (local + "@" + domain).str.upper().to_numpy(),
                     (local.str.capitalize() + "@" + domain.str.capitalize()).to_numpy())
    out = np.select([kind == 1, kind == 2],
                    [(local + "+" + tag + "@" + domain).to_numpy(), text(dots) + "@" + domain],
                    default=cased)
    _set(records, rows, "email", out)
    for k, name in ((0, "email_case"), (1, "email_plus_tag"), (2, "email_dots")):
        mask = np.zeros(n, dtype=bool)
        mask[rows[kind == k]] = True
        tags.add(name, mask)


def _ids_and_moves(rng, records, tags, rates, free, pools) -> None:
    n = len(records)
    swap = free & ~_is(records, "nid", "") & chance(rng, n, rates.id_transposition_rate)
    rows = np.flatnonzero(swap)
    _set(records, rows, "nid", transpose_digits(_at(records, "nid", rows), rng))
    tags.add("id_transposed", swap)

    move = free & chance(rng, n, rates.move_rate)
    rows = np.flatnonzero(move)
    country = _at(records, "country", rows)
    addr = draw_addresses(rng, country, pools)
    for col in ADDRESS_COLUMNS:
        _set(records, rows, col, addr[col].to_numpy())
    had_line = _at(records, "landline", rows) != ""
    taken = pd.concat([records["mobile"], records["landline"]])
    lines = ids.unique_phones(rng, country, pools, "landline", taken=taken).to_numpy()
    keep_new = had_line & (rng.random(len(rows)) < 0.5)
    _set(records, rows, "landline", np.where(keep_new, lines, ""))
    tags.add("moved", move)


def _mess(rng, records, tags, rates, channel) -> None:
    """Everyday mess on any record: blanks, missing IDs, case, spaces, abbreviations, formats."""
    n = len(records)
    dup = _vals(records, "rank") > 0
    for col, tag in (("mobile", "blank_mobile"), ("email", "blank_email"), ("street", "blank_address")):
        blank = ~_is(records, col, "") & chance(rng, n, rates.blank_rate)
        rows = np.flatnonzero(blank)
        _set(records, rows, col, np.full(len(rows), "", dtype=object))
        if col == "street":
            for extra in ("house", "unit", "street_short"):
                _set(records, rows, extra, np.full(len(rows), "", dtype=object))
        tags.add(tag, blank)
    blank_birth = chance(rng, n, rates.blank_rate)
    records["birth_missing"] = records["birth_missing"].to_numpy() | blank_birth
    tags.add("blank_birth", blank_birth)
    has_id = ~_is(records, "nid", "")
    card = channel == "card_portfolio"
    missing = exact_pick(rng, card & has_id, rates.card_missing_id_share) | exact_pick(
        rng, ~card & has_id, rates.missing_id_share)
    rows = np.flatnonzero(missing)
    _set(records, rows, "nid", np.full(len(rows), "", dtype=object))
    tags.add("id_missing", missing)
    flags = {
        "upper": ("upper_case", ~card & chance(rng, n, rates.upper_case_rate)),
        "stray": ("stray_spaces", chance(rng, n, rates.stray_space_rate)),
        "abbrev": ("street_abbreviated", ~card & chance(rng, n, rates.street_abbreviation_rate)),
        "alt_date": ("date_format", dup & chance(rng, n, rates.date_format_mix_rate)),
        "alt_phone": ("phone_format", dup & chance(rng, n, rates.phone_format_mix_rate)),
        "alt_id": ("id_format", dup & chance(rng, n, rates.id_format_mix_rate)),
    }
    for col, (tag, mask) in flags.items():
        records[col] = mask
        tags.add(tag, mask)


def vary(rng: np.random.Generator, records: pd.DataFrame, tags: Tags, rates: DemoRates,
         pools: Pools) -> None:
    """Apply content changes to plain duplicates and everyday mess to all records (in place)."""
    channel = _vals(records, "channel")
    free = (_vals(records, "rank") > 0) & _is(records, "hard_case", "")
    _names(rng, records, tags, rates, free, channel)
    _birth(rng, records, tags, rates, free)
    _contacts(rng, records, tags, rates, free, pools)
    _ids_and_moves(rng, records, tags, rates, free, pools)
    _mess(rng, records, tags, rates, channel)


def add_placeholders(rng: np.random.Generator, records: pd.DataFrame, tags: Tags, count: int,
                     pools: Pools) -> None:
    """Put a placeholder phone, email or ID on ``count`` genuine records and label them."""
    eligible = _is(records, "hard_case", "")
    if count <= 0 or not eligible.any():
        return
    chosen = np.flatnonzero(exact_pick(rng, eligible, min(1.0, count / eligible.sum())))
    n = len(records)
    kind = choose(rng, np.array(["phone", "email", "id"], dtype=object), len(chosen), [0.45, 0.35, 0.2])
    kind = np.where((kind == "id") & (_at(records, "country", chosen) != "US"), "email", kind)
    rows = chosen[kind == "phone"]
    card = _at(records, "channel", rows) == "card_portfolio"
    _set(records, rows, "mobile", np.where(card, pools.call_centre_numbers[1], pools.call_centre_numbers[0]))
    rows = chosen[kind == "email"]
    _set(records, rows, "email", choose(rng, tables.PLACEHOLDER_EMAILS, len(rows)))
    rows = chosen[kind == "id"]
    _set(records, rows, "nid", choose(rng, tables.PLACEHOLDER_SSNS, len(rows)))
    for k, tag, undo in (("phone", "placeholder_phone", "blank_mobile"),
                         ("email", "placeholder_email", "blank_email"),
                         ("id", "placeholder_id", "id_missing")):
        mask = np.zeros(n, dtype=bool)
        mask[chosen[kind == k]] = True
        tags.add(tag, mask)
        tags.remove(undo, mask)
        if k == "id":
            tags.remove("id_transposed", mask)
        if k == "phone":
            tags.remove("phone_new", mask)
        if k == "email":
            for other in ("email_new", "email_case", "email_plus_tag", "email_dots"):
                tags.remove(other, mask)
    _set(records, chosen, "label", np.full(len(chosen), PLACEHOLDER, dtype=object))
