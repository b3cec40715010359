"""Typed links: what a scored candidate pair most likely is, and the evidence that says so.

Scoring gives every candidate pair a match probability. That number alone cannot tell a
reviewer the difference between two people who live together (a household) and two people
who carry the same national ID or share a phone with no family tie (shared identity, a sign of
a fabricated or stolen identity). This module gives each pair a link type and reason codes,
working on whole columns at once (numpy) so that millions of pairs type in about a second.

Facts come from the per-field levels that `resolve.compare` wrote (`lvl_` columns), read
through its level catalogue by name: a given name "different", a phone "shared_fixed"
(landline or service line) or "shared_mobile", and so on. Comparison does not know which
values are hubs (one number or mailbox used by very many records), so pairs whose records
both hold a hub value are re-checked against the `identifiers` table, where hubs,
placeholders and missing values never count as shared. Pairs without level columns (tables
built by hand) get the same facts from the `people` and `identifiers` tables directly.

A link is a lead for a human reviewer, never a finding about a person.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.compare.align import WEAK_PHONE_TYPES
from resolve.compare.levels import field_spec
from resolve.errors import InputError, ResolveError

SAME_PERSON = "same_person"
REVIEW = "review"
HOUSEHOLD = "household"
SHARED_IDENTITY = "shared_identity"
NONE = "none"
LINK_TYPES = (SAME_PERSON, REVIEW, HOUSEHOLD, SHARED_IDENTITY, NONE)

SHARED_STATUSES = ("valid", "invalid")
"""Identifier statuses that count when two records hold the same key (placeholders never do)."""

LANDLINE_TYPES = WEAK_PHONE_TYPES
"""Phone number types counted as a landline or service line, as in `resolve.compare`: shared by
a household without suspicion. `fixed_line_or_mobile` (most North American numbers) is not one
of them: a shared number of that type needs a family name or an address in common to count as
household evidence.
"""

# Reason codes, in the order they are written. Each is a fact about the pair.
REASONS = (
    "shared_national_id",
    "same_address",
    "shared_landline",
    "shared_phone",
    "shared_email",
    "same_family_name",
    "family_names_differ",
    "same_given_name",
    "given_names_differ",
    "same_birth_date",
    "birth_dates_differ",
    "opened_together",
)
_BIT = {code: 1 << i for i, code in enumerate(REASONS)}

# Bits for the kinds of shared identifier, as used by `shared_identifier_bits`.
SHARE_NATIONAL_ID = _BIT["shared_national_id"]
SHARE_ADDRESS = _BIT["same_address"]
SHARE_LANDLINE = _BIT["shared_landline"]
SHARE_PHONE = _BIT["shared_phone"]
SHARE_EMAIL = _BIT["shared_email"]

_KINDS = ("phone", "email", "national_id", "address")
_PEOPLE_COLUMNS = ("given_key", "given_root", "family_key", "family_core", "birth_date")


@dataclass(frozen=True)
class Thresholds:
    """Probability cut-offs: at or above ``auto`` a pair is the same person; from ``review``
    up to ``auto`` it goes to a reviewer."""

    auto: float = 0.99
    review: float = 0.5
    #: Records of different family names opened within this many days of each other that
    #: share an address, phone or email but no landline are not taken for a household.
    opened_together_days: int = 60

    def __post_init__(self) -> None:
        if not 0.0 <= self.review <= self.auto <= 1.0:
            raise ResolveError(
                "Thresholds must satisfy 0 <= review <= auto <= 1; "
                f"got review={self.review} and auto={self.auto}, so lower review or raise auto."
            )


def as_thresholds(thresholds: Thresholds | Mapping[str, float] | None) -> Thresholds:
    """Accept a `Thresholds`, a mapping with ``auto`` and ``review``, or None (defaults)."""
    if thresholds is None:
        return Thresholds()
    if isinstance(thresholds, Thresholds):
        return thresholds
    return Thresholds(auto=float(thresholds["auto"]), review=float(thresholds["review"]))


def _kind_codes(kind: pd.Series) -> np.ndarray:
    """Position of each kind in `_KINDS` (-1 for any other kind), via the distinct kinds."""
    if isinstance(kind.dtype, pd.CategoricalDtype):  # the codes are there already
        codes, uniques = kind.cat.codes.to_numpy(), kind.cat.categories
    else:
        codes, uniques = pd.factorize(kind)
    lookup = np.array([_KINDS.index(k) if k in _KINDS else -1 for k in uniques] + [-1], dtype=np.int64)
    return lookup[codes]


def hub_rows(identifiers: pd.DataFrame, hubs: pd.DataFrame | None) -> np.ndarray:
    """Boolean mask of the identifier rows whose (kind, key) is listed in ``hubs``."""
    found = np.zeros(len(identifiers), dtype=bool)
    if hubs is None or len(hubs) == 0:
        return found
    # one pass over the keys finds the few rows holding any hub key; (kind, key) is then
    # checked on those rows only
    key = identifiers["key"]
    hub_keys = hubs["key"].astype(key.dtype)
    rows = np.arange(len(identifiers))
    if not hub_keys.isna().any():
        rows = np.flatnonzero(key.isin(hub_keys.unique()).to_numpy(dtype=bool))
    kind = identifiers["kind"].iloc[rows]
    key = key.iloc[rows]
    for hub_kind, keys in hubs.groupby(hubs["kind"].astype(str))["key"]:
        is_hub = kind.isin([hub_kind]).to_numpy(dtype=bool) & key.isin(keys.astype(key.dtype)).to_numpy(dtype=bool)
        found[rows[is_hub]] = True
    return found


def shareable_identifiers(identifiers: pd.DataFrame, hubs: pd.DataFrame | None = None) -> pd.DataFrame:
    """Identifier rows that may join records: usable status, a key, and not a hub value.

    Returns integer columns only, one row per usable identifier row: ``row`` (position in
    ``identifiers``), ``rec``, ``kind`` (index into ``("phone", "email", "national_id",
    "address")``), ``landline`` (bool: a phone of a landline or service type) and
    ``value_id`` (an int64 naming the (kind, key) value within this call). Use
    `identifier_labels` for readable values.
    """
    missing = {"rec", "kind", "key", "status"} - set(identifiers.columns)
    if missing:
        raise InputError(
            f"The identifier table lacks {', '.join(sorted(missing))}; "
            "build it with resolve.normalise before linking."
        )
    from resolve.clusters.codes import isin, text_codes  # here: resolve.clusters imports this module

    kind = _kind_codes(identifiers["kind"])
    key_code, _ = text_codes(identifiers["key"])  # factorised once per key column and shared
    keep = isin(identifiers["status"], SHARED_STATUSES) & (key_code >= 0) & (kind >= 0)
    keep &= ~hub_rows(identifiers, hubs)
    row = np.flatnonzero(keep)
    rec = identifiers["rec"].to_numpy(dtype=np.int64)[row]
    value = key_code[row] * len(_KINDS) + kind[row]
    landline = np.zeros(len(row), dtype=bool)
    if "detail" in identifiers.columns:
        detail_code, details = text_codes(identifiers["detail"])
        names = pd.Series(details, dtype="string").str.lower().str.replace(r"[\s\-]+", "_", regex=True)
        weak = np.append(names.isin(LANDLINE_TYPES).to_numpy(dtype=bool), False)
        landline = weak[detail_code[row]] & (kind[row] == _KINDS.index("phone"))
    return pd.DataFrame(
        {"row": row, "rec": rec, "kind": kind[row].astype(np.int8), "landline": landline, "value_id": value},
        copy=False,  # fresh arrays
    )


def identifier_labels(identifiers: pd.DataFrame, shareable: pd.DataFrame) -> pd.Series:
    """Readable ``kind:key`` text for rows of a `shareable_identifiers` table (landlines and
    service lines written ``landline:``), aligned with ``shareable``."""
    kind = np.where(shareable["landline"].to_numpy(dtype=bool), len(_KINDS), shareable["kind"].to_numpy())
    prefix = pa.array([f"{k}:" for k in _KINDS + ("landline",)], type=pa.string()).take(pa.array(kind))
    rows = pa.array(shareable["row"].to_numpy(dtype=np.int64))
    key = identifiers["key"].array
    if isinstance(key, pd.arrays.ArrowExtensionArray):  # take from the Arrow data, no copy of the column
        key = key.__arrow_array__().take(rows)
    else:
        key = pa.array(identifiers["key"].astype("string").to_numpy(dtype=object), type=pa.string()).take(rows)
    text = pc.binary_join_element_wise(prefix, pc.cast(key, pa.string()), "")
    if isinstance(text, pa.ChunkedArray):
        text = text.combine_chunks()
    return pd.Series(pd.arrays.ArrowStringArray(text), index=shareable.index)


MAX_HOLDERS = 64
"""Values held by more records than this are matched pair by pair instead of value by value."""


def _kind_bits(shareable: pd.DataFrame) -> np.ndarray:
    kind = shareable["kind"].to_numpy()
    bit = np.array([SHARE_PHONE, SHARE_EMAIL, SHARE_NATIONAL_ID, SHARE_ADDRESS], dtype=np.int32)[kind]
    return np.where(shareable["landline"].to_numpy(dtype=bool), SHARE_LANDLINE, bit).astype(np.int32)


def shared_identifier_bits(
    rec_a: np.ndarray, rec_b: np.ndarray, shareable: pd.DataFrame
) -> np.ndarray:
    """For each pair, an int32 bit mask of the identifier kinds both records hold.

    Bits: `SHARE_NATIONAL_ID`, `SHARE_ADDRESS`, `SHARE_LANDLINE`, `SHARE_PHONE` (any other
    phone type), `SHARE_EMAIL`. Values held by two to `MAX_HOLDERS` records are expanded into
    the record pairs that hold them and matched to the pairs by a sorted merge; the few values
    held by more are checked pair by pair. No per-pair Python.
    """
    n_pairs = len(rec_a)
    bits = np.zeros(n_pairs, dtype=np.int32)
    if n_pairs == 0 or len(shareable) == 0:
        return bits
    a = np.asarray(rec_a, dtype=np.int64)
    b = np.asarray(rec_b, dtype=np.int64)
    codes, _ = pd.factorize(shareable["value_id"])
    holders = np.bincount(codes)[codes]
    rec = shareable["rec"].to_numpy(dtype=np.int64)
    kbit = _kind_bits(shareable)
    n = int(max(rec.max(), a.max(), b.max())) + 1
    pair_key = a * n + b
    order = np.argsort(pair_key, kind="stable")
    sorted_keys = pair_key[order]

    small = np.flatnonzero((holders >= 2) & (holders <= MAX_HOLDERS))
    i, j = pairs_within_values(codes[small])
    x, y, bit = rec[small[i]], rec[small[j]], kbit[small[i]]
    share_key = np.minimum(x, y) * n + np.maximum(x, y)
    by_key = np.argsort(share_key, kind="stable")  # sorted probes keep the merge cache-friendly
    share_key, bit = share_key[by_key], bit[by_key]
    where = np.searchsorted(sorted_keys, share_key)
    where[where == n_pairs] = 0
    hit = sorted_keys[where] == share_key
    np.bitwise_or.at(bits, order[where[hit]], bit[hit])

    big = holders > MAX_HOLDERS
    if big.any():
        _probe_big_values(a, b, rec[big], codes[big], kbit[big], bits)
    return bits


def pairs_within_values(value: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """All pairs of rows holding the same value, as row positions (i, j), i before j.

    Vectorised: a value held by k rows gives k(k-1)/2 pairs, so callers cap k first.
    """
    order = np.argsort(value, kind="stable")
    value = np.asarray(value)[order]
    if len(value) == 0:
        return order, order
    start = np.flatnonzero(np.concatenate([[True], value[1:] != value[:-1]]))
    size = np.diff(np.concatenate([start, [len(value)]]))
    pos_in_group = np.arange(len(value)) - np.repeat(start, size)
    later = np.repeat(size, size) - pos_in_group - 1  # partners after each row in its value
    first = np.repeat(np.arange(len(value)), later)
    step = np.arange(len(first)) - np.repeat(np.cumsum(later) - later, later) + 1
    return order[first], order[first + step]


def _probe_big_values(a, b, rec, value, kbit, bits) -> None:
    """Set bits for pairs whose two records both hold one of the widely held values."""
    order = np.lexsort((value, rec))
    rec, value, kbit = rec[order], value[order], kbit[order]
    n_rec = int(max(rec.max(), a.max(), b.max())) + 1
    indptr = np.zeros(n_rec + 1, dtype=np.int64)
    np.cumsum(np.bincount(rec, minlength=n_rec), out=indptr[1:])
    count = indptr[a + 1] - indptr[a]
    total = int(count.sum())
    if total == 0:
        return
    pair = np.repeat(np.arange(len(a), dtype=np.int64), count)
    pos = np.repeat(indptr[a], count) + np.arange(total) - np.repeat(np.cumsum(count) - count, count)
    n_val = int(value.max()) + 1
    held = rec * n_val + value  # sorted: rows are in (rec, value) order
    probe = b[pair] * n_val + value[pos]
    where = np.searchsorted(held, probe)
    where[where == len(held)] = 0
    hit = held[where] == probe
    np.bitwise_or.at(bits, pair[hit], kbit[pos[hit]])


def _reason_text(masks: np.ndarray) -> pd.Series:
    """Turn reason bit masks into ';'-joined codes; Python runs once per distinct mask."""
    codes, uniques = pd.factorize(masks)
    words = [";".join(c for c in REASONS if int(m) & _BIT[c]) for m in uniques]
    return _take_text(words, codes)


def _take_text(words: list[str], codes: np.ndarray) -> pd.Series:
    taken = pa.array(words, type=pa.string()).take(pa.array(codes, type=pa.int64()))
    return pd.Series(pd.arrays.ArrowStringArray(taken))


def _bits_where(flag: np.ndarray, code: str) -> np.ndarray:
    return np.where(flag, np.int32(_BIT[code]), np.int32(0))


# Which per-field levels (resolve.compare.levels, by name) give which reason code.
_LEVEL_REASONS = (
    ("given_name", ("different",), "given_names_differ"),
    ("given_name", ("equivalent", "exact"), "same_given_name"),
    ("family_name", ("different",), "family_names_differ"),
    ("family_name", ("one_edit", "close", "part", "exact"), "same_family_name"),
    ("birth_date", ("different",), "birth_dates_differ"),
    ("birth_date", ("exact",), "same_birth_date"),
    ("national_id", ("exact",), "shared_national_id"),
    ("phone", ("shared_fixed",), "shared_landline"),
    ("phone", ("shared_mobile",), "shared_phone"),
    ("email", ("shared",), "shared_email"),
    ("address", ("exact",), "same_address"),
)
LEVEL_COLUMNS = tuple(dict.fromkeys(f"lvl_{field}" for field, _, _ in _LEVEL_REASONS))


def facts_from_levels(pairs: pd.DataFrame) -> np.ndarray:
    """Reason bit mask per pair read from the ``lvl_`` columns (no hub check)."""
    mask = np.zeros(len(pairs), dtype=np.int32)
    for field, names, code in _LEVEL_REASONS:
        spec = field_spec(field)
        wanted = [spec.code_of(name) for name in names]
        mask |= _bits_where(pairs[f"lvl_{field}"].isin(wanted).to_numpy(dtype=bool), code)
    return mask


def facts_from_tables(
    a: np.ndarray, b: np.ndarray, people: pd.DataFrame, identifiers: pd.DataFrame, hubs: pd.DataFrame | None
) -> np.ndarray:
    """Reason bit mask per pair from the people and identifier tables (exact agreement only)."""
    missing = [c for c in _PEOPLE_COLUMNS if c not in people.columns]
    if missing:
        raise InputError(
            f"The people table lacks {', '.join(missing)}; build it with resolve.normalise."
        )

    def agree(column: str) -> tuple[np.ndarray, np.ndarray]:
        codes, _ = pd.factorize(people[column])
        ca, cb = codes[a], codes[b]
        both = (ca >= 0) & (cb >= 0)
        return both & (ca == cb), both

    same_given_key, both_given = agree("given_key")
    same_root, both_root = agree("given_root")
    same_family_key, both_family = agree("family_key")
    same_family_core, _ = agree("family_core")
    same_birth, both_birth = agree("birth_date")
    same_family = same_family_key | same_family_core
    mask = shared_identifier_bits(a, b, shareable_identifiers(identifiers, hubs))
    mask |= _bits_where(same_given_key | same_root, "same_given_name")
    mask |= _bits_where(both_given & ~same_given_key & ~(both_root & same_root), "given_names_differ")
    mask |= _bits_where(same_family, "same_family_name")
    mask |= _bits_where(both_family & ~same_family, "family_names_differ")
    mask |= _bits_where(same_birth, "same_birth_date")
    mask |= _bits_where(both_birth & ~same_birth, "birth_dates_differ")
    return mask


_SHARE_BITS = SHARE_NATIONAL_ID | SHARE_ADDRESS | SHARE_LANDLINE | SHARE_PHONE | SHARE_EMAIL
_KIND_SHARE_BITS = {
    "phone": SHARE_LANDLINE | SHARE_PHONE,
    "email": SHARE_EMAIL,
    "national_id": SHARE_NATIONAL_ID,
    "address": SHARE_ADDRESS,
}


def drop_hub_sharing(
    mask: np.ndarray, a: np.ndarray, b: np.ndarray, identifiers: pd.DataFrame, hubs: pd.DataFrame | None
) -> np.ndarray:
    """Re-check, against the identifier table, the shared-identifier facts of pairs whose two
    records both hold a hub value of that kind, so that a hub never counts as shared."""
    if hubs is None or len(hubs) == 0 or len(mask) == 0:
        return mask
    n = int(max(a.max(), b.max())) + 1
    recheck = np.zeros(len(mask), dtype=bool)
    usable = ~identifiers["status"].isin(("placeholder", "missing")).to_numpy(dtype=bool)
    is_hub = usable & hub_rows(identifiers, hubs)
    for kind, bits in _KIND_SHARE_BITS.items():
        rows = is_hub & identifiers["kind"].isin([kind]).to_numpy(dtype=bool)
        if not rows.any():
            continue
        holds = np.zeros(n, dtype=bool)
        recs = identifiers["rec"].to_numpy(dtype=np.int64)[rows]
        holds[recs[recs < n]] = True
        recheck |= ((mask & bits) != 0) & holds[a] & holds[b]
    if not recheck.any():
        return mask
    sel = np.flatnonzero(recheck)
    involved = np.zeros(n, dtype=bool)
    involved[a[sel]] = True
    involved[b[sel]] = True
    rec = identifiers["rec"].to_numpy(dtype=np.int64)
    near = identifiers[(rec < n) & involved[np.minimum(rec, n - 1)]]
    found = shared_identifier_bits(a[sel], b[sel], shareable_identifiers(near, hubs))
    mask = mask.copy()
    mask[sel] = (mask[sel] & ~_SHARE_BITS) | found
    return mask


def _opened_together(a: np.ndarray, b: np.ndarray, people: pd.DataFrame, days: int) -> np.ndarray:
    """Pairs whose two records were both created, within ``days`` of each other."""
    if "created_at" not in people.columns or days <= 0 or len(a) == 0:
        return np.zeros(len(a), dtype=bool)
    created = pd.to_datetime(people["created_at"], errors="coerce").to_numpy("datetime64[D]")
    ca, cb = created[a], created[b]
    known = ~np.isnat(ca) & ~np.isnat(cb)
    gap = np.abs((ca - cb).astype("timedelta64[D]").astype(np.int64))
    return known & (gap <= days)


def type_links(
    pairs: pd.DataFrame,
    people: pd.DataFrame,
    identifiers: pd.DataFrame,
    thresholds: Thresholds | Mapping[str, float] | None = None,
    hubs: pd.DataFrame | None = None,
) -> pd.DataFrame:
    """Return ``pairs`` with ``link_type`` and ``reasons`` added.

    Types, first rule that applies wins (see docs/clusters.md):

    - ``same_person``: prob >= auto; ``review``: review <= prob < auto;
    - ``shared_identity``: the pair holds the same national ID;
    - ``household``: given names or birth dates disagree, and the pair shares an address or a
      landline, or shares a phone or an email while also having a family name in common;
    - ``shared_identity``: the pair shares a phone or an email with no household explanation
      (no family name, address or landline in common), or shares an address, phone or email
      with different family names and no landline while both records were opened within
      ``opened_together_days`` of each other (the pattern of a ring using a mail drop);
    - ``none``: anything else.

    Facts are read from the ``lvl_`` per-field levels when ``pairs`` has them all (hub values
    are then re-checked against ``identifiers``), else from ``people`` and ``identifiers``.
    ``reasons`` lists the facts found (codes in `REASONS`), whatever the type.
    """
    limits = as_thresholds(thresholds)
    missing = {"rec_a", "rec_b", "prob"} - set(pairs.columns)
    if missing:
        raise InputError(
            f"Linking needs the pair columns {', '.join(sorted(missing))}; score the pairs first."
        )
    a = pairs["rec_a"].to_numpy(dtype=np.int64)
    b = pairs["rec_b"].to_numpy(dtype=np.int64)
    if len(a) and (max(a.max(), b.max()) >= len(people) or min(a.min(), b.min()) < 0):
        raise InputError("A pair refers to a record outside the people table; rebuild the pairs.")
    prob = pairs["prob"].to_numpy(dtype=np.float64)

    if all(c in pairs.columns for c in LEVEL_COLUMNS):
        mask = drop_hub_sharing(facts_from_levels(pairs), a, b, identifiers, hubs)
    else:
        mask = facts_from_tables(a, b, people, identifiers, hubs)

    def has(*codes: str) -> np.ndarray:
        return (mask & sum(_BIT[c] for c in codes)) != 0

    same_family = has("same_family_name")
    phone_or_email = has("shared_phone", "shared_email")
    home = has("same_address", "shared_landline")
    different_people = has("given_names_differ", "birth_dates_differ")
    together = _opened_together(a, b, people, limits.opened_together_days)
    mask = mask | _bits_where(together, "opened_together")
    # Unrelated names sharing contact details, opened in a burst, is the pattern of a ring
    # using a mail drop, not of a family: such pairs are shared identity, not household.
    burst = together & ~same_family & ~has("shared_landline")
    household = different_people & (home | (phone_or_email & same_family)) & ~burst
    unexplained = (phone_or_email | (burst & home)) & ~same_family & (~home | burst)
    code = {name: i for i, name in enumerate(LINK_TYPES)}
    kind = np.select(
        [prob >= limits.auto, prob >= limits.review, has("shared_national_id"), household, unexplained],
        [code[SAME_PERSON], code[REVIEW], code[SHARED_IDENTITY], code[HOUSEHOLD], code[SHARED_IDENTITY]],
        code[NONE],
    ).astype(np.int64)

    links = pairs.copy()
    links["link_type"] = _take_text(list(LINK_TYPES), kind).set_axis(links.index)
    links["reasons"] = _reason_text(mask).set_axis(links.index)
    return links
