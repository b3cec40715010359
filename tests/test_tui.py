"""The review workbench, driven by Textual's pilot: every action checked on screen and in store.

Each test opens the app on a small hand-made project (tests/tui_project.py), presses keys as
a reviewer would and checks both what the screen shows and what the decisions layer stored
(read back through `resolve.project`, never through the interface). pytest-asyncio is not a
dependency, so each test runs its coroutine with `asyncio.run`.
"""

from __future__ import annotations

import asyncio
import sys
from pathlib import Path

import pandas as pd
import pytest

sys.path.insert(0, str(Path(__file__).parent))

from tui_project import clock, keys_by_kind, make_project  # noqa: E402

from resolve.project.audit import audit_frame  # noqa: E402
from resolve.project.status import queue_state  # noqa: E402
from resolve.project.store import ReviewStore  # noqa: E402

REVIEWER = "alex"
SIZE = (120, 40)


@pytest.fixture
def project(tmp_path, monkeypatch):
    monkeypatch.setenv("RESOLVE_KEYS", str(tmp_path / "no-personal-keys.toml"))
    return make_project(tmp_path / "book")


def run(coro):
    return asyncio.run(coro)


def app_for(project, **opts):
    from tui.app import make_app

    return make_app(project.path, opts.pop("reviewer", REVIEWER), clock=clock(), **opts)


async def settle(pilot, rounds: int = 3) -> None:
    """Let workers finish and their messages be handled."""
    for _ in range(rounds):
        await pilot.pause()
        await pilot.app.workers.wait_for_complete()
    await pilot.pause()


def plain(widget) -> str:
    """The text a Static widget shows (Rich renderables rendered without colour)."""
    from rich.console import Console

    console = Console(width=200, record=True, color_system=None, file=open("/dev/null", "w"))
    console.print(widget.content)
    return console.export_text()


def decisions(project) -> pd.DataFrame:
    with ReviewStore.open(project.path) as store:
        return store.decisions()


def table_rows(table) -> list[list[str]]:
    return [[str(c) for c in table.get_row_at(i)] for i in range(table.row_count)]


async def open_kind(pilot, kind: str):
    """Highlight the work-list row of ``kind`` and open it."""
    from textual.widgets import DataTable

    app = pilot.app
    table = app.screen.query_one("#items", DataTable)
    kinds = [str(row[0]) for row in table_rows(table)]
    table.move_cursor(row=kinds.index(kind))
    await pilot.press("enter")
    await settle(pilot)
    return app.screen


# ---------------------------------------------------------------------- work list
def test_queue_shows_every_item_with_counts(project):
    async def go():
        from textual.widgets import DataTable

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            table = pilot.app.screen.query_one("#items", DataTable)
            kinds = [row[0] for row in table_rows(table)]
            assert kinds == ["group", "split", "entity", "flagged", "household"]  # priority order
            counts = str(pilot.app.screen.query_one("#counts").render())
            assert "5 items" in counts and "open 5" in counts and "showing 1–5 of 5" in counts
            flags = [row[6] for row in table_rows(table)]
            assert flags[0] == "shared_national_id_conflict" and flags[3] == "implausible_age"
    run(go())


def test_filters_by_kind_flag_state_and_reviewer(project):
    async def go():
        from textual.widgets import DataTable

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            table = pilot.app.screen.query_one("#items", DataTable)
            await pilot.press("k")                      # kind: entity
            assert [r[0] for r in table_rows(table)] == ["entity"]
            await pilot.press("k", "k")                 # kind: household
            assert [r[0] for r in table_rows(table)] == ["household"]
            await pilot.press("c")                      # clear
            await pilot.press("f")                      # any flag
            assert [r[0] for r in table_rows(table)] == ["group", "split", "flagged"]
            await pilot.press("f")                      # first flag code
            assert pilot.app.filter.flag in pilot.app.queue.flag_codes
            await pilot.press("c", "s")                 # state: open
            assert table.row_count == 5
            await pilot.press("s")                      # state: decided
            assert table.row_count == 0
            assert "nothing matches" in str(pilot.app.screen.query_one("#counts").render())
            await pilot.press("c", "w")                 # reviewer: alex (nobody decided yet)
            assert pilot.app.filter.reviewer == REVIEWER and table.row_count == 0
    run(go())


