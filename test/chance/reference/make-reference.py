#!/usr/bin/env python3
"""Independent reference values for the chance engine's tests.

Run:  python3 test/chance/reference/make-reference.py > test/chance/reference/exact.json
Needs: pip install python-flint==0.9.0 scipy==1.17.1 mpmath==1.3.0 (all from PyPI).

Nothing here shares code with src/chance. The methods are the textbook ones:
- equal shares, fullest shard: P(max <= b) = N!/m^N [x^N] (sum_{j<=b} x^j/j!)^m,
  computed with python-flint's ball arithmetic (arb_series, 400 bits); the enclosure
  radius is checked to be far below the tolerance of the tests.
- equal shares, emptiest shard: P(min >= a) = N!/m^N [x^N] (sum_{j>=a} x^j/j!)^m.
- weighted shares: P(all x_i <= b_i) = N! [x^N] prod_i sum_{j<=b_i} (p_i x)^j / j!.
- empty shards: P(E = j) = C(m, j) (m-j)! S(N, m-j) / m^N with exact Stirling numbers of
  the second kind (flint fmpz.stirling_s2), as exact rationals.
- two and three shards at large N: sums of binomial probabilities from scipy.stats.binom
  (scipy's own incomplete beta), in double precision.
"""
import json
import math
from fractions import Fraction

import flint
from flint import arb, arb_series, fmpz, fmpq
from scipy.stats import binom

flint.ctx.prec = 400


def arb_to_float(x):
    mid = float(x.mid())
    rad = float(x.rad())
    assert rad <= abs(mid) * 1e-20 or mid == 0, (x,)
    return mid


def coefficient_power(terms, m, N):
    """[x^N] (sum_j terms[j] x^j)^m for a series with terms[0] != 0."""
    flint.ctx.cap = N + 1
    s = arb_series(terms, prec=N + 1)
    assert len((s ** 1).coeffs()) >= min(len(terms), N + 1)
    coeffs = (s ** m).coeffs()
    return coeffs[N] if len(coeffs) > N else arb(0)


def log_factorial(n):
    return arb(n + 1).lgamma()


def equal_max_at_most(m, N, b):
    if b * m < N:
        return arb(0)
    if b >= N:
        return arb(1)
    inv_fact = [arb(1) / arb(j + 1).gamma() for j in range(b + 1)]
    c = coefficient_power(inv_fact, m, N)
    return c * (log_factorial(N) - N * arb(m).log()).exp()


def equal_min_at_least(m, N, a):
    if a * m > N:
        return arb(0)
    if a == 0:
        return arb(1)
    # (x^a g(x))^m, g(x) = sum_{j>=0} x^j/(j+a)!
    rest = N - a * m
    g = [arb(1) / arb(j + a + 1).gamma() for j in range(rest + 1)]
    c = coefficient_power(g, m, rest)
    return c * (log_factorial(N) - N * arb(m).log()).exp()


def weighted_max_at_most(weights, N, bounds):
    total = sum(weights)
    flint.ctx.cap = N + 1
    series = arb_series([1], prec=N + 1)
    for w, b in zip(weights, bounds):
        p = arb(w) / arb(total)
        terms = [p ** j / arb(j + 1).gamma() for j in range(min(b, N) + 1)]
        series = series * arb_series(terms, prec=N + 1)
    coeffs = series.coeffs()
    c = coeffs[N] if len(coeffs) > N else arb(0)
    return c * log_factorial(N).exp()


def weighted_min_at_least(weights, N, bounds):
    total = sum(weights)
    flint.ctx.cap = N + 1
    series = arb_series([1], prec=N + 1)
    for w, a in zip(weights, bounds):
        p = arb(w) / arb(total)
        terms = [arb(0)] * a + [p ** j / arb(j + 1).gamma() for j in range(a, N + 1)]
        series = series * arb_series(terms, prec=N + 1)
    coeffs = series.coeffs()
    c = coeffs[N] if len(coeffs) > N else arb(0)
    return c * log_factorial(N).exp()


