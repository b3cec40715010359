"""Hard cases: small numbers of records built to trap a matcher in known ways.

Each kind pairs two genuine persons who look alike but are different (twins at one address,
a father and son of one name, strangers with a common name and one birth date, spouses
sharing a mailbox) or makes one person's later record look unlike the first (a late
duplicate after a move and a name change, a transliterated name, a compound family name
written in part, an initial for a given name). The truth file names the kind on every record
of the persons involved, so results can be read per kind.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.demo import identifiers as ids
from resolve.demo import tables
from resolve.demo.people import (
    ADDRESS_COLUMNS, REF_DAY, draw_addresses, draw_family, draw_given, refresh_emails, words,
)
from resolve.demo.pools import SPANISH_ORIGINS, Pools
from resolve.demo.records import recopy
from resolve.demo.settings import COUNTRIES, HARD_CASES
from resolve.demo.vec import Tags, mask_of, put, text

YEAR = 365


def _set(df: pd.DataFrame, rows: np.ndarray, col: str, values) -> None:
    put(df, rows, col, values)


def _col(df: pd.DataFrame, col: str, rows: np.ndarray) -> np.ndarray:
    return df[col].iloc[np.asarray(rows, dtype=np.int64)].to_numpy()


def _index_of(keys: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Position in ``keys`` (distinct) of each of ``values`` (all present)."""
    order = np.argsort(keys)
    return order[np.searchsorted(keys, values, sorter=order)]


def _pick(rng: np.random.Generator, mask: np.ndarray, k: int) -> np.ndarray:
    where = np.flatnonzero(mask)
    if k <= 0 or not len(where):
        return np.array([], dtype=np.int64)
    return rng.choice(where, min(k, len(where)), replace=False)


class _Picker:
    """Chooses persons for hard cases, each person at most once."""

    def __init__(self, rng: np.random.Generator, persons: pd.DataFrame, n_records: np.ndarray):
        self.rng = rng
        self.free = (persons["household"].to_numpy() < 0) & (persons["hard_case"] == "").to_numpy()
        self.country = persons["country"].to_numpy()
        self.multi = n_records >= 2

    def single(self, k: int, ok: np.ndarray | None = None, need_duplicate: bool = True) -> np.ndarray:
        mask = self.free & (self.multi if need_duplicate else True)
        chosen = _pick(self.rng, mask if ok is None else mask & ok, k)
        self.free[chosen] = False
        return chosen

    def pairs(self, k: int, p_ok=None, q_ok=None) -> tuple[np.ndarray, np.ndarray]:
        p = self.single(k, p_ok, need_duplicate=False)
        ps, qs = [], []
        for c in COUNTRIES:
            pc = p[self.country[p] == c]
            mask = self.free & (self.country == c)
            qc = _pick(self.rng, mask if q_ok is None else mask & q_ok, len(pc))
            self.free[qc] = False
            self.free[pc[len(qc):]] = True
            ps.append(pc[: len(qc)])
            qs.append(qc)
        return np.concatenate(ps).astype(np.int64), np.concatenate(qs).astype(np.int64)


def _share_home(rng, persons, p, q, next_household, pools, line_share) -> int:
    for col in ADDRESS_COLUMNS + ["country"]:
        _set(persons, q, col, _col(persons, col, p))
    hh = next_household + np.arange(len(p))
    _set(persons, p, "household", hh)
    _set(persons, q, "household", hh)
    share = rng.random(len(p)) < line_share
    lines = _col(persons, "landline", p).copy()
    need = share & (lines == "")
    if need.any():
        taken = pd.concat([persons["landline"], persons["mobile"]])
        lines[need] = ids.unique_phones(rng, _col(persons, "country", p[need]), pools,
                                        "landline", taken=taken).to_numpy()
    _set(persons, p[share], "landline", lines[share])
    _set(persons, q[share], "landline", lines[share])
    return next_household + len(p)


def _new_given(rng, persons, q, origin, sex, avoid, pools) -> None:
    given = draw_given(rng, origin, sex, pools)
    for _ in range(4):
        same = given == avoid
        if not same.any():
            break
        given[same] = draw_given(rng, origin[same], sex[same], pools)
    _set(persons, q, "given", given)