def test_search_by_name_and_by_record_id(project):
    async def go():
        from textual.widgets import DataTable

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            table = pilot.app.screen.query_one("#items", DataTable)
            await pilot.press("slash", *"okafor", "enter")
            await settle(pilot)
            assert [r[0] for r in table_rows(table)] == ["entity"]
            pilot.app.screen.query_one("#find").value = ""
            await pilot.press("slash", "K", "1", "2", "enter")
            await settle(pilot)
            assert [r[0] for r in table_rows(table)] == ["flagged"]
            await pilot.press("slash", "enter")          # empty search clears
            await settle(pilot)
            pilot.app.screen.query_one("#find").value = ""
            await pilot.press("slash", "enter")
            await settle(pilot)
            assert table.row_count == 5
    run(go())


def test_paging_draws_one_page_at_a_time(project):
    async def go():
        from textual.widgets import DataTable

        async with app_for(project, page_size=2).run_test(size=SIZE) as pilot:
            await settle(pilot)
            table = pilot.app.screen.query_one("#items", DataTable)
            assert [r[0] for r in table_rows(table)] == ["group", "split"]
            await pilot.press("right_square_bracket")
            assert [r[0] for r in table_rows(table)] == ["entity", "flagged"]
            await pilot.press("right_square_bracket", "right_square_bracket")
            assert [r[0] for r in table_rows(table)] == ["household"]
            await pilot.press("left_square_bracket")
            assert [r[0] for r in table_rows(table)] == ["entity", "flagged"]
    run(go())


# ---------------------------------------------------------------------- cluster view
def test_cluster_view_shows_records_evidence_flags_and_split(project):
    async def go():
        from tui.screens.cluster import ClusterScreen

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            screen = await open_kind(pilot, "split")
            assert isinstance(screen, ClusterScreen)
            records = screen.query_one("#records")
            assert records.record_ids == ["K03", "K04", "K05", "K06"]
            rows = {r[0]: r[1:] for r in records.rows}
            assert rows["national id 1"][0] == "***1180"          # masked, last four shown
            assert rows["national id 1"][2] == "·"                # missing on K05
            # K04 writes the street differently from the others: highlighted, the others plain
            street = records.cell_styles[list(rows).index("street")]
            assert [bool(s) for s in street] == [False, True, False, False]
            # K06 has the son's birth date; the father's appears three times
            birth = records.cell_styles[list(rows).index("birth date")]
            assert [bool(s) for s in birth] == [False, False, False, True]
            assert "Suggested split" in str(screen.query_one("#split").render())
            assert "group 1: K03, K04" in str(screen.query_one("#split").render())
            flags = str(screen.query_one("#flags").render())
            assert "several_national_ids" in flags and "not findings" in flags
            evidence = screen.query_one("#evidence").rows
            fields = [r[0] for r in evidence]
            assert fields[-2:] == ["prior", "total"] and "national ID" in fields
            # the weakest pair comes first: the K04-K05 bridge
            pairs = screen.query_one("#pairs").rows
            assert pairs[0][:2] == ["K04", "K05"]
            assert evidence[-1][2] == "p = 0.9908"
            assert len(screen.query_one("#sharing").rows) == 4
    run(go())


def test_evidence_follows_the_highlighted_pair(project):
    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            screen = await open_kind(pilot, "split")
            evidence = screen.query_one("#evidence")
            first = evidence.rows[-1][2]
            await pilot.press("down", "down")
            await settle(pilot)
            assert evidence.rows[-1][2] != first
            pair = screen.query_one("#pairs").pair_at(2)
            assert evidence.header[3:] == [pair["record_id_a"], pair["record_id_b"]]
            await pilot.press("up", "up", "up")            # stops at the first pair
            assert evidence.rows[-1][2] == first
    run(go())


