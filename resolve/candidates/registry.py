"""The blocking keys: their names, bits and plain descriptions, in one ordered registry.

A candidate pair carries a bit mask (`pairs.keys`) saying which blocking keys put it forward.
Later stages (comparison, scoring, the review workbench, the blocking report) decode that mask
through `BLOCKING_KEYS`, so the order here is a contract: add new keys at the end, never
reorder or reuse a bit.

Two families of keys exist:

- identifier keys: records that carry the same identifier value (phone, email, national ID,
  address), or national IDs one edit apart;
- person keys: records that agree on a combination of name, birth-date and postcode fields,
  built from the `people` table. `columns` names the `people` columns that must all be present
  and equal; `mode` says how the block is read:
  ``equal``  every pair inside a block;
  ``swap_names``  given and family name swapped (one record's given name is the other's family
  name and the other way round), same birth date;
  ``swap_day_month``  same name sounds and birth year, birth day and month swapped;
  ``one_missing``  the leading columns equal and the last column (birth date) missing on at
  least one of the two records (records that lack it pair with the whole block).
"""

from __future__ import annotations

from dataclasses import dataclass
from types import MappingProxyType
from typing import Iterable, Mapping

import numpy as np

IDENTIFIER_KINDS = ("phone", "email", "national_id", "address")


@dataclass(frozen=True)
class BlockingKey:
    """One blocking key: its registry name, bit position, source and a sentence for reviewers."""

    name: str
    position: int
    source: str  # "identifier", "one_edit" or "person"
    description: str
    columns: tuple[str, ...] = ()
    mode: str = "equal"
    kind: str | None = None  # identifier kind for identifier keys

    @property
    def mask(self) -> int:
        """The key's bit as an integer mask (1 << position)."""
        return 1 << self.position


_KEYS = (
    BlockingKey("shared_phone", 0, "identifier", "share a phone number", kind="phone"),
    BlockingKey("shared_email", 1, "identifier", "share an email mailbox", kind="email"),
    BlockingKey("shared_national_id", 2, "identifier", "share a national ID",
                kind="national_id"),
    BlockingKey("shared_address", 3, "identifier", "share an address", kind="address"),
    BlockingKey("national_id_one_edit", 4, "one_edit",
                "national IDs of the same type one substitution or one adjacent swap apart",
                kind="national_id"),
    BlockingKey("family_sound_birth_date", 5, "person",
                "family names sound alike and birth dates are equal",
                ("family_phonetic", "birth_date")),
    BlockingKey("given_root_birth_year_postcode", 6, "person",
                "same given name root (nicknames folded), birth year and postcode",
                ("given_root", "birth_year", "postcode")),
    BlockingKey("birth_date_postcode", 7, "person", "same birth date and postcode",
                ("birth_date", "postcode")),
    BlockingKey("given_family_swapped_birth_date", 8, "person",
                "given and family names swapped, same birth date",
                ("given_key", "family_key", "birth_date"), mode="swap_names"),
    BlockingKey("family_first_given_initial_birth_date", 9, "person",
                "same first part of the family name, given initial and birth date",
                ("family_first", "given_initial", "birth_date")),
    BlockingKey("full_name_birth_year", 10, "person", "same given and family name and birth year",
                ("given_key", "family_key", "birth_year")),
    BlockingKey("name_sound_birth_day_month_swapped", 11, "person",
                "names sound alike, same birth year, birth day and month swapped",
                ("given_phonetic", "family_phonetic", "birth_year", "birth_month", "birth_day"),
                mode="swap_day_month"),
    BlockingKey("full_name_postcode", 12, "person", "same given and family name and postcode",
                ("given_key", "family_key", "postcode")),
    BlockingKey("given_root_birth_date", 13, "person",
                "same given name root and birth date (catches family-name changes)",
                ("given_root", "birth_date")),
    BlockingKey("name_birth_date_missing", 14, "person",
                "same given name root and family name, a birth date missing on one or both",
                ("given_root", "family_key", "birth_date"), mode="one_missing"),
)

#: Every blocking key, in bit order, by name.
KEY_SPECS: Mapping[str, BlockingKey] = MappingProxyType({k.name: k for k in _KEYS})

#: Ordered registry name -> bit mask (1 << position); decode `pairs.keys` with it.
BLOCKING_KEYS: Mapping[str, int] = MappingProxyType({k.name: k.mask for k in _KEYS})


def key_mask(names: Iterable[str]) -> int:
    """The combined bit mask of the named blocking keys."""
    mask = 0
    for name in names:
        mask |= BLOCKING_KEYS[name]
    return mask


def decode_keys(mask: int) -> tuple[str, ...]:
    """Names of the blocking keys set in one pair's ``keys`` mask, in registry order."""
    mask = int(mask)
    return tuple(name for name, bit in BLOCKING_KEYS.items() if mask & bit)


def has_key(keys, name: str) -> np.ndarray:
    """Boolean array: which masks in ``keys`` (array or Series) have the named key's bit set."""
    return (np.asarray(keys) & BLOCKING_KEYS[name]) != 0


#: How a candidate pair was proposed, by the families of the blocking keys that fired: only
#: identifier keys (shared phone, email, national ID, address or a one-edit national ID),
#: only person keys (name, birth-date and postcode combinations), or both. The match model
#: keeps a prior per family (see `resolve.scoring.model`). Order is a contract: the codes
#: returned by `key_family` index this tuple.
KEY_FAMILIES = ("identifier", "person", "both")

_PERSON_MASK = sum(k.mask for k in _KEYS if k.source == "person")
_IDENTIFIER_MASK = sum(k.mask for k in _KEYS if k.source != "person")


def key_family(keys) -> np.ndarray:
    """Code per pair (index into `KEY_FAMILIES`) from the pairs' ``keys`` masks, int8.

    A mask with no bit set (a pair blocking did not propose, e.g. one a reviewer asked
    about) gets -1: the model then uses its overall prior for it.
    """
    k = np.asarray(keys, dtype=np.int64)
    person = (k & _PERSON_MASK) != 0
    identifier = (k & _IDENTIFIER_MASK) != 0
    family = np.where(person & identifier, 2, np.where(person, 1, 0))
    return np.where(person | identifier, family, -1).astype(np.int8)


def family_of(keys: int | None) -> str | None:
    """Name of one pair's key family (`KEY_FAMILIES`), or None for no mask or an empty one."""
    if keys is None:
        return None
    code = int(key_family(np.array([int(keys)]))[0])
    return KEY_FAMILIES[code] if code >= 0 else None
