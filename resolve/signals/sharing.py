"""Rules about identifier values shared between entities: hubs, rings, bursts and placeholders.

Fabricated identities are often supported by a small pool of phones and emails reused across
many applications, opened close together (Federal Reserve synthetic identity material; see
docs/signals.md). Households share values too, so these rules count distinct entities (not
records) and family names, leave placeholders out of every count, and let a family name, one
unmerged person or one home explain a sharing before it is called a ring (`contacts`).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from resolve.signals.contacts import main_family, ring_sets
from resolve.signals.context import (Inputs, entities_per_row, entities_per_value, hits, isin_ints, number_groups,
                                     plural, rows_where)

KIND_PLURALS = {"phone": ("phone", "phones"), "email": ("email", "emails"),
                "national_id": ("national ID", "national IDs"), "address": ("address", "addresses")}


def _shared_rows(inp: Inputs, params: dict) -> np.ndarray:
    """Positions in ``inp.ids`` of the rows of ``kinds`` and ``statuses`` with a shared value."""
    return rows_where(inp, params["kinds"], params["statuses"])


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


def _family_units(inp: Inputs, rows: pd.DataFrame) -> pd.Series:
    """Per row (with ``ent``): the entity's main family name code, or a code of its own
    (negative) when it has none, so that counting distinct units counts family names."""
    ent = rows["ent"].to_numpy()
    family = main_family(inp).to_numpy()[ent]
    return pd.Series(np.where(family >= 0, family, -2 - ent), index=rows.index)


def hub(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records carrying a value held by more distinct entities than the kind's limit.

    With ``count_family_names`` the count is of different family names among the carrying
    entities (an entity with no family name counts as one of its own), so that one household
    whose members were not all merged into single entities is not taken for a hub.
    """
    at = _shared_rows(inp, params)
    # only values held by more entities than the lowest limit can be hubs; all their rows stay
    lowest = min([int(params["max_entities"])] + [int(v) for v in params["max_entities_by_kind"].values()])
    at = at[entities_per_row(inp, at) > lowest]
    ids = inp.ids.iloc[at]
    n = entities_per_row(inp, at)
    limit = np.full(len(ids), int(params["max_entities"]), dtype=np.int64)
    for kind, value in params["max_entities_by_kind"].items():
        limit[(ids["kind"] == kind).to_numpy()] = int(value)
    ids, n, limit = ids[n > limit], n[n > limit], limit[n > limit]  # family names never outnumber entities
    by_name = bool(params["count_family_names"])
    count = n
    if by_name and len(ids):
        held = ids[["kid", "ent"]].drop_duplicates()
        names = pd.DataFrame({"kid": held["kid"].to_numpy(), "unit": _family_units(inp, held).to_numpy()})
        names = names.drop_duplicates()
        per_value = names.groupby("kid").size()
        count = per_value.reindex(ids["kid"].to_numpy()).to_numpy(dtype=np.int64)
    over = count > limit
    flagged = ids[over]
    n, limit = pd.Series(n[over], index=flagged.index), pd.Series(limit[over], index=flagged.index)
    names = pd.Series(np.asarray(count)[over], index=flagged.index)
    carried = inp.describe(flagged) + " is carried by " + plural(n, "entity", "entities")
    if by_name:
        carried = carried + " with " + plural(names, "family name", "different family names")
    reason = carried + ", more than the limit of " + limit.astype("string") + "."
    return hits(flagged["rec"], reason, "group", number_groups(flagged["kid"], "hub"))


def _set_labels(inp: Inputs, members: pd.DataFrame, fallback: pd.Series, prefix: str) -> pd.Series:
    """Label per member row: the identity-sharing group from the cluster stage when every
    member of the set lies in one such group and no other set does, else a run-local
    ``prefix-00001`` label."""
    local = number_groups(fallback, prefix)
    groups = inp.groups
    if groups is None or len(groups) == 0 or not {"entity_id", "group_id"} <= set(groups.columns):
        return local
    records = inp.records[["entity_id", "ent"]]
    records = records[isin_ints(records["ent"].to_numpy(), members["ent"].to_numpy())]  # members only
    codes = records.dropna().drop_duplicates("ent")
    codes = codes.assign(entity_id=codes["entity_id"].astype("string"))
    given = groups[["entity_id", "group_id"]].astype({"entity_id": "string", "group_id": "string"})
    given = given.drop_duplicates("entity_id").merge(codes, on="entity_id")
    group = members[["set", "ent"]].merge(given[["ent", "group_id"]], on="ent", how="left")
    per_set = group.groupby("set")["group_id"].agg(["nunique", "count", "first"])
    whole = per_set[(per_set["nunique"] == 1) & (per_set["count"] == members.groupby("set")["ent"].size()
                                                 .reindex(per_set.index))]["first"]
    whole = whole[whole.map(whole.value_counts()) == 1]  # two rings in one group keep their own labels
    chosen = members["set"].map(whole).astype("string")
    return chosen.fillna(local)


