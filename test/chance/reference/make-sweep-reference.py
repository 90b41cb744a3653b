#!/usr/bin/env python3
"""Exact fullest- and emptiest-shard tails for weighted universes of 600 and 1500 shards,
the sizes at which the chance engine sums single-shard tails by share sweeps
(src/chance/share-sweep/) instead of one tail per distinct share.

Run:  python3 test/chance/reference/make-sweep-reference.py > test/chance/reference/sweep-exact.json
Needs: pip install python-flint==0.9.0 (PyPI). About twenty minutes on one core.

Nothing here shares code with src/chance. The method is the textbook generating function:
  P(all x_i <= b_i) = N! [x^N] prod_i sum_{j <= b_i} (p_i x)^j / j!
  P(all x_i >= a_i) = N! [x^N] prod_i sum_{j >= a_i} (p_i x)^j / j!
in python-flint's ball arithmetic (arb_series, 256 bits); every enclosure radius is checked
to be far below the tests' tolerance. The floor side is shifted as x^(sum a_i) times a series
of length N - sum a_i + 1. Weights are whole numbers (drawn from a gamma(16) law, the spread
of hash-range sizes with 16 tokens per shard, or 64, with a fixed seed) so that every threshold
ceil(t N w_i / W) or floor(u N w_i / W) is exact for the rational loads t and u used.
"""
import json
import random
import sys
import time
from fractions import Fraction

import flint
from flint import arb, arb_series

flint.ctx.prec = 256


def arb_to_float(x):
    mid = float(x.mid())
    rad = float(x.rad())
    assert rad <= abs(mid) * 1e-15 or mid == 0, (x,)
    return mid


def log_factorial(n):
    return arb(n + 1).lgamma()


def power_terms(p, start, count):
    """p^j / j! for j = start .. start + count - 1, by the ratio p / (j + 1)."""
    term = p ** start / arb(start + 1).gamma()
    terms = [term]
    for j in range(start, start + count - 1):
        term = term * p / (j + 1)
        terms.append(term)
    return terms


def max_at_most(weights, N, bounds):
    total = sum(weights)
    flint.ctx.cap = N + 1
    series = arb_series([1], prec=N + 1)
    for w, b in zip(weights, bounds):
        p = arb(w) / arb(total)
        terms = power_terms(p, 0, min(b, N) + 1)
        series = series * arb_series(terms, prec=N + 1)
    coeffs = series.coeffs()
    c = coeffs[N] if len(coeffs) > N else arb(0)
    return c * log_factorial(N).exp()


def min_at_least(weights, N, bounds):
    total = sum(weights)
    rest = N - sum(bounds)
    if rest < 0:
        return arb(0)
    flint.ctx.cap = rest + 1
    series = arb_series([1], prec=rest + 1)
    for w, a in zip(weights, bounds):
        p = arb(w) / arb(total)
        # sum_{j >= a} (p x)^j / j! = x^a sum_{i >= 0} p^(a+i) x^i / (a+i)!
        terms = power_terms(p, a, rest + 1)
        series = series * arb_series(terms, prec=rest + 1)
    coeffs = series.coeffs()
    c = coeffs[rest] if len(coeffs) > rest else arb(0)
    return c * log_factorial(N).exp()


def ceil_fraction(x):
    return -((-x.numerator) // x.denominator)


def floor_fraction(x):
    return x.numerator // x.denominator


def gamma_weights(m, seed, tokens):
    draw = random.Random(seed)
    return [max(1, round(1000 * draw.gammavariate(tokens, 1 / tokens))) for _ in range(m)]


def on_lattice(load, N, weights):
    """True when some t N w / W is a whole number (a threshold at a breakpoint), t > 0."""
    W = sum(weights)
    return load > 0 and any((load * N * w) % W == 0 for w in weights)


CASES = [
    # (shards, seed, tokens, requests, fullest loads, emptiest loads). The floor side's
    # series is about N (1 - u) long (five minutes at N = 6000), so it has few cases; a
    # tighter spread of shares (64 tokens) keeps "some shard empty" from being certain.
    (600, 11, 16, 6000, ["9/5", "2", "23/10", "13/5", "3"], ["1/10"]),
    (600, 16, 64, 6000, [], ["0", "1/20"]),
    (600, 12, 16, 24000, ["7/5", "31/20", "17/10", "19/10"], []),
    (1500, 13, 16, 15000, ["19/10", "21/10", "12/5", "27/10"], []),
]

out = {"sweepMax": [], "sweepMin": []}


def add_case(key, weights, N, text, threshold, tail):
    """One reference value: the thresholds of load `text` (moved off a breakpoint) and 1 - box."""
    W = sum(weights)
    load = Fraction(text)
    if on_lattice(load, N, weights):
        load += Fraction(1, 10**7)
    started = time.time()
    thresholds = [threshold(load * N * w / W) for w in weights]
    p = arb_to_float(1 - tail(weights, N, thresholds))
    out[key].append({"weights": weights, "requests": N, "relative": [load.numerator, load.denominator], "p": p})
    print(f"{key} m={len(weights)} N={N} load={load}: p={p:.6e} ({time.time() - started:.1f}s)", file=sys.stderr)


for m, seed, tokens, N, highs, lows in CASES:
    weights = gamma_weights(m, seed, tokens)
    for text in highs:
        add_case("sweepMax", weights, N, text, ceil_fraction, lambda w, n, ks: max_at_most(w, n, [k - 1 for k in ks]))
    for text in lows:
        add_case("sweepMin", weights, N, text, floor_fraction, lambda w, n, ks: min_at_least(w, n, [k + 1 for k in ks]))

json.dump(out, sys.stdout)
