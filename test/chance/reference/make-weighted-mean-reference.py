#!/usr/bin/env python3
"""Reference means and quantiles of the fullest and emptiest shards' relative loads on
unequal shares.

Run:  python3 test/chance/reference/make-weighted-mean-reference.py \
        > test/chance/reference/weighted-means.json      (about a minute)
      npx prettier --write test/chance/reference/weighted-means.json
Needs: pip install numpy scipy==1.17.1 (from PyPI).

Nothing here shares code with src/chance. r_i = X_i / (N p_i), (X_i) ~ Multinomial(N, p).
- exact: two and three shards, E[max r] and E[min r] summed over every outcome. Two shards:
  X_1 ~ Binomial(N, p_1), X_2 = N - X_1. Three: X_1 ~ Binomial(N, p_1), then
  X_2 | X_1 ~ Binomial(N - X_1, p_2 / (p_2 + p_3)), X_3 the rest (scipy.stats.binom.pmf,
  summed in double precision: relative error below 1e-12).
- quantiles: two and three shards, the whole law of max r and of min r from the same
  outcome probabilities; the fullest quantile at level L is the smallest t with
  P(max r <= t) >= L, the emptiest the smallest u with P(min r <= u) >= L (cumulative sums
  over outcomes sorted by value, in double precision).
- sampled: many shards, by Monte Carlo with numpy's multinomial sampler (PCG64, seed 7),
  with the standard error of the sample mean; a check of the order of 1e-4, no more.
"""
import json

import numpy as np
from scipy.stats import binom


def outcomes(n, w):
    """Every outcome's probability with its max r and min r (two or three shards)."""
    p = np.array(w, float) / sum(w)
    lam = n * p
    probs, maxes, mins = [], [], []
    if len(w) == 2:
        x = np.arange(n + 1)
        r = np.stack([x / lam[0], (n - x) / lam[1]])
        return binom.pmf(x, n, p[0]), r.max(0), r.min(0)
    pm1 = binom.pmf(np.arange(n + 1), n, p[0])
    for a in range(n + 1):
        rest = n - a
        x2 = np.arange(rest + 1)
        pm2 = binom.pmf(x2, rest, p[1] / (p[1] + p[2]))
        r = np.stack([np.full(rest + 1, a / lam[0]), x2 / lam[1], (rest - x2) / lam[2]])
        probs.append(pm1[a] * pm2)
        maxes.append(r.max(0))
        mins.append(r.min(0))
    return np.concatenate(probs), np.concatenate(maxes), np.concatenate(mins)


def quantile(prob, value, level):
    """The smallest v with P(value <= v) >= level."""
    order = np.argsort(value, kind="stable")
    v = value[order]
    c = np.cumsum(prob[order])
    # Outcomes of equal value count together.
    last = np.r_[v[1:] != v[:-1], True]
    v, c = v[last], c[last]
    return float(v[np.argmax(c >= level)])


def sampled(n, w, draws, seed=7):
    rng = np.random.default_rng(seed)
    p = np.array(w, float) / sum(w)
    lam = n * p
    maxes = np.empty(draws)
    mins = np.empty(draws)
    for start in range(0, draws, 10000):
        x = rng.multinomial(n, p, size=min(10000, draws - start)) / lam
        maxes[start : start + len(x)] = x.max(1)
        mins[start : start + len(x)] = x.min(1)
    se = lambda v: float(v.std(ddof=1) / np.sqrt(draws))
    return float(maxes.mean()), se(maxes), float(mins.mean()), se(mins)


out = {"exact": [], "sampled": []}
# The last three: a shard of 1e-9 of the traffic beside one of 1e-3, whose few requests
# read as relative loads of 1e6 and more.
for n, w in [
    (1000, [1, 3]),
    (20, [2, 5]),
    (300, [1, 2, 3]),
    (3000, [1, 2, 3]),
    (1, [0.000001, 1, 1000]),
    (7, [0.000001, 1, 1000]),
    (1000, [0.000001, 1, 1000]),
    # A shard of 1e-9 or 1e-12 of the traffic: one request there reads 1e9 or 1e12.
    (1, [1e-9, 1, 2]),
    (2, [1e-9, 1, 2]),
    (10, [1e-9, 1, 2]),
    (1, [1e-12, 1, 1]),
    (5, [1e-12, 1, 1]),
]:
    prob, mx, mn = outcomes(n, w)
    emax, emin = float(np.dot(prob, mx)), float(np.dot(prob, mn))
    out["exact"].append({"requests": n, "weights": w, "max": emax, "min": emin})
# Quantiles at the levels of a median, the 90th and 99.9th percentile (fullest) and their
# mirrors (emptiest); shares 1 : 2 put breakpoints of two shards at the same loads.
out["quantiles"] = []
for n, w in [
    (1000, [1, 3]),
    (20, [2, 5]),
    (300, [1, 2, 3]),
    (3000, [1, 2, 3]),
    (1, [1e-9, 1, 2]),
    (2, [1e-9, 1, 2]),
    (10, [1e-9, 1, 2]),
    (1, [1e-12, 1, 1]),
    (7, [0.000001, 1, 1000]),
    (40, [1, 2, 2]),
]:
    prob, mx, mn = outcomes(n, w)
    out["quantiles"].append({
        "requests": n,
        "weights": w,
        "fullest": {str(L): quantile(prob, mx, L) for L in (0.5, 0.9, 0.999)},
        "emptiest": {str(L): quantile(prob, mn, L) for L in (0.5, 0.1, 0.001)},
    })
# 200 shards, N / m = 100 (the staircase regime): five share classes (weights 1, 1.25, ..., 2
# in turn), and 200 distinct shares (weights 1 + i / 199).
for rule, w in [
    ("1 + (i mod 5) / 4 for i < 200", [1 + (i % 5) / 4 for i in range(200)]),
    ("1 + i / 199 for i < 200", [1 + i / 199 for i in range(200)]),
]:
    mx, mxse, mn, mnse = sampled(20000, w, 400000)
    out["sampled"].append(
        {"requests": 20000, "weightsRule": rule, "max": mx, "maxSe": mxse, "min": mn,
         "minSe": mnse, "draws": 400000}
    )
# The same three shares at N = 1e6 and 1e9, too many outcomes to sum: sampled.
for n in (10**6, 10**9):
    mx, mxse, mn, mnse = sampled(n, [0.000001, 1, 1000], 10**7, seed=11)
    out["sampled"].append(
        {"requests": n, "weights": [0.000001, 1, 1000], "max": mx, "maxSe": mxse, "min": mn,
         "minSe": mnse, "draws": 10**7}
    )
print(json.dumps(out, indent=2))
