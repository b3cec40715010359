"""Identity-sharing groups: which people (entities) hold identity material in common.

Fabricated and stolen identities show up as several people sharing a national ID, or a ring
of identities drawing on a small pool of phones and emails. A group is a connected component
of the bipartite graph entities - identifier values, over values held by two or more
entities (placeholders and hub values never count), found with scipy.sparse so that no
value-by-value pair list is built for connectivity. Pairwise overlaps (Jaccard of the
entities' identifier sets, with the shared values listed) are built for the values held by at
most ``max_per_value`` entities.

Group kinds, first that applies:

- ``single_household``: every member entity is in the same household;
- ``several_households``: every member is in a household, and there are two or more;
- ``ring_like``: three or more entities share two or more values and no two members are in
  the same household;
- ``mixed``: anything else (including two unrelated entities sharing a value).

A group is a lead for a reviewer, never a finding of fraud.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa

from resolve.clusters.households import household_labels
from resolve.clusters.keys import arrow_text, components, index_rank, join_runs_arrow, names_per_label, text_rank
from resolve.clusters.sharing import entity_codes, entity_values, record_hashes
from resolve.links import pairs_within_values

GROUP_PREFIX = "G"
MAX_PER_VALUE = 100
GROUP_KINDS = ("single_household", "several_households", "ring_like", "mixed")


def build_groups(
    entities: pd.DataFrame,
    links: pd.DataFrame,
    identifiers: pd.DataFrame,
    hubs: pd.DataFrame | None = None,
    prefix: str = GROUP_PREFIX,
    max_per_value: int = MAX_PER_VALUE,
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Return (groups, overlaps).

    ``groups``: one row per entity in a group of two or more entities: ``entity_id``,
    ``group_id`` ('G' + the smallest hash of its record IDs), ``group_kind``,
    ``n_entities``, ``n_shared_values``.
    ``overlaps``: one row per pair of entities holding a value in common: ``entity_a`` <
    ``entity_b``, ``group_id``, ``n_shared``, ``shared_values`` (';'-joined ``kind:value``)
    and ``jaccard`` (shared values over all values the two hold).
    Household membership comes from the household links in ``links``.
    """
    code, entity_ids, _ = entity_codes(entities)
    n_ent = len(entity_ids)
    values, shared = entity_values(code, identifiers, hubs)
    vcode, _ = pd.factorize(shared["value_id"])
    label = components(n_ent + (vcode.max() + 1 if len(vcode) else 0), shared["e"].to_numpy(), n_ent + vcode)[:n_ent]
    per_label = np.bincount(label, minlength=label.max() + 1 if n_ent else 0)
    grouped = per_label[label] >= 2 if n_ent else np.zeros(0, dtype=bool)
    group_of = np.where(grouped, label, -1)

    overlaps = _overlaps(values, shared, group_of, entity_ids, max_per_value)
    members = np.flatnonzero(group_of >= 0)
    if len(members) == 0:
        empty = {c: pd.Series(dtype="string") for c in ("entity_id", "group_id", "group_kind")}
        empty.update(n_entities=pd.Series(dtype="int64"), n_shared_values=pd.Series(dtype="int64"))
        overlaps["group_id"] = pd.Series(dtype="string")
        return pd.DataFrame(empty), overlaps

    rec_group = group_of[code]
    in_group = rec_group >= 0
    names = names_per_label(rec_group[in_group], record_hashes(entities)[in_group], prefix)

    hh, _ = household_labels(code, n_ent, links)
    stats = _group_stats(group_of, hh, shared, members)
    kind = np.select(
        [
            (stats["with_hh"] == stats["n"]) & (stats["n_hh"] == 1),
            (stats["with_hh"] == stats["n"]) & (stats["n_hh"] >= 2),
            (stats["n"] >= 3) & (stats["n_values"] >= 2) & (stats["max_same_hh"] <= 1),
        ],
        list(GROUP_KINDS[:3]),
        GROUP_KINDS[3],
    )
    stats["kind"] = kind
    # rows sorted by (group_id, entity_id) text, by their ranks; each entity is in one group
    name_text = arrow_text(names)
    name_at = np.searchsorted(names.index.to_numpy(), group_of[members])
    members = members[np.lexsort((index_rank(entity_ids)[members], text_rank(name_text)[name_at]))]
    g = group_of[members]
    at = np.searchsorted(stats.index.to_numpy(), g)
    groups = pd.DataFrame(
        {
            "entity_id": pd.arrays.ArrowStringArray(arrow_text(entity_ids).take(pa.array(members))),
            "group_id": pd.arrays.ArrowStringArray(name_text.take(pa.array(np.searchsorted(names.index, g)))),
            "group_kind": pd.array(stats["kind"].to_numpy(dtype=object)[at], dtype="string"),
            "n_entities": stats["n"].to_numpy(dtype=np.int64)[at],
            "n_shared_values": stats["n_values"].to_numpy(dtype=np.int64)[at],
        }
    )
    pair_group = np.searchsorted(names.index.to_numpy(), overlaps.pop("group").to_numpy())
    overlaps["group_id"] = pd.arrays.ArrowStringArray(name_text.take(pa.array(pair_group)))
    return groups, overlaps


