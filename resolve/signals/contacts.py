"""Contact values shared between entities, and whether a family or one person explains it.

Several rules ask the same question a fraud analyst asks first: do these two people share a
phone or an email for a reason a household explains, or not? Families share a family name;
one person whose records were not merged shares a given name and a birth date; people at one
home are a household. Identities drawn from a fabricated pool share mobiles and mailboxes
across people with different family names, often behind one mail-drop address and opened
within a few weeks, which is why a shared address explains nothing for entities opened
together.

This module answers that once per run (cached on the `Inputs`) for the rules that need it:
`ring_pattern` builds its sets from the unexplained pairs, and the shared national ID rule
uses them to tell a likely rightful holder from the other carriers. Everything works on
integer entity codes with merges and sorts.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from resolve.signals.context import Inputs, distinct_sorted, entities_per_row, entity_pairs, rows_where


def contact_pairs(inp: Inputs, kinds, statuses, max_per_value: int) -> pd.DataFrame:
    """Entity pairs sharing a value: ``kid``, ``kind``, ``ent_a`` < ``ent_b``.

    Values of ``kinds`` with a status in ``statuses``, held by two to ``max_per_value``
    distinct entities (busier values are hubs, reported by `identifier_hub`).
    """
    at = rows_where(inp, kinds, statuses)
    size = entities_per_row(inp, at)
    rows = inp.ids[["kid", "kind", "ent"]].iloc[at[(size >= 2) & (size <= max_per_value)]]
    pairs = entity_pairs(rows)
    kind = rows[["kid", "kind"]].drop_duplicates("kid")
    return pairs.merge(kind.assign(kind=kind["kind"].astype("string")), on="kid")


def same_value(pairs: pd.DataFrame, holders: pd.DataFrame) -> np.ndarray:
    """For each entity pair, whether both entities hold a common value in ``holders`` (ent, v).

    Works on sorted integer keys: each pair's first entity's values are listed (a CSR walk
    over the holders sorted by entity) and looked up among the second entity's.
    """
    if len(pairs) == 0 or len(holders) == 0:
        return np.zeros(len(pairs), dtype=bool)
    a = pairs["ent_a"].to_numpy(dtype=np.int64)
    b = pairs["ent_b"].to_numpy(dtype=np.int64)
    ent = holders["ent"].to_numpy(dtype=np.int64)
    v = holders["v"].to_numpy(dtype=np.int64)
    n = int(max(ent.max(), a.max(), b.max())) + 1
    involved = np.zeros(n, dtype=bool)
    involved[a] = True
    involved[b] = True
    keep = involved[ent]
    ent, v = ent[keep], v[keep]
    if len(v) and (int(v.max()) - int(v.min()) + 1) * n >= 2**62:  # keys would overflow: renumber
        v = pd.factorize(v)[0].astype(np.int64)
    v_min = int(v.min(initial=0))
    width = np.int64(int(v.max(initial=0)) - v_min + 1)
    held = distinct_sorted(ent * width + (v - v_min))  # sorted (entity, value) keys, once each
    owner = held // width
    start = np.searchsorted(owner, np.arange(n + 1))
    count = start[a + 1] - start[a]
    total = int(count.sum())
    hit = np.zeros(len(a), dtype=bool)
    if total == 0:
        return hit
    pair = np.repeat(np.arange(len(a)), count)
    at = np.repeat(start[a], count) + np.arange(total) - np.repeat(np.cumsum(count) - count, count)
    probe = b[pair] * width + held[at] % width
    where = np.minimum(np.searchsorted(held, probe), len(held) - 1)
    found = held[where] == probe
    hit[pair[found]] = True
    return hit


def _household_linked(inp: Inputs, pairs: pd.DataFrame) -> np.ndarray:
    """For each entity pair, whether a household link joins any of their records."""
    links = inp.links
    if links is None or len(links) == 0 or "link_type" not in links.columns or len(pairs) == 0:
        return np.zeros(len(pairs), dtype=bool)
    home = links[links["link_type"] == "household"]
    rec_ent = pd.Series(inp.records["ent"].to_numpy(), index=inp.records["rec"].to_numpy())
    a = rec_ent.reindex(home["rec_a"].to_numpy()).to_numpy()
    b = rec_ent.reindex(home["rec_b"].to_numpy()).to_numpy()
    linked = pd.DataFrame({"ent_a": np.fmin(a, b), "ent_b": np.fmax(a, b)}).dropna().astype(np.int64)
    linked = linked.drop_duplicates().assign(hit=True)
    return pairs[["ent_a", "ent_b"]].merge(linked, on=["ent_a", "ent_b"], how="left")["hit"].fillna(
        False).to_numpy(dtype=bool)


def _values_of(inp: Inputs, kind_mask: np.ndarray, max_per_value: int) -> pd.DataFrame:
    """(ent, v) for valid values of the rows in ``kind_mask`` held by at most ``max_per_value`` entities."""
    at = rows_where(inp, statuses=["valid"])
    at = at[np.asarray(kind_mask, dtype=bool)[at]]
    at = at[entities_per_row(inp, at) <= max_per_value]
    return inp.ids[["ent", "kid"]].iloc[at].rename(columns={"kid": "v"})


def first_opened(inp: Inputs) -> np.ndarray:
    """Creation time of each entity's earliest record (NaT when no record has one), by ``ent``.
    Cached on ``inp``."""
    if "first_opened" not in inp.cache:
        r = inp.records
        n = int(r["ent"].max()) + 1 if len(r) else 0
        first = r.groupby("ent")["created_at"].min().reindex(range(n))
        inp.cache["first_opened"] = first.to_numpy(dtype="datetime64[ns]")
    return inp.cache["first_opened"]


def opened_together(inp: Inputs, pairs: pd.DataFrame, days: int) -> np.ndarray:
    """For each entity pair, whether their first records were created within ``days`` days.

    Pairs with an unknown creation date are never "together"; ``days`` <= 0 means never.
    """
    if days <= 0 or len(pairs) == 0:
        return np.zeros(len(pairs), dtype=bool)
    first = first_opened(inp)
    a = first[pairs["ent_a"].to_numpy()]
    b = first[pairs["ent_b"].to_numpy()]
    known = ~np.isnat(a) & ~np.isnat(b)
    gap = np.abs(a - b)
    return known & (gap <= np.timedelta64(days, "D"))


def explained(inp: Inputs, pairs: pd.DataFrame, params: dict) -> np.ndarray:
    """For each entity pair, whether a household or one unmerged person explains their sharing.

    Always: the two entities have a family name in common (on any of their records). Then,
    each switched by a parameter: ``same_person_explains`` (a given name and a birth date in
    common: most likely one person whose records were not merged),
    ``shared_address_explains`` (an address in common, unless the two entities' first records
    were created within ``opened_together_days`` of each other: people with different
    family names who share an address and opened accounts together is how a mail-drop address
    used by a ring looks), ``address_and_landline_explain`` (an address and a landline, a
    phone whose type is in ``landline_types``, both in common: one home, whenever opened) and
    ``household_links_explain`` (a household link between their records; the link stage
    calls a shared address a household whatever the dates, so this is off by default).
    """
    r = inp.records
    family = r.loc[r["family"] >= 0, ["ent", "family"]].rename(columns={"family": "v"})
    out = same_value(pairs, family)
    if params.get("same_person_explains", True):
        known = (r["given"] >= 0) & r["birth"].notna()
        days = r.loc[known, "birth"].to_numpy().astype("datetime64[D]").astype(np.int64)
        person = r.loc[known, ["ent"]].assign(v=r.loc[known, "given"].to_numpy() * 1_000_000 + days)
        out = out | same_value(pairs, person)
    limit = int(params.get("max_entities_per_value", 10))
    address = _values_of(inp, (inp.ids["kind"] == "address").to_numpy(dtype=bool), limit)
    at_home = same_value(pairs, address)
    if params.get("shared_address_explains", True):
        out = out | (at_home & ~opened_together(inp, pairs, int(params.get("opened_together_days", 0))))
    if params.get("address_and_landline_explain", True):
        landline = ((inp.ids["kind"] == "phone") & inp.ids["detail"].isin(params.get("landline_types", ["fixed_line"]))
                    ).to_numpy(dtype=bool)
        out = out | (at_home & same_value(pairs, _values_of(inp, landline, limit)))
    if params.get("household_links_explain", False):
        out = out | _household_linked(inp, pairs)
    return out


def unexplained_pairs(inp: Inputs, params: dict) -> pd.DataFrame:
    """Pairs of entities sharing a contact value with no household or same-person explanation.

    Columns ``kid``, ``kind``, ``ent_a``, ``ent_b`` (one row per shared value). ``params``
    holds ``kinds``, ``statuses``, ``max_entities_per_value`` and the switches of
    `explained`. The answer is cached on ``inp`` per distinct set of parameters.
    """
    key = ("unexplained_pairs", repr(sorted((k, repr(v)) for k, v in params.items())))
    if key not in inp.cache:
        pairs = contact_pairs(inp, params["kinds"], params["statuses"], int(params["max_entities_per_value"]))
        distinct = pairs[["ent_a", "ent_b"]].drop_duplicates()
        ok = explained(inp, distinct, params)
        keep = distinct[~ok]
        inp.cache[key] = pairs.merge(keep, on=["ent_a", "ent_b"])
    return inp.cache[key]


def main_family(inp: Inputs) -> pd.Series:
    """The family name code of each entity's earliest record that has one (-1 when none),
    indexed by ``ent``. Cached on ``inp``."""
    if "main_family" not in inp.cache:
        r = inp.records
        named = r[["ent", "family", "created_at", "rec"]][(r["family"] >= 0).to_numpy()]
        named = named.sort_values(["ent", "created_at", "rec"], kind="stable", na_position="last")
        first = named.drop_duplicates("ent").set_index("ent")["family"]
        n = int(r["ent"].max()) + 1 if len(r) else 0
        inp.cache["main_family"] = first.reindex(range(n), fill_value=-1)
    return inp.cache["main_family"]


def ring_sets(inp: Inputs, params: dict) -> tuple[pd.DataFrame, pd.Series, pd.Series, pd.DataFrame]:
    """Sets of entities that make a ring pattern, with the ``ring_pattern`` parameters.

    Entities are joined when they share a value of ``kinds`` (phone, email, address; values
    held by more than ``max_entities_per_value`` entities are hubs and left out) and nothing
    explains the join (`explained`; a shared address joins only entities opened together).
    Each connected set of joined entities is a ring when it has ``min_entities`` or more
    entities with ``min_family_names`` or more different family names (counted once per
    entity, from its earliest named record) and ``min_shared_values`` or more values of
    ``counted_kinds`` (phones and emails: an address alone is too often a building) shared
    across its unexplained joins.

    Returns ``members`` (set, ent) of the rings, and per ring set: ``size`` (entities),
    ``names`` (different family names) and ``per_kind`` (shared values per kind, a table).
    Cached on ``inp`` per distinct set of parameters.
    """
    key = ("ring_sets", repr(sorted((k, repr(v)) for k, v in params.items())))
    if key in inp.cache:
        return inp.cache[key]
    pairs = unexplained_pairs(inp, params)
    n = int(inp.records["ent"].max()) + 1 if len(inp.records) else 0
    graph = coo_matrix((np.ones(len(pairs), dtype=np.int8), (pairs["ent_a"], pairs["ent_b"])), shape=(n, n))
    labels = connected_components(graph.tocsr(), directed=False)[1]
    pairs = pairs.assign(set=labels[pairs["ent_a"].to_numpy()])
    members = pd.concat([
        pairs[["set", "ent_a"]].rename(columns={"ent_a": "ent"}),
        pairs[["set", "ent_b"]].rename(columns={"ent_b": "ent"}),
    ]).drop_duplicates().reset_index(drop=True)
    family = main_family(inp).to_numpy()[members["ent"].to_numpy()]
    size = members.groupby("set")["ent"].size()
    names = pd.Series(family[family >= 0]).groupby(members["set"].to_numpy()[family >= 0]).nunique()
    names = names.reindex(size.index, fill_value=0)
    shared = pairs[["set", "kid", "kind"]].drop_duplicates()
    per_kind = shared.groupby(["set", "kind"]).size().unstack(fill_value=0)
    counted = [k for k in per_kind.columns if k in params["counted_kinds"]]
    total = per_kind[counted].sum(axis=1).reindex(size.index, fill_value=0)
    ok = ((size >= params["min_entities"]) & (names >= params["min_family_names"])
          & (total >= params["min_shared_values"]))
    rings = size[ok].index
    found = (members[members["set"].isin(rings)].reset_index(drop=True), size[ok], names[ok],
             per_kind.reindex(rings))
    inp.cache[key] = found
    return found
