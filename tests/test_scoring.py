"""Tests for resolve.scoring: Fellegi-Sunter weights, EM, term frequencies, model files, explain.

Outside check values come from /work/shared/CHECKS.md and are named beside each use.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from resolve.compare import FIELDS, compare_pairs
from resolve.compare.levels import FAMILY_NAME, GIVEN_NAME, PHONE
from resolve.errors import InputError
from resolve.scoring import (
    MatchModel,
    Thresholds,
    explain_pair,
    fit_model,
    mask_identifier,
    match_weight,
    model_from_probabilities,
    probability_to_weight,
    random_pairs,
    run_em,
    score_pairs,
    weight_to_probability,
)
from resolve.scoring.fit import initial_m
from test_compare import id_frame, people_frame  # shared hand-made frame builders

# ----- Fellegi-Sunter weights ----------------------------------------------------------------


def test_fellegi_sunter_worked_example():
    # Fellegi & Sunter 1969, JASA 64:1183-1210: agreement weight log2(m/u), disagreement
    # weight log2((1-m)/(1-u)). Values as listed in CHECKS.md (computed from the formula).
    assert match_weight(0.9, 0.01) == pytest.approx(6.49, abs=0.005)
    assert match_weight(0.95, 0.01) == pytest.approx(6.5699, abs=5e-5)
    assert match_weight(1 - 0.95, 1 - 0.01) == pytest.approx(-4.3074, abs=5e-5)


def by_name(spec, values: dict[str, float]) -> dict[int, float]:
    """m or u of one field keyed by level code, from a mapping of level names."""
    return {spec.code_of(name): value for name, value in values.items()}


def test_weights_are_summed_with_the_prior():
    names = ("different", "initial", "one_edit", "similar", "close", "equivalent", "swapped")
    m = dict(zip(names, (0.05, 0.01, 0.01, 0.01, 0.02, 0.05, 0.01)), exact=0.84)
    u = dict(zip(names, (0.95, 0.001, 0.01, 0.01, 0.01, 0.005, 0.0001)), exact=0.0139)
    model = model_from_probabilities(
        {"given_name": by_name(GIVEN_NAME, m)}, {"given_name": by_name(GIVEN_NAME, u)}, prior=0.2
    )
    people = people_frame([{"given_key": "anna"}, {"given_key": "anna"}, {"given_key": "olaf"}])
    pairs = pd.DataFrame({"rec_a": np.array([0, 0], "int32"), "rec_b": np.array([1, 2], "int32")})
    scored = score_pairs(compare_pairs(pairs, people), model)
    prior = math.log2(0.2 / 0.8)
    assert scored["w_given_name"].tolist() == pytest.approx(
        [math.log2(0.84 / 0.0139), math.log2(0.05 / 0.95)], abs=1e-5
    )
    assert scored["weight"].tolist() == pytest.approx(
        (scored["w_given_name"] + prior).tolist(), abs=1e-5
    )
    assert scored["w_family_name"].tolist() == [0.0, 0.0]  # field not in the model
    assert scored["weight"].dtype == np.float32
    assert scored["w_given_name"].dtype == np.float32
    expected = 2 ** scored["weight"] / (1 + 2 ** scored["weight"])
    assert scored["prob"].tolist() == pytest.approx(expected.tolist(), rel=1e-6)


@given(st.floats(-2000, 2000))
def test_probability_and_weight_are_inverse_and_never_overflow(w):
    p = float(weight_to_probability(w))
    assert 0.0 <= p <= 1.0
    if abs(w) <= 30:  # beyond that p is within 1e-9 of 0 or 1 and the inverse loses digits
        assert probability_to_weight(p) == pytest.approx(w, abs=1e-5)


def test_thresholds_from_costs():
    t = Thresholds()  # false merge 10, missed merge 1, review 0.1
    assert t.accept_probability == pytest.approx(0.99)
    assert t.review_probability == pytest.approx(0.1)
    assert t.accept_weight == pytest.approx(math.log2(99))
    # when a review costs more than it can save, one threshold: the plain Bayes rule
    dear = Thresholds(false_merge=10, missed_merge=1, review=5)
    assert dear.accept_probability == dear.review_probability == pytest.approx(10 / 11)
    with pytest.raises(InputError):
        Thresholds(review=0)


# ----- EM -----------------------------------------------------------------------------------


def simulate_levels(rng, n_pairs, prior, m, u, missing=0.1):
    """Level matrix drawn from a known two-class model; level 0 = missing at random."""
    is_match = rng.random(n_pairs) < prior
    cols = []
    for mf, uf in zip(m, u):
        draw = np.where(
            is_match,
            np.searchsorted(np.cumsum(mf), rng.random(n_pairs) * mf.sum()),
            np.searchsorted(np.cumsum(uf), rng.random(n_pairs) * uf.sum()),
        )
        draw = np.minimum(draw, len(mf) - 1)
        cols.append(np.where(rng.random(n_pairs) < missing, 0, draw))
    return np.column_stack(cols)


def known_model():
    """Six fields; index 0 of each array is the (neutral) missing level."""
    m = [
        np.array([0, 0.05, 0.10, 0.85]),
        np.array([0, 0.10, 0.20, 0.70]),
        np.array([0, 0.03, 0.07, 0.15, 0.75]),
        np.array([0, 0.20, 0.80]),
        np.array([0, 0.10, 0.05, 0.25, 0.60]),
        np.array([0, 0.30, 0.70]),
    ]
    u = [
        np.array([0, 0.90, 0.07, 0.03]),
        np.array([0, 0.80, 0.15, 0.05]),
        np.array([0, 0.85, 0.10, 0.04, 0.01]),
        np.array([0, 0.70, 0.30]),
        np.array([0, 0.75, 0.15, 0.07, 0.03]),
        np.array([0, 0.85, 0.15]),
    ]
    return m, u


def test_em_recovers_known_m_u_and_prior():
    rng = np.random.default_rng(12345)
    m_true, u_true = known_model()
    levels = simulate_levels(rng, 200_000, 0.3, m_true, u_true)
    neutral = [np.arange(len(x)) == 0 for x in m_true]
    # start u from the level shares of all pairs (what a user without random pairs has)
    u_start = []
    for f, x in enumerate(m_true):
        counts = np.bincount(levels[:, f], minlength=len(x)).astype(float)
        counts[0] = 0
        u_start.append(counts / counts.sum())
    m_start = []
    for x in m_true:
        s = np.zeros(len(x))
        s[1:] = np.linspace(1, 4, len(x) - 1)
        m_start.append(s / s.sum())
    result = run_em(levels, neutral, m_start, u_start, 0.5, update_u=True, tolerance=1e-8)
    assert result.converged
    assert result.prior == pytest.approx(0.3, abs=0.02)
    for f in range(6):
        np.testing.assert_allclose(result.m[f][1:], m_true[f][1:], atol=0.02)
        np.testing.assert_allclose(result.u[f][1:], u_true[f][1:], atol=0.02)
        assert result.m[f][0] == 0 and result.u[f][0] == 0


def test_fitted_probabilities_mean_what_they_say():
    """Calibration on data drawn from a known model: among pairs given probability about p,
    about a share p are matches, and the expected number of matches is the true one."""
    rng = np.random.default_rng(2024)
    m_true, u_true = known_model()
    n_pairs, prior = 100_000, 0.2
    is_match = rng.random(n_pairs) < prior
    cols = []
    for mf, uf in zip(m_true, u_true):
        pick_m = np.searchsorted(np.cumsum(mf), rng.random(n_pairs) * mf.sum())
        pick_u = np.searchsorted(np.cumsum(uf), rng.random(n_pairs) * uf.sum())
        cols.append(np.minimum(np.where(is_match, pick_m, pick_u), len(mf) - 1))
    levels = np.column_stack(cols)
    neutral = [np.arange(len(x)) == 0 for x in m_true]
    start_m = [np.where(np.arange(len(x)) == 0, 0, np.linspace(0.1, 1.1, len(x))) for x in m_true]
    start_m = [x / x.sum() for x in start_m]
    start_u = [np.where(np.arange(len(x)) == 0, 0, 1.0 / (len(x) - 1)) for x in u_true]
    fit = run_em(levels, neutral, start_m, start_u, 0.5, update_u=True, tolerance=1e-8)
    weight = np.full(n_pairs, math.log2(fit.prior / (1 - fit.prior)))
    for f in range(len(m_true)):
        weight += np.log2(fit.m[f][levels[:, f]] / fit.u[f][levels[:, f]])
    p = weight_to_probability(weight)
    assert p.sum() == pytest.approx(is_match.sum(), rel=0.02)
    for low, high in [(0.0, 0.1), (0.1, 0.5), (0.5, 0.9), (0.9, 0.99), (0.99, 1.01)]:
        band = (p >= low) & (p < high)
        assert band.sum() > 200
        assert is_match[band].mean() == pytest.approx(p[band].mean(), abs=0.03), (low, high)


def test_em_with_u_fixed_recovers_m():
    rng = np.random.default_rng(7)
    m_true, u_true = known_model()
    levels = simulate_levels(rng, 200_000, 0.3, m_true, u_true)
    neutral = [np.arange(len(x)) == 0 for x in m_true]
    m_start = [np.where(np.arange(len(x)) == 0, 0, 1.0 / (len(x) - 1)) for x in m_true]
    result = run_em(levels, neutral, m_start, u_true, 0.1)
    assert result.converged and result.iterations > 1
    assert result.prior == pytest.approx(0.3, abs=0.01)
    for f in range(6):
        np.testing.assert_allclose(result.m[f], m_true[f], atol=0.02)
        np.testing.assert_array_equal(result.u[f], u_true[f])  # u not updated


def test_em_stops_at_max_iterations_and_says_so():
    rng = np.random.default_rng(1)
    m_true, u_true = known_model()
    levels = simulate_levels(rng, 5_000, 0.3, m_true, u_true)
    neutral = [np.arange(len(x)) == 0 for x in m_true]
    result = run_em(levels, neutral, m_true, u_true, 0.01, max_iterations=2)
    assert result.iterations == 2 and not result.converged and result.final_change > 0


# ----- a small run with duplicates ----------------------------------------------------------

BASE = [
    ("olga", "petrova", "1981-02-17", "+15550101", "olga.p@mail.test", "us_ssn:536904399"),
    ("tomas", "reyes", "1975-11-30", "+15550102", "treyes@mail.test", "us_ssn:536904311"),
    ("mei", "tanaka", "1990-06-05", "+15550103", None, "us_ssn:536904322"),
    ("ruth", "okafor", "1968-01-09", "+15550104", "ruth.o@mail.test", None),
    ("ivan", "smith", "1988-04-12", "+15550105", "ivan88@mail.test", "us_ssn:536904344"),
    ("lena", "smith", "1979-09-23", "+15550106", None, "us_ssn:536904355"),
    ("paul", "smith", "1993-12-01", "+15550107", "psmith@mail.test", "us_ssn:536904366"),
    ("nora", "quill", "1985-07-19", "+15550108", "nq@mail.test", "us_ssn:536904377"),
    ("amir", "haddad", "1971-03-08", "+15550109", "amir.h@mail.test", "us_ssn:536904388"),
    ("rosa", "smith", "1999-05-14", "+15550110", None, None),
]


def small_run(copies=4):
    """BASE people plus near-copies (typos, swapped day/month); all invented."""
    people_rows, id_rows, entity = [], [], []
    for k in range(copies):
        for e, (g, f, bd, ph, em, sid) in enumerate(BASE):
            if k == 1:
                g = g[:-1] + g[-1] * 2  # doubled last letter
            if k == 2 and bd:
                y, mo, d = bd.split("-")
                bd = f"{y}-{d}-{mo}" if int(d) <= 12 else bd
            if k == 3:
                ph = ph[:-3] + "999"
            rec = len(people_rows)
            people_rows.append({"given_key": g, "family_key": f, "birth_date": bd})
            entity.append(e)
            id_rows.append((rec, "phone", ph, "valid", "mobile"))
            if em:
                id_rows.append((rec, "email", em))
            if sid:
                id_rows.append((rec, "national_id", sid))
    people = people_frame(people_rows)
    a, b = np.triu_indices(len(people), k=1)
    pairs = pd.DataFrame({"rec_a": a.astype("int32"), "rec_b": b.astype("int32")})
    return people, id_frame(id_rows), pairs, np.array(entity)


def test_fit_model_on_a_small_run():
    people, ids, pairs, entity = small_run()
    compared = compare_pairs(pairs, people, ids)
    model = fit_model(compared, people, ids)
    fit = model.fit
    assert fit["em"]["converged"] is True
    assert fit["random_pairs"] == len(pairs)  # small run: every pair is used for u
    truth = entity[pairs.rec_a] == entity[pairs.rec_b]
    assert model.prior == pytest.approx(truth.mean(), abs=0.05)
    scored = score_pairs(compared, model, people, ids)
    accept = scored["prob"] >= model.thresholds.accept_probability
    below = scored["prob"] < model.thresholds.review_probability
    # the model separates the copies from the strangers (ground truth only checks the result):
    # no stranger merged, no copy left below review. In a run this small the "random" pairs
    # are all pairs, copies included, so u leans towards agreement and some copies go to
    # review instead of being merged: the cautious direction.
    assert (accept & ~truth).sum() == 0
    assert (below & truth).sum() == 0
    assert (accept & truth).sum() >= 0.8 * truth.sum()
    assert fit["expected"]["accept_pairs"] == int(accept.sum())
    assert any("extract is small" in note for note in fit["notes"])
    # deterministic: same input, same model
    again = fit_model(compared, people, ids)
    assert json.dumps(again.to_dict()) == json.dumps(model.to_dict())


def test_fit_model_refuses_empty_candidates():
    people, ids, pairs, _ = small_run(1)
    compared = compare_pairs(pairs.iloc[:0], people, ids)
    with pytest.raises(InputError):
        fit_model(compared, people, ids)


def test_random_pairs_are_distinct_ordered_and_seeded():
    a, b = random_pairs(1000, 5000, seed=3)
    assert np.all(a < b) and a.size == 5000 and b.max() < 1000
    a2, b2 = random_pairs(1000, 5000, seed=3)
    assert np.array_equal(a, a2) and np.array_equal(b, b2)
    a, b = random_pairs(6, 5000, seed=3)
    assert a.size == 15  # all pairs of 6 records
    with pytest.raises(InputError):
        random_pairs(1, 10, seed=3)


def test_initial_m_puts_mass_on_agreement():
    for spec in FIELDS:
        m = initial_m(spec)
        assert m.sum() == pytest.approx(1.0)
        top = max(lvl.code for lvl in spec.levels if not lvl.neutral)
        assert m[top] == m.max() and m[1] == pytest.approx(0.05)
        assert all(m[lvl.code] == 0 for lvl in spec.levels if lvl.neutral)


# ----- term-frequency adjustment ------------------------------------------------------------


def tf_model():
    people, ids, pairs, _ = small_run()
    compared = compare_pairs(pairs, people, ids)
    return fit_model(compared, people, ids), people, ids


def shared_share(counts: list[int], total: int) -> float:
    """ū by hand: the average, over records whose value another record holds too, of the
    share of the other records holding it, (n - 1) / (N - 1)."""
    shared = [n for n in counts if n >= 2]
    return sum(n * (n - 1) for n in shared) / ((total - 1) * sum(shared))


def test_rare_surname_outweighs_common_surname():
    model, people, ids = tf_model()
    # pair 1: two strangers called smith; pair 2: two strangers called quill. Family names
    # agree exactly in both; smith is held by 16 of 40 records, quill by 4 (small_run).
    extra = people_frame(
        [
            {"given_key": "x", "family_key": "smith"},
            {"given_key": "y", "family_key": "smith"},
            {"given_key": "x", "family_key": "quill"},
            {"given_key": "y", "family_key": "quill"},
        ]
    )
    both = pd.concat([people, extra], ignore_index=True)
    both.index.name = "rec"
    n = len(people)
    pairs = pd.DataFrame(
        {"rec_a": np.array([n, n + 2], "int32"), "rec_b": np.array([n + 1, n + 3], "int32")}
    )
    scored = score_pairs(compare_pairs(pairs, both, ids), model, both, ids)
    smith, quill = scored["w_family_name"].tolist()
    assert quill > smith
    # frequency-based weights (Winkler 1989, from memory), counted over the values two
    # records can share: the weight moves by log2(ū / ((n - 1) / (N - 1))); 18 and 6
    # holders of 44, the other five names 4 holders each
    mean_share = shared_share([18, 6, 4, 4, 4, 4, 4], 44)
    level = model.fields["family_name"].level(FAMILY_NAME.code_of("exact"))
    assert level.raw_weight > 1  # far enough from the bound at 0 to show the adjustment
    assert smith == pytest.approx(level.raw_weight + math.log2(mean_share / (17 / 43)), abs=1e-4)
    assert quill == pytest.approx(level.raw_weight + math.log2(mean_share / (5 / 43)), abs=1e-4)
    assert quill - smith == pytest.approx(math.log2(17 / 5), abs=1e-4)
    # without the people table there is no adjustment: both get the level's weight
    plain = score_pairs(compare_pairs(pairs, both, ids), model)
    assert plain["w_family_name"].tolist() == pytest.approx([level.weight] * 2, abs=1e-5)


def test_values_nobody_shares_do_not_lower_the_average():
    """Two records of one person are the only holders of their address; most addresses are
    held once. Agreeing on a value held by two is the typical agreement: no adjustment."""
    from resolve.scoring.tf import shared_frequencies

    holders = np.array([2, 2, 2, 1, 1, 1, 1, 1, 1, 1])
    share, mean_share = shared_frequencies(holders, int(holders.sum()))
    assert share[0] == pytest.approx(1 / 12) and share[3] == 0.0
    assert mean_share == pytest.approx(1 / 12)  # every shared value is held by two
    # the classic average over all values, sum of squared shares, sits below every value
    # two records can share and would take weight from every agreement
    classic = float(((holders / holders.sum()) ** 2).sum())
    assert classic < 2 / 13
    share, mean_share = shared_frequencies(np.array([1, 1, 1]), 3)
    assert math.isnan(mean_share)  # nothing shared: nothing to adjust


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.integers(0, 5), min_size=4, max_size=30),
    st.lists(st.floats(1e-4, 1.0), min_size=16, max_size=16),
    st.floats(1e-6, 0.2),
)
def test_agreement_never_counts_against_a_match(surnames, probs, min_u):
    """Whatever m, u and value frequencies: agreement weighs at least 0, "different" at
    most 0 (an agreeing field never scores below a blank one, a differing one never above)."""
    people = people_frame(
        [{"given_key": f"g{k % 3}", "family_key": f"f{v}"} for k, v in enumerate(surnames)]
    )
    a, b = np.triu_indices(len(people), k=1)
    pairs = pd.DataFrame({"rec_a": a.astype("int32"), "rec_b": b.astype("int32")})
    m, u = {}, {}
    for k, spec in enumerate((GIVEN_NAME, FAMILY_NAME)):
        codes = [lvl.code for lvl in spec.levels if not lvl.neutral]
        m[spec.name] = {c: probs[(k * 8 + i) % 16] for i, c in enumerate(codes)}
        u[spec.name] = {c: probs[(k * 8 + i + 5) % 16] for i, c in enumerate(codes)}
    model = model_from_probabilities(
        m, u, 0.3, term_frequency=("given_name", "family_name"), tf_min_u=min_u
    )
    scored = score_pairs(compare_pairs(pairs, people), model, people)
    for spec in (GIVEN_NAME, FAMILY_NAME):
        level = scored[spec.column].to_numpy()
        weight = scored[spec.weight_column].to_numpy()
        assert np.all(weight[level > 1] >= 0)
        assert np.all(weight[level == 1] <= 0)
        assert np.all(weight[level == 0] == 0)


def test_landline_shared_by_many_weighs_less_than_a_personal_number():
    people = people_frame([{"given_key": f"p{i}"} for i in range(12)])
    rows = [(i, "phone", "+15550100", "valid", "fixed_line") for i in range(8)]  # 8 holders
    rows += [(rec, "phone", "+15550199", "valid", "mobile") for rec in (8, 9)]
    rows += [(rec, "phone", "+15550177", "valid", "fixed_line") for rec in (10, 11)]
    ids = id_frame(rows)
    u = {"phone": {1: 0.99, 2: 0.004, 3: 0.006}}
    m = {"phone": {1: 0.3, 2: 0.2, 3: 0.5}}
    model = model_from_probabilities(m, u, 0.1, term_frequency=("phone",))
    pairs = pd.DataFrame(
        {"rec_a": np.array([0, 8, 10], "int32"), "rec_b": np.array([1, 9, 11], "int32")}
    )
    w = score_pairs(compare_pairs(pairs, people, ids), model, people, ids)["w_phone"].tolist()
    busy_line, mobile, quiet_line = w
    mean_share = shared_share([8, 2, 2], 12)  # 12 records hold a phone; 60 / 132 = 5 / 11
    assert mean_share == pytest.approx(5 / 11)
    assert busy_line == pytest.approx(
        math.log2(0.2 / 0.004) + math.log2(mean_share / (7 / 11)), abs=1e-4
    )
    assert mobile == pytest.approx(
        math.log2(0.5 / 0.006) + math.log2(mean_share / (1 / 11)), abs=1e-4
    )
    assert quiet_line == pytest.approx(
        math.log2(0.2 / 0.004) + math.log2(mean_share / (1 / 11)), abs=1e-4
    )
    assert busy_line < quiet_line < mobile


def test_tf_floor_caps_the_weight():
    model, people, ids = tf_model()
    model.tf_min_u = 0.5  # absurdly high floor: no value counts as rarer than half the records
    scored = score_pairs(compare_pairs(small_run()[2], people, ids), model, people, ids)
    counts = people["family_key"].value_counts().tolist()
    exact_code = FAMILY_NAME.code_of("exact")
    raw = model.fields["family_name"].level(exact_code).raw_weight
    cap = max(raw + math.log2(shared_share(counts, len(people)) / 0.5), 0.0)
    exact = scored["lvl_family_name"] == exact_code
    assert scored.loc[exact, "w_family_name"].max() == pytest.approx(cap, abs=1e-4)


# ----- model files --------------------------------------------------------------------------


def test_model_json_round_trip(tmp_path):
    model, people, ids = tf_model()
    path = tmp_path / "model.json"
    model.save(path)
    loaded = MatchModel.load(path)
    assert loaded.to_dict() == model.to_dict()
    people2, ids2, pairs, _ = small_run()
    compared = compare_pairs(pairs, people2, ids2)
    a = score_pairs(compared, model, people2, ids2)
    b = score_pairs(compared, loaded, people2, ids2)
    np.testing.assert_allclose(a["weight"], b["weight"], atol=1e-5)
    text = path.read_text()
    assert '"given_name"' in text and '"label": "day and month swapped"' in text


def test_hand_edited_model_is_used_and_checked(tmp_path):
    model, _, _ = tf_model()
    data = model.to_dict()
    level = next(lv for lv in data["fields"]["birth_date"]["levels"] if lv["level"] == 5)
    level["m"], level["u"] = 0.5, 0.001
    path = tmp_path / "edited.json"
    path.write_text(json.dumps(data))
    edited = MatchModel.load(path)
    assert edited.fields["birth_date"].level(5).weight == pytest.approx(math.log2(500))
    level["m"] = 0
    path.write_text(json.dumps(data))
    with pytest.raises(InputError):
        MatchModel.load(path)
    path.write_text("{not json")
    with pytest.raises(InputError):
        MatchModel.load(path)
    path.write_text(json.dumps({"format": "something else"}))
    with pytest.raises(InputError):
        MatchModel.load(path)
    # a model of the first file version used other level codes for the names: refit
    path.write_text(json.dumps(model.to_dict() | {"version": 1}))
    with pytest.raises(InputError, match="refit"):
        MatchModel.load(path)
    # a level whose name does not match its code in this version is refused
    data = model.to_dict()
    data["fields"]["given_name"]["levels"][3]["name"] = "similar"
    path.write_text(json.dumps(data))
    with pytest.raises(InputError, match="one_edit"):
        MatchModel.load(path)
    with pytest.raises(InputError):
        MatchModel.load(tmp_path / "absent.json")


def test_bounded_levels_are_shown_in_the_model_file():
    m = {"phone": by_name(PHONE, {"different": 0.2, "shared_fixed": 0.01, "shared_mobile": 0.79})}
    u = {"phone": by_name(PHONE, {"different": 0.5, "shared_fixed": 0.04, "shared_mobile": 0.46})}
    model = model_from_probabilities(m, u, 0.5)
    fixed = model.fields["phone"].level(PHONE.code_of("shared_fixed"))
    assert fixed.raw_weight == pytest.approx(-2.0) and fixed.weight == 0.0
    entry = model.to_dict()["fields"]["phone"]["levels"][PHONE.code_of("shared_fixed")]
    assert entry["weight"] == 0.0 and entry["weight_before_bound"] == pytest.approx(-2.0)
    # "different" is never evidence for a match
    m["phone"][1], u["phone"][1] = 0.6, 0.3
    assert model_from_probabilities(m, u, 0.5).fields["phone"].level(1).weight == 0.0


# ----- explain ------------------------------------------------------------------------------


def test_explain_pair_matches_the_score():
    model, people, ids = tf_model()
    # record 2 and 22 are mei tanaka and her copy with day and month swapped (small_run)
    table = explain_pair(22, 2, people, ids, model)
    assert list(table["field"]) == [spec.name for spec in FIELDS] + ["prior", "total"]
    row = table.set_index("field")
    assert row.loc["birth_date", "label"] == "day and month swapped"
    assert row.loc["national_id", "value_a"] == "us_ssn:*****4322"
    pairs = pd.DataFrame({"rec_a": np.array([2], "int32"), "rec_b": np.array([22], "int32")})
    scored = score_pairs(compare_pairs(pairs, people, ids), model, people, ids)
    assert row.loc["total", "weight"] == pytest.approx(float(scored["weight"].iloc[0]), abs=1e-4)
    prob = float(scored["prob"].iloc[0])
    assert row.loc["total", "probability"] == pytest.approx(prob, rel=1e-5)
    assert row.loc["family_name", "tf_adjusted"]
    shown = explain_pair(2, 22, people, ids, model, mask_ids=False).set_index("field")
    assert shown.loc["national_id", "value_b"] == "us_ssn:536904322"
    with pytest.raises(InputError):
        explain_pair(3, 3, people, ids, model)


def test_mask_identifier():
    assert mask_identifier("us_ssn:536904399") == "us_ssn:*****4399"
    assert mask_identifier("123") == "123"


# ----- the pair worked through by hand in docs/matching.md, section 6 ---------


def worked_example():
    """The model and the two records of the worked example (invented)."""

    def spread(agree: dict[str, float], spec, u_side: bool) -> dict[int, float]:
        # levels the example does not reach get filler values; only the ratio m/u matters
        out = {lvl.code: (0.9 if u_side else 0.1) for lvl in spec.levels if not lvl.neutral}
        out.update(by_name(spec, agree))
        return out

    fields = {spec.name: spec for spec in FIELDS}
    m_used = {
        "given_name": {"similar": 0.04},
        "family_name": {"exact": 0.92},
        "birth_date": {"one_part": 0.03},
        "phone": {"different": 0.30},
        "address": {"exact": 0.80},
    }
    u_used = {
        "given_name": {"similar": 0.004},
        "family_name": {"exact": 0.0009},
        "birth_date": {"one_part": 0.004},
        "phone": {"different": 0.9999},
        "address": {"exact": 0.83},
    }
    m = {name: spread(m_used.get(name, {}), spec, False) for name, spec in fields.items()}
    u = {name: spread(u_used.get(name, {}), spec, True) for name, spec in fields.items()}
    model = model_from_probabilities(
        m, u, prior=0.02, term_frequency=("family_name", "address")
    )
    home = {
        "house_number": "14",
        "street_name": "quay street",
        "postcode": "pw1 1aa",
        "address_key": "14|quay street|pw1 1aa",
    }
    rows = [
        {"given_key": "catherine", "family_key": "moreau", "birth_date": "1984-03-07"} | home,
        {"given_key": "katherine", "family_key": "moreau", "birth_date": "1984-03-17"} | home,
    ]
    # 1,000 records with a family name: moreau on 5 of them, 35 names on two records each,
    # 925 names on one record each
    rows += [{"given_key": "filler", "family_key": "moreau"} for _ in range(3)]
    rows += [{"given_key": "filler", "family_key": f"pair{i // 2}"} for i in range(70)]
    rows += [{"given_key": "filler", "family_key": f"single{i}"} for i in range(925)]
    # 100 records with an address: 14 quay street on 4 of them (the two records and two
    # more moreaus: a household), 48 addresses on two records each
    rows[2].update(home)
    rows[3].update(home)
    for i in range(96):
        key = f"{i // 2}|lane {i // 2}|pw2 {i // 2}"
        rows[5 + i].update(
            {"house_number": str(i // 2), "street_name": f"lane {i // 2}",
             "postcode": f"pw2 {i // 2}", "address_key": key}
        )
    people = people_frame(rows)
    ids = id_frame(
        [
            (0, "phone", "+447700900123", "valid", "mobile"),
            (1, "phone", "+447700900456", "valid", "mobile"),
            (0, "email", "c.moreau@mail.test"),
        ]
    )
    return model, people, ids


def test_worked_example_in_the_docs():
    model, people, ids = worked_example()
    table = explain_pair(0, 1, people, ids, model).set_index("field")
    levels = table["level_name"].to_dict()
    assert levels == {
        "given_name": "similar",
        "family_name": "exact",
        "suffix": "missing",
        "birth_date": "one_part",
        "national_id": "missing",
        "phone": "different",
        "email": "missing",
        "address": "exact",
        "prior": "",
        "total": "",
    }
    weights = table["weight"].round(4).to_dict()
    assert weights == {
        "given_name": 3.3219,
        "family_name": 8.2605,
        "suffix": 0.0,
        "birth_date": 2.9069,
        "national_id": 0.0,
        "phone": -1.7368,
        "email": 0.0,
        "address": 0.0,
        "prior": -5.6147,
        "total": 7.1378,
    }
    # term-frequency adjustments: family name log2(1.2 / 4), address log2(1.08 / 3)
    assert math.log2(0.3) == pytest.approx(-1.7370, abs=5e-5)
    assert math.log2(0.36) == pytest.approx(-1.4739, abs=5e-5)
    # u that gives the family-name weight: 0.0009 / 0.3; the bounded address: u = m
    assert table.loc["family_name", "u"] == pytest.approx(0.003, abs=1e-7)
    assert table.loc["address", "u"] == pytest.approx(0.80, abs=1e-7)
    assert table.loc["address", "tf_adjusted"]
    assert table.loc["total", "probability"] == pytest.approx(0.9929, abs=5e-5)
    t = model.thresholds
    assert table.loc["total", "probability"] >= t.accept_probability
    # the address weight before the bound: log2(0.80 / 0.83) - 1.4739 = -1.5270; counted,
    # it would have sent the pair to review
    raw = math.log2(0.80 / 0.83) + math.log2(0.36)
    assert raw == pytest.approx(-1.5270, abs=5e-5)
    unbounded = float(weight_to_probability(7.1378 + raw))
    assert unbounded == pytest.approx(0.9799, abs=5e-5)
    assert t.review_probability < unbounded < t.accept_probability
    # without the term-frequency adjustment: log2(0.92/0.0009) for the family name
    pairs = pd.DataFrame({"rec_a": np.array([0], "int32"), "rec_b": np.array([1], "int32")})
    no_tf = score_pairs(compare_pairs(pairs, people, ids), model)
    assert float(no_tf["w_family_name"].iloc[0]) == pytest.approx(9.9975, abs=5e-5)
    assert float(no_tf["weight"].iloc[0]) == pytest.approx(8.8748, abs=5e-5)


# ----- households: candidate non-matches that are not like random pairs ----------------------


def household_run():
    """40 households of three (shared family name, address, landline), a typo copy of one
    member of each, and 1,500 unrelated people; invented syllable names."""
    rng = np.random.default_rng(11)
    syll = np.array("ka ri to ne sa mi lo ve da pe ru shi an el or is".split())

    def word(k: int) -> str:
        return "".join(rng.choice(syll, size=k))

    people_rows, id_rows, person = [], [], []
    for h in range(40):
        family, street = word(3), word(2)
        for j in range(3):
            rec = len(people_rows)
            people_rows.append(
                {
                    "given_key": word(2),
                    "family_key": family,
                    "birth_date": f"{1940 + 20 * j + h % 15}-{1 + h % 12:02d}-{1 + j * 9:02d}",
                    "house_number": str(h + 1),
                    "street_name": street,
                    "postcode": f"pc{h}",
                    "address_key": f"{h + 1}|{street}|pc{h}",
                }
            )
            person.append(3 * h + j)
            id_rows.append((rec, "phone", f"+1555{h:04d}", "valid", "fixed_line"))
            id_rows.append((rec, "phone", f"+1666{rec:04d}", "valid", "mobile"))
        copy = dict(people_rows[-1])
        copy["given_key"] = copy["given_key"][:-1] + "x"  # a typo in the given name
        people_rows.append(copy)
        person.append(3 * h + 2)
        copy_rec = len(people_rows) - 1  # keeps the mobile of the record it copies
        id_rows.append((copy_rec, "phone", f"+1666{copy_rec - 1:04d}", "valid", "mobile"))
    n_household = len(people_rows)
    for i in range(1500):
        people_rows.append(
            {
                "given_key": word(2),
                "family_key": word(3),
                "birth_date": f"{1930 + i % 70}-{1 + i % 12:02d}-{1 + i % 28:02d}",
            }
        )
        person.append(10_000 + i)
    people = people_frame(people_rows)
    # candidates: every pair inside a household (what blocking on the address gives)
    a, b = [], []
    for h in range(40):
        members = [r for r in range(n_household) if people_rows[r]["postcode"] == f"pc{h}"]
        for i, x in enumerate(members):
            for y in members[i + 1 :]:
                a.append(x)
                b.append(y)
    pairs = pd.DataFrame({"rec_a": np.array(a, "int32"), "rec_b": np.array(b, "int32")})
    return people, id_frame(id_rows), pairs, np.array(person)


def test_households_are_not_merged_with_the_default_fit():
    people, ids, pairs, person = household_run()
    compared = compare_pairs(pairs, people, ids)
    truth = person[pairs.rec_a] == person[pairs.rec_b]
    model = fit_model(compared, people, ids, settings={"random_pairs": 200_000})
    scored = score_pairs(compared, model, people, ids)
    accept = scored["prob"] >= model.thresholds.accept_probability
    assert (accept & ~truth).sum() == 0  # no household member merged with another
    assert (accept & truth).sum() >= 0.9 * truth.sum()
    assert model.prior == pytest.approx(truth.mean(), abs=0.05)
    # u of an agreement level never drops below its random-pair value
    fixed = fit_model(compared, people, ids, settings={"random_pairs": 200_000, "update_u": False})
    for name, field_model in model.fields.items():
        for level in field_model.levels:
            if level.code > 1 and not level.neutral:
                assert level.u >= fixed.fields[name].level(level.code).u * (1 - 1e-9)
    # with u held at the random-pair values the shared address and landline look like
    # duplicates, and the household pairs are taken for matches
    assert fixed.prior > model.prior + 0.3


def test_lift_to_floor_keeps_floors_and_zeroes_nothing():
    from resolve.scoring.em import lift_to_floor

    p = np.array([0.0, 0.001, 0.0, 0.0, 0.999])  # level 0 neutral; "different" nearly empty
    floor = np.array([0.0, 0.0, 0.003, 0.0001, 0.0])
    lifted = lift_to_floor(p, floor)
    assert lifted.sum() == pytest.approx(1.0)
    assert np.all(lifted >= floor - 1e-15)
    assert lifted[1] > 0.0009 and lifted[0] == 0.0
    assert np.array_equal(lift_to_floor(p, np.zeros(5)), p)