def _dedupe_emails(rng: np.random.Generator, persons: pd.DataFrame, shared: np.ndarray) -> None:
    email = persons["email"]
    clash = (email.duplicated() & (email != "")).to_numpy() & ~shared
    rows = np.flatnonzero(clash)
    for _ in range(10):
        if not len(rows):
            return
        local, _, domain = (persons["email"].iloc[rows].str.partition("@")[k] for k in (0, 1, 2))
        fresh = local + pd.Series(rng.integers(10, 10000, len(rows)), index=local.index).astype("str") \
            + "@" + domain
        _set(persons, rows, "email", fresh.to_numpy())
        email = persons["email"]
        rows = np.flatnonzero((email.duplicated() & (email != "")).to_numpy() & ~shared)


def apply_hard_cases(rng: np.random.Generator, persons: pd.DataFrame, records: pd.DataFrame,
                     tags: Tags, share: float, pools: Pools, next_household: int) -> int:
    """Build the hard cases (in place on persons and records); returns the next household id."""
    n_persons = len(persons)
    budget = int(round(n_persons * share))
    if budget <= 0:
        return next_household
    per_kind = budget / len(HARD_CASES)
    n_pairs = max(1, int(round(per_kind / 2)))
    n_single = max(1, int(round(per_kind)))
    person_of = records["person"].to_numpy()
    rank = records["rank"].to_numpy()
    n_records = np.bincount(person_of, minlength=n_persons)
    pick = _Picker(rng, persons, n_records)
    male = (persons["sex"] == "M").to_numpy()
    birth_all = persons["birth"].to_numpy()
    changed: list[np.ndarray] = []
    kind_of: dict[str, np.ndarray] = {}
    shared_mail = np.zeros(n_persons, dtype=bool)

    # Twins: one family name, one birth date, one address, different given names.
    p, q = pick.pairs(n_pairs)
    for col in ("family", "origin", "birth"):
        _set(persons, q, col, _col(persons, col, p))
    _new_given(rng, persons, q, _col(persons, "origin", p), _col(persons, "sex", q),
               _col(persons, "given", p), pools)
    next_household = _share_home(rng, persons, p, q, next_household, pools, 0.7)
    kind_of["twins"] = np.concatenate([p, q])

    # Father and son of one name (Sr / Jr), 22-34 years apart, at one address.
    old_man = male & (birth_all <= REF_DAY - 45 * YEAR)
    p, q = pick.pairs(n_pairs, p_ok=old_man)
    for col in ("given", "family", "origin", "sex"):
        _set(persons, q, col, _col(persons, col, p))
    son_birth = _col(persons, "birth", p) + rng.integers(22 * YEAR, 34 * YEAR, len(p))
    _set(persons, q, "birth", np.minimum(son_birth, REF_DAY - 19 * YEAR))
    _set(persons, q, "middle", np.where(rng.random(len(q)) < 0.5, _col(persons, "middle", p), ""))
    _set(persons, p, "suffix", np.full(len(p), "Sr", dtype=object))
    _set(persons, q, "suffix", np.full(len(q), "Jr", dtype=object))
    next_household = _share_home(rng, persons, p, q, next_household, pools, 0.6)
    kind_of["father_son"] = np.concatenate([p, q])

    # Strangers with a common name and the same birth date (everything else differs).
    p, q = pick.pairs(n_pairs)
    for c in COUNTRIES:
        sel = _col(persons, "country", p) == c
        names = tables.COMMON_NAMES[c]
        chosen = rng.integers(0, len(names), int(sel.sum()))
        for rows in (p[sel], q[sel]):
            _set(persons, rows, "given", np.array([names[i][0] for i in chosen], dtype=object))
            _set(persons, rows, "family", np.array([names[i][1] for i in chosen], dtype=object))
            _set(persons, rows, "sex", np.array([names[i][2] for i in chosen], dtype=object))
            _set(persons, rows, "middle", np.full(len(rows), "", dtype=object))
            _set(persons, rows, "origin", np.full(len(rows), "en_GB" if c == "GB" else "en_US", dtype=object))
    _set(persons, q, "birth", _col(persons, "birth", p))
    kind_of["same_name_same_birth"] = np.concatenate([p, q])

    # Spouses sharing one mailbox; the wife took the husband's family name on marriage and her
    # first record still carries her maiden name. Their ages are close.
    p, q = pick.pairs(n_pairs, p_ok=male & (birth_all <= REF_DAY - 25 * YEAR), q_ok=n_records >= 2)
    q_sex = np.full(len(q), "F", dtype=object)
    _set(persons, q, "sex", q_sex)
    _new_given(rng, persons, q, _col(persons, "origin", q), q_sex, _col(persons, "given", p), pools)
    wife_birth = _col(persons, "birth", p) + rng.integers(-6 * YEAR, 4 * YEAR, len(p))
    _set(persons, q, "birth", np.minimum(wife_birth, REF_DAY - 21 * YEAR))
    _set(persons, q, "maiden", _col(persons, "family", q))
    _set(persons, q, "family", _col(persons, "family", p))
    next_household = _share_home(rng, persons, p, q, next_household, pools, 0.5)
    no_mail = _col(persons, "email", p) == ""
    if no_mail.any():
        _set(persons, p[no_mail], "email", "x")  # refresh only redraws addresses people have
        refresh_emails(rng, persons, p[no_mail], pools)
    _set(persons, q, "email", _col(persons, "email", p))
    shared_mail[p] = shared_mail[q] = True
    kind_of["shared_mailbox_spouses"] = np.concatenate([p, q])
    maiden_rows = np.flatnonzero(np.isin(person_of, q) & (rank == 0))

    # Persons whose later record looks unlike the first.
    first_created = records["created"].to_numpy()[rank == 0]
    late = pick.single(n_single, ok=first_created <= REF_DAY - 7 * YEAR)
    translit = pick.single(n_single)
    spanish = np.isin(persons["origin"].to_numpy(), SPANISH_ORIGINS)
    compound = pick.single(n_single, ok=spanish)
    compound = np.concatenate([compound, pick.single(n_single - len(compound))])
    initials = pick.single(n_single)
    kind_of.update(late_duplicate=late, transliteration=translit,
                   compound_family_name=compound, initials=initials)

    # Transliterated names: the clean name is one spelling, a later record another.
    groups_m, groups_f = tables.TRANSLITERATIONS_MALE, tables.TRANSLITERATIONS_FEMALE
    is_f = _col(persons, "sex", translit) == "F"
    gi = np.where(is_f, rng.integers(0, len(groups_f), len(translit)),
                  rng.integers(0, len(groups_m), len(translit)))
    spell = [groups_f[g] if f else groups_m[g] for g, f in zip(gi, is_f)]
    order = [rng.permutation(len(s)) for s in spell]
    _set(persons, translit, "given", np.array([s[o[0]] for s, o in zip(spell, order)], dtype=object))
    translit_variant = np.array([s[o[1]] for s, o in zip(spell, order)], dtype=object)
    fam_sel = rng.random(len(translit)) < 0.4
    fam_groups = tables.TRANSLITERATED_FAMILY
    fam_spell = [fam_groups[i] for i in rng.integers(0, len(fam_groups), int(fam_sel.sum()))]
    fam_order = [rng.permutation(len(s)) for s in fam_spell]
    _set(persons, translit[fam_sel], "family",
         np.array([s[o[0]] for s, o in zip(fam_spell, fam_order)], dtype=object))
    fam_variant = np.array([s[o[1]] for s, o in zip(fam_spell, fam_order)], dtype=object)

    # Compound family names, later written in part or hyphenated.
    fam = _col(persons, "family", compound)
    single_part = np.array([" " not in f for f in fam], dtype=bool)
    second = draw_family(rng, np.full(int(single_part.sum()), "es_MX", dtype=object), pools, 0.0)
    fam = fam.copy()
    fam[single_part] = (text(fam[single_part]) + " " + text(second)).to_numpy()
    _set(persons, compound, "family", fam)

    for kind, rows in kind_of.items():
        _set(persons, rows, "hard_case", np.full(len(rows), kind, dtype=object))
        changed.append(rows)
    name_changed = np.concatenate([kind_of[k] for k in ("twins", "father_son", "same_name_same_birth",
                                                        "transliteration", "compound_family_name")])
    refresh_emails(rng, persons, np.setdiff1d(name_changed, np.flatnonzero(shared_mail)), pools)
    _dedupe_emails(rng, persons, shared_mail)
    recopy(records, persons, np.unique(np.concatenate(changed)))

    # Record-level changes.
    maiden = persons["maiden"].iloc[person_of[maiden_rows]].to_numpy()
    _set(records, maiden_rows, "family", maiden)
    tags.add("maiden_name", mask_of(len(records), maiden_rows))

    def second_rows(who: np.ndarray) -> np.ndarray:
        return np.flatnonzero(np.isin(person_of, who) & (rank == 1))

    r = second_rows(translit)
    _set(records, r, "given", translit_variant[_index_of(translit, person_of[r])])
    fam_person = translit[fam_sel]
    has_fam = np.isin(person_of[r], fam_person)
    _set(records, r[has_fam], "family", fam_variant[_index_of(fam_person, person_of[r][has_fam])])
    tags.add("transliteration", mask_of(len(records), r))
    r = second_rows(compound)
    fam_r = text(records["family"].iloc[r].to_numpy())
    hyphen = rng.random(len(r)) < 0.25
    parted = fam_r.str.split(" ", n=1).str[0]
    _set(records, r, "family", np.where(hyphen, fam_r.str.replace(" ", "-").to_numpy(), parted.to_numpy()))
    tags.add("family_hyphen", mask_of(len(records), r[hyphen]))
    tags.add("family_part", mask_of(len(records), r[~hyphen]))
    r = second_rows(initials)
    g = text(records["given"].iloc[r].to_numpy()).str.slice(0, 1)
    _set(records, r, "given", np.where(rng.random(len(r)) < 0.7, (g + ".").to_numpy(), g.to_numpy()))
    tags.add("given_initial", mask_of(len(records), r))
    _late_duplicates(rng, persons, records, tags, late, pools)
    return next_household


