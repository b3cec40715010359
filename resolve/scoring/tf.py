"""Term-frequency adjustment: agreeing on a rare value is stronger evidence than a common one.

An exact-agreement level's u is an average over all the values pairs can agree on; it
understates how telling a rare surname is and overstates a common one. Following the
frequency-based weights of Winkler (1989; page numbers from memory, not re-read): if a
share f_v of the records carry value v, two unrelated records agree on v with probability
about f_v² and two records of one person about f_v, so among pairs that agree, the odds
for "same person" change by the factor Σ_w f_w² / f_v. The adjusted weight is

    log2(m / u) + log2(ū / max(f_v, floor)),    ū = Σ_w f_w²,

where ū is the chance that two random records agree at all. When u is the random-pair
agreement rate (u = ū) this is log2(m / f_v): the value's frequency takes the place of u.
The floor (`MatchModel.tf_min_u`) stops a value seen on only two records of a big extract
from outweighing everything else.

For phones, emails and national IDs the value is the rarest one the two records share, so a
landline or family mailbox held by many records weighs less than a personal one.
"""

from __future__ import annotations

import numpy as np

from resolve.compare.align import factorize_ints
from resolve.compare.records import PreparedRecords

#: Field -> per-record column holding the value whose frequency is used.
RECORD_VALUE = {
    "given_name": "given_key",
    "family_name": "family_key",
    "birth_date": "birth",
    "address": "address_key",
}
IDENTIFIER_FIELDS = ("national_id", "phone", "email")
TF_FIELDS = tuple(RECORD_VALUE) + IDENTIFIER_FIELDS


def _record_frequencies(prepared: PreparedRecords, field: str) -> tuple[np.ndarray, float]:
    """Relative frequency of each record's own value (NaN where none), and Σ f² over values."""
    col = prepared.matrix[:, prepared.column_index[RECORD_VALUE[field]]].astype(np.int64)
    has = col >= 0
    if field == "birth_date":  # only full dates agree exactly
        has &= ((col >> 5) & 15 > 0) & (col & 31 > 0)
    out = np.full(col.shape[0], np.nan)
    if not has.any():
        return out, float("nan")
    codes, _ = factorize_ints(col[has])
    share = np.bincount(codes) / has.sum()
    out[has] = share[codes]
    return out, float(np.sum(share**2))


def value_frequencies(prepared: PreparedRecords, field: str) -> tuple[np.ndarray, float]:
    """Frequency of every value of ``field`` (by record or by identifier code) and Σ f².

    Record-level fields give one frequency per record; identifier fields one per value code.
    Cached on the prepared records.
    """
    key = f"tf:{field}"
    if key not in prepared.cache:
        if field in RECORD_VALUE:
            prepared.cache[key] = _record_frequencies(prepared, field)
        elif field in IDENTIFIER_FIELDS:
            slots = prepared.identifiers[field]
            share = slots.holders / max(slots.with_any, 1)
            prepared.cache[key] = (share, float(np.sum(share**2)) if share.size else float("nan"))
        else:
            raise KeyError(f"No term-frequency value for field {field!r}")
    return prepared.cache[key]


def tf_frequencies(
    prepared: PreparedRecords, field: str, a: np.ndarray, b: np.ndarray
) -> tuple[np.ndarray, float]:
    """Frequency of the agreed value for pairs that agree exactly on ``field``, and Σ f².

    ``a`` and ``b`` are the record positions of pairs already known to agree exactly. For
    record-level fields the value is the first record's; for identifiers it is the rarest
    value the two records share. NaN where no frequency is known.
    """
    share, mean_share = value_frequencies(prepared, field)
    if field in RECORD_VALUE:
        return share[a], mean_share
    rarest = prepared.rarest_shared(field, a, b)
    out = np.full(a.shape[0], np.nan)
    found = rarest >= 0
    out[found] = share[rarest[found]]
    return out, mean_share


def tf_adjustment(frequency: np.ndarray, mean_share: float, min_u: float) -> np.ndarray:
    """Bits to add to an exact-agreement weight: log2(ū / max(f, floor)); 0 where unknown."""
    if not np.isfinite(mean_share) or mean_share <= 0:
        return np.zeros(frequency.shape[0])
    adj = np.log2(mean_share / np.maximum(frequency, min_u))
    return np.where(np.isnan(frequency), 0.0, adj)
