"""Shared groundwork for the risk rules: aligned tables, integer codes and masked wording.

Every rule needs the same joins (record -> entity, identifier -> entity, record dates) and the
same way of naming an identifier in a sentence without exposing it. Doing that once here keeps
the rules short, makes sure no rule prints a full national ID, and turns the string columns
the rules group on (identifier keys, names) into integer codes once, so that a million records
and their identifiers are grouped with integer sorts rather than string hashing in every rule.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from resolve.errors import InputError

KIND_NAMES = {"phone": "Phone", "email": "Email", "national_id": "National ID", "address": "Address"}


@dataclass
class Inputs:
    """Tables the rules read, keyed by dense record position ``rec`` and entity code ``ent``.

    ``records``: rec, record_id, entity_id (as given), ent (int), given and family (int name
    codes from one shared code book, -1 when missing), birth (datetime64, NaT when unknown),
    birth_year (float), created_at (datetime64, NaT).
    ``ids``: row (position in ``values``), rec, ent, kid (int code of kind + key, the value
    that is shared), kind, status, reason, detail (categoricals), created_at.
    ``values``: the identifier values as text, for sentences only.
    ``links``/``groups``: as given, or None. ``today``: a normalised Timestamp.
    ``rules``: the whole rule table of the run (rules that depend on another rule's settings
    read it). ``cache``: work shared between rules within one run.
    """

    records: pd.DataFrame
    ids: pd.DataFrame
    values: pd.Series
    links: pd.DataFrame | None
    groups: pd.DataFrame | None
    today: pd.Timestamp
    rules: dict = field(default_factory=dict)
    cache: dict = field(default_factory=dict)

    def texts(self, rows) -> np.ndarray:
        """The identifier values at positions ``rows`` (of ``values``) as an object array, "" when missing."""
        return self.values.iloc[np.asarray(rows, dtype=np.int64)].to_numpy(dtype=object, na_value="")

    def describe(self, rows: pd.DataFrame) -> pd.Series:
        """Masked names of the identifiers on ``rows`` (a slice of ``ids``), aligned to them."""
        value = self.values.iloc[rows["row"].to_numpy()]
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
    s = frame[column].astype("string").str.strip()
    return s.mask(s == "")


def _category(frame: pd.DataFrame, column: str) -> pd.Categorical:
    """A low-cardinality text column (kind, status, reason, type) as a categorical, stripped
    and with blanks as missing, cleaned once per distinct value."""
    if column not in frame.columns:
        return pd.Categorical([pd.NA] * len(frame), categories=pd.Index([], dtype="string"))
    codes, uniques = pd.factorize(frame[column], use_na_sentinel=True)
    clean = pd.Series(uniques, dtype="string").str.strip()
    clean = clean.mask(clean == "")
    again, categories = pd.factorize(clean, use_na_sentinel=True)
    final = np.where(codes >= 0, np.append(again, -1)[codes], -1)
    return pd.Categorical.from_codes(final, categories=pd.Index(categories, dtype="string"))


def _check_columns(name: str, frame: pd.DataFrame, columns: tuple[str, ...]) -> None:
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise InputError(f"The {name} table has no '{missing[0]}' column; see docs/architecture.md.")


def prepare(people, identifiers, entities, links, groups, today) -> Inputs:
    """Check and align the input tables (contracts in docs/architecture.md)."""
    if people is None or identifiers is None or entities is None:
        raise InputError("Signals need the people, identifiers and entities tables; pass all three.")
    people = people if "rec" in people.columns else people.rename_axis("rec").reset_index()
    _check_columns("people", people, ("rec", "record_id"))
    _check_columns("identifiers", identifiers, ("rec", "kind", "key", "status"))
    _check_columns("entities", entities, ("rec", "entity_id"))

    rec = people["rec"].to_numpy(dtype=np.int64)
    ent_map = entities.drop_duplicates("rec").set_index("rec")["entity_id"]
    entity_id = ent_map.reindex(rec)
    codes = pd.factorize(entity_id, use_na_sentinel=True)[0].astype(np.int64)
    lonely = codes < 0  # a record with no entity stands alone
    codes[lonely] = codes.max(initial=-1) + 1 + np.arange(int(lonely.sum()))

    names = pd.factorize(pd.concat([_string(people, "given_key"), _string(people, "family_key")]))[0]
    birth = pd.to_datetime(_string(people, "birth_date"), errors="coerce", format="ISO8601")
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
        "birth": birth.astype("datetime64[ns]").to_numpy(),
        "birth_year": pd.to_numeric(year, errors="coerce").to_numpy(dtype=np.float64),
        "created_at": created.to_numpy(),
    })

    pos = pd.Index(rec).get_indexer(identifiers["rec"].to_numpy(dtype=np.int64))
    known = pos >= 0
    idf = identifiers[known]
    pos = pos[known]
    value = _string(idf, "value").reset_index(drop=True)
    key = _string(idf, "key").reset_index(drop=True)
    kind = _category(idf, "kind")
    key_code = pd.factorize(key.fillna(value))[0].astype(np.int64)  # the value shared
    wide = np.where(key_code >= 0, key_code * (len(kind.categories) + 1) + kind.codes, -1)
    kid = np.full(len(wide), -1, dtype=np.int64)
    kid[wide >= 0] = pd.factorize(wide[wide >= 0])[0]
    ids = pd.DataFrame({
        "row": np.arange(len(idf), dtype=np.int64),
        "rec": rec[pos],
        "ent": codes[pos],
        "kid": kid,
        "kind": kind,
        "status": _category(idf, "status"),
        "reason": _category(idf, "reason"),
        "detail": _category(idf, "detail"),
        "created_at": records["created_at"].to_numpy()[pos],
    })
    stamp = pd.Timestamp.today() if today is None else pd.Timestamp(today)
    if stamp.tzinfo is not None:
        stamp = stamp.tz_convert(None)
    return Inputs(records, ids, value.fillna(key), links, groups, stamp.normalize())


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
    """Pairs of distinct entities (ent_a < ent_b) that share a value of ``on``, with that value."""
    left = incidence[[on, "ent"]].drop_duplicates()
    pairs = left.merge(left, on=on, suffixes=("_a", "_b"))
    return pairs[pairs["ent_a"] < pairs["ent_b"]].reset_index(drop=True)


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
