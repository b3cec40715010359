"""The fast paths of the cluster and save stages give the same answers as the plain ones.

Shared integer codes (`resolve.clusters.codes`), the plain-Python graph routines behind entity
diagnostics (`resolve.clusters.graphs`), record naming from precomputed arrays, hub lookup and
the background run writer are each checked against the straightforward pandas or networkx
computation they replace.
"""

from __future__ import annotations

import json

import networkx as nx
import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.clusters import graphs
from resolve.clusters.codes import first_seen_codes, isin, take_text, text_codes
from resolve.clusters.diagnostics import COLUMNS, _examine, _pair_text, community_split
from resolve.clusters.keys import hash_text, member_names, member_names_at, text_rank
from resolve.errors import ProjectError
from resolve.links import hub_rows
from resolve.project.runs import Project, parquet_options


def chunked_strings(values: list, chunk: int = 3) -> pd.Series:
    """A string Series whose Arrow data comes in several chunks, as Parquet reads give."""
    parts = [pa.array(values[i:i + chunk], type=pa.large_string()) for i in range(0, len(values), chunk)]
    data = pa.chunked_array(parts or [pa.array([], type=pa.large_string())])
    return pd.Series(pd.arrays.ArrowStringArray(data))


words = st.lists(st.one_of(st.none(), st.sampled_from(["a", "b", " a", "c", "", "dd"])), max_size=30)


# --- shared codes ---------------------------------------------------------------------------


@settings(max_examples=60, deadline=None)
@given(words)
def test_text_codes_match_pandas_factorize(values):
    series = chunked_strings(values)
    codes, uniques = text_codes(series)
    expected, found = pd.factorize(series)
    assert codes.tolist() == expected.tolist()
    assert list(uniques) == list(found)
    assert not codes.flags.writeable  # shared between callers, so nobody may change it


def test_text_codes_are_kept_per_column_and_renewed_when_it_changes():
    frame = pd.DataFrame({"key": chunked_strings(["x", "y", "x"])})
    first = text_codes(frame["key"])
    assert text_codes(frame["key"])[0] is first[0]  # same Arrow data: the kept codes
    frame.loc[1, "key"] = "x"  # assigning replaces the Arrow data
    again, uniques = text_codes(frame["key"])
    assert again.tolist() == [0, 0, 0] and list(uniques) == ["x"]


def test_text_codes_of_other_dtypes_fall_back_to_pandas():
    series = pd.Series(["b", None, "a", "b"], dtype=object)
    codes, uniques = text_codes(series)
    assert codes.tolist() == [0, -1, 1, 0] and list(uniques) == ["b", "a"]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(-2, 40), max_size=60), st.booleans())
def test_first_seen_codes_match_pandas(values, small):
    values = np.array(values, dtype=np.int64)
    if small:
        values = values % 5 - (values < 0)  # a few categories and some missing
    codes, uniques = first_seen_codes(values)
    expected = np.full(len(values), -1)
    valid = values >= 0
    found, distinct = pd.factorize(values[valid])
    expected[valid] = found
    assert codes.tolist() == expected.tolist()
    assert uniques.tolist() == list(distinct)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.sampled_from(["p", "q", None, "rr"]), min_size=1, max_size=25), st.data())
def test_take_text_matches_iloc(values, data):
    series = chunked_strings(values, chunk=4)
    rows = data.draw(st.lists(st.integers(0, len(values) - 1), max_size=15))
    got = take_text(series, np.array(rows, dtype=np.int64))
    assert got.tolist() == series.iloc[rows].tolist()


def test_isin_on_categoricals_and_text():
    cat = pd.Series(pd.Categorical(["valid", "placeholder", None, "invalid"]))
    assert isin(cat, ["valid", "invalid"]).tolist() == [True, False, False, True]
    text = pd.Series(["valid", None, "x"], dtype="string")
    assert isin(text, ["x"]).tolist() == [False, False, True]


# --- hubs -----------------------------------------------------------------------------------


def test_hub_rows_match_kind_and_key_together():
    identifiers = pd.DataFrame({
        "kind": pd.Categorical(["phone", "email", "phone", "email", "phone"]),
        "key": chunked_strings(["+1800", "+1800", "+1999", "na@na.com", None]),
    })
    hubs = pd.DataFrame({"kind": ["phone", "email"], "key": ["+1800", "na@na.com"]}).astype("string")
    # "+1800" is a hub phone; the same text as an email is not a hub (common practice: hubs are per kind)
    assert hub_rows(identifiers, hubs).tolist() == [True, False, False, True, False]
    with_missing = pd.concat([hubs, pd.DataFrame({"kind": ["phone"], "key": [pd.NA]})]).astype("string")
    expected = [True, False, False, True, bool(identifiers["key"].isin(with_missing["key"]).iloc[4])]
    assert hub_rows(identifiers, with_missing).tolist() == expected


