"""The flags on a cluster's records, each with its sentence, under a standing caution."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

CAUTION = "Flags are leads for review, not findings. Take no action on a flag alone."
SEVERITY_STYLE = {"high": "bold #f07c6c", "medium": "#e8b04b", "low": "#9fb4c2"}
SEVERITY_ORDER = {"high": 0, "medium": 1, "low": 2}
MAX_LINES = 30


class FlagList(Static):
    """Severity, reason code, records and sentence of every flag on the shown records
    (records with the same flag and sentence share one entry)."""

    def show(self, flags: list[dict] | None) -> None:
        text = Text()
        text.append(CAUTION + "\n", style="italic #9fb4c2")
        if not flags:
            text.append("No flags on these records.")
            self.update(text, layout=False)
            return
        grouped: dict[tuple, set] = {}
        for f in flags:
            sev = str(f.get("severity") or "")
            key = (SEVERITY_ORDER.get(sev, 3), sev, str(f.get("flag") or ""), str(f.get("reason") or ""))
            grouped.setdefault(key, set()).add(str(f.get("record_id")))
        for i, key in enumerate(sorted(grouped)):
            if i == MAX_LINES:
                text.append(f"… and {len(grouped) - MAX_LINES} more\n", style="dim")
                break
            _, sev, flag, reason = key
            text.append(f"{sev:<6} ", style=SEVERITY_STYLE.get(sev, ""))
            text.append(flag, style="underline")
            text.append(f"  {', '.join(sorted(grouped[key]))}\n", style="bold")
            text.append(f"       {reason}\n")
        self.update(text, layout=False)
