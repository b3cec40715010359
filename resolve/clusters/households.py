"""Households: different entities (people) joined by household links.

Two records typed `household` belong to different people who share a home address, a
landline, or a phone or email together with a family name. Joining the entities at either end
of such links (connected components over entity-level edges) gives households. Each household
carries the evidence found on its links and, when the identifier and people tables are given,
the values its members hold in common, so a reviewer can confirm it without opening records.

A household is a lead for a reviewer; it says nothing about how the people are related.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa

from resolve.clusters.keys import arrow_text, components, index_rank, names_per_label, text_rank
from resolve.clusters.sharing import (NATIONAL_ID_KIND, entity_codes, entity_values, joined_per_group,
                                      record_hashes, values_in_common)
from resolve.links import HOUSEHOLD, REASONS

HOUSEHOLD_PREFIX = "H"
EVIDENCE = ("same_address", "shared_landline", "shared_phone", "shared_email", "same_family_name")
"""Reason codes that count as household evidence, in the order they are written."""


def household_labels(code: np.ndarray, n_entities: int, links: pd.DataFrame) -> tuple[np.ndarray, pd.DataFrame]:
    """Household label per entity code (-1 for none) and the entity-level household links
    (``ea``, ``eb``, ``reasons``)."""
    rows = np.flatnonzero((links["link_type"] == HOUSEHOLD).to_numpy(dtype=bool))
    ea = code[links["rec_a"].to_numpy(dtype=np.int64)[rows]]
    eb = code[links["rec_b"].to_numpy(dtype=np.int64)[rows]]
    between = ea != eb
    edges = pd.DataFrame(
        {"ea": ea[between], "eb": eb[between], "reasons": links["reasons"].iloc[rows[between]].to_numpy()}
    )
    labels = components(n_entities, edges["ea"].to_numpy(), edges["eb"].to_numpy())
    in_any = np.zeros(n_entities, dtype=bool)
    in_any[edges["ea"].to_numpy()] = True
    in_any[edges["eb"].to_numpy()] = True
    return np.where(in_any, labels, -1), edges


def _evidence(group: np.ndarray, reasons: pd.Series) -> pd.Series:
    """Household reason codes found on each group's links, ';'-joined in `REASONS` order.

    Reason strings are split once per distinct string; groups are combined as bit masks.
    """
    if len(group) == 0:
        return pd.Series([], dtype="string")
    codes, distinct = pd.factorize(reasons)
    wanted = [c for c in REASONS if c in EVIDENCE]
    found = [set(str(r).split(";")) for r in distinct]
    masks = np.array([sum(1 << i for i, c in enumerate(wanted) if c in f) for f in found] + [0])[codes]
    order = np.argsort(group, kind="stable")
    group, masks = group[order], masks[order]
    starts = np.flatnonzero(np.concatenate([[True], group[1:] != group[:-1]]))
    distinct_masks, inverse = np.unique(np.bitwise_or.reduceat(masks, starts), return_inverse=True)
    words = np.array([";".join(c for i, c in enumerate(wanted) if m >> i & 1) for m in distinct_masks], dtype=object)
    return pd.Series(words[inverse], index=group[starts], dtype="string")


def build_households(
    entities: pd.DataFrame,
    links: pd.DataFrame,
    identifiers: pd.DataFrame | None = None,
    people: pd.DataFrame | None = None,
    hubs: pd.DataFrame | None = None,
    prefix: str = HOUSEHOLD_PREFIX,
) -> pd.DataFrame:
    """One row per entity that belongs to a household.

    Columns: ``entity_id``, ``household_id`` ('H' + the smallest hash of its record IDs),
    ``size`` (entities in the household), ``evidence`` (household reason codes found on its
    links, ';'-joined) and ``shared_values`` (address, phone and email values and family names
    held by two or more of its entities, as ``kind:value``; <NA> unless ``identifiers`` or
    ``people`` are given).
    """
    code, entity_ids, _ = entity_codes(entities)
    n_entities = len(entity_ids)
    label, edges = household_labels(code, n_entities, links)
    members = np.flatnonzero(label >= 0)
    columns = ["entity_id", "household_id", "size", "evidence", "shared_values"]
    if len(members) == 0:
        return pd.DataFrame({c: pd.Series(dtype="int64" if c == "size" else "string") for c in columns})

    rec_label = label[code]
    in_hh = rec_label >= 0
    names = names_per_label(rec_label[in_hh], record_hashes(entities)[in_hh], prefix)

    evidence = _evidence(label[edges["ea"].to_numpy()], edges["reasons"])

    # rows in (household_id, entity_id) text order, by their ranks; each entity is in one household
    name_text = arrow_text(names)
    name_rank = text_rank(name_text)
    members = members[np.lexsort((index_rank(entity_ids)[members],
                                  name_rank[np.searchsorted(names.index.to_numpy(), label[members])]))]
    group = label[members]
    out = pd.DataFrame(
        {
            "entity_id": pd.arrays.ArrowStringArray(arrow_text(entity_ids).take(pa.array(members))),
            "household_id": pd.arrays.ArrowStringArray(
                name_text.take(pa.array(np.searchsorted(names.index.to_numpy(), group)))),
            "size": np.bincount(group)[group],
            "evidence": pd.Series(group).map(evidence).astype("string").to_numpy(),
        }
    )
    common = []
    if identifiers is not None:
        # only members' values can be held in common, and national IDs never count here
        _, shared = entity_values(code, identifiers, hubs, records=in_hh)
        shared = shared[shared["kind"].to_numpy() != NATIONAL_ID_KIND]
        common.append(values_in_common(label, shared))
    if people is not None:
        rows = np.flatnonzero(in_hh)  # records of household members only
        fam = people["family_key"].astype("string").iloc[rows].reset_index(drop=True)
        has = fam.notna().to_numpy()
        codes_f, _ = pd.factorize(fam[has])
        family = pd.DataFrame(
            {"e": code[rows[has]], "value_id": codes_f, "label": ("family_name:" + fam[has]).to_numpy()}
        ).drop_duplicates(["e", "value_id"])
        common.append(values_in_common(label, family))
    if common:
        out["shared_values"] = joined_per_group(pd.concat(common), "label", group).to_numpy()
    else:
        out["shared_values"] = pd.array([pd.NA] * len(out), dtype="string")
    return out.astype({c: "string" for c in ("entity_id", "household_id", "evidence", "shared_values")})
