#!/usr/bin/env python3
"""Reference values for the chance engine at window totals from 1e12 to 2^53 - 1.

Run:  python3 test/chance/reference/make-huge-reference.py > test/chance/reference/huge.json
      npx prettier --write test/chance/reference/huge.json          (about two minutes)
Needs: pip install mpmath==1.3.0 scipy==1.17.1 (both from PyPI).

Nothing here shares code with src/chance. Methods:
- single binomial tails: P(X >= a) = I_p(a, N - a + 1), the regularized incomplete beta
  function, as its defining integral N!/((a-1)!(N-a)!) int_0^p t^(a-1) (1-t)^(N-a) dt,
  integrated by mpmath.quad (tanh-sinh) at 50 digits over the few standard deviations where
  the integrand is not negligible (below e^-60 of its largest value elsewhere);
  P(X <= k) = P(N - X >= N - k) with N - X ~ Binomial(N, 1 - p), exactly in mpmath.
- two shards: the fullest (emptiest) shard reaches its threshold when X1 >= k1 or
  X1 <= N - k2 (X1 <= a1 or X1 >= N - a2): two disjoint binomial tails, exactly.
- three shards: P(all X_i <= b_i) = sum over x1 of P(X1 = x1) P(N - x1 - b3 <= X2 <= b2 |
  N - x1), X2 | x1 ~ Binomial(N - x1, p2 / (p2 + p3)); likewise P(all X_i >= a_i). The sum
  over x1 is evaluated by the Euler-Maclaurin formula (integral of the summand's analytic
  extension through gamma and incomplete beta functions, plus f/2 and f'/12 at the ends):
  the summand varies on the scale of a standard deviation (over 1e5 counts here), so the
  remainder is below 1e-20 relative.
- four shards, far tails: Bonferroni with negatively associated counts (Joag-Dev and
  Proschan 1983), S1 - sum_{i<j} T_i T_j <= P <= S1; recorded only where that bracket is
  narrower than 1e-5 relative, as its midpoint.
- 8 to 10 unequal shares, tails from 0.01 to 0.06: P = S1 + (P - S1), S1 the sum of the
  single tails from the mpmath beta integral, P - S1 (minus the pair and higher terms of
  inclusion-exclusion) from the multinomial's normal limit. Y_i = (X_i - N p_i) / sqrt(N)
  tends to N(0, diag(p) - p p^T), the law of independent Z_i ~ N(0, p_i) given sum Z_i = 0,
  so with continuity-corrected cuts c_i (k_i - 1/2 - N p_i over sqrt(N); low side: N p_i - k_i - 1/2, as -Y has Y's law)
  P(all Y_i < c_i) = f(0) / phi(0), f the density of sum Z_i 1{Z_i < c_i} cut to the box;
  by Fourier inversion, with E[e^(itZ) 1{Z < c}] = e^(-p t^2 / 2) Phi((c - i p t) / sqrt(p)),
  P(all Y_i < c_i) = (2 pi)^(-1/2) int e^(-t^2 / 2) prod_i Phi(c_i / sqrt(p_i) - i sqrt(p_i) t) dt.
  The integrand is smooth and decays like t^-m; the integral runs over [0, T] in panels of
  1/4 with 32-point Gauss-Legendre (Phi of complex argument from scipy.special.erfc, the
  Faddeeva function, relative 1e-13) until the integrand is below 1e-15 / T, and the
  recorded quadrature error is the change when the panels are halved. The normal limit's
  first neglected (skewness) term is of relative order (1 + z)^3 / sqrt(N p q); it is
  measured on the single tails (delta, normal against mpmath) and enters only through
  P - S1, a fraction of P, so the recorded error is 10 delta |P - S1| / P plus the
  quadrature error (below 1e-4 for every case, asserted; 1.6e-5 at most). The same
  hybrid, run once by hand on the three-shard cases above (not stored), met their
  Euler-Maclaurin sums within 6e-6, where the integrand's slower t^-3 decay limits the
  quadrature.
- 1e5 weighted shards: the first Bonferroni sum S1 = sum_i P(X_i >= k_i) from
  scipy.stats.binom.sf (double precision), with the bracket ends max(max_i T_i,
  S1 - (S1^2 - sum T_i^2) / 2) and min(1, S1); scipy is checked against the mpmath integral
  at the extreme shares first.
"""
import json
import math
import sys

import mpmath as mp
import numpy as np
from scipy.special import betainc, erfc
from scipy.stats import norm
from scipy.stats import binom

mp.mp.dps = 30


