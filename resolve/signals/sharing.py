"""Rules about identifier values shared between entities: hubs, rings, bursts and placeholders.

Fabricated identities are often supported by a small pool of phones and emails reused across
many applications, opened close together (Federal Reserve synthetic identity material; see
docs/signals.md). Households share values too, so these rules count distinct entities (not
records), leave placeholders out of every count, and let household links or groups explain a
sharing before it is called a ring.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from resolve.signals.context import Inputs, entities_per_value, entity_pairs, hits, number_groups, plural

KIND_PLURALS = {"phone": ("phone", "phones"), "email": ("email", "emails"),
                "national_id": ("national ID", "national IDs"), "address": ("address", "addresses")}


def _shared(inp: Inputs, params: dict) -> pd.DataFrame:
    ids = inp.ids
    return ids[ids["kind"].isin(params["kinds"]) & ids["status"].isin(params["statuses"]) & (ids["kid"] >= 0)]


def placeholder(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a placeholder phone, email or national ID, with how many others do."""
    ids = inp.ids
    ids = ids[ids["kind"].isin(params["kinds"]) & (ids["status"] == "placeholder")]
    others = pd.Series(entities_per_value(ids) - 1, index=ids.index)
    tail = pd.Series(
        np.where(others > 0, "; " + plural(others, "other entity carries", "other entities carry") + " it.", "."),
        index=ids.index, dtype="string",
    )
    reason = inp.describe(ids) + " is a placeholder value, ignored for matching" + tail
    return hits(ids["rec"], reason, "record")