# --- naming records -------------------------------------------------------------------------


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 4), st.integers(0, 30)), max_size=40, unique_by=lambda t: t[1]))
def test_member_names_at_matches_member_names(rows):
    everyone = pd.Series([f"R{i:03d}" for i in range(31)], dtype="string")
    group = np.array([g for g, _ in rows], dtype=np.int64)
    recs = np.array([r for _, r in rows], dtype=np.int64)
    plain = member_names(group, everyone.iloc[recs].reset_index(drop=True), "x-")
    fast = member_names_at(group, recs, pa.array(everyone.tolist(), type=pa.large_string()),
                           text_rank(everyone), hash_text(everyone), "x-")
    pd.testing.assert_frame_equal(plain, fast)


# --- graphs behind diagnostics --------------------------------------------------------------


graph_edges = st.lists(st.tuples(st.integers(0, 9), st.integers(0, 9), st.sampled_from([0.2, 0.5, 0.9995, 1.0])),
                       max_size=20)


@settings(max_examples=80, deadline=None)
@given(graph_edges)
def test_cut_points_and_bridges_match_networkx(edges):
    edges = [(u, v, p) for u, v, p in edges if u != v]
    adj = graphs.adjacency(range(10), sorted(edges))
    graph = nx.Graph()
    graph.add_nodes_from(range(10))
    graph.add_edges_from((u, v) for u, v, _ in edges)
    points, bridges = graphs.cut_points_and_bridges(adj)
    assert points == set(nx.articulation_points(graph))
    assert {frozenset(b) for b in bridges} == {frozenset(b) for b in nx.bridges(graph)}
    assert sorted(map(sorted, graphs.components(adj))) == sorted(map(sorted, nx.connected_components(graph)))


def _reference_examine(nodes, edges, conflicts, record_id, weak, large, min_modularity) -> dict:
    """The networkx version of `_examine` that diagnostics used before (kept as the reference)."""
    graph = nx.Graph()
    graph.add_nodes_from(sorted(int(n) for n in nodes))
    graph.add_edges_from((u, v, {"prob": p}) for u, v, p in sorted(zip(*edges)))
    rid = lambda n: record_id[n]  # noqa: E731
    bridges = sorted((_pair_text(rid(u), rid(v)), u, v) for u, v in nx.bridges(graph))
    found = dict.fromkeys(COLUMNS[11:])
    found.update(bridges=";".join(t for t, _, _ in bridges),
                 articulation_points=";".join(sorted(rid(n) for n in nx.articulation_points(graph))))
    parts = None
    for s, t in conflicts:
        if nx.has_path(graph, s, t):
            _, (a, b) = nx.minimum_cut(graph, s, t, capacity="prob")
            parts = ("conflict", [set(a), set(b)])
            break
    weak_bridges = sorted((graph[u][v]["prob"], t, u, v) for t, u, v in bridges if graph[u][v]["prob"] < weak)
    if parts is None and weak_bridges:
        trimmed = graph.copy()
        trimmed.remove_edge(*weak_bridges[0][2:])
        parts = ("weak_bridge", [set(c) for c in nx.connected_components(trimmed)])
    if parts is None and graph.number_of_nodes() > large and graph.number_of_edges():
        communities, quality = community_split(graph)
        if len(communities) >= 2 and quality >= min_modularity:
            parts = ("communities", communities)
    if parts is None:
        best = None
        for point in nx.articulation_points(graph):
            rest = graph.subgraph(n for n in graph.nodes if n != point)
            split = sorted((set(c) for c in nx.connected_components(rest)), key=lambda c: (-len(c), min(c)))
            if sum(len(p) >= 2 for p in split) >= 2 and (best is None or (-len(split[1]), rid(point)) < best[0]):
                best = ((-len(split[1]), rid(point)), point, split)
        if best is not None:
            _, point, split = best
            pull = [sum(graph[point][n]["prob"] for n in graph[point] if n in p) for p in split]
            home = max(range(len(split)), key=lambda i: (pull[i], len(split[i]), -min(split[i])))
            split[home] = split[home] | {point}
            parts = ("bridge_record", split)
    if parts is None:
        return found
    kind, parts = parts
    side = {n: i for i, part in enumerate(parts) for n in part}
    cut = sorted((_pair_text(rid(u), rid(v)), d["prob"]) for u, v, d in graph.edges(data=True) if side[u] != side[v])
    largest = max(parts, key=lambda p: (len(p), -min(p)))
    found.update(
        split_kind=kind,
        split_groups=";".join(",".join(p) for p in sorted((sorted(rid(n) for n in p) for p in parts),
                                                           key=lambda p: p[0])),
        separated_records=";".join(sorted(rid(n) for n in graph.nodes if n not in largest)),
        cut_links=";".join(t for t, _ in cut),
        cut_weight=float(sum(p for _, p in cut)),
    )
    return found


