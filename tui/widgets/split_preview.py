"""The split suggested by the cluster diagnostics, shown as the groups it would make."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

KIND_WORDS = {
    "conflict": "two of its records were scored as different people",
    "weak_bridge": "one weak link holds it together",
    "bridge_record": "one record joins two otherwise separate parts",
    "communities": "it falls into loosely joined communities",
}


class SplitPreview(Static):
    """A one-glance preview of the suggested split (or a line saying there is none)."""

    def show(self, split: dict | None) -> None:
        text = Text()
        if not split:
            text.append("No split suggested for these records.", style="dim")
            self.update(text, layout=False)
            return
        text.append("Suggested split", style="bold")
        text.append(f" of {split['entity_id']}: {KIND_WORDS.get(split['kind'], split['kind'])}.\n")
        for i, group in enumerate(split["groups"], start=1):
            text.append(f"  group {i}: ", style="bold #6cc4b4")
            text.append(", ".join(group) + "\n")
        if split.get("cut_links"):
            cuts = [c.replace(",", " – ") for c in split["cut_links"][:6]]
            text.append("  links cut: " + "; ".join(cuts) + (" …" if len(split["cut_links"]) > 6 else ""),
                        style="dim")
        self.update(text, layout=False)