def hub(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a value held by more distinct entities than the kind's limit."""
    ids = _shared(inp, params)
    n = entities_per_value(ids)
    limit = np.full(len(ids), int(params["max_entities"]), dtype=np.int64)
    for kind, value in params["max_entities_by_kind"].items():
        limit[(ids["kind"] == kind).to_numpy()] = int(value)
    over = n > limit
    flagged = ids[over]
    n, limit = pd.Series(n[over], index=flagged.index), pd.Series(limit[over], index=flagged.index)
    reason = (
        inp.describe(flagged) + " is carried by " + plural(n, "entity", "entities")
        + ", more than the limit of " + limit.astype("string") + "."
    )
    return hits(flagged["rec"], reason, "group", number_groups(flagged["kid"], "hub"))


def _same_value(pairs: pd.DataFrame, holders: pd.DataFrame) -> np.ndarray:
    """For each entity pair, whether both entities hold a common value in ``holders`` (ent, v)."""
    holders = holders.drop_duplicates()
    both = pairs[["ent_a", "ent_b"]].drop_duplicates()
    both = both.merge(holders.rename(columns={"ent": "ent_a"}), on="ent_a")
    both = both.merge(holders.rename(columns={"ent": "ent_b"}), on=["ent_b", "v"])
    hit = both[["ent_a", "ent_b"]].drop_duplicates().assign(hit=True)
    return pairs.merge(hit, on=["ent_a", "ent_b"], how="left")["hit"].fillna(False).to_numpy(dtype=bool)


def _household_explained(inp: Inputs, params: dict, pairs: pd.DataFrame) -> np.ndarray:
    """For each entity pair (ent_a < ent_b), whether a household explains their sharing.

    A household link between any of their records always explains it; so, when enabled, do a
    shared valid address (one held by at most ``max_entities_per_value`` entities) and a
    shared family name.
    """
    explained = np.zeros(len(pairs), dtype=bool)
    links = inp.links
    if links is not None and len(links) and "link_type" in links.columns:
        home = links[links["link_type"] == "household"]
        rec_ent = pd.Series(inp.records["ent"].to_numpy(), index=inp.records["rec"].to_numpy())
        a = rec_ent.reindex(home["rec_a"].to_numpy()).to_numpy()
        b = rec_ent.reindex(home["rec_b"].to_numpy()).to_numpy()
        linked = pd.DataFrame({"lo": np.fmin(a, b), "hi": np.fmax(a, b)}).dropna().astype(np.int64)
        linked = linked.rename(columns={"lo": "ent_a", "hi": "ent_b"}).drop_duplicates().assign(hit=True)
        explained |= pairs.merge(linked, on=["ent_a", "ent_b"], how="left")["hit"].fillna(False).to_numpy(dtype=bool)
    if params["shared_address_explains"]:
        addr = inp.ids[(inp.ids["kind"] == "address") & (inp.ids["status"] == "valid") & (inp.ids["kid"] >= 0)]
        addr = addr[entities_per_value(addr) <= params["max_entities_per_value"]]
        explained |= _same_value(pairs, addr[["ent", "kid"]].rename(columns={"kid": "v"}))
    if params["shared_family_name_explains"]:
        family = inp.records.loc[inp.records["family"] >= 0, ["ent", "family"]]
        explained |= _same_value(pairs, family.rename(columns={"family": "v"}))
    return explained


def _group_members(inp: Inputs, groups: pd.DataFrame) -> pd.DataFrame:
    """Groups given by entity_id, as (group_id, ent) using this run's entity codes."""
    codes = inp.records[["entity_id", "ent"]].dropna().drop_duplicates("entity_id")
    codes = codes.assign(entity_id=codes["entity_id"].astype("string"))
    given = groups[["entity_id", "group_id"]].astype({"entity_id": "string"})
    members = given.merge(codes, on="entity_id")
    return members[["group_id", "ent"]].astype({"group_id": "string"}).drop_duplicates()


def ring(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of entities in a set of ``min_entities``+ entities sharing ``min_shared_values``+ values.

    With identity-sharing groups given, each group of a kind in ``group_kinds`` (every group
    when that list is empty) is a candidate set, and the cluster stage has already set
    households aside. Otherwise the sets are the connected components of entities joined by
    a shared value (values held by more than ``max_entities_per_value`` entities left out),
    after removing the joins a household explains.
    """
    ids = _shared(inp, params)
    size = entities_per_value(ids)
    incidence = ids.loc[(size >= 2) & (size <= params["max_entities_per_value"]), ["kid", "kind", "ent"]]
    incidence = incidence.drop_duplicates()
    groups = inp.groups
    from_groups = groups is not None and len(groups) > 0
    if from_groups:
        if params["group_kinds"] and "group_kind" in groups.columns:
            groups = groups[groups["group_kind"].isin(params["group_kinds"])]
        members = _group_members(inp, groups)
        members = members.rename(columns={"group_id": "set"})
        values = incidence.merge(members, on="ent")
    else:
        pairs = entity_pairs(incidence)
        pairs = pairs[~_household_explained(inp, params, pairs)]
        n = int(inp.records["ent"].max()) + 1 if len(inp.records) else 0
        graph = coo_matrix((np.ones(len(pairs), dtype=np.int8), (pairs["ent_a"], pairs["ent_b"])), shape=(n, n))
        labels = connected_components(graph.tocsr(), directed=False)[1]
        pairs = pairs.assign(set=labels[pairs["ent_a"].to_numpy()])
        values = pd.concat([
            pairs[["kid", "set", "ent_a"]].rename(columns={"ent_a": "ent"}),
            pairs[["kid", "set", "ent_b"]].rename(columns={"ent_b": "ent"}),
        ]).drop_duplicates().merge(incidence[["kid", "kind"]].drop_duplicates(), on="kid")
        members = values[["set", "ent"]].drop_duplicates()
    values = values.assign(kind=values["kind"].astype("string"))
    shared = values.groupby(["set", "kid", "kind"])["ent"].nunique().reset_index()
    shared = shared[shared["ent"] >= 2]
    per_kind = shared.groupby(["set", "kind"]).size().unstack(fill_value=0)
    size = members.groupby("set")["ent"].nunique()
    total = per_kind.sum(axis=1).reindex(size.index, fill_value=0)
    rings = size[(size >= params["min_entities"]) & (total >= params["min_shared_values"])].index
    if len(rings) == 0:
        return hits([], [], "group")

    words = pd.Series("", index=rings, dtype="string")
    for kind in sorted(per_kind.columns):
        n = per_kind[kind].reindex(rings).astype("int64")
        one, many = KIND_PLURALS.get(kind, (kind, kind + "s"))
        piece = plural(n, one, many).where(n > 0, "")
        words = words.where(piece == "", words.where(words == "", words + ", ") + piece)
    words = words.str.replace(r", ([^,]*)$", r" and \1", regex=True)
    summary = pd.DataFrame({
        "set": rings,
        "entities": size.reindex(rings).to_numpy(),
        "values": words.to_numpy(),
    })
    flagged = members[members["set"].isin(rings)].merge(summary, on="set")
    flagged = flagged.merge(inp.records[["rec", "ent"]], on="ent")
    reason = (
        "This entity is one of " + flagged["entities"].astype("string") + " entities sharing "
        + flagged["values"] + " with no household link between them."
    )
    label = flagged["set"] if from_groups else number_groups(
        flagged.groupby("set")["rec"].transform("min"), "ring"
    )
    return hits(flagged["rec"], reason, "group", label)


def burst(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of ``min_entities``+ entities sharing a value, first seen within ``window_days``.

    For each value and entity the creation time is that of the entity's earliest record
    carrying the value. Entities are sorted by that time per value; every run of
    ``min_entities`` consecutive entities spanning at most the window marks its members.
    """
    k = int(params["min_entities"])
    ids = _shared(inp, params).dropna(subset=["created_at"])
    first = ids.groupby(["kid", "ent"], sort=False)["created_at"].min().reset_index()
    first = first.sort_values(["kid", "created_at", "ent"], kind="stable").reset_index(drop=True)
    keys = first["kid"].to_numpy()
    times = first["created_at"].to_numpy()
    m = len(first)
    if m < k or k < 1:
        return hits([], [], "group")
    start = np.arange(m - k + 1)
    end = start + k - 1
    window = np.timedelta64(int(params["window_days"]), "D")
    ok = (keys[start] == keys[end]) & ((times[end] - times[start]) <= window)
    mark = np.zeros(m + 1, dtype=np.int64)
    np.add.at(mark, start[ok], 1)
    np.add.at(mark, end[ok] + 1, -1)
    first = first[np.cumsum(mark)[:m] > 0]
    if first.empty:
        return hits([], [], "group")
    span = first.groupby("kid")["created_at"].agg(["min", "max", "size"]).reset_index()
    flagged = ids.merge(first[["kid", "ent"]], on=["kid", "ent"]).merge(span, on="kid")
    reason = (
        inp.describe(flagged) + " is shared by "
        + plural(flagged["size"], "entity", "entities") + " opened within "
        + str(int(params["window_days"])) + " days of one another (between "
        + flagged["min"].dt.strftime("%Y-%m-%d") + " and " + flagged["max"].dt.strftime("%Y-%m-%d") + ")."
    )
    return hits(flagged["rec"], reason, "group", number_groups(flagged["kid"], "burst"))