@settings(max_examples=120, deadline=None)
@given(graph_edges, st.lists(st.tuples(st.integers(0, 9), st.integers(0, 9)), max_size=2), st.integers(4, 12))
def test_examine_matches_the_networkx_reference(edges, conflicts, large):
    edges = sorted({(min(u, v), max(u, v)): p for u, v, p in edges if u != v}.items())
    columns = [[a for (a, _), _ in edges], [b for (_, b), _ in edges], [p for _, p in edges]]
    conflicts = [(s, t) for s, t in conflicts if s != t]
    record_id = np.array([f"C{9 - i}" for i in range(10)], dtype=object)  # IDs not in node order
    args = (range(10), columns, conflicts, record_id, 0.999, large, 0.3)
    assert _examine(*args) == _reference_examine(*args)


# --- saving runs ----------------------------------------------------------------------------


def test_parquet_options_pick_dictionaries_by_repetition():
    table = pa.table({
        "status": pa.array(["valid", "invalid"] * 500),
        "record_id": pa.array([f"R{i}" for i in range(1000)]),
        "kind": pa.array(["phone"] * 1000).dictionary_encode(),
        "prob": pa.array(np.linspace(0, 1, 1000)),
    })
    options = parquet_options(table)
    assert set(options["use_dictionary"]) == {"status", "kind"}
    assert options["write_statistics"] == ["kind", "prob"]


def test_saved_run_reads_back_the_same_tables(tmp_path):
    project = Project.create(tmp_path / "p")
    frames = {
        "entities": pd.DataFrame({"rec": np.arange(5, dtype=np.int32),
                                  "entity_id": pd.array(["E1", "E1", "E2", None, "E3"], dtype="string")}),
        "flags": pd.DataFrame({"flag": pd.Categorical(["a", "b", "a"]), "score": [0.5, np.nan, 1.0]}),
        "empty": pd.DataFrame({"x": pd.Series(dtype="string")}),
    }
    run = project.save_run(frames, {"created": "2026-01-01T00:00:00+00:00"}, documents={"model.json": {"k": 1}})
    for name, frame in frames.items():
        pd.testing.assert_frame_equal(run.table(name), frame)
    assert json.loads((run.path / "model.json").read_text())["k"] == 1
    assert run.manifest["tables"] == sorted(frames)
    assert (run.path / "entities.parquet").stat().st_mode & 0o777 == 0o600  # personal data: owner only


def test_run_writer_shows_the_run_only_when_finished(tmp_path):
    project = Project.create(tmp_path / "p")
    writer = project.start_run()
    writer.add("records", pd.DataFrame({"record_id": pd.array(["a", "b"], dtype="string")}))
    assert project.runs() == []  # written in the background, not yet a run
    with pytest.raises(ProjectError):
        writer.add("records", pd.DataFrame({"x": [1]}))
    writer.add("queue", pd.DataFrame({"priority": [1.0]}))
    run = writer.finish({"created": "2026-01-01T00:00:00+00:00"})
    assert [r.run_id for r in project.runs()] == [run.run_id]
    assert pq.read_table(run.path / "records.parquet").num_rows == 2


def test_run_writer_leaves_nothing_behind_on_error(tmp_path):
    project = Project.create(tmp_path / "p")
    with pytest.raises(RuntimeError):
        with project.start_run() as writer:
            writer.add("records", pd.DataFrame({"x": [1, 2]}))
            raise RuntimeError("stage failed")
    assert project.runs() == []
    assert list((project.path / "runs").iterdir()) == []
