"""Entities, stable IDs, diagnostics, households and identity-sharing groups."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.clusters import (
    build_entities,
    build_groups,
    build_households,
    community_split,
    entity_diagnostics,
    stable_entity_ids,
)
from resolve.clusters.example import THRESHOLDS, worked_example
from resolve.clusters.keys import names_from_hashes
from resolve.errors import DecisionError, InputError
from resolve.links import type_links


def people_of(record_ids) -> pd.DataFrame:
    return pd.DataFrame({"record_id": pd.array(list(record_ids), dtype="string")})


def links_of(edges, link_type="same_person") -> pd.DataFrame:
    """A links table from (rec_a, rec_b, prob) triples (rec_a < rec_b is not required here)."""
    rows = [(min(a, b), max(a, b), p) for a, b, p in edges]
    frame = pd.DataFrame(rows, columns=["rec_a", "rec_b", "prob"]).astype({"rec_a": "int32", "rec_b": "int32"})
    frame["link_type"] = pd.array([link_type] * len(frame), dtype="string")
    frame["reasons"] = pd.array([""] * len(frame), dtype="string")
    return frame


def decisions(pairs) -> pd.DataFrame:
    return pd.DataFrame(pairs, columns=["record_id_a", "record_id_b"])


def members(entities: pd.DataFrame) -> set[frozenset]:
    return {frozenset(g) for g in entities.groupby("entity_id")["record_id"].agg(list)}


@pytest.fixture()
def example():
    ex = worked_example()
    ex["links"] = type_links(ex["pairs"], ex["people"], ex["identifiers"], THRESHOLDS, ex["hubs"])
    ex["entities"] = build_entities(ex["people"], ex["links"])
    return ex


# --- entities ------------------------------------------------------------------------------


def test_worked_example_entities(example):
    entities = example["entities"]
    assert list(entities.columns) == ["rec", "record_id", "entity_id"]
    assert entities["rec"].tolist() == list(range(10))
    assert frozenset({"C001", "C002"}) in members(entities)
    assert entities["entity_id"].nunique() == 9
    assert entities["entity_id"].str.match(r"^E[0-9a-f]{12}$").all()


def test_entity_ids_are_pinned(example):
    """IDs are a contract between runs: a change of hash (e.g. a library upgrade) shows here."""
    of = dict(zip(example["entities"]["record_id"], example["entities"]["entity_id"]))
    assert of["C001"] == of["C002"] == "E0c1bd2c1fbaf"  # the values docs/clusters.md shows
    assert of["C003"] == "E67a439b31ea6"


def test_colliding_names_are_lengthened():
    hashes = np.array([0xABCDEF012345_0001, 0xABCDEF012345_0002, 0x1], dtype=np.uint64)
    names = list(names_from_hashes(hashes, "E"))
    assert names == ["Eabcdef0123450001", "Eabcdef0123450002", "E000000000000"]


def test_must_link_and_cannot_link(example):
    people, links = example["people"], example["links"]
    joined = build_entities(people, links, must_link=decisions([("C001", "C009"), ("C404", "C001")]))
    assert frozenset({"C001", "C002", "C009"}) in members(joined)  # unknown C404 is ignored
    split = build_entities(people, links, cannot_link=decisions([("C002", "C001")]))
    assert {frozenset({"C001"}), frozenset({"C002"})} <= members(split)
    # must-link C001-C009 and cannot-link C002-C009: the cut falls on the C001-C002 link
    both = build_entities(
        people, links, must_link=decisions([("C001", "C009")]), cannot_link=decisions([("C002", "C009")])
    )
    assert {frozenset({"C001", "C009"}), frozenset({"C002"})} <= members(both)


def test_cannot_link_cuts_the_weakest_chain_link():
    people = people_of(["a", "b", "c", "d"])
    links = links_of([(0, 1, 0.999), (1, 2, 0.991), (2, 3, 0.998)])
    entities = build_entities(people, links, cannot_link=decisions([("a", "d")]))
    assert members(entities) == {frozenset("ab"), frozenset("cd")}


def test_contradictory_decisions_are_an_error():
    people = people_of(["a", "b", "c"])
    links = links_of([(0, 1, 0.999)])
    # a-b is only a scored link: cutting it honours cannot-link a-c
    fine = build_entities(people, links, must_link=decisions([("b", "c")]), cannot_link=decisions([("a", "c")]))
    assert members(fine) == {frozenset("a"), frozenset("bc")}
    with pytest.raises(DecisionError):
        build_entities(
            people, links, must_link=decisions([("a", "b"), ("b", "c")]), cannot_link=decisions([("a", "c")])
        )


def test_repeated_record_ids_are_refused():
    with pytest.raises(InputError):
        build_entities(people_of(["a", "a"]), links_of([]))


def _must_connected(n, must):
    graph = nx.Graph()
    graph.add_nodes_from(range(n))
    graph.add_edges_from(must)
    return {node: i for i, comp in enumerate(nx.connected_components(graph)) for node in comp}


pair_lists = st.lists(st.tuples(st.integers(0, 11), st.integers(0, 11)).filter(lambda p: p[0] != p[1]), max_size=8)


@settings(max_examples=80, deadline=None)
@given(
    n=st.integers(1, 12),
    edges=st.lists(st.tuples(st.integers(0, 11), st.integers(0, 11), st.floats(0.99, 1.0)), max_size=20),
    must=pair_lists,
    cannot=pair_lists,
    seed=st.integers(0, 2**16),
)
def test_entity_invariants(n, edges, must, cannot, seed):
    ids = [f"r{i:02d}" for i in range(n)]
    edges = [(a, b, p) for a, b, p in edges if a < n and b < n and a != b]
    must = [(a, b) for a, b in must if a < n and b < n]
    cannot = [(a, b) for a, b in cannot if a < n and b < n]
    people, links = people_of(ids), links_of(edges)
    must_df = decisions([(ids[a], ids[b]) for a, b in must])
    cannot_df = decisions([(ids[a], ids[b]) for a, b in cannot])
    try:
        entities = build_entities(people, links, must_df, cannot_df)
    except DecisionError:
        side = _must_connected(n, must)
        assert any(side[a] == side[b] for a, b in cannot)
        return
    # every record in exactly one entity
    assert entities["rec"].tolist() == list(range(n))
    assert entities["record_id"].tolist() == ids
    assert entities["entity_id"].notna().all()
    of = dict(zip(entities["record_id"], entities["entity_id"]))
    assert all(of[ids[a]] != of[ids[b]] for a, b in cannot)  # cannot-link wins over scores
    assert all(of[ids[a]] == of[ids[b]] for a, b in must)  # must-link wins over links
    # same input, same IDs; and the order of the link rows does not matter
    shuffled = links.sample(frac=1.0, random_state=seed % 1000).reset_index(drop=True)
    pd.testing.assert_frame_equal(entities, build_entities(people, shuffled, must_df, cannot_df))


@settings(max_examples=40, deadline=None)
@given(
    n=st.integers(1, 10),
    edges=st.lists(st.tuples(st.integers(0, 9), st.integers(0, 9), st.floats(0.99, 1.0)), max_size=15),
    order=st.randoms(use_true_random=False),
)
def test_entity_ids_do_not_depend_on_record_order(n, edges, order):
    ids = [f"r{i:02d}" for i in range(n)]
    edges = [(a, b, p) for a, b, p in edges if a < n and b < n and a != b]
    first = build_entities(people_of(ids), links_of(edges))
    perm = list(range(n))
    order.shuffle(perm)  # new rec i holds old record perm[i]
    new_of_old = {old: new for new, old in enumerate(perm)}
    second = build_entities(
        people_of([ids[old] for old in perm]), links_of([(new_of_old[a], new_of_old[b], p) for a, b, p in edges])
    )
    assert dict(zip(first["record_id"], first["entity_id"])) == dict(zip(second["record_id"], second["entity_id"]))


# --- stable IDs across runs ----------------------------------------------------------------


def entity_table(groups: dict[str, str]) -> pd.DataFrame:
    """{'A': 'abc'} -> records a, b, c in entity A."""
    rows = [(rid, eid) for eid, rids in groups.items() for rid in rids]
    return pd.DataFrame(rows, columns=["record_id", "entity_id"]).astype("string")


def ids_of(table: pd.DataFrame) -> dict[str, str]:
    return dict(zip(table["record_id"], table["entity_id"]))


def test_stable_ids_follow_the_largest_overlap():
    previous = entity_table({"E_a": "abc", "E_b": "de"})
    new = entity_table({"N1": "ab", "N2": "cde", "N3": "f"})
    got = ids_of(stable_entity_ids(new, previous))
    assert got["a"] == got["b"] == "E_a"  # 2 of E_a
    assert got["c"] == got["d"] == "E_b"  # 2 of E_b beats 1 of E_a
    assert got["f"] == "N3"  # new entity keeps its own ID


def test_stable_ids_tie_goes_to_the_smaller_previous_id_and_each_id_is_used_once():
    previous = entity_table({"E_x": "ab", "E_y": "cd"})
    merged = ids_of(stable_entity_ids(entity_table({"N": "abcd"}), previous))
    assert set(merged.values()) == {"E_x"}
    split = ids_of(stable_entity_ids(entity_table({"N1": "ab", "N2": "cd"}), entity_table({"E": "abcd"})))
    assert split["a"] == "E" and split["c"] == "N2"  # the tie goes to the smaller new ID


def test_stable_ids_never_reuse_a_previous_id():
    previous = entity_table({"N2": "ab", "E_old": "cd"})
    new = entity_table({"N1": "ab", "N2": "xy"})  # N2 is a brand-new entity whose ID was used before
    got = ids_of(stable_entity_ids(new, previous))
    assert got["a"] == "N2"
    assert got["x"] not in {"N2", "E_old", "N1"}
    assert got["x"] == got["y"]


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.integers(0, 4), min_size=1, max_size=12),
    st.lists(st.integers(0, 4), min_size=1, max_size=12),
)
def test_stable_id_invariants(old_groups, new_groups):
    previous = pd.DataFrame(
        {"record_id": [f"r{i}" for i in range(len(old_groups))], "entity_id": [f"E{g}" for g in old_groups]}
    ).astype("string")
    new = pd.DataFrame(
        {"record_id": [f"r{i}" for i in range(len(new_groups))], "entity_id": [f"N{g}" for g in new_groups]}
    ).astype("string")
    out = stable_entity_ids(new, previous)
    # same partition of records, one distinct ID per new entity
    assert out.groupby("entity_id")["record_id"].agg(frozenset).pipe(set) == members(new)
    # a carried-over ID belongs to a previous entity the new one overlaps
    old_of = dict(zip(previous["record_id"], previous["entity_id"]))
    for eid, rids in out.groupby("entity_id")["record_id"]:
        if eid in set(previous["entity_id"]):
            assert any(old_of.get(r) == eid for r in rids)
    # an entity that is unchanged keeps its ID
    for group in members(new) & members(previous):
        before = {old_of[r] for r in group}
        after = set(out.loc[out["record_id"].isin(group), "entity_id"])
        assert after == before


# --- diagnostics ---------------------------------------------------------------------------


def karate_entity():
    graph = nx.karate_club_graph()
    ids = [f"k{i:02d}" for i in range(graph.number_of_nodes())]
    links = links_of([(u, v, 1.0) for u, v in graph.edges()])
    return graph, ids, build_entities(people_of(ids), links), links


def test_louvain_reference_value_on_karate_club():
    # Source: /work/shared/CHECKS.md -- Zachary karate club, 34 nodes, 78 edges;
    # louvain_communities(G, weight=None, seed=0) reaches modularity 0.41979 with networkx 3.6
    # (computed); best known modularity 0.4198 (Brandes et al., IEEE TKDE 2008; from memory).
    graph = nx.karate_club_graph()
    assert (graph.number_of_nodes(), graph.number_of_edges()) == (34, 78)
    communities, quality = community_split(graph, weight=None, seed=0)
    assert quality == pytest.approx(0.41979, abs=5e-6)
    assert quality <= 0.4198 + 1e-4
    assert sorted(n for c in communities for n in c) == list(range(34))


def test_karate_entity_diagnostics():
    graph, ids, entities, links = karate_entity()
    diag = entity_diagnostics(entities, links)
    assert len(diag) == 1
    row = diag.iloc[0]
    assert row["size"] == 34 and row["n_links"] == 78
    assert row["density"] == pytest.approx(78 / (34 * 33 / 2))
    # networkx reference (networkx 3.6, computed): the only bridge is 0-11, the only cut vertex 0
    assert [tuple(sorted(e)) for e in nx.bridges(graph)] == [(0, 11)]
    assert row["bridges"] == "k00,k11" and row["articulation_points"] == "k00"
    assert row["split_kind"] == "communities"
    groups = [[int(r[1:]) for r in g.split(",")] for g in row["split_groups"].split(";")]
    # CHECKS.md value (networkx 3.6, seed 0): modularity 0.41979 for the karate club
    assert nx.community.modularity(graph, groups, weight=None) == pytest.approx(0.41979, abs=5e-6)
    crossing = [(u, v) for u, v in graph.edges() if not any(u in g and v in g for g in groups)]
    assert len(row["cut_links"].split(";")) == len(crossing)


def entity_with(edges, conflicts=()):
    n = 1 + max(max(a, b) for a, b, _ in list(edges) + list(conflicts))
    ids = [chr(ord("a") + i) for i in range(n)]
    links = pd.concat([links_of(edges), links_of(conflicts, "none")], ignore_index=True)
    entities = build_entities(people_of(ids), links)
    return entity_diagnostics(entities, links)


def test_split_on_conflicting_pair():
    # a-b and b-c are strong, but a-c was scored as two different people
    diag = entity_with([(0, 1, 0.999), (1, 2, 0.9999)], conflicts=[(0, 2, 0.02)])
    row = diag.iloc[0]
    assert row["n_conflicts"] == 1 and row["split_kind"] == "conflict"
    assert row["split_groups"] == "a;b,c" and row["cut_links"] == "a,b"
    assert row["cut_weight"] == pytest.approx(0.999)


def test_split_on_weak_bridge():
    triangle = [(0, 1, 0.9999), (1, 2, 0.9999), (0, 2, 0.9999)]
    other = [(3, 4, 0.9999), (4, 5, 0.9999), (3, 5, 0.9999)]
    row = entity_with(triangle + other + [(2, 3, 0.995)]).iloc[0]
    assert row["split_kind"] == "weak_bridge"
    assert row["split_groups"] == "a,b,c;d,e,f" and row["cut_links"] == "c,d"
    assert row["weakest_link"] == "c,d" and row["min_prob"] == pytest.approx(0.995)


def test_split_on_bridge_record():
    # two triangles sharing record c; c is more strongly tied to a and b
    edges = [(0, 1, 0.9999), (0, 2, 0.9999), (1, 2, 0.9999), (2, 3, 0.9995), (2, 4, 0.9995), (3, 4, 0.9999)]
    row = entity_with(edges).iloc[0]
    assert row["articulation_points"] == "c" and row["bridges"] == ""
    assert row["split_kind"] == "bridge_record"
    assert row["split_groups"] == "a,b,c;d,e" and row["separated_records"] == "d;e"
    assert row["cut_links"] == "c,d;c,e"


def test_strong_complete_entity_has_no_suggestion():
    row = entity_with([(0, 1, 0.9999), (1, 2, 0.9999), (0, 2, 0.9999)]).iloc[0]
    assert pd.isna(row["split_kind"]) and row["density"] == 1.0


@settings(max_examples=50, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 8), st.integers(0, 8), st.floats(0.99, 1.0)), min_size=1, max_size=20))
def test_bridges_and_cut_vertices_match_networkx(edges):
    edges = list({(min(a, b), max(a, b)): (a, b, p) for a, b, p in edges if a != b}.values())
    if not edges:
        return
    n = 1 + max(max(a, b) for a, b, _ in edges)
    ids = [f"r{i}" for i in range(n)]
    links = links_of(edges)
    entities = build_entities(people_of(ids), links)
    diag = entity_diagnostics(entities, links).set_index("entity_id")
    graph = nx.Graph([(a, b) for a, b, _ in edges])
    of = dict(zip(entities["rec"], entities["entity_id"]))
    for comp in nx.connected_components(graph):
        row = diag.loc[of[next(iter(comp))]]
        sub = graph.subgraph(comp)
        expected = sorted(",".join(sorted((ids[u], ids[v]))) for u, v in nx.bridges(sub))
        assert sorted(filter(None, row["bridges"].split(";"))) == expected
        points = sorted(ids[v] for v in nx.articulation_points(sub))
        assert sorted(filter(None, row["articulation_points"].split(";"))) == points


# --- households and groups -----------------------------------------------------------------


def test_worked_example_household(example):
    households = build_households(
        example["entities"], example["links"], example["identifiers"], example["people"], example["hubs"]
    )
    assert households["household_id"].nunique() == 1 and len(households) == 2
    row = households.iloc[0]
    assert row["household_id"].startswith("H") and row["size"] == 2
    assert row["evidence"] == "same_address;shared_landline;same_family_name"
    assert row["shared_values"] == "address:12 oak st|20001;family_name:hernandez;landline:+12025550188"
    of = dict(zip(example["entities"]["record_id"], example["entities"]["entity_id"]))
    assert set(households["entity_id"]) == {of["C001"], of["C003"]}


def test_worked_example_groups(example):
    groups, overlaps = build_groups(example["entities"], example["links"], example["identifiers"], example["hubs"])
    of = dict(zip(example["entities"]["record_id"], example["entities"]["entity_id"]))
    kind = dict(zip(groups["entity_id"], groups["group_kind"]))
    assert kind[of["C005"]] == kind[of["C006"]] == kind[of["C007"]] == "ring_like"
    assert kind[of["C001"]] == kind[of["C003"]] == kind[of["C004"]] == "mixed"
    assert of["C008"] not in kind and of["C010"] not in kind  # hub and placeholder only
    assert groups["entity_id"].is_unique
    pair = overlaps[overlaps["entity_a"].isin([of["C005"], of["C006"]]) & overlaps["entity_b"].isin([of["C005"], of["C006"]])]
    assert pair["shared_values"].tolist() == ["email:lucky7@example.org;phone:+12025550150"]
    assert pair["jaccard"].tolist() == [pytest.approx(2 / 4)]  # {phone, email, address} each, 2 shared
    assert (overlaps["entity_a"] < overlaps["entity_b"]).all()


def test_group_kinds_for_households():
    # two households (a,b at one address; c,d at another) joined by a mailbox b and c share
    ids = pd.DataFrame(
        [(0, "address", "X"), (1, "address", "X"), (2, "address", "Y"), (3, "address", "Y"),
         (1, "email", "fam@example.com"), (2, "email", "fam@example.com")],
        columns=["rec", "kind", "key"],
    ).assign(status="valid", detail=None)
    entities = build_entities(people_of("abcd"), links_of([]))
    links = links_of([(0, 1, 0.01), (2, 3, 0.01)], "household")
    groups, _ = build_groups(entities, links, ids)
    assert set(groups["group_kind"]) == {"several_households"} and len(groups) == 4
    only_one = ids[ids["kind"] == "address"]
    groups, _ = build_groups(entities, links, only_one)
    assert set(groups["group_kind"]) == {"single_household"} and groups["group_id"].nunique() == 2


@pytest.mark.parametrize("how", ["hub", "placeholder", "neither"])
def test_widely_shared_value_joins_no_strangers(how):
    n = 30
    people = people_of([f"s{i:02d}" for i in range(n)])
    ids = pd.DataFrame({"rec": range(n), "kind": "phone", "key": "+18005550100", "detail": "toll_free"})
    ids["status"] = "placeholder" if how == "placeholder" else "valid"
    hubs = pd.DataFrame({"kind": ["phone"], "key": ["+18005550100"]}) if how == "hub" else None
    # strangers: different names and birth dates, nothing else in common
    pairs = pd.DataFrame({"rec_a": range(n - 1), "rec_b": range(1, n), "prob": 0.001})
    people = people.assign(
        given_key=[f"g{i}" for i in range(n)], given_root=[f"g{i}" for i in range(n)],
        family_key=[f"f{i}" for i in range(n)], family_core=[f"f{i}" for i in range(n)],
        birth_date=[f"19{50 + i}-01-01" for i in range(n)],
    )
    links = type_links(pairs, people, ids, THRESHOLDS, hubs)
    entities = build_entities(people, links)
    groups, overlaps = build_groups(entities, links, ids, hubs)
    assert entities["entity_id"].nunique() == n
    if how == "neither":  # the check has teeth: an unlisted shared value does join them
        assert len(groups) == n and (links["link_type"] == "household").all()
    else:
        assert len(groups) == 0 and len(overlaps) == 0
        assert (links["link_type"] == "none").all()
