"""Tests for resolve.evaluate: clustering, household, flag and blocking metrics against truth.

Outside check values come from /work/shared/CHECKS.md (B-cubed example computed from Bagga &
Baldwin 1998; blocking example from Christen & Goiser / Elfeky et al., ICDE 2002). Other
fixtures are invented and say so; invariants are checked against a brute-force pair count.
"""

from __future__ import annotations

import itertools
import json

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.errors import InputError
from resolve.evaluate import evaluate, format_report, labels_from_decisions
from resolve.evaluate.metrics import bcubed, blocking_quality, crosstab, pairwise


def frames(truth_people: dict, predicted: dict):
    """Truth and entities frames from {record_id: person_id} and {record_id: entity_id}."""
    truth = pd.DataFrame({"record_id": list(truth_people), "person_id": list(truth_people.values())})
    ents = pd.DataFrame({"record_id": list(predicted), "entity_id": list(predicted.values())})
    return truth, ents


# CHECKS.md, "Record linkage": B-cubed (Bagga & Baldwin 1998): truth {a,b,c,d},{e},
# prediction {a,b},{c,d,e} gives precision 11/15 = 0.7333 and recall 0.6 (computed from the
# definition).
BCUBED_TRUTH = {"a": "T1", "b": "T1", "c": "T1", "d": "T1", "e": "T2"}
BCUBED_PRED = {"a": "P1", "b": "P1", "c": "P2", "d": "P2", "e": "P2"}


def test_bcubed_matches_published_example():
    result = evaluate(*frames(BCUBED_TRUTH, BCUBED_PRED))
    b3 = result["same_person"]["bcubed"]
    assert b3["precision"] == pytest.approx(11 / 15)  # CHECKS.md, Bagga & Baldwin 1998
    assert b3["recall"] == pytest.approx(0.6)  # CHECKS.md, Bagga & Baldwin 1998
    assert b3["f1"] == pytest.approx(2 * (11 / 15) * 0.6 / (11 / 15 + 0.6))


def test_pairwise_and_cluster_errors_on_the_same_example():
    # Counted by hand from the definition: true pairs C(4,2)=6, predicted C(2,2)+C(3,2)=4,
    # correct {a,b},{c,d}=2.
    sp = evaluate(*frames(BCUBED_TRUTH, BCUBED_PRED))["same_person"]
    assert (sp["pairwise"]["true_pairs"], sp["pairwise"]["predicted_pairs"], sp["pairwise"]["correct_pairs"]) == (6, 4, 2)
    assert sp["pairwise"]["precision"] == pytest.approx(0.5)
    assert sp["pairwise"]["recall"] == pytest.approx(1 / 3)
    assert sp["over_merged_entities"] == 1  # {c,d,e} holds T1 and T2
    assert sp["records_in_over_merged"] == 3
    assert sp["split_persons"] == 1  # T1 spread over P1 and P2
    assert sp["exact_entities"] == 0
    assert (sp["entities"], sp["persons"]) == (2, 2)


def test_perfect_prediction_scores_one_whatever_the_entity_names():
    truth = {f"r{i}": f"p{i // 3}" for i in range(12)}
    pred = {r: f"entity-{p}-x" for r, p in truth.items()}
    sp = evaluate(*frames(truth, pred))["same_person"]
    for section in ("pairwise", "bcubed"):
        assert sp[section]["precision"] == sp[section]["recall"] == sp[section]["f1"] == 1.0
    assert sp["exact_entities"] == 4
    assert sp["over_merged_entities"] == sp["split_persons"] == 0


def test_record_missing_from_entities_stands_alone_and_extra_records_are_ignored():
    truth, ents = frames({"a": "1", "b": "1", "c": "2"}, {"a": "E", "x": "E", "c": "F"})
    result = evaluate(truth, ents)
    assert result["records"]["missing_from_entities"] == 1  # b
    assert result["records"]["not_in_truth"] == 1  # x
    pw = result["same_person"]["pairwise"]
    assert pw["predicted_pairs"] == 0 and pw["true_pairs"] == 1
    assert pw["precision"] is None  # nothing predicted: undefined, not zero
    assert pw["recall"] == 0.0


def test_blank_person_id_is_a_person_of_its_own():
    truth = pd.DataFrame({"record_id": ["a", "b"], "person_id": ["", None]})
    ents = pd.DataFrame({"record_id": ["a", "b"], "entity_id": ["E", "E"]})
    assert evaluate(truth, ents)["same_person"]["pairwise"]["true_pairs"] == 0