def ceil_fraction(x):
    return -((-x.numerator) // x.denominator)


def floor_fraction(x):
    return x.numerator // x.denominator


out = {"chiSquare": [], "tails": [], "equalMax": [], "equalMin": [], "weightedMax": [], "weightedMin": [], "empty": [], "twoThree": []}

EQUAL_CASES = [
    (365, 23), (365, 88), (10, 50), (64, 100), (64, 1000), (64, 6400), (1000, 1000),
    (1000, 5000), (100000, 1000), (100000, 4000), (5, 2000), (3, 3000), (20, 4000), (2, 500),
    (16, 4000), (128, 50), (7, 7),
]
import sys
import time

for m, N in EQUAL_CASES:
    started = time.time()
    fair = N / m
    k = math.ceil(fair)
    while k <= N:
        p = 1 - equal_max_at_most(m, N, k - 1)
        pf = arb_to_float(p) if p != 0 else 0.0
        if pf < 1e-17:
            break
        if pf < 1 - 1e-12:
            out["equalMax"].append({"shards": m, "requests": N, "atLeast": k, "p": pf})
        k += max(1, int(math.sqrt(fair) / 3)) if fair > 30 else 1
    k = math.floor(fair)
    while k >= 0:
        p = 1 - equal_min_at_least(m, N, k + 1)
        pf = arb_to_float(p) if p != 0 else 0.0
        if pf < 1e-17:
            break
        if pf < 1 - 1e-12:
            out["equalMin"].append({"shards": m, "requests": N, "atMost": k, "p": pf})
        k -= max(1, int(math.sqrt(fair) / 3)) if fair > 30 else 1
    print(f"equal m={m} N={N}: {time.time() - started:.1f}s", file=sys.stderr)

WEIGHTED_CASES = [
    ([1, 1, 2, 2, 3, 4, 5, 8], 200),
    ([1, 1, 2, 2, 3, 4, 5, 8], 1000),
    ([3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73], 2000),
    ([1] * 12 + [2] * 4, 800),
    ([(7 * i) % 23 + 5 for i in range(64)], 3000),
]
for weights, N in WEIGHTED_CASES:
    W = sum(weights)
    for t in [Fraction(11, 10), Fraction(5, 4), Fraction(3, 2), Fraction(7, 4), Fraction(2), Fraction(5, 2), Fraction(3), Fraction(4)]:
        thresholds = [ceil_fraction(t * N * w / W) for w in weights]
        p = 1 - weighted_max_at_most(weights, N, [k - 1 for k in thresholds])
        pf = arb_to_float(p) if p != 0 else 0.0
        if 1e-17 < pf < 1 - 1e-12:
            out["weightedMax"].append({"weights": weights, "requests": N, "relative": [t.numerator, t.denominator], "thresholds": thresholds, "p": pf})
    for u in [Fraction(9, 10), Fraction(4, 5), Fraction(2, 3), Fraction(1, 2), Fraction(1, 3), Fraction(1, 5), Fraction(0)]:
        thresholds = [floor_fraction(u * N * w / W) for w in weights]
        p = 1 - weighted_min_at_least(weights, N, [k + 1 for k in thresholds])
        pf = arb_to_float(p) if p != 0 else 0.0
        if 1e-17 < pf < 1 - 1e-12:
            out["weightedMin"].append({"weights": weights, "requests": N, "relative": [u.numerator, u.denominator], "thresholds": thresholds, "p": pf})

EMPTY_CASES = [(365, 23), (10, 10), (64, 64), (64, 200), (200, 200), (1000, 1000), (1000, 3000), (50, 20), (2000, 4000), (1024, 10000), (1024, 20000)]
for m, N in EMPTY_CASES:
    denom = m ** N
    numerators = []
    for j in range(m + 1):
        if m - j > N or (m - j == 0 and N > 0):
            numerators.append(0)
            continue
        numerators.append(math.comb(m, j) * math.factorial(m - j) * int(fmpz.stirling_s2(N, m - j)))
    assert sum(numerators) == denom
    mean = Fraction(sum(j * numerators[j] for j in range(m + 1)), denom)
    second = Fraction(sum(j * j * numerators[j] for j in range(m + 1)), denom)
    tail = 0
    tails = [0] * (m + 2)
    for e in range(m, -1, -1):
        tail += numerators[e]
        tails[e] = tail
    for e in range(m + 1):
        tf = float(Fraction(tails[e], denom))
        if 1e-17 < tf < 1 - 1e-12:
            out["empty"].append({"shards": m, "requests": N, "atLeast": e, "p": tf})
    out["empty"].append({"shards": m, "requests": N, "mean": float(mean), "variance": float(second - mean * mean)})

# Two and three shards with many requests, by binomial sums (scipy.stats.binom).
for N in [10 ** 6, 10 ** 9]:
    sd = math.sqrt(N) / 2
    for z in [0.5, 1, 2, 3, 5, 7]:
        k = math.ceil(N / 2 + z * sd)
        # max >= k  <=>  X1 >= k or X1 <= N - k
        p = binom.sf(k - 1, N, 0.5) + binom.cdf(N - k, N, 0.5)
        out["twoThree"].append({"shards": 2, "requests": N, "atLeast": k, "p": float(p)})
for N in [30000, 10 ** 6]:
    sd = math.sqrt(N * (1 / 3) * (2 / 3))
    for z in [0.5, 1, 2, 3, 4]:
        k = math.ceil(N / 3 + z * sd)
        b = k - 1
        # P(all <= b) = sum_x1 P(X1 = x1) P(N - x1 - b <= X2 <= b | N - x1, 1/2)
        lo = max(0, N - 2 * b)
        total = 0.0
        for x1 in range(lo, b + 1):
            n2 = N - x1
            low2 = max(0, n2 - b)
            if low2 > b:
                continue
            total += binom.pmf(x1, N, 1 / 3) * (binom.cdf(b, n2, 0.5) - binom.cdf(low2 - 1, n2, 0.5))
        out["twoThree"].append({"shards": 3, "requests": N, "atLeast": k, "p": float(1 - total)})

# Single-shard tails at large and extreme arguments: binomial from scipy.stats.binom (checked
# against mpmath.betainc at 40 digits for Binomial(1e9, 1e-5) at k = 9900 and 10000).
# The small shares of many-shard clusters (1e-4 to 1e-6) are where the binomial tail is
# taken from a corrected Poisson run (src/chance/tails.ts), so they get a denser grid.
for n, p in [(10 ** 9, 1e-5), (10 ** 9, 0.5), (10 ** 6, 1e-3), (1000, 0.5), (200, 0.01),
             (10 ** 9, 2.5e-5), (10 ** 8, 1e-4), (10 ** 7, 1e-6), (4 * 10 ** 9, 3e-6)]:
    mean = n * p
    sd = math.sqrt(n * p * (1 - p))
    for z in [-30, -8, -3, -1, -0.2, 0, 0.2, 1, 3, 8, 30]:
        k = math.floor(mean + z * sd)
        if k < 0 or k > n:
            continue
        out["tails"].append({"law": "binomial", "n": n, "share": p, "k": k,
                             "atMost": float(binom.cdf(k, n, p)), "atLeast": float(binom.sf(k - 1, n, p))})
# Poisson tails by mpmath at 50 digits: the smaller tail summed term by term from its first
# density (scipy 1.17.1 poisson.sf was found off by 24% at mean 1e8, k = mean + 8 sd; mpmath
# agrees with an independent summation there).
import mpmath as mp

mp.mp.dps = 50


def poisson_run(k, mean, upward):
    lam = mp.mpf(mean)
    first = mp.exp(-lam + k * mp.log(lam) - mp.loggamma(k + 1)) if k > 0 else mp.exp(-lam)
    term = mp.mpf(1)
    total = mp.mpf(1)
    j = k
    while True:
        if upward:
            j += 1
            term *= lam / j
        else:
            if j == 0:
                break
            term *= j / lam
            j -= 1
        total += term
        if term < total * mp.mpf(10) ** -30:
            break
    return first * total


for mean in [0.5, 30, 1e4, 1e8]:
    sd = math.sqrt(mean)
    for z in [-8, -3, 0, 3, 8, 30]:
        k = math.floor(mean + z * sd)
        if k < 0:
            continue
        if k + 1 > mean:
            upper = poisson_run(k + 1, mean, True)
            at_most, at_least = 1 - upper, upper + mp.exp(-mp.mpf(mean) + k * mp.log(mean) - mp.loggamma(k + 1))
        else:
            lower = poisson_run(k, mean, False)
            at_most, at_least = lower, 1 - lower + mp.exp(-mp.mpf(mean) + k * mp.log(mean) - mp.loggamma(k + 1))
        out["tails"].append({"law": "poisson", "mean": mean, "k": k, "atMost": float(at_most), "atLeast": float(at_least)})

# Regularized incomplete gamma ratios P(a, x) and Q(a, x) by mpmath.gammainc at 40 digits,
# for the O(1) expansion of src/chance/gamma-ratio-expansion.ts (non-integer shapes too).
out["gammaRatios"] = []
with mp.workdps(40):
    for a in [25, 30.5, 60, 100, 250.5, 1000, 4321.25]:
        for r in [0.33, 0.6, 0.9, 0.99, 1, 1.01, 1.1, 1.5, 2.1]:
            x = a * r
            lower = mp.gammainc(mp.mpf(a), 0, mp.mpf(x), regularized=True)
            upper = mp.gammainc(mp.mpf(a), mp.mpf(x), mp.inf, regularized=True)
            out["gammaRatios"].append({"a": a, "x": x, "lower": float(lower), "upper": float(upper)})

# Chi-square upper tails by mpmath.gammainc(df/2, x/2, inf, regularized=True) at 30 digits.
for df in [1, 5, 63, 1023, 99999]:
    for z in [-2, 0, 2, 5, 10, 40]:
        x = df + z * math.sqrt(2 * df)
        if x <= 0:
            continue
        value = mp.gammainc(mp.mpf(df) / 2, mp.mpf(x) / 2, mp.inf, regularized=True)
        out["chiSquare"].append({"df": df, "x": x, "upper": float(value)})

print(json.dumps(out, indent=1))