def test_next_and_previous_follow_the_work_list(project):
    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            screen = await open_kind(pilot, "group")
            assert screen.view.item["kind"] == "group"
            await pilot.press("n")
            await settle(pilot)
            assert screen.view.item["kind"] == "split"
            await pilot.press("n", "n")
            await settle(pilot)
            assert screen.view.item["kind"] == "flagged"
            await pilot.press("p")
            await settle(pilot)
            assert screen.view.item["kind"] == "entity"
            await pilot.press("escape")
            await settle(pilot)
            assert pilot.app.screen is pilot.app.queue_screen
            assert pilot.app.queue_screen.highlighted_position() == screen.position
    run(go())


# ---------------------------------------------------------------------- decisions
def test_accept_records_a_decision_and_updates_the_state(project):
    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            screen = await open_kind(pilot, "entity")
            await pilot.press("a")
            await settle(pilot)
            key = keys_by_kind(project)["entity"]
            assert pilot.app.queue.state[pilot.app.queue.position.get_loc(key)] == "decided"
            assert "Recorded: same person" in str(screen.query_one("#cluster-status").render())
        d = decisions(project)
        assert d[["action", "reviewer", "cluster_key"]].values.tolist() == [["accept", REVIEWER, key]]
        assert d["record_ids"].iloc[0] == "K01;K02"
        state = queue_state(project.path).set_index("cluster_key")
        assert state.loc[key, "state"] == "decided"
    run(go())


def test_reject_asks_first_and_no_records_nothing(project):
    async def go():
        from tui.screens.confirm import ConfirmScreen

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await open_kind(pilot, "entity")
            await pilot.press("x")
            await settle(pilot)
            assert isinstance(pilot.app.screen, ConfirmScreen)
            await pilot.press("n")
            await settle(pilot)
            assert decisions(project).empty
            await pilot.press("x")
            await settle(pilot)
            await pilot.press("y")
            await settle(pilot)
        d = decisions(project)
        assert d["action"].tolist() == ["reject"]
        assert d["cluster_key"].iloc[0] == keys_by_kind(project)["entity"]
    run(go())


def test_split_assigns_groups_confirms_and_records(project):
    async def go():
        from tui.screens.confirm import ConfirmScreen
        from tui.screens.split import SplitScreen

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await open_kind(pilot, "split")
            await pilot.press("s")
            await settle(pilot)
            split = pilot.app.screen
            assert isinstance(split, SplitScreen)
            assert split.groups == {"K03": 1, "K04": 1, "K05": 2, "K06": 2}   # from the suggestion
            await pilot.press("3")                     # K03 -> group 3, cursor moves on
            assert split.groups["K03"] == 3
            await pilot.press("up", "1")               # back to group 1
            await pilot.press("ctrl+s")
            await settle(pilot)
            assert isinstance(pilot.app.screen, ConfirmScreen)
            await pilot.press("y")
            await settle(pilot)
        d = decisions(project)
        assert d["action"].tolist() == ["split"]
        import json
        assert json.loads(d["groups"].iloc[0]) == [["K03", "K04"], ["K05", "K06"]]
    run(go())


def test_split_needs_two_groups(project):
    async def go():
        from tui.screens.split import SplitScreen

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await open_kind(pilot, "entity")            # no suggestion: everyone in group 1
            await pilot.press("s")
            await settle(pilot)
            assert isinstance(pilot.app.screen, SplitScreen)
            await pilot.press("ctrl+s")
            await settle(pilot)
            assert isinstance(pilot.app.screen, SplitScreen)   # refused, still open
            await pilot.press("escape")
            await settle(pilot)
        assert decisions(project).empty
    run(go())


