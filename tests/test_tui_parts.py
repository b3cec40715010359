"""The workbench's parts that need no running interface: key map, data helpers, docs.

The key map (ids unique, every action exists, remaps and clashes), the vectorised helpers
behind the work list and the cluster view (checked against brute force with Hypothesis), the
run index on the hand-made project (tests/tui_project.py), and the key table in
docs/review.md against tui/keys.toml.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).parent))

from tui_project import make_project  # noqa: E402


@pytest.fixture
def project(tmp_path, monkeypatch):
    monkeypatch.setenv("RESOLVE_KEYS", str(tmp_path / "no-personal-keys.toml"))
    return make_project(tmp_path / "book")


def test_every_binding_has_id_tooltip_and_an_action():
    from tui.app import Workbench
    from tui.keys import default_specs
    from tui.screens.cluster import ClusterScreen
    from tui.screens.confirm import ConfirmScreen
    from tui.screens.help import KeysScreen
    from tui.screens.note import NoteScreen
    from tui.screens.queue import QueueScreen
    from tui.screens.split import SplitScreen
    from tui.screens.thresholds import ThresholdsScreen

    owners = {"app": Workbench, "queue": QueueScreen, "cluster": ClusterScreen, "split": SplitScreen,
              "note": NoteScreen, "confirm": ConfirmScreen, "thresholds": ThresholdsScreen,
              "keys": KeysScreen}
    specs = default_specs()
    assert len({s.id for s in specs}) == len(specs)
    for spec in specs:
        assert spec.id.startswith(spec.screen + ".") and spec.tooltip and spec.label and spec.key
        name = spec.action.split("(")[0]
        assert hasattr(owners[spec.screen], f"action_{name}"), spec.id


def test_key_map_reports_clashes(tmp_path):
    from tui.keys import KeyMap

    remap = tmp_path / "keys.toml"
    remap.write_text('[keys]\n"cluster.reject" = "a"\n', encoding="utf-8")
    keymap = KeyMap.load(None, remap, use_personal=False)
    assert any("cluster.accept" in w and "cluster.reject" in w for w in keymap.warnings)
    assert KeyMap.load(None, None, use_personal=False).warnings == []


def test_reviewer_from_project_settings_then_os_user(project):
    from tui.data import reviewer_name

    assert reviewer_name(project.path, "  sam ") == "sam"
    (project.path / "project.toml").write_text('[review]\nreviewer = "kim"\n', encoding="utf-8")
    assert reviewer_name(project.path) == "kim"
    (project.path / "project.toml").write_text("[review]\n", encoding="utf-8")
    assert reviewer_name(project.path)                  # the OS user, whatever it is


# ---------------------------------------------------------------------- data helpers
@settings(max_examples=60, deadline=None)
@given(keys=st.lists(st.integers(0, 30), max_size=60), wanted=st.lists(st.integers(-2, 32), max_size=10))
def test_ranges_finds_exactly_the_matching_positions(keys, wanted):
    from tui.arrow_rows import ranges

    sorted_keys = np.sort(np.array(keys, dtype=np.int64))
    got = ranges(sorted_keys, np.unique(np.array(wanted, dtype=np.int64)))
    expected = np.flatnonzero(np.isin(sorted_keys, wanted))
    assert sorted(got.tolist()) == expected.tolist()


@settings(max_examples=60, deadline=None)
@given(prob=st.lists(st.floats(0, 1), max_size=50), a=st.floats(0, 1), b=st.floats(0, 1),
       c=st.floats(0, 1), d=st.floats(0, 1))
def test_band_moves_account_for_every_pair(prob, a, b, c, d):
    from tui.retune import band_moves

    before = {"auto": max(a, b), "review": min(a, b)}
    after = {"auto": max(c, d), "review": min(c, d)}
    p = np.array(prob, dtype=np.float64)
    moves = band_moves(p, before, after)
    assert moves.sum() == len(p)
    same = band_moves(p, before, before)
    assert np.trace(same) == len(p)                     # nothing moves without a change


def test_cycle_goes_through_all_then_back_to_none():
    from tui.data import cycle

    seen, value = [], None
    for _ in range(4):
        value = cycle(["a", "b", "c"], value)
        seen.append(value)
    assert seen == ["a", "b", "c", None]


def test_index_gathers_one_cluster_without_scanning(project):
    from tui.data import ReviewData
    from tui.index import RunIndex

    data = ReviewData.open(project.path)
    queue = data.queue()
    index = RunIndex(data.run)
    index.attach(queue)
    item = queue.item(int(np.flatnonzero(queue.kind == "group")[0]))
    view = index.cluster(item)
    assert view.shown == ["K09", "K10", "K11"]
    assert view.pairs_total == 3 and {p["link_type"] for p in view.pairs} == {"shared_identity"}
    assert {i["key"] for i in view.identifiers if i["kind"] == "national_id"} == {"us_ssn:***3108"}
    assert [f["flag"] for f in view.flags] == ["shared_national_id_conflict"] * 3
    assert view.value("national_id_1", "K10") == "***3108"
    assert any("G09" in line for line in view.context)
    assert queue.flag_text[item["position"]] == "shared_national_id_conflict"
    assert index.search("halloway").tolist() == [int(np.flatnonzero(queue.kind == "flagged")[0])]


def test_docs_list_every_key_with_its_default():
    import re

    from tui.keys import default_specs, pretty_key

    doc = (Path(__file__).resolve().parents[1] / "docs" / "review.md").read_text(encoding="utf-8")
    listed = dict((i, k) for k, i in re.findall(r"^\| [^|]+ \| `([^`]+)` \| `([a-z_.0-9]+)` \|", doc, re.M))
    expected = {s.id: ", ".join(pretty_key(k) for k in s.key.split(",")) for s in default_specs()}
    assert listed == expected


def test_workbench_import_leaves_pandas_for_the_workers():
    """The first screen is drawn before pandas loads; importing the app must not pull it in."""
    import subprocess

    code = ("import sys, tui.app\n"
            "heavy = [m for m in ('pandas', 'pyarrow', 'numpy', 'resolve.project') if m in sys.modules]\n"
            "assert not heavy, heavy\n")
    subprocess.run([sys.executable, "-c", code], check=True, cwd=Path(__file__).resolve().parents[1])


@settings(max_examples=80, deadline=None)
@given(st.lists(st.one_of(st.none(), st.text(max_size=6)), max_size=8))
def test_differences_are_marked_against_the_common_value(values):
    from tui.widgets.records_side_by_side import DIFFERS, comparable, row_styles

    styles = row_styles(values)
    keys = [comparable(v) for v in values]
    assert len(styles) == len(values)
    assert all(s == "" for s, k in zip(styles, keys) if k is None)       # missing never marked
    present = [k for k in keys if k is not None]
    if len(set(present)) <= 1:
        assert set(styles) <= {""}
    else:
        plain = {k for s, k in zip(styles, keys) if k is not None and s == ""}
        assert len(plain) == 1                                           # one value counts as common
        assert all(s == DIFFERS for s, k in zip(styles, keys) if k is not None and k not in plain)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.lists(st.text(alphabet="abcxyz ", max_size=9), min_size=3, max_size=3),
                min_size=1, max_size=6))
def test_text_table_lines_up_columns(rows):
    from tui.widgets.text_table import text_table

    laid = text_table(["one", "two", "three"], rows, max_width=40)
    lines = laid.text.plain.split("\n")
    assert len(lines) == len(rows) + 1
    for line, row in zip(lines[1:], rows):
        for start, cell in zip(laid.starts, row):
            assert line[start:start + len(cell)] == cell
