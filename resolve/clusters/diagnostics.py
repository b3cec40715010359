"""Entity diagnostics: how firmly each entity hangs together, and where it might come apart.

A component of same-person links can join two people through one weak link, through one
record that resembles both (a bridge record), or through a chain of records that each look
like the next. Merging two people wrongly exposes one customer's data to another, so every
multi-record entity gets cheap column-wise statistics (size, link density, weakest link,
review-band and conflicting pairs inside it), and only the suspect ones (three or more
records and a weak link, a conflicting pair, a missing link or a large size) get a graph of
their own in networkx for bridges, articulation points and a split suggestion.

Split suggestions, first that applies:

1. ``conflict``: a pair inside the entity was scored as different people; cut the minimum cut
   (capacity = link probability) between its two records.
2. ``weak_bridge``: a bridge link with probability below ``weak``; cut it.
3. ``communities``: an entity of more than ``large`` records falls into communities (Louvain,
   fixed seed) with modularity at least ``min_modularity``; cut the links between them. In
   an entity that large, the community structure says more than any single record.
4. ``bridge_record``: a record whose removal leaves two or more parts of two or more records;
   it stays with the part it is most strongly linked to and its links to the others are cut.

Diagnostics see the links only: records joined by a must-link decision without a same-person
link between them show as separate parts of the entity's graph.

A split suggestion is a lead for a reviewer, never a decision.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pandas as pd

from resolve.clusters import graphs
from resolve.clusters.sharing import entity_codes
from resolve.links import HOUSEHOLD, NONE, REVIEW, SAME_PERSON, SHARED_IDENTITY

WEAK = 0.999
LARGE = 20
MIN_MODULARITY = 0.3
SEED = 0

COLUMNS = (
    "entity_id", "size", "n_links", "density", "min_prob", "mean_prob", "weakest_link",
    "n_review_links", "n_conflicts", "bridges", "articulation_points", "split_kind",
    "split_groups", "separated_records", "cut_links", "cut_weight",
)


def community_split(graph: nx.Graph, weight: str | None = "prob", seed: int = SEED) -> tuple[list[set], float]:
    """Louvain communities of ``graph`` (fixed seed) and their modularity."""
    found = nx.community.louvain_communities(graph, weight=weight, seed=seed)
    communities = sorted((set(c) for c in found), key=min)
    return communities, nx.community.modularity(graph, communities, weight=weight)


def _pair_text(u: str, v: str) -> str:
    return f"{min(u, v)},{max(u, v)}"


def _pair_texts(record_id: np.ndarray, a: pd.Series, b: pd.Series) -> pd.Series:
    """``a,b`` text (smaller record ID first) for each pair of recs, keeping the index."""
    ra = pd.Series(record_id[a.to_numpy()], index=a.index, dtype="string")
    rb = pd.Series(record_id[b.to_numpy()], index=a.index, dtype="string")
    first = (ra <= rb).to_numpy(dtype=bool)
    return ra.where(first, rb) + "," + rb.where(first, ra)


def entity_diagnostics(
    entities: pd.DataFrame,
    links: pd.DataFrame,
    weak: float = WEAK,
    large: int = LARGE,
    min_modularity: float = MIN_MODULARITY,
) -> pd.DataFrame:
    """One row per entity of two or more records; columns in `COLUMNS`.

    Record pairs in text columns are written ``a,b`` and lists are ';'-joined;
    ``split_groups`` is written ``a,b;c`` (members ',' joined, groups ';' joined), the form
    the split decision takes. ``bridges`` and ``articulation_points`` are empty when there are
    none; the split columns are <NA> when there is no suggestion.
    """
    code, entity_ids, record_id = entity_codes(entities)
    size = np.bincount(code, minlength=len(entity_ids))
    a = links["rec_a"].to_numpy(dtype=np.int64)
    b = links["rec_b"].to_numpy(dtype=np.int64)
    inside = code[a] == code[b]
    frame = pd.DataFrame(
        {
            "e": code[a][inside],
            "a": a[inside],
            "b": b[inside],
            "p": links["prob"].to_numpy(dtype=np.float64)[inside],
            "t": links["link_type"].iloc[np.flatnonzero(inside)].to_numpy(dtype=object),
        }
    )
    same = frame[frame["t"] == SAME_PERSON].sort_values(["e", "p", "a", "b"], kind="stable")
    same = same.drop_duplicates(["a", "b"])  # a pair listed twice counts once, at its weakest
    conflicts = frame[frame["t"].isin([HOUSEHOLD, SHARED_IDENTITY, NONE])].sort_values(
        ["e", "p", "a", "b"], kind="stable"
    )

    multi = np.flatnonzero(size >= 2)
    out = pd.DataFrame({"e": multi, "entity_id": entity_ids[multi], "size": size[multi]})
    grouped = same.groupby("e")["p"]
    out["n_links"] = out["e"].map(grouped.size()).fillna(0).astype(np.int64)
    out["min_prob"] = out["e"].map(grouped.min())
    out["mean_prob"] = out["e"].map(grouped.mean())
    out["density"] = out["n_links"] / (out["size"] * (out["size"] - 1) / 2)
    weakest = same.drop_duplicates("e").set_index("e")
    out["weakest_link"] = out["e"].map(_pair_texts(record_id, weakest["a"], weakest["b"])).astype("string")
    out["n_review_links"] = out["e"].map((frame["t"] == REVIEW).groupby(frame["e"]).sum()).fillna(0).astype(np.int64)
    out["n_conflicts"] = out["e"].map(conflicts.groupby("e").size()).fillna(0).astype(np.int64)
    for column in COLUMNS[9:]:
        out[column] = pd.array([pd.NA] * len(out), dtype="Float64" if column == "cut_weight" else "string")
    # exact for every row: entities that get no graph below are complete (no bridge, no cut
    # vertex) or pairs, whose one link is a bridge
    out["bridges"] = pd.array([""] * len(out), dtype="string")
    out["articulation_points"] = pd.array([""] * len(out), dtype="string")
    pairs2 = (out["size"] == 2) & (out["n_links"] >= 1)
    out.loc[pairs2, "bridges"] = out.loc[pairs2, "weakest_link"]

    complete = out["n_links"] == out["size"] * (out["size"] - 1) // 2
    suspect = (out["size"] >= 3) & (
        (out["min_prob"].fillna(0) < weak) | (out["n_conflicts"] > 0) | ~complete | (out["size"] > large)
    )
    members = np.argsort(code, kind="stable")
    starts = np.concatenate([[0], np.cumsum(size)])
    same_cols = [same[c].to_numpy() for c in ("e", "a", "b", "p")]
    conf_cols = [conflicts[c].to_numpy() for c in ("e", "a", "b")]
    positions = np.flatnonzero(suspect.to_numpy())
    found = []
    for e in out["e"].to_numpy()[positions]:
        lo, hi = np.searchsorted(same_cols[0], [e, e + 1])
        clo, chi = np.searchsorted(conf_cols[0], [e, e + 1])
        edges = [col[lo:hi].tolist() for col in same_cols[1:]]
        conflict_pairs = list(zip(conf_cols[1][clo:chi].tolist(), conf_cols[2][clo:chi].tolist()))
        nodes = members[starts[e] : starts[e + 1]]
        found.append(_examine(nodes, edges, conflict_pairs, record_id, weak, large, min_modularity))
    if found:
        found = pd.DataFrame(found, index=positions)
        for column in found.columns:
            values = out[column].copy()
            values.iloc[positions] = found[column].to_numpy()
            out[column] = values
    return out.drop(columns="e").reset_index(drop=True)[list(COLUMNS)]


def _examine(nodes, edges, conflicts, record_id, weak, large, min_modularity) -> dict:
    """Bridges, articulation points and a split suggestion for one entity's graph."""
    ordered = sorted(zip(*edges))
    adj = graphs.adjacency(sorted(int(n) for n in nodes), ordered)
    rid = lambda n: record_id[n]  # noqa: E731 - short local lookup
    points, found_bridges = graphs.cut_points_and_bridges(adj)
    bridges = sorted((_pair_text(rid(u), rid(v)), u, v) for u, v in found_bridges)
    found = dict.fromkeys(COLUMNS[11:])
    found.update(bridges=";".join(t for t, _, _ in bridges),
                 articulation_points=";".join(sorted(rid(n) for n in points)))
    groups = _suggest(adj, ordered, conflicts, bridges, points, record_id, weak, large, min_modularity)
    if groups is None:
        return found
    kind, parts = groups
    named = sorted((sorted(rid(n) for n in part) for part in parts), key=lambda p: p[0])
    side = {n: i for i, part in enumerate(parts) for n in part}
    cut = sorted(
        (_pair_text(rid(u), rid(v)), p) for u in adj for v, p in adj[u].items() if u < v and side[u] != side[v]
    )
    largest = max(parts, key=lambda p: (len(p), -min(p)))
    found.update(
        split_kind=kind,
        split_groups=";".join(",".join(p) for p in named),
        separated_records=";".join(sorted(rid(n) for n in adj if n not in largest)),
        cut_links=";".join(t for t, _ in cut),
        cut_weight=float(sum(p for _, p in cut)),
    )
    return found