def log_upper(a, n, p):
    """log P(X >= a), X ~ Binomial(n, p), for real a in (0, n], by the beta integral."""
    a = mp.mpf(a)
    n = mp.mpf(n)
    p = mp.mpf(p)
    if a <= 0:
        return mp.mpf(0)
    log_norm = mp.loggamma(n + 1) - mp.loggamma(a) - mp.loggamma(n - a + 1)

    def log_f(t):
        return log_norm + (a - 1) * mp.log(t) + (n - a) * mp.log1p(-t)

    mode = (a - 1) / (n - 1)
    width = mp.sqrt(mode * (1 - mode) / n)
    if mode < p:
        # The whole peak lies inside [0, p].
        lo = max(mp.mpf(0), mode - 14 * width)
        hi = min(p, mode + 14 * width)
        top = log_f(mode)
    else:
        slope = (a - 1) / p - (n - a) / (1 - p)
        reach = 14 * width if slope <= 0 else min(14 * width, 70 / slope)
        lo = max(mp.mpf(0), p - reach)
        hi = p
        top = log_f(p)
    points = mp.linspace(lo, hi, 13)
    integral = mp.quad(lambda t: mp.exp(log_f(t) - top), points)
    return top + mp.log(integral)


def log_lower(k, n, p):
    """log P(X <= k) as the upper tail of n - X ~ Binomial(n, 1 - p) at n - k."""
    return log_upper(mp.mpf(n) - k, n, 1 - mp.mpf(p))


def binomial_tails():
    out = []
    for n in [10**12, 3 * 10**15, 2**53 - 1, 9 * 10**15]:
        for p in [0.5, 1 / 3, 1 / 64, 1e-5]:
            mean = mp.mpf(n) * mp.mpf(p)
            sd = mp.sqrt(mean * (1 - mp.mpf(p)))
            for z in [-30, -8, -3, -0.5, 0, 0.5, 3, 8, 30]:
                k = int(mp.nint(mean + z * sd))
                at_least = log_upper(k, n, p)
                at_most = log_lower(k, n, p)
                out.append(
                    {
                        "n": n,
                        "share": p,
                        "k": k,
                        "logAtLeast": float(at_least),
                        "logAtMost": float(at_most),
                    }
                )
    return out


def two_shards(n, shares, side, thresholds):
    p = shares[0]
    if side == "high":
        k1, k2 = thresholds
        assert k1 + k2 > n
        return mp.exp(log_upper(k1, n, p)) + mp.exp(log_lower(n - k2, n, p))
    a1, a2 = thresholds
    assert a1 + a2 < n
    return mp.exp(log_lower(a1, n, p)) + mp.exp(log_upper(n - a2, n, p))


def pmf(x, n, p):
    """Binomial(n, p) density at real x (gamma functions), in mpmath, returned as a float.
    n - x is taken in mpmath: in doubles it rounds by 1/8 at 1e15, which moves the log
    density by 1/8 log(n) when x is not whole."""
    n = mp.mpf(n)
    x = mp.mpf(x)
    return float(
        mp.exp(
            mp.loggamma(n + 1)
            - mp.loggamma(x + 1)
            - mp.loggamma(n - x + 1)
            + x * mp.log(p)
            + (n - x) * mp.log1p(-p)
        )
    )


def interval(lo, hi, n, p):
    """P(lo <= X <= hi), X ~ Binomial(n, p), analytically extended to real lo, hi, n, through
    scipy.special.betainc: P(X >= a) = I_p(a, n - a + 1), P(X <= j) = I_(1-p)(n - j, j + 1)."""
    mean = n * p
    at_least = lambda a: betainc(a, n - a + 1, p) if a > 0 else 1.0
    at_most = lambda j: betainc(n - j, j + 1, 1 - p) if j < n else 1.0
    if lo <= mean <= hi:
        return 1 - at_most(lo - 1) - at_least(hi + 1)
    if hi < mean:
        return at_most(hi) - at_most(lo - 1)
    return at_least(lo) - at_least(hi + 1)


GAUSS_X, GAUSS_W = np.polynomial.legendre.leggauss(24)


