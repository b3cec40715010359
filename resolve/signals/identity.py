"""Rules about national IDs across entities: one ID shared by disagreeing people, one person
with several IDs.

The primary elements of a fabricated identity are a name, a birth date and a national ID
(Federal Reserve synthetic identity definition, 2021; see docs/signals.md). These rules look
for the national-ID shapes of that pattern: one ID carried by entities that disagree on name
and birth date (and, among them, the carrier that most likely holds it by right, so that the
likely victim is not flagged like the others), and one entity carrying several IDs (and
whether its records look like one person or two people merged). Checks of one ID on its own
(never issued, misused, invalid) live in `resolve.signals.id_checks`.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from rapidfuzz import process
from rapidfuzz.distance import OSA
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from resolve.errors import InputError
from resolve.signals.contacts import ring_sets, unexplained_pairs
from resolve.signals.context import (Inputs, distinct_sorted, entities_per_value, entity_pairs, hits, isin_ints,
                                     number_groups, plural, rows_where)
from resolve.signals.id_checks import national_ids


def day_month_swapped(birth: pd.Series) -> pd.Series:
    """Each date with day and month exchanged (NaT when the day is over 12 or the date unknown)."""
    parts = pd.DataFrame({"year": birth.dt.year, "month": birth.dt.day, "day": birth.dt.month})
    ok = parts.notna().all(axis=1) & (parts["month"] <= 12)
    out = pd.to_datetime(parts.where(ok).fillna({"year": 2000, "month": 1, "day": 1}).astype(np.int64),
                         errors="coerce")
    return out.where(ok.to_numpy())


def _conflicting_pairs(inp: Inputs, pairs: pd.DataFrame, either: bool, swap_agrees: bool) -> pd.DataFrame:
    """The (kid, ent_a, ent_b) rows of ``pairs`` whose entities disagree on name and birth date.

    With ``swap_agrees``, two birth dates that are equal once day and month are exchanged
    (03/04 read as 04/03, a common format confusion) are taken to agree.
    """
    profiles = inp.records[["ent", "given", "family", "birth"]]
    wanted = np.union1d(pairs["ent_a"].to_numpy(), pairs["ent_b"].to_numpy())
    profiles = profiles[isin_ints(profiles["ent"].to_numpy(), wanted)].drop_duplicates()  # the pairs' only
    both = pairs.merge(profiles.add_suffix("_a"), on="ent_a").merge(profiles.add_suffix("_b"), on="ent_b")
    ga, fa, gb, fb = (both[c].to_numpy() for c in ("given_a", "family_a", "given_b", "family_b"))
    named = (ga >= 0) & (fa >= 0) & (gb >= 0) & (fb >= 0)
    same_name = named & (((ga == gb) & (fa == fb)) | ((ga == fb) & (fa == gb)))
    dated = both["birth_a"].notna().to_numpy() & both["birth_b"].notna().to_numpy()
    same_date = dated & (both["birth_a"] == both["birth_b"]).to_numpy()
    if swap_agrees and len(both):
        same_date |= dated & (day_month_swapped(both["birth_a"]) == both["birth_b"]).fillna(False).to_numpy(dtype=bool)
    agg = pd.DataFrame({
        "kid": both["kid"].to_numpy(), "ent_a": both["ent_a"].to_numpy(), "ent_b": both["ent_b"].to_numpy(),
        "named": named, "same_name": same_name, "dated": dated, "same_date": same_date,
    }).groupby(["kid", "ent_a", "ent_b"], sort=False).any().reset_index()
    name_differs = agg["named"] & ~agg["same_name"]
    date_differs = agg["dated"] & ~agg["same_date"]
    return agg[(name_differs | date_differs) if either else (name_differs & date_differs)]


def _conflicting_carriers(inp: Inputs) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Carriers of a shared national ID that conflict with another carrier, as (kid, ent,
    others: how many carriers it conflicts with), and the conflicting pairs (kid, ent_a, ent_b)."""
    params = inp.rules["shared_national_id_conflict"]["parameters"]
    if params["differ_on"] not in ("both", "either"):
        raise InputError("Parameter 'differ_on' of shared_national_id_conflict must be \"both\" or \"either\".")
    ids = national_ids(inp)
    ids = ids[ids["status"].isin(params["statuses"]) & (ids["kid"] >= 0)]
    count = entities_per_value(ids)
    holders = ids.loc[(count >= params["min_entities"]) & (count <= params["max_entities_compared"]), ["kid", "ent"]]
    conflict = _conflicting_pairs(inp, entity_pairs(holders), params["differ_on"] == "either",
                                  bool(params["day_month_swap_agrees"]))
    ends = pd.concat([
        conflict[["kid", "ent_a"]].rename(columns={"ent_a": "ent"}),
        conflict[["kid", "ent_b"]].rename(columns={"ent_b": "ent"}),
    ])
    carriers = ends.groupby(["kid", "ent"]).size().rename("others").reset_index()
    return carriers, conflict[["kid", "ent_a", "ent_b"]].reset_index(drop=True)


