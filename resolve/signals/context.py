"""Shared groundwork for the risk rules: aligned tables, integer codes and masked wording.

Every rule needs the same joins (record -> entity, identifier -> entity, record dates) and the
same way of naming an identifier in a sentence without exposing it. Doing that once here keeps
the rules short, makes sure no rule prints a full national ID, and turns the string columns
the rules group on (identifier keys, names) into integer codes once, so that a million records
and their identifiers are grouped with integer sorts rather than string hashing in every rule.
The identifier codes start from those the cluster stage made (`resolve.signals.codebook`),
and identifier texts are cleaned only for the rows a sentence names.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from resolve.clusters.codes import isin, take_text
from resolve.errors import InputError
from resolve.signals.codebook import category, clean_text, factorized, shared_value_codes

KIND_NAMES = {"phone": "Phone", "email": "Email", "national_id": "National ID", "address": "Address"}


@dataclass
class Inputs:
    """Tables the rules read, keyed by dense record position ``rec`` and entity code ``ent``.

    ``records``: rec, record_id, entity_id (as given), ent (int), given and family (int name
    codes from one shared code book, -1 when missing), birth (datetime64, NaT when unknown),
    birth_year (float), created_at (datetime64, NaT).
    ``ids``: row (position in ``values``), rec, ent, kid (int code of kind + key, the value
    that is shared), kind, status, reason, detail (categoricals), created_at.
    ``source``: the identifier rows ``ids`` was built from (``row`` is a position in it);
    ``values``, their texts for sentences, is made from it when first read, and `texts` and
    `describe` clean only the rows they are asked for.
    ``links``/``groups``: as given, or None. ``today``: a normalised Timestamp.
    ``rules``: the whole rule table of the run (rules that depend on another rule's settings
    read it). ``cache``: work shared between rules within one run.
    """

    records: pd.DataFrame
    ids: pd.DataFrame
    source: pd.DataFrame
    links: pd.DataFrame | None
    groups: pd.DataFrame | None
    today: pd.Timestamp
    rules: dict = field(default_factory=dict)
    cache: dict = field(default_factory=dict)

    @property
    def values(self) -> pd.Series:
        """The identifier values as text (the key when there is no value), by ``row``."""
        if "values" not in self.cache:
            self.cache["values"] = self._text(np.arange(len(self.source)))
        return self.cache["values"]

    def _text(self, rows: np.ndarray) -> pd.Series:
        part = pd.DataFrame({c: take_text(self.source[c], rows) for c in ("value", "key")
                             if c in self.source.columns}, index=pd.RangeIndex(len(rows)))
        return _string(part, "value").fillna(_string(part, "key")).set_axis(rows)

    def texts(self, rows) -> np.ndarray:
        """The identifier values at positions ``rows`` (of ``values``) as an object array, "" when missing."""
        return self._text(np.asarray(rows, dtype=np.int64)).to_numpy(dtype=object, na_value="")

    def describe(self, rows: pd.DataFrame) -> pd.Series:
        """Masked names of the identifiers on ``rows`` (a slice of ``ids``), aligned to them."""
        value = self._text(rows["row"].to_numpy(dtype=np.int64))
        value.index = rows.index
        return describe(rows["kind"], value)


def _naive(values: pd.Series) -> pd.Series:
    out = pd.to_datetime(values, errors="coerce")
    if getattr(out.dt, "tz", None) is not None:
        out = out.dt.tz_convert(None)
    return out.astype("datetime64[ns]")


def _string(frame: pd.DataFrame, column: str) -> pd.Series:
    if column not in frame.columns:
        return pd.Series(pd.NA, index=frame.index, dtype="string")
    return clean_text(frame[column])


def _dates(text: pd.Series) -> pd.Series:
    """ISO date text parsed once per distinct value (NaT when unreadable)."""
    codes, uniques = pd.factorize(text)
    parsed = pd.to_datetime(pd.Series(uniques, dtype="string"), errors="coerce", format="ISO8601")
    parsed = np.append(parsed.astype("datetime64[ns]").to_numpy(), np.datetime64("NaT", "ns"))
    return pd.Series(parsed[codes], index=text.index)


def _check_columns(name: str, frame: pd.DataFrame, columns: tuple[str, ...]) -> None:
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise InputError(f"The {name} table has no '{missing[0]}' column; see docs/architecture.md.")


def _entity_ids(entities: pd.DataFrame, rec: np.ndarray) -> tuple[pd.Series, np.ndarray]:
    """The entity ID of each record (<NA> when it has none) and its entity code, by factorising
    the IDs in record order (the cluster stage's codes when the tables line up)."""
    n = len(rec)
    given = entities["rec"].to_numpy()
    if np.array_equal(rec, np.arange(n)) and np.array_equal(given, np.arange(n)):
        entity_id = entities["entity_id"].reset_index(drop=True)
        codes = factorized(entities["entity_id"])[0]
    else:
        ent_map = entities.drop_duplicates("rec").set_index("rec")["entity_id"]
        entity_id = ent_map.reindex(rec).reset_index(drop=True)
        codes = pd.factorize(entity_id, use_na_sentinel=True)[0]
    return entity_id, np.array(codes, dtype=np.int64)


def _identifier_rows(identifiers: pd.DataFrame, rec: np.ndarray) -> np.ndarray:
    """Position in ``rec`` of each identifier row's record (-1 when not in the people table)."""
    ident = identifiers["rec"].to_numpy(dtype=np.int64)
    if np.array_equal(rec, np.arange(len(rec))):
        return np.where((ident >= 0) & (ident < len(rec)), ident, -1)
    return pd.Index(rec).get_indexer(ident)


def prepare(people, identifiers, entities, links, groups, today) -> Inputs:
    """Check and align the input tables (contracts in docs/architecture.md)."""
    if people is None or identifiers is None or entities is None:
        raise InputError("Signals need the people, identifiers and entities tables; pass all three.")
    people = people if "rec" in people.columns else people.rename_axis("rec").reset_index()
    _check_columns("people", people, ("rec", "record_id"))
    _check_columns("identifiers", identifiers, ("rec", "kind", "key", "status"))
    _check_columns("entities", entities, ("rec", "entity_id"))

    rec = people["rec"].to_numpy(dtype=np.int64)
    entity_id, codes = _entity_ids(entities, rec)
    lonely = codes < 0  # a record with no entity stands alone
    codes[lonely] = codes.max(initial=-1) + 1 + np.arange(int(lonely.sum()))

    names = pd.factorize(pd.concat([_string(people, "given_key"), _string(people, "family_key")]))[0]
    birth = _dates(_string(people, "birth_date"))
    year = people["birth_year"] if "birth_year" in people.columns else pd.Series(np.nan, index=people.index)
    created = _naive(people["created_at"]) if "created_at" in people.columns else pd.Series(
        pd.NaT, index=people.index, dtype="datetime64[ns]"
    )
    records = pd.DataFrame({
        "rec": rec,
        "record_id": _string(people, "record_id").array,
        "entity_id": entity_id.to_numpy(),
        "ent": codes,
        "given": names[: len(people)].astype(np.int64),
        "family": names[len(people):].astype(np.int64),
        "birth": birth.to_numpy(),
        "birth_year": pd.to_numeric(year, errors="coerce").to_numpy(dtype=np.float64),
        "created_at": created.to_numpy(),
    }, copy=False)  # fresh arrays: no need to copy them into one block

    pos = _identifier_rows(identifiers, rec)
    known = pos >= 0
    idf = identifiers if known.all() else identifiers[known]  # untouched columns keep their codes
    pos = pos[known]
    kind = category(idf, "kind")
    ids = pd.DataFrame({
        "row": np.arange(len(idf), dtype=np.int64),
        "rec": rec[pos],
        "ent": codes[pos],
        "kid": shared_value_codes(idf, kind),
        "kind": kind,
        "status": category(idf, "status"),
        "reason": category(idf, "reason"),
        "detail": category(idf, "detail"),
        "created_at": records["created_at"].to_numpy()[pos],
    }, copy=False)
    stamp = pd.Timestamp.today() if today is None else pd.Timestamp(today)
    if stamp.tzinfo is not None:
        stamp = stamp.tz_convert(None)
    return Inputs(records, ids, idf, links, groups, stamp.normalize())


def describe(kind: pd.Series, value: pd.Series) -> pd.Series:
    """Name identifiers for a sentence without exposing them.

    National IDs and phones show their last four characters only ("National ID ending 4399");
    e-mail addresses show the first character of the mailbox and the domain ("Email
    j***@example.com"); addresses show house, street, unit and postcode ("Address 12 elm st,
    10001"), which a reviewer needs to judge whether people live together. Showing only the last four digits of a
    national ID is common practice in KYC tools.
    """
    kind = kind.astype("string")
    value = value.astype("string").fillna("")
    label = kind.map(KIND_NAMES).astype("string").fillna(kind.str.replace("_", " ").str.capitalize())
    compact = value.str.replace(r"^[a-z_]+:", "", regex=True).str.replace(r"[^0-9A-Za-z]", "", regex=True)
    tail = label + " ending " + compact.str[-4:]
    parts = value.str.extract(r"^(?P<local>[^@]*)@(?P<domain>.*)$")
    email = label + " " + parts["local"].str[:1] + "***@" + parts["domain"]
    out = tail.where(kind.isin(["national_id", "phone"]), label + " " + value)
    out = out.where(kind != "address", label + " " + readable_address(value))
    return out.where(kind != "email", email.fillna(label + " (unreadable)"))


def readable_address(value: pd.Series) -> pd.Series:
    """An address key (``house|street|unit|postcode|country``) as text: "12 elm st, unit 4, 10001".

    Values not in that shape are returned as they are.
    """
    value = value.astype("string")
    parts = value.str.split("|", n=4, expand=True, regex=False)
    if parts.shape[1] < 5:
        return value
    part = [parts[i].fillna("").str.strip() for i in range(5)]
    street = (part[0] + " " + part[1]).str.strip()
    unit = pd.Series(np.where(part[2] != "", ", unit " + part[2], ""), index=value.index, dtype="string")
    post = pd.Series(np.where(part[3] != "", ", " + part[3], ""), index=value.index, dtype="string")
    text = (street + unit + post).str.strip(", ")
    shaped = value.str.count(r"\|").eq(4).fillna(False)
    return text.where(shaped, value)


def entities_per_value(rows: pd.DataFrame) -> np.ndarray:
    """For each row of an ``ids`` slice, how many distinct entities in the slice carry its value."""
    kid = rows["kid"].to_numpy(dtype=np.int64)
    ent = rows["ent"].to_numpy(dtype=np.int64)
    if kid.size == 0:
        return np.zeros(0, dtype=np.int64)
    width = np.int64(ent.max() + 1)
    both = np.sort(kid * width + ent)  # a sort: numpy's hash-based unique is slow on such codes
    distinct = both[np.r_[True, both[1:] != both[:-1]]]
    counts = np.bincount(distinct // width, minlength=int(kid.max()) + 1)
    return counts[kid]


def distinct_sorted(values: np.ndarray) -> np.ndarray:
    """The distinct values, sorted (`np.unique` by a sort, quicker than its hashing here)."""
    values = np.sort(np.asarray(values))
    return values[np.r_[True, values[1:] != values[:-1]]] if len(values) else values


def isin_ints(values: np.ndarray, wanted: np.ndarray) -> np.ndarray:
    """``np.isin`` by a lookup table when both sides are integers (codes), else as usual."""
    values, wanted = np.asarray(values), np.asarray(wanted)
    table = values.dtype.kind in "iu" and wanted.dtype.kind in "iu"
    return np.isin(values, wanted, kind="table" if table else None)


def rows_where(inp: Inputs, kinds=None, statuses=None) -> np.ndarray:
    """Positions in ``inp.ids`` of the rows with a shared value (``kid`` >= 0), of a kind in
    ``kinds`` and a status in ``statuses`` (None: any)."""
    ids = inp.ids
    mask = ids["kid"].to_numpy() >= 0
    if kinds is not None:
        mask &= isin(ids["kind"], kinds)
    if statuses is not None:
        mask &= isin(ids["status"], statuses)
    return np.flatnonzero(mask)


def entities_per_row(inp: Inputs, positions: np.ndarray) -> np.ndarray:
    """`entities_per_value` for the ``inp.ids`` rows at ``positions`` (a subset with every
    ``kid`` >= 0). The rows whose value some other row also holds are sorted by (value,
    entity) once per run, so each call is a pass over that order instead of a sort; a value
    on one row only is held by one entity."""
    ids = inp.ids
    if "value_entity_order" not in inp.cache:
        kid = ids["kid"].to_numpy(dtype=np.int64)
        ent = ids["ent"].to_numpy(dtype=np.int64)
        rows = np.flatnonzero(kid >= 0)
        multi = rows[np.bincount(kid[rows])[kid[rows]] >= 2] if len(rows) else rows
        width = np.int64(ent.max(initial=0) + 1)
        key = kid[multi] * width + ent[multi]
        order = np.argsort(key, kind="stable")
        slot = np.full(len(ids), -1, dtype=np.int64)  # each sharing row's place in that order
        slot[multi[order]] = np.arange(len(order))
        inp.cache["value_entity_order"] = (key[order], slot, width)
    key, slot, width = inp.cache["value_entity_order"]
    positions = np.asarray(positions, dtype=np.int64)
    out = np.ones(len(positions), dtype=np.int64)
    at = slot[positions]
    sharing = at >= 0
    if not sharing.any():
        return out
    chosen = np.zeros(len(key), dtype=bool)
    chosen[at[sharing]] = True
    both = key[chosen]  # sorted (value, entity) keys of the chosen rows that share
    value = both // width
    new_value = np.r_[True, value[1:] != value[:-1]]
    new_pair = np.r_[True, both[1:] != both[:-1]]
    run = np.cumsum(new_value) - 1
    per_value = np.bincount(run, weights=new_pair).astype(np.int64)  # distinct entities per value
    place = np.cumsum(chosen) - 1  # a chosen row's place among the chosen
    out[sharing] = per_value[run[place[at[sharing]]]]
    return out


def plural(n, singular: str, many: str) -> pd.Series:
    """``"1 entity"`` / ``"3 entities"`` for each count."""
    n = pd.Series(n).astype("int64")
    words = np.where(n.to_numpy() == 1, singular, many)
    return n.astype("string") + " " + pd.Series(words, index=n.index, dtype="string")


def number_groups(keys: pd.Series, prefix: str) -> pd.Series:
    """Run-local group labels (``prefix-00001``) numbered by the sorted order of ``keys``."""
    codes, _ = pd.factorize(keys, sort=True)
    return prefix + "-" + pd.Series(codes + 1, index=keys.index).astype("string").str.zfill(5)


def entity_pairs(incidence: pd.DataFrame, on: str = "kid") -> pd.DataFrame:
    """Pairs of distinct entities (ent_a < ent_b) that share a value of ``on``, with that value.

    The rows come in the order a self-merge on ``on`` gives them (each holder in order, then
    its partners in order), built with numpy: the holders of each value are listed once by a
    stable sort and every holder is paired with its value's list.
    """
    left = incidence[[on, "ent"]].drop_duplicates()
    value, ent = left[on].to_numpy(), left["ent"].to_numpy()
    if value.dtype.kind not in "iu" or ent.dtype.kind not in "iu":
        pairs = left.merge(left, on=on, suffixes=("_a", "_b"))
        return pairs[pairs["ent_a"] < pairs["ent_b"]].reset_index(drop=True)
    order = np.argsort(value, kind="stable")
    ordered = value[order]
    starts = np.flatnonzero(np.r_[True, ordered[1:] != ordered[:-1]]) if len(value) else order
    sizes = np.diff(np.r_[starts, len(value)])
    group = np.empty(len(value), dtype=np.int64)
    group[order] = np.repeat(np.arange(len(starts)), sizes)
    count = sizes[group]  # partners of each holder, itself included
    a = np.repeat(np.arange(len(value)), count)
    b = order[np.repeat(starts[group], count) + np.arange(len(a)) - np.repeat(np.cumsum(count) - count, count)]
    keep = ent[a] < ent[b]
    return pd.DataFrame({on: value[a[keep]], "ent_a": ent[a[keep]], "ent_b": ent[b[keep]]})


def hits(rec, reason, scope: str, group_id=None) -> pd.DataFrame:
    """The frame every rule returns: rec, reason, scope, group_id (blank when not a group)."""
    rec = np.asarray(rec, dtype=np.int64)
    reason = pd.Series(reason, dtype="string").to_numpy()
    group = (
        pd.Series(pd.NA, index=range(len(rec)), dtype="string")
        if group_id is None
        else pd.Series(group_id, dtype="string").reset_index(drop=True)
    )
    return pd.DataFrame({"rec": rec, "reason": reason, "scope": scope, "group_id": group.to_numpy()})