def _nx_graph(adj: graphs.Adjacency, ordered) -> nx.Graph:
    """The entity's graph in networkx, built in the same order as its adjacency."""
    graph = nx.Graph()
    graph.add_nodes_from(adj)
    graph.add_edges_from((u, v, {"prob": p}) for u, v, p in ordered)
    return graph


def _suggest(adj, ordered, conflicts, bridges, points, record_id, weak, large, min_modularity):
    """Return (kind, list of node sets) or None, by the rules in the module docstring."""
    if conflicts:
        part_of = {n: i for i, part in enumerate(graphs.components(adj)) for n in part}
        for s, t in conflicts:
            if s in part_of and t in part_of and part_of[s] == part_of[t]:  # a path joins them
                _, (side_s, side_t) = nx.minimum_cut(_nx_graph(adj, ordered), s, t, capacity="prob")
                return "conflict", [set(side_s), set(side_t)]
    weak_bridges = sorted((adj[u][v], text, u, v) for text, u, v in bridges if adj[u][v] < weak)
    if weak_bridges:
        _, _, u, v = weak_bridges[0]
        return "weak_bridge", graphs.components(adj, without_edge=(u, v))
    if len(adj) > large and ordered:
        communities, quality = community_split(_nx_graph(adj, ordered))
        if len(communities) >= 2 and quality >= min_modularity:
            return "communities", communities
    best = None
    for point in points:
        parts = sorted(graphs.components(adj, without_node=point), key=lambda c: (-len(c), min(c)))
        if sum(len(p) >= 2 for p in parts) < 2:
            continue
        rank = (-len(parts[1]), record_id[point])
        if best is None or rank < best[0]:
            best = (rank, point, parts)
    if best is not None:
        _, point, parts = best
        pull = [sum(adj[point][n] for n in adj[point] if n in p) for p in parts]
        home = max(range(len(parts)), key=lambda i: (pull[i], len(parts[i]), -min(parts[i])))
        parts[home] = parts[home] | {point}
        return "bridge_record", parts
    return None