def _warning_signs(inp: Inputs, carriers: pd.DataFrame) -> np.ndarray:
    """Warning level per carrier row (kid, ent): 2 rules the entity out as the likely holder,
    1 makes it a second choice, 0 is none.

    Level 2 (with ``ring_rules_out``): the entity is in a ring (`contacts.ring_sets` with the
    ``ring_pattern`` parameters); (with ``other_national_ids_rule_out``) it carries another
    clearly different national ID of the same type, a never-issued or misused ID, or a second
    conflicting national ID. Level 1 (with ``prefer_no_shared_contacts``): it shares a phone
    or email with another entity and nothing explains it (`contacts.unexplained_pairs`), as a
    couple with two family names who opened accounts together may.
    """
    holder = inp.rules["shared_national_id_likely_holder"]["parameters"]
    ring = inp.rules["ring_pattern"]["parameters"]
    level = np.zeros(int(inp.records["ent"].max()) + 1, dtype=np.int8)
    if holder["prefer_no_shared_contacts"]:
        pairs = unexplained_pairs(inp, ring)
        level[pairs["ent_a"].to_numpy()] = 1
        level[pairs["ent_b"].to_numpy()] = 1
    if holder["ring_rules_out"]:
        level[ring_sets(inp, ring)[0]["ent"].to_numpy()] = 2
    if holder["other_national_ids_rule_out"]:
        level[_several_id_ends(inp)[1]["ent"].to_numpy()] = 2
        ids = national_ids(inp)
        reasons = (inp.rules["national_id_never_issued"]["parameters"]["reasons"]
                   + inp.rules["national_id_known_misused"]["parameters"]["reasons"])
        level[ids.loc[ids["reason"].isin(reasons), "ent"].to_numpy()] = 2
        several = carriers.groupby("ent")["kid"].transform("size").to_numpy() > 1
        level[carriers["ent"].to_numpy()[several]] = 2
    return level[carriers["ent"].to_numpy()]