def _group_stats(group_of, hh, shared, members) -> pd.DataFrame:
    """Per group: entities ``n``, how many are in a household (``with_hh``), distinct
    households ``n_hh``, the most members in one household ``max_same_hh``, and distinct
    shared values ``n_values``."""
    g = group_of[members]
    h = hh[members]
    labels = np.unique(g)
    stats = pd.DataFrame(index=pd.Index(labels, name="group"))
    stats["n"] = pd.Series(g).value_counts().reindex(labels).to_numpy()
    in_hh = pd.DataFrame({"group": g[h >= 0], "hh": h[h >= 0]})
    per_hh = in_hh.groupby(["group", "hh"]).size()
    stats["with_hh"] = per_hh.groupby(level="group").sum().reindex(labels).fillna(0).astype(np.int64)
    stats["n_hh"] = per_hh.groupby(level="group").size().reindex(labels).fillna(0).astype(np.int64)
    stats["max_same_hh"] = per_hh.groupby(level="group").max().reindex(labels).fillna(0).astype(np.int64)
    values = pd.DataFrame({"group": group_of[shared["e"].to_numpy()], "v": shared["value_id"].to_numpy()})
    n_values = values.drop_duplicates().groupby("group").size()
    stats["n_values"] = n_values.reindex(labels).fillna(0).astype(np.int64)
    return stats


def _overlaps(values, shared, group_of, entity_ids, max_per_value) -> pd.DataFrame:
    """Entity pairs holding values in common, with the values and their Jaccard score."""
    columns = ["entity_a", "entity_b", "group", "n_shared", "shared_values", "jaccard"]
    small = shared[shared["holders"].to_numpy() <= max_per_value].reset_index(drop=True)
    i, j = pairs_within_values(small["value_id"].to_numpy())
    if len(i) == 0:
        return pd.DataFrame({c: pd.Series(dtype="string") for c in columns}).astype(
            {"group": "int64", "n_shared": "int64", "jaccard": "float64"}
        )
    e = small["e"].to_numpy()
    rank = index_rank(entity_ids)
    swap = rank[e[i]] > rank[e[j]]
    ea, eb = np.where(swap, e[j], e[i]), np.where(swap, e[i], e[j])
    # rank the distinct values by their text, then sort rows by (entity a, entity b, value)
    _, first, value_code = np.unique(small["value_id"].to_numpy(), return_index=True, return_inverse=True)
    label = arrow_text(small["label"])
    value_rank = text_rank(label.take(pa.array(first)))[value_code]
    pair = rank[ea] * len(entity_ids) + rank[eb]
    if len(entity_ids) ** 2 * (len(first) + 1) < 2**62:  # one int64 sort key when it fits
        order = np.argsort(pair * (len(first) + 1) + value_rank[i], kind="stable")
    else:
        order = np.lexsort((value_rank[i], pair))
    ea, eb, i, pair = ea[order], eb[order], i[order], pair[order]
    _, joined = join_runs_arrow(pair, label.take(pa.array(i)))  # rows are in runs of one entity pair
    starts = np.flatnonzero(np.concatenate([[True], pair[1:] != pair[:-1]]))
    n_shared = np.diff(np.append(starts, len(pair)))
    ea, eb = ea[starts], eb[starts]
    sizes = np.bincount(values["e"].to_numpy(), minlength=len(entity_ids))
    ids = arrow_text(entity_ids)
    out = pd.DataFrame(
        {
            "entity_a": pd.arrays.ArrowStringArray(ids.take(pa.array(ea))),
            "entity_b": pd.arrays.ArrowStringArray(ids.take(pa.array(eb))),
            "group": group_of[ea],
            "n_shared": n_shared.astype(np.int64),
            "shared_values": pd.arrays.ArrowStringArray(joined),
            "jaccard": n_shared / (sizes[ea] + sizes[eb] - n_shared),
        }
    )
    return out[columns]