def brute_force(true_labels, pred_labels):
    """Pairwise counts and B-cubed by enumerating every pair and record (test oracle)."""
    n = len(true_labels)
    correct = predicted = actual = 0
    for i, j in itertools.combinations(range(n), 2):
        same_t = true_labels[i] == true_labels[j]
        same_p = pred_labels[i] == pred_labels[j]
        actual += same_t
        predicted += same_p
        correct += same_t and same_p
    prec = rec = 0.0
    for i in range(n):
        c = {j for j in range(n) if pred_labels[j] == pred_labels[i]}
        t = {j for j in range(n) if true_labels[j] == true_labels[i]}
        prec += len(c & t) / len(c)
        rec += len(c & t) / len(t)
    return (correct, predicted, actual), (prec / n, rec / n)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 5), st.integers(0, 5)), min_size=1, max_size=25))
def test_contingency_counts_equal_pair_enumeration(labels):
    true_labels = np.array([t for t, _ in labels])
    pred_labels = np.array([p for _, p in labels]) * 7 + 100  # arbitrary, non-dense labels
    ct = crosstab(true_labels, pred_labels)
    (correct, predicted, actual), (b3p, b3r) = brute_force(true_labels, pred_labels)
    pw = pairwise(ct)
    assert (pw["correct_pairs"], pw["predicted_pairs"], pw["true_pairs"]) == (correct, predicted, actual)
    b3 = bcubed(ct)
    assert b3["precision"] == pytest.approx(b3p)
    assert b3["recall"] == pytest.approx(b3r)