def three_shards(n, shares, side, thresholds):
    """P(some shard reaches its threshold) for three shards, by the Euler-Maclaurin sum.

    The integral runs over 1-standard-deviation panels of 24-point Gauss-Legendre; the outer
    density in mpmath, the inner interval in scipy (double precision, checked against mpmath
    in many_weighted)."""
    p2, p3 = float(shares[1]), float(shares[2])
    p1 = mp.mpf(1) - mp.mpf(p2) - mp.mpf(p3)
    cond = p2 / (p2 + p3)
    sd = float(mp.sqrt(n * p1 * (1 - p1)))
    centre = float(n * p1)
    if side == "high":
        b1, b2, b3 = [k - 1 for k in thresholds]
        first, last = n - b2 - b3 - 1, b1  # f(first) = 0: the inner interval is empty there

        def f(x):
            m = n - x
            return pmf(x, n, p1) * interval(m - b3, b2, m, cond)

    else:
        a1, a2, a3 = [a + 1 for a in thresholds]
        first, last = a1, n - a2 - a3 + 1  # f(last) = 0

        def f(x):
            m = n - x
            return pmf(x, n, p1) * interval(a2, m - a3, m, cond)

    lo = max(first, math.floor(centre - 14 * sd))
    hi = min(last, math.ceil(centre + 14 * sd))
    panels = max(1, math.ceil((hi - lo) / sd))
    edges = [lo + (hi - lo) * j / panels for j in range(panels + 1)]
    integral = 0.0
    for a, b in zip(edges, edges[1:]):
        half = (b - a) / 2
        integral += half * sum(w * f(a + half * (1 + x)) for x, w in zip(GAUSS_X, GAUSS_W))
    h = sd / 64
    derivative = lambda x: (f(x + h) - f(x - h)) / (2 * h)
    ends = (f(lo) + f(hi)) / 2 + (derivative(hi) - derivative(lo)) / 12
    return 1 - (integral + ends)


def extremes():
    out = []
    cases = [
        (2, [0.5, 0.5]),
        (2, [0.4, 0.6]),
        (3, [1 / 3, 1 / 3, 1 / 3]),
        (3, [0.25, 1 / 3, 5 / 12]),
    ]
    for n in [10**12, 3 * 10**15, 2**53 - 1]:
        for m, shares in cases:
            for side in ["high", "low"]:
                for z in [0.5, 1.5, 2.5, 3.5, 5]:
                    # Relative load t = 1 +- z / sqrt(N p_min): thresholds from t N p_i.
                    s = z / math.sqrt(n * min(shares))
                    t = 1 + s if side == "high" else 1 - s
                    if side == "high":
                        ks = [int(mp.ceil(t * mp.mpf(n) * mp.mpf(p))) for p in shares]
                    else:
                        ks = [int(mp.floor(t * mp.mpf(n) * mp.mpf(p))) for p in shares]
                    value = (two_shards if m == 2 else three_shards)(n, shares, side, ks)
                    out.append(
                        {
                            "n": n,
                            "shares": shares,
                            "side": side,
                            "thresholds": ks,
                            "p": float(value),
                        }
                    )
                    print(n, m, side, z, float(value), file=sys.stderr)
    return out


def four_far():
    out = []
    shares = [0.25] * 4
    for n in [10**12, 2**53 - 1]:
        for side in ["high", "low"]:
            for z in [5, 6, 8]:
                s = z / math.sqrt(n * 0.25)
                t = 1 + s if side == "high" else 1 - s
                if side == "high":
                    ks = [int(mp.ceil(t * mp.mpf(n) * mp.mpf(p))) for p in shares]
                    tails = [mp.exp(log_upper(k, n, p)) for k, p in zip(ks, shares)]
                else:
                    ks = [int(mp.floor(t * mp.mpf(n) * mp.mpf(p))) for p in shares]
                    tails = [mp.exp(log_lower(k, n, p)) for k, p in zip(ks, shares)]
                s1 = sum(tails)
                s2 = sum(tails[i] * tails[j] for i in range(4) for j in range(i + 1, 4))
                assert s2 / s1 < 1e-5
                out.append(
                    {
                        "n": n,
                        "shares": shares,
                        "side": side,
                        "thresholds": ks,
                        "p": float(s1 - s2 / 2),
                    }
                )
    return out


FOURIER_X, FOURIER_W = np.polynomial.legendre.leggauss(32)


def normal_box(n, shares, side, thresholds, width=0.25):
    """P(no shard reaches its threshold) in the normal limit (Fourier inversion, see the
    header), and the normal single tails P(Y_i >= c_i), Y_i ~ N(0, p_i (1 - p_i))."""
    n_m = mp.mpf(n)
    ps = [mp.mpf(p) for p in shares]
    whole = sum(ps)
    ps = [p / whole for p in ps]
    cuts = []
    for p, k in zip(ps, thresholds):
        gap = (k - mp.mpf(0.5) - n_m * p) if side == "high" else (n_m * p - k - mp.mpf(0.5))
        cuts.append(float(gap / mp.sqrt(n_m)))
    p = np.array([float(x) for x in ps])
    b = np.sqrt(p)
    a = np.array(cuts) / b

    def f(t):
        w = a[None, :] - 1j * b[None, :] * t[:, None]
        return np.exp(np.log(erfc(-w / np.sqrt(2)) / 2).sum(axis=1) - t * t / 2).real

    reach, integral = 0.0, 0.0
    while True:
        t = reach + width * (FOURIER_X + 1) / 2
        integral += width / 2 * np.dot(FOURIER_W, f(t))
        reach += width
        if reach >= 8 and abs(f(np.array([reach]))[0]) * reach < 1e-15:
            break
        assert reach < 200, "integrand decays too slowly"
    box = 2 * integral / math.sqrt(2 * math.pi)
    return box, norm.sf(np.array(cuts) / np.sqrt(p * (1 - p)))