def ring(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of a set of ``min_entities``+ entities, with ``min_family_names``+ different
    family names, sharing ``min_shared_values``+ contact values that no household explains.

    The sets are found by `contacts.ring_sets`; this rule words them.
    """
    members, size, names, per_kind = ring_sets(inp, params)
    rings = size.index
    if len(rings) == 0:
        return hits([], [], "group")

    words = pd.Series("", index=rings, dtype="string")
    for kind in sorted(per_kind.columns):
        count = per_kind[kind].reindex(rings).astype("int64")
        one, many = KIND_PLURALS.get(kind, (kind, kind + "s"))
        piece = plural(count, one, many).where(count > 0, "")
        words = words.where(piece == "", words.where(words == "", words + ", ") + piece)
    words = words.str.replace(r", ([^,]*)$", r" and \1", regex=True)
    summary = pd.DataFrame({
        "set": rings,
        "entities": size.reindex(rings).to_numpy(),
        "names": names.reindex(rings).to_numpy(),
        "values": words.to_numpy(),
    })
    ring_members = members
    first_rec = inp.records.groupby("ent")["rec"].min()
    order = ring_members.assign(r=first_rec.reindex(ring_members["ent"]).to_numpy()).groupby("set")["r"]
    label = _set_labels(inp, ring_members, order.transform("min"), "ring")
    ring_members = ring_members.assign(label=label.to_numpy())
    flagged = ring_members.merge(summary, on="set").merge(inp.records[["rec", "ent"]], on="ent")
    reason = (
        "This entity is one of " + flagged["entities"].astype("string") + " entities with "
        + flagged["names"].astype("string") + " different family names that share "
        + flagged["values"] + " with no family name in common."
    )
    return hits(flagged["rec"], reason, "group", flagged["label"])


def burst(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of ``min_entities``+ entities sharing a value, first seen within ``window_days``.

    For each value and entity the creation time is that of the entity's earliest record
    carrying the value. Entities are sorted by that time per value; every run of
    ``min_entities`` consecutive entities spanning at most the window marks its members.
    The marked entities of a value must have ``min_family_names`` or more different family
    names (a family opening accounts together is not a burst); an entity with no family name
    counts as a name of its own.
    """
    k = int(params["min_entities"])
    at = _shared_rows(inp, params)
    at = at[inp.ids["created_at"].notna().to_numpy()[at]]
    at = at[entities_per_row(inp, at) >= k]  # a value held by fewer entities cannot burst
    ids = inp.ids.iloc[at]
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
    names = _family_units(inp, first)
    first = first[names.groupby(first["kid"].to_numpy()).transform("nunique").to_numpy() >= params["min_family_names"]]
    if first.empty:
        return hits([], [], "group")
    names = pd.Series(_family_units(inp, first).to_numpy(), index=first.index)
    span = first.groupby("kid")["created_at"].agg(["min", "max", "size"])
    span["names"] = names.groupby(first["kid"].to_numpy()).nunique().reindex(span.index)
    span = span.reset_index()
    flagged = ids.merge(first[["kid", "ent"]], on=["kid", "ent"]).merge(span, on="kid")
    reason = (
        inp.describe(flagged) + " is shared by "
        + plural(flagged["size"], "entity", "entities") + " with "
        + plural(flagged["names"], "family name", "different family names") + ", opened within "
        + str(int(params["window_days"])) + " days of one another (between "
        + flagged["min"].dt.strftime("%Y-%m-%d") + " and " + flagged["max"].dt.strftime("%Y-%m-%d") + ")."
    )
    return hits(flagged["rec"], reason, "group", number_groups(flagged["kid"], "burst"))
