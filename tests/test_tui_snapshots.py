"""Snapshots of the workbench at a fixed terminal size (120 x 40), compared as text.

Textual saves a screen as SVG; the text on it is read back cell by cell (each text run sits
at a known column of a known line) and compared with a golden file under tests/snapshots/.
Comparing text rather than SVG keeps the snapshots stable across font metrics, colour
themes and SVG details, while still pinning the layout, the wording and the numbers.

Set RESOLVE_UPDATE_SNAPSHOTS=1 to rewrite the golden files after an intended change (and
read the diff), and RESOLVE_DOCS_IMAGES=1 to also write the SVG screenshots used by
docs/review.md into docs/images/.
"""

from __future__ import annotations

import asyncio
import html
import os
import re
import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).parent))

from tui_project import clock, make_project  # noqa: E402

SIZE = (120, 40)
GOLDEN = Path(__file__).parent / "snapshots"
DOCS_IMAGES = Path(__file__).resolve().parents[1] / "docs" / "images"
_TEXT = re.compile(r'<text class="[^"]*" x="([\d.]+)" y="[\d.]+" textLength="([\d.]+)" '
                   r'clip-path="url\(#[^)]*-line-(\d+)\)">(.*?)</text>')


def screen_text(svg: str, width: int = SIZE[0], height: int = SIZE[1]) -> list[str]:
    """The characters on screen, line by line, read from a Textual SVG screenshot."""
    runs = [(float(x), float(n), int(line), html.unescape(body).replace("\xa0", " "))
            for x, n, line, body in _TEXT.findall(svg)]
    cell = next(n / len(body) for _, n, _, body in runs if body)
    lines = [[" "] * width for _ in range(height)]
    for x, _, line, body in runs:
        col = round(x / cell)
        for i, ch in enumerate(body):
            if line < height and col + i < width:
                lines[line][col + i] = ch
    return [("".join(chars)).rstrip() for chars in lines]


def check(name: str, app) -> None:
    svg = app.export_screenshot()
    if os.environ.get("RESOLVE_DOCS_IMAGES"):
        DOCS_IMAGES.mkdir(parents=True, exist_ok=True)
        (DOCS_IMAGES / f"{name}.svg").write_text(svg, encoding="utf-8")
    text = "\n".join(screen_text(svg)) + "\n"
    golden = GOLDEN / f"{name}.txt"
    if os.environ.get("RESOLVE_UPDATE_SNAPSHOTS") or not golden.exists():
        golden.parent.mkdir(parents=True, exist_ok=True)
        golden.write_text(text, encoding="utf-8")
        if not os.environ.get("RESOLVE_UPDATE_SNAPSHOTS"):
            pytest.fail(f"wrote the missing golden file {golden.name}; check it and run again")
    assert text == golden.read_text(encoding="utf-8"), f"{name} differs from tests/snapshots/{name}.txt"


@pytest.fixture
def project(tmp_path, monkeypatch):
    monkeypatch.setenv("RESOLVE_KEYS", str(tmp_path / "no-personal-keys.toml"))
    return make_project(tmp_path / "book")


async def settle(pilot) -> None:
    for _ in range(3):
        await pilot.pause()
        await pilot.app.workers.wait_for_complete()
    await pilot.pause()


def test_screen_text_reads_cells_back():
    svg = ('<text class="t-r1" x="0" y="20" textLength="36.6" clip-path="url(#t-line-0)">ab&#160;</text>'
           '<text class="t-r2" x="36.6" y="20" textLength="12.2" clip-path="url(#t-line-0)">&amp;</text>'
           '<text class="t-r1" x="24.4" y="44" textLength="12.2" clip-path="url(#t-line-1)">z</text>')
    assert screen_text(svg, width=6, height=2) == ["ab &", "  z"]


def test_snapshots(project):
    from textual.widgets import DataTable

    from tui.app import make_app

    async def go():
        app = make_app(project.path, "alex", clock=clock())
        async with app.run_test(size=SIZE) as pilot:
            await settle(pilot)
            check("review-queue", app)
            table = app.screen.query_one("#items", DataTable)
            table.move_cursor(row=1)                    # the split item
            await pilot.press("enter")
            await settle(pilot)
            check("review-cluster", app)
            await pilot.press("s")
            await settle(pilot)
            check("review-split", app)
            await pilot.press("escape")
            await settle(pilot)
            await pilot.press("escape", "t")
            await settle(pilot)
            await pilot.press("space", "right", "right")
            await settle(pilot)
            check("review-thresholds", app)
    asyncio.run(go())
