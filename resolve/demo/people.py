"""The genuine customers of the demo: persons with clean identifiers, and their households.

Every duplicate, household and hard case in the extract is a variation of the clean person
drawn here, so this table is the reference the truth file describes. Persons are drawn with
numpy from the pools (no per-person Python) and households are formed by copying a head's
address, family name and landline onto the other members.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.demo import identifiers as ids
from resolve.demo.pools import ORIGIN_MIX, SPANISH_ORIGINS, Pools
from resolve.demo.settings import COUNTRIES, REFERENCE_DATE, DemoRates
from resolve.demo.vec import choose, day_number, group_rows, mailbox_words, padded, put, text

REF_DAY = day_number(REFERENCE_DATE)
ADDRESS_COLUMNS = ["house", "unit", "street", "street_short", "city", "postcode"]


def words(values: pd.Series) -> pd.Series:
    """Mailbox words of names (ASCII, lower case, letters and digits only)."""
    return mailbox_words(text(values))


def draw_given(rng: np.random.Generator, origin: np.ndarray, sex: np.ndarray, pools: Pools) -> np.ndarray:
    """Given names by name origin and sex."""
    out = np.empty(len(origin), dtype=object)
    keys = np.asarray(origin, dtype=object) + "|" + np.asarray(sex, dtype=object)
    for key, where in group_rows(keys):
        o, s = str(key).split("|")
        out[where] = pools.given[(o, s)].draw(rng, len(where))
    return out


def draw_family(rng: np.random.Generator, origin: np.ndarray, pools: Pools,
                compound_share: float = 0.35) -> np.ndarray:
    """Family names by origin; Spanish-origin names are often compound ("Garcia Lopez")."""
    out = np.empty(len(origin), dtype=object)
    for o, where in group_rows(origin):
        out[where] = pools.family[o].draw(rng, len(where))
        if o in SPANISH_ORIGINS:
            compound = where[rng.random(len(where)) < compound_share]
            second = pools.family[o].draw(rng, len(compound))
            keep = second != out[compound]
            out[compound[keep]] = (text(out[compound[keep]]) + " " + text(second[keep])).to_numpy()
    return out


def draw_origin(rng: np.random.Generator, country: np.ndarray) -> np.ndarray:
    """Name origin (a Faker locale) per person, by the mix of the country of residence."""
    out = np.empty(len(country), dtype=object)
    for c in COUNTRIES:
        where = np.flatnonzero(country == c)
        mix = ORIGIN_MIX[c]
        out[where] = choose(rng, list(mix), len(where), list(mix.values()))
    return out


def draw_birth_days(rng: np.random.Generator, n: int, min_age: int = 19, max_age: int = 92) -> np.ndarray:
    """Birth dates (day numbers) of adult customers; fewer of the very old."""
    ages = np.arange(min_age, max_age + 1)
    weight = np.select([ages < 30, ages < 65, ages < 80], [1.0, 1.1, 0.8], 0.35)
    age = choose(rng, ages, n, weight).astype(np.int64)
    return REF_DAY - (age * 365.25).astype(np.int64) - rng.integers(0, 365, n)


def draw_addresses(rng: np.random.Generator, country: np.ndarray, pools: Pools) -> pd.DataFrame:
    """House number, unit, street (full and abbreviated), city and postcode per person."""
    n = len(country)
    cols = {c: np.full(n, "", dtype=object) for c in ADDRESS_COLUMNS}
    for c in COUNTRIES:
        where = np.flatnonzero(country == c)
        k = len(where)
        if not k:
            continue
        top = 250 if c == "GB" else 9999
        house = np.exp(rng.uniform(0, np.log(top), k)).astype(np.int64) + 1
        cols["house"][where] = padded(house, 1).to_numpy()
        s = rng.integers(0, len(pools.street_full[c]), k)
        cols["street"][where] = pools.street_full[c][s]
        cols["street_short"][where] = pools.street_short[c][s]
        ci = rng.integers(0, len(pools.city[c]), k)
        cols["city"][where] = pools.city[c][ci]
        cols["postcode"][where] = pools.city_postcodes[c][ci, rng.integers(0, 3, k)]
        has_unit = rng.random(k) < (0.18 if c == "GB" else 0.15)
        number = padded(rng.integers(1, 41, k), 1)
        if c == "GB":
            unit = "Flat " + number
        else:
            letter = text(choose(rng, np.array(["", "", "A", "B", "C"], dtype=object), k))
            kind = text(choose(rng, np.array(["Apt", "Apt", "Unit", "Suite"], dtype=object), k))
            unit = kind + " " + number + letter
        cols["unit"][where] = np.where(has_unit, unit.to_numpy(), "")
    return pd.DataFrame({c: text(v) for c, v in cols.items()})


def draw_persons(rng: np.random.Generator, n: int, rates: DemoRates, pools: Pools) -> pd.DataFrame:
    """``n`` genuine persons with clean names, birth dates, address and identifiers."""
    n_gb = int(round(n * rates.uk_share))
    n_ca = int(round(n * rates.canada_share))
    country = np.array(["GB"] * n_gb + ["CA"] * n_ca + ["US"] * (n - n_gb - n_ca), dtype=object)
    country = country[rng.permutation(n)]
    origin = draw_origin(rng, country)
    sex = np.where(rng.random(n) < 0.5, "F", "M").astype(object)
    given = draw_given(rng, origin, sex, pools)
    middle = np.where(rng.random(n) < 0.35, draw_given(rng, origin, sex, pools), "")
    family = draw_family(rng, origin, pools)
    birth = draw_birth_days(rng, n)
    persons = pd.DataFrame({
        "country": text(country), "origin": text(origin), "sex": text(sex),
        "given": text(given), "middle": text(middle), "family": text(family),
        "suffix": text(np.full(n, "", dtype=object)), "maiden": text(np.full(n, "", dtype=object)),
        "birth": birth,
    })
    persons = pd.concat([persons, draw_addresses(rng, country, pools)], axis=1)
    mobile = ids.unique_phones(rng, country, pools, "mobile")
    persons["mobile"] = mobile.where(rng.random(n) < 0.96, "")
    landline = ids.unique_phones(rng, country, pools, "landline", taken=mobile)
    persons["landline"] = landline.where(rng.random(n) < np.where(country == "GB", 0.30, 0.22), "")
    g, f = words(persons["given"]), words(persons["family"])
    year = 1970 + (birth // 365.25).astype(np.int64)
    persons["email"] = ids.personal_emails(rng, g, f, year, country, pools).where(rng.random(n) < 0.93, "")
    persons["alt_email"] = ids.work_emails(rng, g, f, pools).where(rng.random(n) < 0.15, "")
    persons["nid"] = ids.national_ids(rng, country, pools)
    persons["household"] = np.full(n, -1, dtype=np.int64)
    persons["hard_case"] = text(np.full(n, "", dtype=object))
    return persons


def refresh_emails(rng: np.random.Generator, persons: pd.DataFrame, rows: np.ndarray, pools: Pools) -> None:
    """Redraw the personal email of ``rows`` from their (changed) names, in place."""
    if not len(rows):
        return
    sub = persons.iloc[rows]
    year = 1970 + (sub["birth"].to_numpy() // 365.25).astype(np.int64)
    fresh = ids.personal_emails(rng, words(sub["given"]), words(sub["family"]), year,
                                sub["country"].to_numpy(), pools)
    had = (sub["email"] != "").to_numpy()
    put(persons, rows[had], "email", fresh[had])


def form_households(rng: np.random.Generator, persons: pd.DataFrame, share: float, pools: Pools) -> int:
    """Group ``share`` of persons into households of 2-4 (in place); returns the household count.

    Members take the head's address; most take the family name (and a given name of the same
    origin), many share a landline, some a family email. Birth dates follow the relation
    (spouse near the head's age, adult child 22-38 years younger).
    """
    n = len(persons)
    chosen = rng.permutation(n)[: int(round(n * share))]
    country = persons["country"].to_numpy()
    members_list, groups_list = [], []
    next_id = 0
    for c in COUNTRIES:
        idx = chosen[country[chosen] == c]
        if len(idx) < 2:
            continue
        sizes = choose(rng, np.array([2, 3, 4]), len(idx) // 2 + 1, [0.55, 0.3, 0.15]).astype(np.int64)
        group = np.repeat(np.arange(len(sizes)), sizes)[: len(idx)]
        if (group == group[-1]).sum() == 1:  # a lone last member joins the previous household
            group[-1] = group[-2]
        _, group = np.unique(group, return_inverse=True)
        members_list.append(idx)
        groups_list.append(group + next_id)
        next_id += int(group.max()) + 1
    if not members_list:
        return 0
    members = np.concatenate(members_list)
    group = np.concatenate(groups_list)
    first = np.r_[True, group[1:] != group[:-1]]
    head_of_group = members[first]
    head = head_of_group[group]
    others = ~first
    m, h = members[others], head[others]
    k = len(m)
    put(persons, members, "household", group)
    for col in ADDRESS_COLUMNS:
        put(persons, m, col, persons[col].iloc[h])
    same_family = rng.random(k) < 0.8
    sf, sh = m[same_family], h[same_family]
    put(persons, sf, "family", persons["family"].iloc[sh])
    put(persons, sf, "origin", persons["origin"].iloc[sh])
    origin = persons["origin"].iloc[sf].to_numpy()
    sex = persons["sex"].iloc[sf].to_numpy()
    new_given = draw_given(rng, origin, sex, pools)
    for _ in range(3):
        clash = new_given == persons["given"].iloc[sh].to_numpy()
        if not clash.any():
            break
        new_given[clash] = draw_given(rng, origin[clash], sex[clash], pools)
    put(persons, sf, "given", new_given)
    # Birth dates by relation to the head.
    head_birth = persons["birth"].to_numpy()[h]
    relation = rng.random(k)
    spouse = head_birth + rng.normal(0, 3 * 365, k).astype(np.int64)
    child = head_birth + rng.integers(22 * 365, 38 * 365, k)
    adult_child = child <= REF_DAY - 18 * 365
    birth = np.where((relation < 0.35) & adult_child, child,
                     np.where(relation < 0.85, spouse, persons["birth"].to_numpy()[m]))
    put(persons, m, "birth", np.minimum(birth, REF_DAY - 19 * 365))
    # A shared landline in 60% of households.
    n_groups = len(head_of_group)
    shares_line = rng.random(n_groups) < 0.6
    lines = persons["landline"].iloc[head_of_group].to_numpy()
    need = shares_line & (lines == "")
    if need.any():
        taken = pd.concat([persons["landline"], persons["mobile"]])
        lines[need] = ids.unique_phones(rng, country[head_of_group[need]], pools, "landline",
                                        taken=taken).to_numpy()
    line_of = np.where(shares_line, lines, "")[group]
    has_line = line_of != ""
    put(persons, members[has_line], "landline", line_of[has_line])
    refresh_emails(rng, persons, sf, pools)
    # A family email in 25% of households, kept as the alternative address of every member.
    family_mail = rng.random(n_groups) < 0.25
    if family_mail.any():
        heads = head_of_group[family_mail]
        fam = words(persons["family"].iloc[heads]).reset_index(drop=True)
        tail = text(choose(rng, np.array(["family", "home", "house", "s", "clan"], dtype=object), len(heads)))
        local = text(choose(rng, np.array(["the", "", "", "team"], dtype=object), len(heads))) + fam + tail
        dom = text(choose(rng, np.array(["gmail.com", "yahoo.com", "outlook.com"], dtype=object), len(heads)))
        mails = ids.unique_values(
            local + "@" + dom, np.zeros(len(heads), dtype=object),
            lambda i: local.iloc[i].reset_index(drop=True) + padded(rng.integers(2, 100, len(i)), 1)
            + "@" + dom.iloc[i].reset_index(drop=True),
        )
        mail_of = np.full(n_groups, "", dtype=object)
        mail_of[family_mail] = mails.to_numpy()
        member_mail = mail_of[group]
        has = member_mail != ""
        put(persons, members[has], "alt_email", member_mail[has])
    return next_id
