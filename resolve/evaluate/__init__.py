"""Evaluation against ground truth: how good are the entities, households, flags and pairs?

Public functions:

- `evaluate(truth, entities, households=None, flags=None, pairs=None, thresholds=None)`
  returns a JSON-ready dict of metrics (see docs/evaluation.md for every definition);
- `format_report(result)` renders that dict as a plain-text table;
- `labels_from_decisions(decisions)` turns reviewer decisions into a truth-like table.
"""

from resolve.evaluate.core import DEFAULT_THRESHOLDS, RISK_LABELS, evaluate
from resolve.evaluate.decisions import labels_from_decisions
from resolve.evaluate.report import format_report

__all__ = ["DEFAULT_THRESHOLDS", "RISK_LABELS", "evaluate", "format_report", "labels_from_decisions"]
