"""Plain-text rendering of an evaluation result for a terminal or a log file.

The CLI prints this; a notebook user can print it too. It uses fixed-width columns and no
colour so that it reads the same in a CI log, an e-mail and a terminal.
"""

from __future__ import annotations


def _num(value) -> str:
    """A metric for display: four decimals for ratios, thousands separators for counts."""
    if value is None:
        return "n/a"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}"
    if isinstance(value, float):
        return f"{value:.4f}"
    return str(value)


def _table(header: list[str], rows: list[list]) -> list[str]:
    """Left-aligned first column, right-aligned others, two spaces between columns."""
    cells = [header] + [[_num(v) if i else str(v) for i, v in enumerate(r)] for r in rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(header))]
    lines = []
    for k, row in enumerate(cells):
        parts = [row[0].ljust(widths[0])] + [c.rjust(w) for c, w in zip(row[1:], widths[1:])]
        lines.append("  " + "  ".join(parts).rstrip())
        if k == 0:
            lines.append("  " + "  ".join("-" * w for w in widths))
    return lines


def _prf_row(name: str, d: dict) -> list:
    return [name, d.get("precision"), d.get("recall"), d.get("f1")]


def format_report(result: dict) -> str:
    """Render the dict returned by `evaluate` as a plain-text report (no trailing newline)."""
    out: list[str] = []
    rec = result.get("records", {})
    out.append(
        f"Records: {_num(rec.get('truth'))} in truth, {_num(rec.get('in_entities'))} in entities, "
        f"{_num(rec.get('missing_from_entities'))} truth records not placed in any entity, "
        f"{_num(rec.get('not_in_truth'))} entity records not in truth (ignored)."
    )
    sp = result["same_person"]
    out += ["", "Same person"]
    out += _table(
        ["measure", "precision", "recall", "F1"],
        [_prf_row("pairwise", sp["pairwise"]), _prf_row("B-cubed", sp["bcubed"])],
    )
    pw = sp["pairwise"]
    out.append(
        f"  pairs: {_num(pw['correct_pairs'])} correct of {_num(pw['predicted_pairs'])} "
        f"predicted; {_num(pw['true_pairs'])} true"
    )
    out.append(
        f"  entities {_num(sp['entities'])}, true persons {_num(sp['persons'])}, "
        f"exact {_num(sp['exact_entities'])}, over-merged {_num(sp['over_merged_entities'])} "
        f"({_num(sp['records_in_over_merged'])} records), split persons {_num(sp['split_persons'])}"
    )

    hh = result.get("households")
    if hh:
        out += ["", "Households (pairs of distinct true persons)"]
        out += _table(["measure", "precision", "recall", "F1"], [_prf_row("pairwise", hh)])
        out.append(
            f"  pairs: {_num(hh['correct_pairs'])} correct of {_num(hh['predicted_pairs'])} "
            f"predicted; {_num(hh['true_pairs'])} true; households true "
            f"{_num(hh['true_households'])}, predicted {_num(hh['predicted_households'])}"
        )

    rf = result.get("risk_flags")
    if rf:
        floor = result.get("settings", {}).get("min_severity", "medium")
        out += ["", f"Risk flags (flagged = severity {floor} or above)"]
        out += _table(["measure", "precision", "recall", "F1"], [_prf_row("risk labels", rf)])
        out.append(
            f"  {_num(rf['flagged_and_should'])} of {_num(rf['should_flag'])} risky records "
            f"flagged; {_num(rf['flagged'])} flagged in all"
        )
        ph = rf["placeholder"]
        out.append(
            f"  placeholder records: {_num(ph['flagged_any_severity'])} of {_num(ph['records'])} "
            f"carry a flag of any severity"
        )
        if rf.get("rings"):
            r = rf["rings"]
            out.append(
                f"  rings: {_num(r['flagged'])} of {_num(r['records'])} records in "
                f"{_num(r['rings'])} true rings flagged"
            )
        out += [""] + _table(
            ["label", "records", "flagged", "share"],
            [[d["label"], d["records"], d["flagged"], d["share_flagged"]] for d in rf["by_label"]],
        )
        if rf["by_flag"]:
            out += [""] + _table(
                ["flag", "records", "risky", "placeholder", "precision"],
                [[d["flag"], d["records"], d["risky"], d["placeholder"], d["precision"]]
                 for d in rf["by_flag"]],
            )

    bl = result.get("blocking")
    if bl:
        out += ["", "Candidate pairs (blocking)"]
        out += _table(
            ["measure", "value"],
            [
                ["candidates", bl["candidates"]],
                ["all record pairs", bl["all_pairs"]],
                ["true pairs kept", bl["true_pairs_kept"]],
                ["true pairs", bl["true_pairs"]],
                ["reduction ratio", bl["reduction_ratio"]],
                ["pairs completeness", bl["pairs_completeness"]],
                ["pairs quality", bl["pairs_quality"]],
            ],
        )

    sweep = result.get("thresholds")
    if sweep:
        floor = result.get("settings", {}).get("review_floor", 0.5)
        out += ["", f"Threshold sweep (review queue = pairs with prob in [{floor:g}, t))"]
        out += _table(
            ["t", "entities", "precision", "recall", "F1", "B3 F1", "review queue"],
            [[f"{r['threshold']:g}", r["entities"], r["precision"], r["recall"], r["f1"],
              r["bcubed_f1"], r["review_queue"]] for r in sweep],
        )
    return "\n".join(out)
