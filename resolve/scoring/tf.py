"""Term-frequency adjustment: agreeing on a rare value is stronger evidence than a common one.

An exact-agreement level's u is an average over all the values pairs can agree on; it
understates how telling a rare surname is and overstates a common one. Following the
frequency-based weights of Winkler (1989; page numbers from memory, not re-read): among
pairs that agree on a field, a match agrees on value v in proportion to how many records
hold v, a pair of different people in proportion to how many *pairs* of records hold it.
The adjusted weight is

    log2(m / u) + log2(ū / max(f_v, floor)),

f_v = (n_v - 1) / (N - 1): the share of the other records that hold the value too (n_v
records of N hold it), and ū: the average of f over the records whose value is held by at
least one other record. Only such values can be agreed on, so only they enter the average;
counting the values nobody shares (most addresses, phones and birth dates) would put the
average below every value that two records can share, and every agreement would lose
weight. A value shared by the typical number of records gets no adjustment, one held by
fewer gains and one held by more loses. For large counts this is the classic ū = Σ f_w²
against f_v. The floor (`MatchModel.tf_min_u`) stops a value seen on only two records of a
big extract from outweighing everything else.

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


def shared_frequencies(holders: np.ndarray, total: int) -> tuple[np.ndarray, float]:
    """Per value: the share of the other records holding it, (n - 1) / (N - 1); and ū.

    ``holders[v]`` records of ``total`` hold value v. ū is the average of that share over
    the records whose value at least one other record holds (NaN when no value is shared).
    """
    holders = np.asarray(holders, dtype=np.float64)
    others = max(total - 1, 1)
    share = np.maximum(holders - 1.0, 0.0) / others
    shared = holders >= 2
    if not shared.any():
        return share, float("nan")
    mean_share = float(np.sum(holders[shared] * share[shared]) / np.sum(holders[shared]))
    return share, mean_share


def _record_frequencies(prepared: PreparedRecords, field: str) -> tuple[np.ndarray, float]:
    """Share of the other records holding each record's own value (NaN where none), and ū."""
    col = prepared.matrix[:, prepared.column_index[RECORD_VALUE[field]]].astype(np.int64)
    has = col >= 0
    if field == "birth_date":  # only full dates agree exactly
        has &= ((col >> 5) & 15 > 0) & (col & 31 > 0)
    out = np.full(col.shape[0], np.nan)
    if not has.any():
        return out, float("nan")
    codes, _ = factorize_ints(col[has])
    share, mean_share = shared_frequencies(np.bincount(codes), int(has.sum()))
    out[has] = share[codes]
    return out, mean_share


def value_frequencies(prepared: PreparedRecords, field: str) -> tuple[np.ndarray, float]:
    """Frequency f of every value of ``field`` (by record or by identifier code) and ū.

    Record-level fields give one frequency per record; identifier fields one per value code
    (out of the records holding any value of that kind). See `shared_frequencies`. Cached on
    the prepared records.
    """
    key = f"tf:{field}"
    if key not in prepared.cache:
        if field in RECORD_VALUE:
            prepared.cache[key] = _record_frequencies(prepared, field)
        elif field in IDENTIFIER_FIELDS:
            slots = prepared.identifiers[field]
            prepared.cache[key] = shared_frequencies(slots.holders, slots.with_any)
        else:
            raise KeyError(f"No term-frequency value for field {field!r}")
    return prepared.cache[key]


def tf_frequencies(
    prepared: PreparedRecords, field: str, a: np.ndarray, b: np.ndarray
) -> tuple[np.ndarray, float]:
    """Frequency f of the agreed value for pairs that agree exactly on ``field``, and ū.

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