def test_blocking_matches_published_worked_example():
    # CHECKS.md, "Record linkage" (Christen & Goiser; Elfeky et al., ICDE 2002): 100 records
    # (4,950 pairs), 50 true matches, 500 candidates holding 45 true: RR 0.89899, PC 0.90,
    # PQ 0.09 (computed). The records and candidates themselves are invented to fit.
    truth = pd.DataFrame({"record_id": [f"r{i}" for i in range(100)],
                          "person_id": [f"p{i // 2}" for i in range(100)]})
    true_pairs = [(f"r{2 * k}", f"r{2 * k + 1}") for k in range(45)]
    false_pairs = [(f"r{2 * k}", f"r{2 * k + 2}") for k in range(49)]
    false_pairs += [(f"r{i}", f"r{j}") for i, j in itertools.combinations(range(0, 100, 3), 2)
                    if (i // 2) != (j // 2) and j != i + 2][: 455 - 49]
    rows = true_pairs + false_pairs
    assert len(rows) == 500
    pairs = pd.DataFrame(rows, columns=["record_id_a", "record_id_b"])
    bl = evaluate(truth, truth.rename(columns={"person_id": "entity_id"}), pairs=pairs)["blocking"]
    assert bl["all_pairs"] == 4950
    assert bl["true_pairs"] == 50
    assert bl["candidates"] == 500
    assert bl["reduction_ratio"] == pytest.approx(0.89899, abs=5e-6)  # CHECKS.md
    assert bl["pairs_completeness"] == pytest.approx(0.90)  # CHECKS.md
    assert bl["pairs_quality"] == pytest.approx(0.09)  # CHECKS.md


def test_blocking_quality_formula_directly():
    # Same CHECKS.md figures through the bare formula.
    q = blocking_quality(100, 50, 500, 45)
    assert (round(q["reduction_ratio"], 5), q["pairs_completeness"], q["pairs_quality"]) == (0.89899, 0.9, 0.09)


def test_candidate_pairs_are_deduplicated_and_self_pairs_dropped():
    truth = pd.DataFrame({"record_id": list("abc"), "person_id": ["1", "1", "2"]})
    pairs = pd.DataFrame({"record_id_a": ["a", "b", "a", "c", "a"], "record_id_b": ["b", "a", "a", "zz", "c"]})
    bl = evaluate(truth, truth.rename(columns={"person_id": "entity_id"}), pairs=pairs)["blocking"]
    assert bl["candidates"] == 2  # {a,b} once, {a,c}; a-a and the unknown zz dropped
    assert bl["true_pairs_kept"] == 1


def test_threshold_sweep_components_and_review_queue():
    # Invented: persons {a,b,c} and {d}; pair probabilities chosen by hand.
    truth = pd.DataFrame({"record_id": list("abcd"), "person_id": ["1", "1", "1", "2"]})
    pairs = pd.DataFrame({
        "record_id_a": ["a", "b", "c", "a"],
        "record_id_b": ["b", "c", "d", "d"],
        "prob": [0.999, 0.95, 0.85, 0.4],
    })
    rows = evaluate(truth, truth.rename(columns={"person_id": "entity_id"}), pairs=pairs,
                    thresholds=[0.99, 0.9, 0.8])["thresholds"]
    by_t = {r["threshold"]: r for r in rows}
    assert [r["threshold"] for r in rows] == [0.8, 0.9, 0.99]
    # t=0.8: a-b-c-d all joined: one entity, 6 predicted pairs, 3 correct.
    assert by_t[0.8]["entities"] == 1
    assert by_t[0.8]["precision"] == pytest.approx(0.5) and by_t[0.8]["recall"] == 1.0
    # t=0.9: {a,b,c},{d}: perfect.
    assert by_t[0.9]["entities"] == 2 and by_t[0.9]["f1"] == 1.0
    # t=0.99: {a,b},{c},{d}: precision 1, recall 1/3.
    assert by_t[0.99]["entities"] == 3 and by_t[0.99]["recall"] == pytest.approx(1 / 3)
    # Review queue: pairs with prob in [0.5, t).
    assert [by_t[t]["review_queue"] for t in (0.8, 0.9, 0.99)] == [0, 1, 2]


def test_household_pairs_count_distinct_persons_only():
    # Invented: persons 1 and 2 share household H; person 3 lives alone; person 1 has two
    # records (a duplicate pair, which must not count as a household pair).
    truth = pd.DataFrame({
        "record_id": ["a1", "a2", "b", "c"],
        "person_id": ["1", "1", "2", "3"],
        "household_id": ["H", "H", "H", ""],
    })
    ents = pd.DataFrame({"record_id": ["a1", "a2", "b", "c"], "entity_id": ["E1", "E1", "E2", "E3"]})
    exact = pd.DataFrame({"record_id": ["a1", "a2", "b"], "household_id": ["X", "X", "X"]})
    hh = evaluate(truth, ents, households=exact)["households"]
    assert (hh["true_pairs"], hh["predicted_pairs"], hh["correct_pairs"]) == (1, 1, 1)
    assert hh["precision"] == hh["recall"] == 1.0
    wrong = pd.DataFrame({"record_id": ["a1", "c"], "household_id": ["X", "X"]})
    hh = evaluate(truth, ents, households=wrong)["households"]
    assert (hh["true_pairs"], hh["predicted_pairs"], hh["correct_pairs"]) == (1, 1, 0)
    assert hh["precision"] == 0.0 and hh["recall"] == 0.0


def test_no_household_section_without_true_households():
    truth, ents = frames({"a": "1"}, {"a": "E"})
    assert evaluate(truth, ents, households=pd.DataFrame({"record_id": ["a"], "household_id": ["H"]}))["households"] is None


def flag_fixture():
    """Invented labelled records and flags (one per label, plus a ring)."""
    truth = pd.DataFrame({
        "record_id": ["ga", "gb", "d1", "f1", "s1", "s2", "n1", "p1", "u1"],
        "person_id": ["ga", "gb", "ga", "f1", "s1", "s2", "n1", "p1", "u1"],
        "ring_id": ["", "", "", "R", "R", "", "", "", ""],
        "label": ["genuine", "genuine", "duplicate", "fabricated", "stolen_id", "second_id",
                  "never_issued", "placeholder", ""],
    })
    flags = pd.DataFrame({
        "record_id": ["ga", "f1", "s1", "s1", "n1", "p1", "u1", "zz"],
        "flag": ["implausible_age", "ring_pattern", "ring_pattern", "shared_national_id_conflict",
                 "national_id_never_issued", "placeholder_identifier", "ring_pattern", "ring_pattern"],
        "severity": ["medium", "high", "high", "high", "low", "low", "high", "high"],
    })
    return truth, flags


def test_flag_precision_recall_per_label_and_placeholder_line():
    truth, flags = flag_fixture()
    rf = evaluate(truth, truth[["record_id", "person_id"]].rename(columns={"person_id": "entity_id"}),
                  flags=flags)["risk_flags"]
    # Should flag: f1, s1, s2, n1 (4). Flagged at medium+: g1, f1, s1 (u1 unlabelled, zz unknown).
    assert (rf["should_flag"], rf["flagged"], rf["flagged_and_should"]) == (4, 3, 2)
    assert rf["precision"] == pytest.approx(2 / 3) and rf["recall"] == pytest.approx(0.5)
    by = {d["label"]: d for d in rf["by_label"]}
    assert by["never_issued"]["flagged"] == 0  # its flag is only low severity
    assert by["genuine"]["share_flagged"] == pytest.approx(0.5)
    assert rf["placeholder"] == {"records": 1, "flagged_any_severity": 1, "recall": 1.0}
    assert rf["rings"] == {"rings": 1, "records": 2, "flagged": 2, "recall": 1.0}
    codes = {d["flag"]: d for d in rf["by_flag"]}
    assert codes["ring_pattern"]["records"] == 2 and codes["ring_pattern"]["precision"] == 1.0
    assert codes["implausible_age"]["precision"] == 0.0


def test_severity_floor_is_configurable():
    truth, flags = flag_fixture()
    ents = truth[["record_id", "person_id"]].rename(columns={"person_id": "entity_id"})
    rf = evaluate(truth, ents, flags=flags, min_severity="low")["risk_flags"]
    assert rf["flagged_and_should"] == 3  # n1's low flag now counts
    with pytest.raises(InputError):
        evaluate(truth, ents, flags=flags, min_severity="urgent")


def test_result_is_json_ready_and_report_renders():
    truth, flags = flag_fixture()
    ents = truth[["record_id", "person_id"]].rename(columns={"person_id": "entity_id"})
    pairs = pd.DataFrame({"record_id_a": ["ga"], "record_id_b": ["d1"], "prob": [0.97]})
    hh = pd.DataFrame({"record_id": ["ga"], "household_id": ["H"]})
    truth = truth.assign(household_id=["H", "H", "H", "", "", "", "", "", ""])
    result = evaluate(truth, ents, households=hh, flags=flags, pairs=pairs)
    assert json.loads(json.dumps(result)) == result
    text = format_report(result)
    for heading in ("Same person", "Households", "Risk flags", "Candidate pairs", "Threshold sweep"):
        assert heading in text
    assert evaluate(truth, ents, households=hh, flags=flags, pairs=pairs) == result  # deterministic


def test_report_prints_bcubed_example_to_four_decimals():
    text = format_report(evaluate(*frames(BCUBED_TRUTH, BCUBED_PRED)))
    assert "0.7333" in text and "0.6000" in text


def test_input_errors_name_the_problem():
    truth, ents = frames({"a": "1"}, {"a": "E"})
    with pytest.raises(InputError, match="person_id"):
        evaluate(truth.drop(columns="person_id"), ents)
    with pytest.raises(InputError, match="more than once"):
        evaluate(pd.concat([truth, truth]), ents)
    with pytest.raises(InputError, match="more than once"):
        evaluate(truth, pd.concat([ents, ents]))
    with pytest.raises(InputError, match="entity_id"):
        evaluate(truth, ents.drop(columns="entity_id"))
    with pytest.raises(InputError, match="no records"):
        evaluate(truth.iloc[:0], ents)


def test_numeric_ids_match_text_ids():
    truth = pd.DataFrame({"record_id": [1, 2, 3], "person_id": [7, 7, 8]})
    ents = pd.DataFrame({"record_id": ["1", "2", "3"], "entity_id": [5, 5, 6]})
    assert evaluate(truth, ents)["same_person"]["pairwise"]["f1"] == 1.0


# ---- labels from reviewer decisions (invented decisions) ----

def test_labels_from_decisions_accept_split_reject_household_escalate():
    decisions = pd.DataFrame([
        ("d1", "a", "accept", ""), ("d1", "b", "accept", ""),
        ("d2", "b", "accept", ""), ("d2", "c", "accept", ""),  # chains a-b-c
        ("d3", "d", "split", "1"), ("d3", "e", "split", "1"), ("d3", "f", "split", "2"),
        ("d4", "g", "reject", ""), ("d4", "h", "reject", ""),
        ("d5", "i", "household", ""), ("d5", "j", "household", ""),
        ("d6", "k", "escalate", ""), ("d6", "l", "escalate", ""),
    ], columns=["decision_id", "record_id", "action", "part"])
    lab = labels_from_decisions(decisions).set_index("record_id")
    assert set(lab.index) == set("abcdefghij")  # escalated-only records are left out
    assert lab.loc[["a", "b", "c"], "person_id"].tolist() == ["a", "a", "a"]
    assert lab.loc["d", "person_id"] == lab.loc["e", "person_id"] == "d"
    assert lab.loc["f", "person_id"] == "f"
    assert lab.loc["g", "person_id"] != lab.loc["h", "person_id"]
    assert lab.loc["i", "person_id"] != lab.loc["j", "person_id"]
    assert lab.loc["i", "household_id"] == lab.loc["j", "household_id"] == "i"
    assert pd.isna(lab.loc["a", "household_id"])
    # The result feeds evaluate() directly.
    ents = pd.DataFrame({"record_id": list("abcdefghij"), "entity_id": list("AAADDFGHIJ")})
    assert evaluate(lab.reset_index(), ents)["same_person"]["pairwise"]["f1"] == 1.0


def test_labels_from_decisions_latest_decision_wins():
    decisions = pd.DataFrame({
        "decision_id": ["d1", "d1", "d1", "d1"],
        "record_id": ["a", "b", "a", "b"],
        "action": ["accept", "accept", "reject", "reject"],
        "decided_at": ["2024-01-01", "2024-01-01", "2024-02-01", "2024-02-01"],
    })
    lab = labels_from_decisions(decisions).set_index("record_id")
    assert lab.loc["a", "person_id"] != lab.loc["b", "person_id"]


def test_labels_from_decisions_refuses_unknown_action():
    with pytest.raises(InputError, match="Unknown decision action"):
        labels_from_decisions(pd.DataFrame({"decision_id": ["d"], "record_id": ["a"], "action": ["merge"]}))