def test_household_escalate_and_note(project):
    async def go():
        from tui.screens.note import NoteScreen

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await open_kind(pilot, "household")
            await pilot.press("h")
            await settle(pilot)
            await pilot.press("m")
            await settle(pilot)
            assert isinstance(pilot.app.screen, NoteScreen)
            await pilot.press(*"same landline since 2010", "enter")
            await settle(pilot)
            await pilot.press("p")                      # previous item: flagged
            await settle(pilot)
            assert pilot.app.screen.view.item["kind"] == "flagged"
            await pilot.press("e")
            await settle(pilot)
            await pilot.press("enter")                  # empty note is refused
            await settle(pilot)
            assert isinstance(pilot.app.screen, NoteScreen)
            await pilot.press(*"birth date looks wrong", "enter")
            await settle(pilot)
            q = pilot.app.queue
            assert q.state[q.position.get_loc(keys_by_kind(project)["flagged"])] == "escalated"
        d = decisions(project)
        assert d["action"].tolist() == ["household", "note", "escalate"]
        assert d["note"].tolist()[1:] == ["same landline since 2010", "birth date looks wrong"]
        with ReviewStore.open(project.path) as store:
            cases = store.cases()
        assert cases["record_ids"].tolist() == ["K12"]
        state = queue_state(project.path).set_index("kind")
        assert state.loc["household", "state"] == "decided"
    run(go())


def test_undo_asks_first_and_reopens_the_item(project):
    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await open_kind(pilot, "entity")
            await pilot.press("a")
            await settle(pilot)
            await pilot.press("u")
            await settle(pilot)
            await pilot.press("y")
            await settle(pilot)
            key = keys_by_kind(project)["entity"]
            assert pilot.app.queue.state[pilot.app.queue.position.get_loc(key)] == "open"
        d = decisions(project)
        assert d["action"].tolist() == ["accept", "undo"]
        assert int(d["target_id"].iloc[1]) == int(d["decision_id"].iloc[0])
        assert queue_state(project.path).set_index("cluster_key").loc[key, "state"] == "open"
    run(go())


def test_undo_with_nothing_to_undo_is_refused(project):
    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await open_kind(pilot, "entity")
            await pilot.press("u")
            await settle(pilot)
            await pilot.press("y")
            await settle(pilot)
            assert any("no standing decision" in n.message for n in pilot.app._notifications)
        assert decisions(project).empty
    run(go())


def test_reveal_is_audited_and_ends_when_leaving_the_record(project):
    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            screen = await open_kind(pilot, "group")
            records = screen.query_one("#records")
            row = [r[0] for r in records.rows].index("national id 1")
            assert records.selected_record == "K09"
            await pilot.press("v")
            await settle(pilot)
            assert records.rows[row][1] == "405-66-3108"
            assert records.rows[row][2] == "***3108"                # others stay masked
            await pilot.press("right")
            await settle(pilot)
            assert records.selected_record == "K10"
            assert records.rows[row][1] == "***3108"                # masked again
        with ReviewStore.open(project.path) as store:
            log = audit_frame(store)
        reveal = log[log["action"] == "reveal"]
        assert reveal[["actor", "subject"]].values.tolist() == [[REVIEWER, "record:K09"]]
    run(go())


# ---------------------------------------------------------------------- thresholds
def test_thresholds_preview_and_recluster(project):
    async def go():
        from tui.screens.thresholds import ThresholdsScreen

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await pilot.press("t")
            await settle(pilot)
            screen = pilot.app.screen
            assert isinstance(screen, ThresholdsScreen)
            assert screen.proposed == {"auto": 0.99, "review": 0.5}
            await pilot.press("space")                 # move the auto-merge marker
            for _ in range(2):
                await pilot.press("right")             # +1 bit: 0.99 -> ~0.995
            assert screen.proposed["auto"] > 0.99
            numbers = plain(screen.query_one("#th-numbers"))
            # the K04-K05 bridge (p 0.9908) leaves the auto-merge band for review
            assert "1 pair changes band; 1 entity holds it." in numbers
            await pilot.press("enter")
            await settle(pilot)
            result = plain(screen.query_one("#th-result"))
            assert "Re-clustered (stored results unchanged)" in result
            assert "multi-record 1 → 2" in result
            # the chosen thresholds are kept for the next run, through the library
            from resolve.project.thresholds import load_thresholds

            saved = load_thresholds(project.path)
            assert saved is not None and saved["auto"] > 0.99 and saved["review"] == 0.5
            await pilot.press("0")
            assert screen.proposed == {"auto": 0.99, "review": 0.5}
    run(go())