def _late_duplicates(rng, persons, records, tags, late, pools) -> None:
    """The last record of each person, opened 6+ years later after a move and a name change."""
    person_of = records["person"].to_numpy()
    rank = records["rank"].to_numpy()
    sel = np.isin(person_of, late)
    if not sel.any():
        return
    last_rank = pd.Series(rank[sel]).groupby(person_of[sel]).transform("max").to_numpy()
    rows = np.flatnonzero(sel)[rank[sel] == last_rank]
    rows = rows[rank[rows] > 0]
    first_created = records["created"].to_numpy()[np.flatnonzero(sel & (rank == 0))]
    first_of = dict(zip(person_of[sel & (rank == 0)], first_created))
    start = np.array([first_of[p] for p in person_of[rows]], dtype=np.int64) + 6 * YEAR
    later = (rng.random(len(rows)) * np.maximum(REF_DAY - start, 1)).astype(np.int64)
    _set(records, rows, "created", np.minimum(start + later, REF_DAY))
    country = records["country"].iloc[rows].to_numpy()
    addr = draw_addresses(rng, country, pools)
    for col in ADDRESS_COLUMNS:
        _set(records, rows, col, addr[col].to_numpy())
    _set(records, rows, "mobile", ids.unique_phones(rng, country, pools, "mobile",
                                                    taken=records["mobile"]).to_numpy())
    _set(records, rows, "landline", np.full(len(rows), "", dtype=object))
    is_f = records["sex"].iloc[rows].to_numpy() == "F"
    origin = records["origin"].iloc[rows].to_numpy()
    new_family = draw_family(rng, origin, pools, 0.0)
    nick_src = records["given"].iloc[rows].to_numpy()
    nick = np.array([tables.NICKNAMES.get(g, ("",))[0] for g in nick_src], dtype=object)
    use_nick = ~is_f & (nick != "")
    _set(records, rows, "family", np.where(use_nick, records["family"].iloc[rows].to_numpy(), new_family))
    _set(records, rows, "given", np.where(use_nick, nick, nick_src))
    year = 1970 + (records["birth"].to_numpy()[rows] // 365.25).astype(np.int64)
    mails = ids.personal_emails(rng, words(text(records["given"].iloc[rows].to_numpy())),
                                words(text(records["family"].iloc[rows].to_numpy())), year, country, pools)
    clash = ids.is_in(mails, records["email"])
    mails = mails.where(~clash, "new." + mails)
    _set(records, rows, "email", mails.to_numpy())
    mask = mask_of(len(records), rows)
    for tag in ("late_record", "moved", "phone_new", "email_new"):
        tags.add(tag, mask)
    tags.add("nickname", mask_of(len(records), rows[use_nick]))
    tags.add("family_name_changed", mask_of(len(records), rows[~use_nick]))
