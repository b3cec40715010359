"""Agreement levels for multi-valued identifiers: phones, emails and national IDs.

A record can carry several values of one kind (one per mapped column: mobile, home phone,
work phone). For each kind the usable identifier rows are laid out as a small matrix, one
row per record and one column per value slot, holding the integer code of each value (-1 for
an empty slot). The matrix is at most as wide as the number of mapped columns of that kind,
so "do the two records share any value" is a handful of vectorised integer comparisons over
the aligned pairs — no join and no loop per pair.

Placeholders and blanks are never compared: they count as missing.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from rapidfuzz.distance import OSA

from resolve.compare.align import CompareSettings, factorize_ints, pair_scores
from resolve.compare.levels import DIFFERENT, EMAIL, MISSING, NATIONAL_ID, PHONE
from resolve.errors import InputError

_IDENTIFIER_COLUMNS = ("rec", "kind", "key", "status", "detail")
ONE_EDIT_KEYS = ("pre", "suf", "pre1", "suf1")
Aligned = dict[str, np.ndarray]


@dataclass
class IdentifierSlots:
    """Usable values of one identifier kind laid out per record.

    ``slots[rec, j]`` is the code of the record's j-th distinct value (-1 when empty);
    ``keys[code]`` is the key (an Arrow string array); ``holders[code]`` how many records
    carry it; ``with_any`` how many records carry at least one value of this kind;
    ``detail[code]`` the detail text (phone number type, national ID type) of the first
    identifier row with that key (<NA> when none).
    """

    kind: str
    slots: np.ndarray
    keys: pa.Array
    holders: np.ndarray
    with_any: int
    detail: pd.Series
    _cache: dict[str, object] = field(default_factory=dict, repr=False)

    @classmethod
    def build(
        cls,
        identifiers: pd.DataFrame,
        kind: str,
        n: int,
        settings: CompareSettings,
    ) -> "IdentifierSlots":
        """Lay out the usable ``kind`` rows of the identifier table for ``n`` records."""
        ids = identifiers
        for col in _IDENTIFIER_COLUMNS:
            if col not in ids.columns:
                ids = ids.assign(**{col: pd.Series(pd.NA, index=ids.index, dtype="string")})
        # select this kind's rows first (a categorical compares without converting), so the
        # string work below touches a third of the table, not all of it
        of_kind = np.flatnonzero(
            pd.Series(ids["kind"]).eq(kind).to_numpy(dtype=bool, na_value=False))
        ids = ids[["rec", "key", "status", "detail"]].iloc[of_kind]
        key = ids["key"].astype("string").str.strip()
        usable = (
            (key != "").fillna(False)
            & ~ids["status"].isin(settings.unusable_status).fillna(False)
        ).to_numpy(dtype=bool)
        rec = pd.to_numeric(ids["rec"]).to_numpy()[usable].astype(np.int64)
        if rec.size and (rec.min() < 0 or rec.max() >= n):
            raise InputError(
                "The identifier table refers to records missing from the people table; "
                "pass the tables produced together by normalise_records."
            )
        codes, uniques = pd.factorize(key[usable])
        codes = codes.astype(np.int64)
        n_values = len(uniques)
        width_v = max(n_values, 1)

        # One entry per (record, value), sorted by record then code.
        combined = np.sort(rec * width_v + codes)
        if combined.size:
            combined = combined[np.concatenate(([True], combined[1:] != combined[:-1]))]
        rec_u = combined // width_v
        code_u = combined % width_v
        starts = np.searchsorted(rec_u, rec_u, side="left")
        position = np.arange(rec_u.size) - starts
        width = int(position.max()) + 1 if position.size else 1
        slots = np.full((n, width), -1, dtype=np.int32)
        slots[rec_u, position] = code_u

        order = np.argsort(codes, kind="stable")
        first = np.ones(order.size, dtype=bool)
        first[1:] = codes[order][1:] != codes[order][:-1]
        detail = ids["detail"].astype("string")[usable].iloc[order[first]].reset_index(drop=True)
        keys = pa.array(pd.array(uniques, dtype="string"), type=pa.large_string())
        if isinstance(keys, pa.ChunkedArray):
            keys = keys.combine_chunks()
        return cls(
            kind=kind,
            slots=slots,
            keys=keys,
            holders=np.bincount(code_u, minlength=n_values).astype(np.int64),
            with_any=int(np.count_nonzero(slots[:, 0] >= 0)),
            detail=detail,
        )

    @property
    def width(self) -> int:
        """Number of value slots per record."""
        return int(self.slots.shape[1])

    def key_of(self, code: int) -> str:
        """The key with this code."""
        return str(self.keys[int(code)].as_py())

    def columns(self, settings: CompareSettings) -> dict[str, np.ndarray]:
        """Per-record int32 columns for the record matrix: slots plus kind-specific extras.

        ``<kind>_<j>`` is the j-th value code; phones add ``phone_strength_<j>`` (the phone
        level a shared value gives), emails add ``email_local_<j>`` (code of the local part).
        """
        cols = {f"{self.kind}_{j}": self.slots[:, j] for j in range(self.width)}
        extra: dict[str, np.ndarray] = {}
        if self.kind == "phone":
            extra["phone_strength"] = phone_strength(self, settings)
        elif self.kind == "email":
            local = pc.replace_substring_regex(self.keys, "@[^@]*$", "")
            indices = local.dictionary_encode().indices.to_numpy(zero_copy_only=False)
            extra["email_local"] = np.asarray(indices, dtype=np.int32)
        elif self.kind == "national_id":
            keys = self.one_edit_keys()
            extra.update({f"national_id_{k}": keys[k] for k in ONE_EDIT_KEYS})
        for name, table in extra.items():
            mapped = _mapped_slots(self.slots, table)
            cols.update({f"{name}_{j}": mapped[:, j] for j in range(self.width)})
        return cols

    def one_edit_keys(self) -> dict[str, np.ndarray]:
        """Keys for the national-ID one-edit test (computed once per layout)."""
        if "one_edit" not in self._cache:
            self._cache["one_edit"] = one_edit_keys(self.keys)
        return self._cache["one_edit"]  # type: ignore[return-value]

    def shared(
        self, A: Aligned, B: Aligned, strength: str | None = None
    ) -> tuple[np.ndarray, np.ndarray]:
        """For aligned pairs: the best strength of a shared value and the rarest shared code.

        ``strength`` names per-slot strength columns (``phone_strength``); without it every
        shared value has strength 1. The first result is 0 where the pair shares nothing.
        The second is -1 where nothing is shared, else the code of the shared value held by
        the fewest records (ties: lowest code).
        """
        size = A[f"{self.kind}_0"].shape[0]
        best = np.zeros(size, dtype=np.int8)
        rarest = np.full(size, -1, dtype=np.int64)
        rarest_count = np.full(size, np.iinfo(np.int64).max, dtype=np.int64)
        for i in range(self.width):
            ai = A[f"{self.kind}_{i}"]
            for j in range(self.width):
                hit = np.flatnonzero((ai >= 0) & (ai == B[f"{self.kind}_{j}"]))
                if not hit.size:
                    continue
                code = ai[hit].astype(np.int64)
                level = A[f"{strength}_{i}"][hit] if strength else 1
                best[hit] = np.maximum(best[hit], level)
                count = self.holders[code]
                better = (count < rarest_count[hit]) | (
                    (count == rarest_count[hit]) & (code < rarest[hit])
                )
                rarest[hit[better]] = code[better]
                rarest_count[hit[better]] = count[better]
        return best, rarest

    def both_present(self, A: Aligned, B: Aligned) -> np.ndarray:
        """Whether both records of each aligned pair carry a usable value."""
        return (A[f"{self.kind}_0"] >= 0) & (B[f"{self.kind}_0"] >= 0)


def _mapped_slots(slots: np.ndarray, table: np.ndarray) -> np.ndarray:
    """Replace every code in ``slots`` by ``table[code]``, keeping -1 for empty slots."""
    if table.size == 0:
        return slots.copy()
    return np.where(slots >= 0, table[np.maximum(slots, 0)], -1).astype(np.int32)


def phone_strength(slots: IdentifierSlots, settings: CompareSettings) -> np.ndarray:
    """Phone level a shared number gives: landline or service numbers are weaker evidence."""
    codes, distinct = pd.factorize(slots.detail)
    names = pd.Series(distinct, dtype="string").str.lower()
    names = names.str.replace(r"[\s\-]+", "_", regex=True)
    weak = np.append(names.isin(settings.weak_phone_types).to_numpy(dtype=bool), False)
    return np.where(
        weak[codes], PHONE.code_of("shared_fixed"), PHONE.code_of("shared_mobile")
    ).astype(np.int32)


def compare_phones(slots: IdentifierSlots, A: Aligned, B: Aligned) -> np.ndarray:
    """Phone levels: shared mobile > shared landline > different > missing."""
    best, _ = slots.shared(A, B, "phone_strength")
    out = np.where(slots.both_present(A, B), DIFFERENT, MISSING).astype(np.int8)
    return np.where(best > 0, best, out).astype(np.int8)


def compare_emails(slots: IdentifierSlots, A: Aligned, B: Aligned) -> np.ndarray:
    """Email levels: shared mailbox > same local part elsewhere > different > missing."""
    best, _ = slots.shared(A, B)
    both = slots.both_present(A, B)
    same_local = np.zeros(both.shape[0], dtype=bool)
    for i in range(slots.width):
        li = A[f"email_local_{i}"]
        for j in range(slots.width):
            same_local |= (li >= 0) & (li == B[f"email_local_{j}"])
    out = np.where(both, DIFFERENT, MISSING).astype(np.int8)
    out[both & same_local] = EMAIL.code_of("same_local_part")
    out[best > 0] = EMAIL.code_of("shared")
    return out


def one_edit_keys(keys: pa.Array) -> dict[str, np.ndarray]:
    """Compact IDs and prefix/suffix keys of each distinct national ID key (for `one_edit`).

    Two IDs of the same type one edit apart have lengths L and L or L+1, and the first and
    the last k = (L - 1) // 2 characters cannot both be touched by one edit, so they always
    share one of them. Each ID gets integer keys for (type, L, first k characters) and
    (type, L, last k characters) for its own length L (``pre``, ``suf``) and for L - 1
    (``pre1``, ``suf1``: used against an ID one shorter). Equal keys are a necessary
    condition for being one edit apart.
    """
    has_type = pc.match_substring(keys, ":")
    id_type = pc.if_else(has_type, pc.replace_substring_regex(keys, ":.*$", ""), "")
    digits = pc.replace_substring_regex(keys, "^[^:]*:", "")
    length = np.asarray(pc.utf8_length(digits).to_numpy(zero_copy_only=False), dtype=np.int64)
    type_idx = id_type.dictionary_encode().indices.to_numpy(zero_copy_only=False)
    type_code = np.asarray(type_idx, dtype=np.int64)
    names = ("pre", "suf", "pre1", "suf1")
    out: dict[str, np.ndarray] = {
        "digits": np.asarray(digits.to_numpy(zero_copy_only=False), dtype=object)
    }
    out.update({name: np.zeros(length.size, dtype=np.int64) for name in names})
    chunks: list[pa.Array] = []
    where: list[tuple[str, np.ndarray]] = []
    for name in names:
        base = length if name in ("pre", "suf") else length - 1
        k = np.maximum((base - 1) // 2, 0)
        for size in np.unique(k) if k.size else []:
            rows = np.flatnonzero(k == size)
            sub = digits.take(pa.array(rows))
            if name.startswith("pre") or not size:
                chunks.append(pc.utf8_slice_codeunits(sub, 0, int(size)))
            else:
                chunks.append(pc.utf8_slice_codeunits(sub, -int(size)))
            where.append((name, rows))
    if not chunks:
        return out
    encoded = pa.chunked_array(chunks).combine_chunks().dictionary_encode()
    piece_codes = np.asarray(encoded.indices.to_numpy(zero_copy_only=False), dtype=np.int64)
    n_pieces = max(len(encoded.dictionary), 1)
    span = int(length.max(initial=0)) + 2
    offset = 0
    for name, rows in where:
        base = length[rows] if name in ("pre", "suf") else length[rows] - 1
        piece = piece_codes[offset : offset + rows.size]
        offset += rows.size
        out[name][rows] = (type_code[rows] * span + base + 1) * n_pieces + piece
    if max(int(out[name].max(initial=0)) for name in names) < np.iinfo(np.int32).max:
        for name in names:
            out[name] = out[name].astype(np.int32)
        return out
    dense, _ = factorize_ints(np.concatenate([out[name] for name in names]))
    for i, name in enumerate(names):
        out[name] = dense[i * length.size : (i + 1) * length.size].astype(np.int32)
    return out


def may_be_one_edit(A: Aligned, B: Aligned, i: int, j: int) -> np.ndarray:
    """Necessary condition for OSA distance <= 1 between ID slot ``i`` of A and ``j`` of B."""
    pre_a, pre_b = A[f"national_id_pre_{i}"], B[f"national_id_pre_{j}"]
    suf_a, suf_b = A[f"national_id_suf_{i}"], B[f"national_id_suf_{j}"]
    maybe = (pre_a == pre_b) | (suf_a == suf_b)
    maybe |= (A[f"national_id_pre1_{i}"] == pre_b) | (A[f"national_id_suf1_{i}"] == suf_b)
    maybe |= (pre_a == B[f"national_id_pre1_{j}"]) | (suf_a == B[f"national_id_suf1_{j}"])
    return maybe


def compare_national_ids(slots: IdentifierSlots, A: Aligned, B: Aligned) -> np.ndarray:
    """National-ID levels: exact > one typing slip (same ID type) > different > missing.

    Keys look like ``<id_type>:<compact id>``; the one-slip test is optimal string alignment
    distance 1 between the compact IDs of the same type (one character changed, dropped or
    added, or two neighbours swapped). A cheap prefix/suffix test rules out most pairs first.
    """
    best, _ = slots.shared(A, B)
    both = slots.both_present(A, B)
    out = np.where(both, DIFFERENT, MISSING).astype(np.int8)
    out[best > 0] = NATIONAL_ID.code_of("exact")
    open_rows = both & (best == 0)
    if not open_rows.any():
        return out
    digits = slots.one_edit_keys()["digits"]
    slip = np.zeros(out.shape[0], dtype=bool)
    for i in range(slots.width):
        x = A[f"national_id_{i}"]
        for j in range(slots.width):
            y = B[f"national_id_{j}"]
            rows = open_rows & (x >= 0) & (y >= 0) & ~slip
            rows = np.flatnonzero(rows & may_be_one_edit(A, B, i, j))
            if rows.size:
                dist = pair_scores(x[rows], y[rows], digits, OSA.distance, dtype=np.int32)
                slip[rows[dist == 1]] = True
    out[slip] = NATIONAL_ID.code_of("one_edit")
    return out