# ---------------------------------------------------------------------- keys
def test_key_map_file_remaps_by_id(project):
    (project.path / "keys.toml").write_text('[keys]\n"cluster.accept" = "ctrl+y"\n"no.such" = "z"\n',
                                            encoding="utf-8")

    async def go():
        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            assert any("no.such" in w for w in pilot.app.keymap_info.warnings)
            await open_kind(pilot, "entity")
            await pilot.press("a")                      # no longer bound
            await settle(pilot)
            assert decisions(project).empty
            await pilot.press("ctrl+y")
            await settle(pilot)
            assert decisions(project)["action"].tolist() == ["accept"]
            await pilot.press("question_mark")
            await settle(pilot)
            rows = {r[4]: r[1] for r in table_rows(pilot.app.screen.query_one("#key-list"))}
            assert rows["cluster.accept"] == "Ctrl+y"
    run(go())


def test_keys_screen_lists_every_binding_and_the_cautions(project):
    async def go():
        from tui.keys import default_specs

        async with app_for(project).run_test(size=SIZE) as pilot:
            await settle(pilot)
            await pilot.press("question_mark")
            await settle(pilot)
            listed = {r[4] for r in table_rows(pilot.app.screen.query_one("#key-list"))}
            assert listed == {s.id for s in default_specs()}
            cautions = str(pilot.app.screen.query_one("#keys-cautions").render())
            assert "not a finding" in cautions and "local law" in cautions
            await pilot.press("escape")
            await settle(pilot)
            assert pilot.app.screen is pilot.app.queue_screen
    run(go())


# ---------------------------------------------------------------------- a real run
def test_workbench_on_a_pipeline_run(tmp_path, monkeypatch):
    """The whole pipeline on a small invented extract, then every item opened in turn."""
    from resolve.demo import generate_demo
    from resolve.pipeline import RunSettings, run_pipeline

    monkeypatch.setenv("RESOLVE_KEYS", str(tmp_path / "no-personal-keys.toml"))
    demo = generate_demo(tmp_path / "demo", records=250, seed=3)
    run_pipeline([demo.files["extract"]], tmp_path / "real", settings=RunSettings(today="2024-06-01"))

    async def go():
        from tui.app import make_app

        app = make_app(tmp_path / "real", REVIEWER, clock=clock())
        async with app.run_test(size=SIZE) as pilot:
            await settle(pilot)
            n = len(app.queue)
            assert n > 0 and pilot.app.screen.query_one("#items").row_count == n
            await pilot.press("enter")
            await settle(pilot)
            decided = None
            visits = min(n, 12)
            for i in range(visits):
                view = app.screen.view
                members = str(view.item["record_ids"]).split(";")
                assert view.shown == members[:40] and not view.missing
                assert {p["record_id_a"] for p in view.pairs} <= set(members)
                assert {f["record_id"] for f in view.flags} <= set(members)
                if decided is None and len(members) >= 2:
                    decided = view.key
                    await pilot.press("a")
                    await settle(pilot)
                if i < visits - 1:
                    await pilot.press("n")
                    await settle(pilot)
        return decided

    decided = run(go())
    state = queue_state(tmp_path / "real").set_index("cluster_key")
    assert state.loc[decided, "state"] == "decided"


def test_a_folder_without_a_run_closes_with_the_library_message(tmp_path, monkeypatch, capsys):
    monkeypatch.setenv("RESOLVE_KEYS", str(tmp_path / "no-personal-keys.toml"))

    async def go():
        from tui.app import make_app

        app = make_app(tmp_path / "nothing-here", REVIEWER)
        async with app.run_test(size=SIZE) as pilot:
            await settle(pilot)
        return app

    app = run(go())
    assert app.return_code == 1
    assert "is not a resolve project; create one with 'resolve run" in " ".join(capsys.readouterr().err.split())
