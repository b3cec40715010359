"""Expectation-maximisation for the Fellegi-Sunter mixture model.

Candidate pairs are a mixture of matches (share λ) and non-matches. Under conditional
independence of the fields given the class, a pair's level vector has probability
Π m_f(level) among matches and Π u_f(level) among non-matches. EM (Winkler 1988, Proc. ASA
Survey Research Methods 667-671; Jaro 1989, JASA 84:414-420) alternates:

- E step: each pair's probability of being a match, g = λΠm / (λΠm + (1-λ)Πu);
- M step: λ = mean g; m_f(l) = share of level l among pairs, weighted by g;
  (optionally) u_f(l) likewise weighted by 1 - g.

The prior can differ between groups of pairs known in advance (`run_em` ``groups``: the
pipeline passes the family of blocking keys that proposed each pair). Each group then gets
its own λ while m and u stay shared: a covariate-dependent mixing proportion. The M step
for a group's λ is the mean g over the group's pairs, shrunk towards the overall λ by
``prior_pseudo_count`` pseudo-pairs so that a small group cannot run to 0 or 1.

Neutral levels (missing values) are left out of the likelihood: they contribute a factor 1
to both classes and are not counted in the M step. Pairs with the same level vector are
handled once, weighted by their count, so EM over millions of pairs costs a few thousand
rows per iteration.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import expit

from resolve.compare.align import factorize_ints


@dataclass
class EMResult:
    """Fitted probabilities (one array per field, index = level code) and convergence facts."""

    m: list[np.ndarray]
    u: list[np.ndarray]
    prior: float
    iterations: int
    final_change: float
    converged: bool
    log_likelihood: float
    patterns: int
    #: λ per group of pairs (one entry, equal to ``prior``, without groups).
    group_priors: np.ndarray | None = None
    #: Pairs per group.
    group_sizes: np.ndarray | None = None


def level_patterns(levels: np.ndarray, sizes: list[int]) -> tuple[np.ndarray, np.ndarray]:
    """Distinct rows of a (pairs x fields) level matrix and how often each occurs."""
    if levels.shape[0] == 0:
        return np.zeros((0, len(sizes)), dtype=np.int64), np.zeros(0, dtype=np.float64)
    code = np.zeros(levels.shape[0], dtype=np.int64)
    for f, size in enumerate(sizes):
        code = code * size + levels[:, f].astype(np.int64)
    inverse, distinct = factorize_ints(code)
    counts = np.bincount(inverse).astype(np.float64)
    patterns = np.zeros((distinct.size, len(sizes)), dtype=np.int64)
    rest = distinct.copy()
    for f in range(len(sizes) - 1, -1, -1):
        patterns[:, f] = rest % sizes[f]
        rest //= sizes[f]
    return patterns, counts


def smoothed(
    counts: np.ndarray, neutral: np.ndarray, pseudo: float, toward: np.ndarray
) -> np.ndarray:
    """Counts per level -> probabilities over the non-neutral levels (neutral stay 0).

    ``pseudo`` pseudo-pairs distributed like ``toward`` are added first, so a level never
    observed keeps a small probability and a field with almost no observations stays near
    ``toward`` instead of jumping to whatever the few observations say.
    """
    prior = np.where(neutral, 0.0, toward)
    prior = prior / prior.sum() if prior.sum() > 0 else prior
    c = np.where(neutral, 0.0, counts) + pseudo * prior
    total = c.sum()
    return c / total if total > 0 else c


def lift_to_floor(p: np.ndarray, floor: np.ndarray) -> np.ndarray:
    """Raise levels below ``floor`` to it, taking the mass from the levels above their floor.

    Used for u of agreement levels: pairs that became candidates because they share
    something agree on any field at least as often as random pairs do, so u estimated among
    candidates is not allowed below u among random pairs. The mass is taken from every
    level in proportion to how far it sits above its own floor, so no level is pushed to 0.
    Assumes the floors sum to less than 1.
    """
    lifted = np.maximum(p, floor)
    excess = float(lifted.sum() - p.sum())
    if excess <= 0:
        return p
    slack = lifted - floor
    if slack.sum() <= excess:
        return lifted / lifted.sum()
    lifted = lifted - slack * (excess / slack.sum())
    return lifted / lifted.sum()


def _log_table(p: np.ndarray, neutral: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return np.where(neutral, 0.0, np.log(np.maximum(p, 1e-300)))


def run_em(
    levels: np.ndarray,
    neutral: list[np.ndarray],
    m_init: list[np.ndarray],
    u_init: list[np.ndarray],
    prior_init: float,
    *,
    update_u: bool = False,
    u_floor: list[np.ndarray] | None = None,
    u_prior: list[np.ndarray] | None = None,
    max_iterations: int = 500,
    tolerance: float = 1e-6,
    pseudo_count: float = 0.5,
    groups: np.ndarray | None = None,
    n_groups: int = 1,
    prior_pseudo_count: float = 0.0,
) -> EMResult:
    """Fit m (and optionally u) and the prior λ by EM on a (pairs x fields) level matrix.

    ``neutral[f]`` marks the levels of field f that carry no evidence; ``m_init``/``u_init``
    give starting probabilities per level (index = level code). In the M step,
    ``pseudo_count`` pseudo-pairs spread like the starting probabilities are added to each
    field's expected counts (see `smoothed`); for u they are spread like ``u_prior`` when
    given (the random-pair u), else like ``u_init``. With ``update_u``, ``u_floor[f]`` (if
    given) is a lower bound for u of each level of field f (see `lift_to_floor`). Stops when
    no probability moves by more than ``tolerance`` in one iteration, or after
    ``max_iterations``. ``groups`` (int codes 0..n_groups-1 per pair) gives each group its
    own prior, shrunk towards the overall share by ``prior_pseudo_count`` pseudo-pairs.
    """
    sizes = [len(n) for n in neutral]
    if groups is None:
        groups = np.zeros(levels.shape[0], dtype=np.int64)
        n_groups = 1
    with_group = np.column_stack([levels, np.asarray(groups, dtype=np.int64)])
    patterns, counts = level_patterns(with_group, sizes + [n_groups])
    group_of, patterns = patterns[:, -1], patterns[:, :-1]
    group_sizes = np.bincount(group_of, counts, n_groups)
    total = counts.sum()
    m = [np.asarray(x, dtype=np.float64).copy() for x in m_init]
    u = [np.asarray(x, dtype=np.float64).copy() for x in u_init]
    m0 = [x.copy() for x in m]
    u0 = [np.asarray(x, dtype=np.float64) for x in u_prior] if u_prior else [x.copy() for x in u]
    prior = float(prior_init)
    priors = np.full(n_groups, prior)
    change = np.inf
    iteration = 0
    log_lik = float("nan")
    if total == 0:
        return EMResult(m, u, prior, 0, 0.0, False, log_lik, 0, priors, group_sizes)

    for iteration in range(1, max_iterations + 1):
        log_m = np.zeros(patterns.shape[0])
        log_u = np.zeros(patterns.shape[0])
        for f in range(len(sizes)):
            log_m += _log_table(m[f], neutral[f])[patterns[:, f]]
            log_u += _log_table(u[f], neutral[f])[patterns[:, f]]
        a = np.log(priors[group_of]) + log_m
        b = np.log1p(-priors[group_of]) + log_u
        g = expit(a - b)
        log_lik = float(np.sum(counts * np.logaddexp(a, b)))

        weights_m = counts * g
        weights_u = counts * (1.0 - g)
        new_prior = float(np.clip(weights_m.sum() / total, 1e-9, 1 - 1e-9))
        change = abs(new_prior - prior)
        prior = new_prior
        matches = np.bincount(group_of, weights_m, n_groups)
        shrunk = (matches + prior_pseudo_count * prior) / np.maximum(
            group_sizes + prior_pseudo_count, 1e-300)
        new_priors = np.clip(np.where(group_sizes > 0, shrunk, prior), 1e-9, 1 - 1e-9)
        change = max(change, float(np.max(np.abs(new_priors - priors))))
        priors = new_priors
        for f, size in enumerate(sizes):
            col = patterns[:, f]
            observed = ~neutral[f][col]
            if weights_m[observed].sum() > 0:
                expected = np.bincount(col, weights_m, size)
                new_m = smoothed(expected, neutral[f], pseudo_count, m0[f])
                change = max(change, float(np.max(np.abs(new_m - m[f]))))
                m[f] = new_m
            if update_u and weights_u[observed].sum() > 0:
                expected = np.bincount(col, weights_u, size)
                new_u = smoothed(expected, neutral[f], pseudo_count, u0[f])
                if u_floor is not None:
                    new_u = lift_to_floor(new_u, u_floor[f])
                change = max(change, float(np.max(np.abs(new_u - u[f]))))
                u[f] = new_u
        if change < tolerance:
            break
    return EMResult(
        m=m,
        u=u,
        prior=prior,
        iterations=iteration,
        final_change=float(change),
        converged=bool(change < tolerance),
        log_likelihood=log_lik,
        patterns=int(patterns.shape[0]),
        group_priors=priors,
        group_sizes=group_sizes,
    )