def share_set(m, kind):
    i = np.arange(m)
    weights = {
        "spread": 0.75 + 0.5 * ((i * 7919) % m) / m,  # as bench/judge.bench.ts draws them
        "ramp": 1.0 + i,  # 1 : 2 : ... : m
        "doubling": 2.0**i,  # 1 : 2 : 4 : ... : 2^(m-1)
        "two-level": np.where(i < m // 2, 1.0, 3.0),
    }[kind]
    return [float(x) for x in weights / weights.sum()]


def few_weighted():
    """8 to 10 unequal shares; every shard's threshold z standard deviations from its mean."""
    out = []
    for n in [10**12, 2**53 - 1]:
        for m in [8, 9, 10]:
            for kind in ["spread", "ramp", "doubling", "two-level"]:
                shares = share_set(m, kind)
                for side in ["high", "low"]:
                    for z in [2.5, 2.75, 3.0]:
                        ks = []
                        for p in shares:
                            step = z * mp.sqrt(mp.mpf(n) * p * (1 - p))
                            mean = mp.mpf(n) * mp.mpf(p)
                            ks.append(int(mp.ceil(mean + step) if side == "high" else mp.floor(mean - step)))
                        box, normal_tails = normal_box(n, shares, side, ks)
                        finer, _ = normal_box(n, shares, side, ks, width=0.125)
                        tails = [
                            float(mp.exp(log_upper(k, n, p) if side == "high" else log_lower(k, n, p)))
                            for p, k in zip(shares, ks)
                        ]
                        s1 = sum(tails)
                        value = s1 + ((1 - box) - float(normal_tails.sum()))
                        delta = max(abs(t / u - 1) for t, u in zip(tails, normal_tails))
                        error = 10 * delta * abs(value - s1) / value + abs(box - finer) / value
                        assert error < 1e-4, (n, m, kind, side, z, error)
                        out.append(
                            {
                                "n": n,
                                "shares": shares,
                                "side": side,
                                "thresholds": ks,
                                "p": value,
                                "s1": s1,
                                "error": error,
                            }
                        )
                        print(n, m, kind, side, z, value, s1, error, file=sys.stderr)
    return out


def many_weighted():
    """S1 brackets for 1e5 shards with weights 0.75 + 0.5 ((i 7919) mod m) / m."""
    m = 100000
    i = np.arange(m)
    weights = 0.75 + 0.5 * ((i * 7919) % m) / m
    shares = weights / weights.sum()
    out = []
    for n in [10**12, 2**53 - 1]:
        # scipy against the mpmath integral at the smallest and the largest share.
        for p in [shares.min(), shares.max()]:
            k = int(n * p + 4 * math.sqrt(n * p))
            mine = float(mp.exp(log_upper(k, n, p)))
            theirs = float(binom.sf(k - 1, n, p))
            assert abs(theirs / mine - 1) < 1e-8, (n, p, mine, theirs)
            k = int(n * p - 4 * math.sqrt(n * p))
            mine = float(mp.exp(log_lower(k, n, p)))
            theirs = float(binom.cdf(k, n, p))
            assert abs(theirs / mine - 1) < 1e-8, (n, p, mine, theirs)
        for side in ["high", "low"]:
            for z in [3.5, 4, 4.5, 5, 6]:
                s = z / math.sqrt(n * shares.min())
                t = 1 + s if side == "high" else 1 - s
                x = t * n * shares
                if side == "high":
                    ks = np.ceil(x - np.minimum(1e-9 * x, 1e-3 + 1e-14 * x))
                    tails = binom.sf(ks - 1, n, shares)
                else:
                    ks = np.floor(x + np.minimum(1e-9 * x, 1e-3 + 1e-14 * x))
                    tails = binom.cdf(ks, n, shares)
                s1 = float(tails.sum())
                squares = float((tails * tails).sum())
                lower = max(float(tails.max()), s1 - (s1 * s1 - squares) / 2)
                out.append(
                    {
                        "n": n,
                        "side": side,
                        "relative": t,
                        "lower": lower,
                        "upper": min(1.0, s1),
                    }
                )
    return out


if __name__ == "__main__":
    result = {
        "binomial": binomial_tails(),
        "extremes": extremes() + four_far(),
        "manyWeighted": many_weighted(),
        "fewWeighted": few_weighted(),
    }
    json.dump(result, sys.stdout, indent=1)
    print()