def conflict_cases(inp: Inputs) -> pd.DataFrame:
    """Carriers of conflicting national IDs: kid, ent, others, first_seen, side, group.

    ``first_seen`` is the creation time of the entity's earliest record carrying the ID.
    ``side`` is ``holder`` for the likely holder, ``holder_match`` for a carrier that does not
    conflict with the holder (it agrees with it on the name or the birth date: most likely the
    same person, not merged) and ``other`` for the rest. When the
    ``shared_national_id_likely_holder`` rule is enabled, the likely holder of an ID is found
    among the carriers not ruled out (`_warning_signs` level below 2) whose opening date is
    known: those with the lowest warning level, and of them the one that carried the ID
    first. There is none when every carrier is ruled out or undated, or when two carriers
    tie. ``group`` is the case's run-local label. Cached on ``inp``.
    """
    if "conflict_cases" in inp.cache:
        return inp.cache["conflict_cases"]
    carriers, conflict = _conflicting_carriers(inp)
    ids = national_ids(inp)
    seen = ids.merge(carriers[["kid", "ent"]], on=["kid", "ent"]).groupby(["kid", "ent"])["created_at"].min()
    carriers["first_seen"] = seen.reindex(pd.MultiIndex.from_frame(carriers[["kid", "ent"]])).to_numpy()
    carriers["side"] = "other"
    carriers["group"] = number_groups(carriers["kid"], "shared-id").to_numpy()
    if inp.rules["shared_national_id_likely_holder"]["enabled"] and len(carriers):
        level = _warning_signs(inp, carriers)
        clean = carriers[level < 2].assign(level=level[level < 2])
        dated = clean[clean["first_seen"].notna()]
        dated = dated[dated["level"] == dated.groupby("kid")["level"].transform("min")]
        earliest = dated.groupby("kid")["first_seen"].transform("min")
        first = dated[dated["first_seen"] == earliest]
        chosen = first[(first.groupby("kid")["ent"].transform("size") == 1).to_numpy()]
        carriers.loc[chosen.index, "side"] = "holder"
        # carriers not ruled out that do not conflict with the holder stand with it
        holder = chosen[["kid", "ent"]].rename(columns={"ent": "holder"})
        near = clean.drop(index=chosen.index)[["kid", "ent"]].reset_index().merge(holder, on="kid")
        lo = np.minimum(near["ent"], near["holder"])
        hi = np.maximum(near["ent"], near["holder"])
        against = pd.DataFrame({"kid": near["kid"], "ent_a": lo, "ent_b": hi}).merge(
            conflict.assign(hit=True), on=["kid", "ent_a", "ent_b"], how="left")["hit"]
        against = against.fillna(False).to_numpy(dtype=bool)
        carriers.loc[near.loc[~against, "index"].to_numpy(), "side"] = "holder_match"
        carriers = carriers.merge(chosen[["kid", "first_seen"]].rename(columns={"first_seen": "holder_seen"}),
                                  on="kid", how="left")
    else:
        carriers["holder_seen"] = pd.Series(pd.NaT, index=carriers.index, dtype="datetime64[ns]")
    inp.cache["conflict_cases"] = carriers
    return carriers


def _conflict_words(inp: Inputs) -> str:
    either = inp.rules["shared_national_id_conflict"]["parameters"]["differ_on"] == "either"
    return " or " if either else " and "


def _also_carried(inp: Inputs, flagged: pd.DataFrame) -> pd.Series:
    """"National ID ending 4399 is also carried by 1 other entity whose name and birth date differ"."""
    one = flagged["others"].to_numpy() == 1
    return (
        inp.describe(flagged) + " is also carried by "
        + plural(flagged["others"], "other entity", "other entities")
        + np.where(one, " whose name", " whose names") + _conflict_words(inp)
        + np.where(one, "birth date differ", "birth dates differ")
    )


