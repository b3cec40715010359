"""Synthetic identity rings: fabricated people sharing a small pool of phones and emails.

A ring is 3-8 fabricated identities opened within a few weeks of each other, mostly through
the app and the card portfolio, reusing 2-3 phone numbers, 2-3 email addresses and often one
mail-drop address. Each identity carries one label: `fabricated` (a made-up person with a
valid-looking, otherwise unused SSN), `stolen_id` (a genuine customer's SSN), `second_id` (two
records of the identity carry two different SSNs) or `never_issued` (an SSN from a range the
SSA never assigns). Rings are US-only in this scenario.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.demo import identifiers as ids
from resolve.demo.people import ADDRESS_COLUMNS, REF_DAY, draw_addresses, draw_birth_days, draw_family
from resolve.demo.people import draw_given, draw_origin, words
from resolve.demo.pools import Pools
from resolve.demo.records import PERSON_COLUMNS
from resolve.demo.settings import (
    FABRICATED, NEVER_ISSUED, RING_START, SECOND_ID, STOLEN_ID,
)
from resolve.demo.vec import Tags, choose, day_number, text

RING_LABEL_MIX = {FABRICATED: 0.4, STOLEN_ID: 0.2, SECOND_ID: 0.2, NEVER_ISSUED: 0.2}
RING_CHANNELS = (("branch", 0.15), ("app", 0.5), ("card_portfolio", 0.35))
WINDOW_DAYS = 21


def _ring_plan(rng: np.random.Generator, target: int):
    """Identities per ring, label and record count per identity, adding up to ``target``."""
    sizes, labels, counts = [], [], []
    total = 0
    while total < target:
        k = int(rng.integers(3, 9))
        lab = choose(rng, list(RING_LABEL_MIX), k, list(RING_LABEL_MIX.values()))
        cnt = np.where(lab == SECOND_ID, 2, np.where(rng.random(k) < 0.3, 2, 1))
        sizes.append(k)
        labels.append(lab)
        counts.append(cnt)
        total += int(cnt.sum())
    if not sizes:
        return np.array([], dtype=np.int64), np.array([], dtype=object), np.array([], dtype=np.int64)
    labels_a = np.concatenate(labels)
    counts_a = np.concatenate(counts).astype(np.int64)
    sizes_a = np.array(sizes, dtype=np.int64)
    # Land exactly on the target: first give some identities one record instead of two, then
    # (rarely, for tiny extracts) turn second_id identities into one-record fabricated ones,
    # and as a last resort leave identities out of the last ring.
    over = total - target
    for kind in (labels_a != SECOND_ID, labels_a == SECOND_ID):
        reducible = np.flatnonzero((counts_a == 2) & kind)[::-1][:over]
        counts_a[reducible] = 1
        labels_a[reducible[labels_a[reducible] == SECOND_ID]] = FABRICATED
        over -= len(reducible)
    while over > 0:
        counts_a, labels_a = counts_a[:-1], labels_a[:-1]
        sizes_a[-1] -= 1
        if sizes_a[-1] == 0:
            sizes_a = sizes_a[:-1]
        over -= 1
    return sizes_a, labels_a, counts_a


def build_rings(rng: np.random.Generator, target_records: int, persons: pd.DataFrame,
                pools: Pools, first_person: int) -> tuple[pd.DataFrame, Tags, int]:
    """Ring records (same columns as genuine records), their variation tags and the ring count."""
    if target_records < 3:
        empty = pd.DataFrame(columns=["person", "rank", "channel", *PERSON_COLUMNS])
        return empty, Tags(0), 0
    sizes, label, count = _ring_plan(rng, target_records)
    n_rings, n_id = len(sizes), len(label)
    ring_of_id = np.repeat(np.arange(n_rings), sizes)
    country = np.full(n_id, "US", dtype=object)
    origin = draw_origin(rng, country)
    sex = np.where(rng.random(n_id) < 0.5, "F", "M").astype(object)
    given = draw_given(rng, origin, sex, pools)
    family = draw_family(rng, origin, pools)
    birth = draw_birth_days(rng, n_id, min_age=20, max_age=45)

    # National IDs by label; fabricated ones avoid every genuine customer's number.
    genuine_us = persons.index[(persons["country"] == "US").to_numpy()].to_numpy()
    nid = ids.ssns(rng, n_id).to_numpy()
    nid2 = ids.ssns(rng, n_id).to_numpy()
    stolen = np.flatnonzero(label == STOLEN_ID)
    victims = rng.choice(genuine_us, min(len(stolen), len(genuine_us)), replace=False)
    nid[stolen[: len(victims)]] = persons["nid"].iloc[victims].to_numpy()
    label[stolen[len(victims):]] = FABRICATED  # too few US customers to steal from
    never = np.flatnonzero(label == NEVER_ISSUED)
    nid[never] = ids.never_issued_ssns(rng, len(never)).to_numpy()
    own = label != STOLEN_ID
    for arr in (nid, nid2):
        clash = ids.is_in(text(arr), persons["nid"]) & own & (label != NEVER_ISSUED)
        arr[clash] = ids.ssns(rng, int(clash.sum())).to_numpy()

    # Ring pools: 2-3 phones, 2-3 emails and two mail-drop addresses per ring.
    taken = pd.concat([persons["mobile"], persons["landline"]])
    k_phone = rng.integers(2, 4, n_rings)
    k_mail = rng.integers(2, 4, n_rings)
    ring_phones = ids.unique_phones(rng, np.full(n_rings * 3, "US", dtype=object), pools,
                                    "mobile", taken=taken).to_numpy().reshape(n_rings, 3)
    mail_given = words(text(draw_given(rng, np.full(n_rings * 3, "en_US", dtype=object),
                                       choose(rng, ["M", "F"], n_rings * 3), pools)))
    mail_family = words(text(draw_family(rng, np.full(n_rings * 3, "en_US", dtype=object), pools)))
    year = 1975 + rng.integers(0, 30, n_rings * 3)
    ring_mails = ids.personal_emails(rng, mail_given, mail_family, year,
                                     np.full(n_rings * 3, "US", dtype=object), pools)
    ring_mails = ring_mails.where(~ids.is_in(ring_mails, persons["email"]), "x" + ring_mails)
    ring_mails = ring_mails.to_numpy().reshape(n_rings, 3)
    drops = draw_addresses(rng, np.full(n_rings * 2, "US", dtype=object), pools)
    ring_span = REF_DAY - 30 - day_number(RING_START)
    start = day_number(RING_START) + (rng.random(n_rings) * ring_span).astype(np.int64)

    # Records of the identities.
    ident = np.repeat(np.arange(n_id), count)
    n = len(ident)
    rank = np.arange(n) - np.repeat(np.cumsum(count) - count, count)
    ring = ring_of_id[ident]
    created = start[ring] + rng.integers(0, WINDOW_DAYS, n)
    order = np.lexsort((created, ident))
    created = created[order]  # rank 0 is each identity's earliest record
    phone = ring_phones[ring, (rng.random(n) * k_phone[ring]).astype(np.int64)]
    use_ring_mail = rng.random(n) < 0.8
    mail = ring_mails[ring, (rng.random(n) * k_mail[ring]).astype(np.int64)]
    own_mail = ids.personal_emails(rng, words(text(given[ident])), words(text(family[ident])),
                                   1970 + birth[ident] // 365, country[ident], pools).to_numpy()
    email = np.where(use_ring_mail, mail, own_mail)
    use_drop = rng.random(n) < 0.6
    own_addr = draw_addresses(rng, country[ident], pools)
    drop_idx = ring * 2 + rng.integers(0, 2, n)
    record_nid = np.where((label[ident] == SECOND_ID) & (rank == 1), nid2[ident], nid[ident])
    channel = choose(rng, [c for c, _ in RING_CHANNELS], n, [w for _, w in RING_CHANNELS])

    out = pd.DataFrame({
        "person": first_person + ident,
        "rank": rank,
        "channel": text(channel),
        "country": text(country[ident]),
        "origin": text(origin[ident]),
        "sex": text(sex[ident]),
        "given": text(given[ident]),
        "middle": text(np.full(n, "", dtype=object)),
        "family": text(family[ident]),
        "suffix": text(np.full(n, "", dtype=object)),
        "birth": birth[ident],
    })
    for col in ADDRESS_COLUMNS:
        out[col] = text(np.where(use_drop, drops[col].to_numpy()[drop_idx], own_addr[col].to_numpy()))
    out["mobile"] = text(phone)
    out["landline"] = text(np.full(n, "", dtype=object))
    out["email"] = text(email)
    out["alt_email"] = text(np.full(n, "", dtype=object))
    out["nid"] = text(record_nid)
    out["household"] = np.full(n, -1, dtype=np.int64)
    out["hard_case"] = text(np.full(n, "", dtype=object))
    out["created"] = created
    out["label"] = text(label[ident])
    out["ring"] = ring
    out["clean_nid"] = out["nid"]
    out["birth_missing"] = np.zeros(n, dtype=bool)
    tags = Tags(n)
    tags.add("ring_phone", np.ones(n, dtype=bool))
    tags.add("ring_email", use_ring_mail)
    tags.add("ring_address", use_drop)
    tags.add("second_id_record", (label[ident] == SECOND_ID) & (rank == 1))
    return out, tags, n_rings