def shared_id_conflict(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records whose national ID is also carried by entities that disagree on name and birth date.

    Two entities disagree on the name when some record of each has a name and no record of
    one has the same given and family name as a record of the other (swapped order counts as
    the same); likewise for the birth date. ``differ_on = "both"`` needs both to disagree,
    ``"either"`` one of them. Missing values never make a disagreement. The likely holder
    and the carriers that agree with it (see `conflict_cases`) are left to
    ``shared_national_id_likely_holder``; the sentence of the other carriers then says that
    one carrier looks like the holder.
    """
    cases = conflict_cases(inp)
    flagged = national_ids(inp).merge(cases[cases["side"] == "other"], on=["kid", "ent"])
    if flagged.empty:
        return hits([], [], "group")
    note = "; another carrier (carrying it since " + flagged["holder_seen"].dt.strftime("%Y-%m-%d") + (
        ") is its likely rightful holder.")
    reason = _also_carried(inp, flagged) + note.fillna(".")
    return hits(flagged["rec"], reason, "group", flagged["group"])


def likely_holder(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of the likely rightful holder of a national ID that other entities also carry,
    and of carriers that agree with that holder on the name or birth date.

    Informational: the holder is picked by `conflict_cases` (fewest warning signs, then the
    ID carried first). The sentence says "likely": a lone thief with an older record in this book, or a
    clerical error, can make the wrong carrier look like the holder.
    """
    cases = conflict_cases(inp)
    flagged = national_ids(inp).merge(cases[cases["side"] != "other"], on=["kid", "ent"])
    if flagged.empty:
        return hits([], [], "group")
    first = flagged["first_seen"].dt.strftime("%Y-%m-%d")
    since = flagged["holder_seen"].dt.strftime("%Y-%m-%d")
    holder = ("; this entity (carrying it since " + first + ") is its likely rightful holder: of the carriers"
              " with the fewest other warning signs, it had the ID first. It may be a victim of its misuse.")
    match = ("; this entity agrees on the name or birth date with the likely rightful holder (carrying it since "
             + since + ") and may be the same person.")
    reason = _also_carried(inp, flagged) + holder.where(flagged["side"].to_numpy() == "holder", match)
    return hits(flagged["rec"], reason, "group", flagged["group"])  # the label of the whole case


def _several_id_ends(inp: Inputs) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The national ID rows considered (with ``id_type``) and, per entity, its IDs grouped
    into clearly different numbers: (ent, id_type, kid, comp, n). Cached on ``inp``.

    IDs of one entity and type closer than ``min_edit_distance`` are one number mistyped;
    the grouping is transitive (A near B and B near C puts all three together). ``n`` is the
    number of groups, kept when at least ``min_ids``.
    """
    if "several_ids" in inp.cache:
        return inp.cache["several_ids"]
    params = inp.rules["several_national_ids"]["parameters"]
    ids = national_ids(inp)
    ids = ids[ids["status"].isin(params["statuses"]) & (ids["kid"] >= 0)]
    # only entities holding two or more distinct IDs can qualify
    both = distinct_sorted(ids["ent"].to_numpy() * np.int64(len(inp.ids) + 1) + ids["kid"].to_numpy())
    per_ent = np.bincount(both // np.int64(len(inp.ids) + 1), minlength=int(inp.records["ent"].max()) + 1)
    ids = ids[per_ent[ids["ent"].to_numpy()] >= 2]
    if params["same_type_only"]:
        id_type = ids["detail"].astype("string").fillna("unknown")
    else:
        id_type = pd.Series("any", index=ids.index, dtype="string")
    ids = ids.assign(id_type=id_type)
    held = ids[["ent", "id_type", "kid", "row"]].drop_duplicates(["ent", "id_type", "kid"]).reset_index(drop=True)
    held["node"] = np.arange(len(held))
    pairs = held.merge(held, on=["ent", "id_type"], suffixes=("_a", "_b"))
    pairs = pairs[pairs["kid_a"] < pairs["kid_b"]]
    distance = np.asarray(process.cpdist(inp.texts(pairs["row_a"]), inp.texts(pairs["row_b"]), scorer=OSA.distance))
    near = pairs[distance < params["min_edit_distance"]]
    graph = coo_matrix((np.ones(len(near), dtype=np.int8), (near["node_a"], near["node_b"])),
                       shape=(len(held), len(held)))
    held["comp"] = connected_components(graph.tocsr(), directed=False)[1]
    held["n"] = held.groupby(["ent", "id_type"])["comp"].transform("nunique")
    ends = held[held["n"] >= params["min_ids"]][["ent", "id_type", "kid", "comp", "n"]]
    inp.cache["several_ids"] = (ids, ends)
    return inp.cache["several_ids"]


def _merge_doubts(inp: Inputs, ids: pd.DataFrame, ends: pd.DataFrame) -> pd.DataFrame:
    """Per (ent, id_type) of ``ends``: ``apart`` (records with different IDs share no valid
    phone, email or address) and ``births_differ`` (they give birth dates, and no birth date
    is given with two different IDs)."""
    carrying = ids.merge(ends, on=["ent", "id_type", "kid"])[["rec", "ent", "id_type", "comp"]].drop_duplicates()
    keys = ends[["ent", "id_type"]].drop_duplicates().reset_index(drop=True)
    contact = inp.ids[["rec", "kid"]].iloc[rows_where(inp, ["phone", "email", "address"], ["valid"])]
    contact = contact[isin_ints(contact["rec"].to_numpy(), carrying["rec"].to_numpy())]  # carriers' only
    contact = contact.rename(columns={"kid": "v"})
    values = carrying.merge(contact, on="rec")[["ent", "id_type", "comp", "v"]].drop_duplicates()
    spread = values.groupby(["ent", "id_type", "v"]).size()
    linked = spread[spread >= 2].reset_index()[["ent", "id_type"]].drop_duplicates().assign(linked=True)
    births = carrying.merge(inp.records[["rec", "birth"]], on="rec").dropna(subset=["birth"])
    births = births[["ent", "id_type", "comp", "birth"]].drop_duplicates()
    dated = births.groupby(["ent", "id_type"])["comp"].nunique().rename("dated").reset_index()
    same = births.groupby(["ent", "id_type", "birth"]).size()
    agree = same[same >= 2].reset_index()[["ent", "id_type"]].drop_duplicates().assign(agree=True)
    out = keys.merge(linked, on=["ent", "id_type"], how="left").merge(dated, on=["ent", "id_type"], how="left")
    out = out.merge(agree, on=["ent", "id_type"], how="left")
    out["apart"] = ~out["linked"].fillna(False).astype(bool)
    out["births_differ"] = (out["dated"].fillna(0) >= 2) & ~out["agree"].fillna(False).astype(bool)
    return out[["ent", "id_type", "apart", "births_differ"]]


def _several_rows(inp: Inputs, doubt: bool) -> pd.DataFrame:
    """Rows of entities with several IDs: with ``doubt`` those whose records look like two
    people (`_merge_doubts`; none when that rule is off), else the others."""
    ids, ends = _several_id_ends(inp)
    flagged = ids.merge(ends, on=["ent", "id_type", "kid"])
    if inp.rules["several_national_ids_merge_doubt"]["enabled"] and len(flagged):
        if "merge_doubts" not in inp.cache:  # both rules of several IDs ask
            inp.cache["merge_doubts"] = _merge_doubts(inp, ids, ends)
        flagged = flagged.merge(inp.cache["merge_doubts"], on=["ent", "id_type"])
        mark = (flagged["apart"] | flagged["births_differ"]).to_numpy(dtype=bool)
        return flagged[mark == doubt]
    return flagged if not doubt else flagged.iloc[0:0]


def _several_words(inp: Inputs, flagged: pd.DataFrame) -> pd.Series:
    by_type = bool(inp.rules["several_national_ids"]["parameters"]["same_type_only"])
    type_words = ("" if not by_type else " of type " + flagged["id_type"])
    return "This entity carries " + flagged["n"].astype("string") + " different national IDs" + type_words


def _tail(inp: Inputs, flagged: pd.DataFrame) -> pd.Series:
    return inp.describe(flagged).str.replace("National ID ending ", "", regex=False)


def several_ids(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of an entity that carries ``min_ids`` or more clearly different national IDs.

    With ``same_type_only`` the IDs are counted per ID type (the identifier's ``detail``), so a
    person with a home-country and a foreign ID is not flagged. IDs closer than
    ``min_edit_distance`` (optimal string alignment; default 3: up to two wrong, missing or
    extra characters or swaps of neighbours) are taken for one number mistyped, transitively.
    When ``several_national_ids_merge_doubt`` is enabled, entities whose records with
    different IDs look like two people are left to it.
    """
    flagged = _several_rows(inp, doubt=False)
    reason = _several_words(inp, flagged) + "; the one on this record ends in " + _tail(inp, flagged) + "."
    return hits(flagged["rec"], reason, "entity")


def several_ids_merge_doubt(inp: Inputs, params: dict) -> pd.DataFrame:
    """Records of an entity with several national IDs whose records with different IDs share
    no phone, email or address, or give different birth dates: the entity may join two
    people with one name (strangers with a common name, a parent and child)."""
    flagged = _several_rows(inp, doubt=True)
    if flagged.empty:
        return hits([], [], "entity")
    apart = flagged["apart"].to_numpy(dtype=bool)
    births = flagged["births_differ"].to_numpy(dtype=bool)
    why = np.select(
        [apart & births, apart],
        ["share no phone, email or address and give different birth dates", "share no phone, email or address"],
        "give different birth dates",
    )
    reason = (
        _several_words(inp, flagged) + ", but its records with different IDs "
        + pd.Series(why, index=flagged.index, dtype="string")
        + ": it may join two people with the same name; check the merge. The ID on this record ends in "
        + _tail(inp, flagged) + "."
    )
    return hits(flagged["rec"], reason, "entity")
