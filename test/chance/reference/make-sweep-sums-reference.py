# Reference values for test/chance/share-sweep/tail-sums.test.ts and cut-sums.test.ts,
# pasted there by hand; tests never run this.
#   pip install scipy==1.17.1 mpmath==1.3.0
#   python3 test/chance/reference/make-sweep-sums-reference.py
# 600 shards with weights 1 + ((37 i) mod 100) / 50, i = 0..599, shares w_i / sum w (summed
# in order, as the test does in doubles); N = 200000. Each shard's threshold at relative
# load t is k_i = ceil(x - slack) on side high, floor(x + slack) on side low, x = t (N p_i),
# slack = min(1e-9 max(1, x), 1e-3 + 1e-14 x) (placement.ts's rounding, so thresholds match).
# Binomial tails from scipy (binom.logsf / logcdf), summed with logsumexp; the Poisson cuts
# (rate N) by mpmath at 40 digits: log mass, tail and the first six cumulants of the cut law
# from its first six raw moments.
import math
from scipy import stats
from scipy.special import logsumexp
from mpmath import mp, mpf, exp, log, loggamma

N = 200000
weights = [1 + ((37 * i) % 100) / 50 for i in range(600)]
total = 0.0
for w in weights:
    total += w
shares = sorted(w / total for w in weights)

def slack(x):
    return min(1e-9 * max(1, x), 1e-3 + 1e-14 * x)

def thresholds(side, t):
    out = []
    for p in shares:
        x = t * (N * p)
        out.append(math.ceil(x - slack(x)) if side == 'high' else math.floor(x + slack(x)))
    return out

def binomial(side, t):
    ks = thresholds(side, t)
    logs = [stats.binom.logsf(k - 1, N, p) if side == 'high' else stats.binom.logcdf(k, N, p)
            for k, p in zip(ks, shares)]
    order = sorted(range(600), key=lambda i: -logs[i])[:2]
    print(side, t, 'logSum', repr(float(logsumexp(logs))),
          'logSumSquares', repr(float(logsumexp([2 * v for v in logs]))),
          'top', [(repr(shares[i]), ks[i], repr(float(logs[i]))) for i in order])

mp.dps = 40
def cut(side, t):
    ks = thresholds(side, t)
    log_mass = mpf(0); tail_sum = mpf(0); cumulants = [mpf(0)] * 6
    for k, p in zip(ks, shares):
        mean = mpf(N) * mpf(p)
        if side == 'high':
            support = range(0, k)
        else:
            support = range(k + 1, int(mean + 60 * math.sqrt(float(mean)) + 200))
        pmf = [exp(j * log(mean) - mean - loggamma(j + 1)) for j in support]
        mass = sum(pmf)
        log_mass += log(mass)
        tail_sum += 1 - mass
        raw = [sum(q * mpf(j) ** r for q, j in zip(pmf, support)) / mass for r in range(1, 7)]
        m1, m2, m3, m4, m5, m6 = raw
        k1 = m1
        k2 = m2 - m1**2
        k3 = m3 - 3*m2*m1 + 2*m1**3
        k4 = m4 - 4*m3*m1 - 3*m2**2 + 12*m2*m1**2 - 6*m1**4
        k5 = m5 - 5*m4*m1 - 10*m3*m2 + 20*m3*m1**2 + 30*m2**2*m1 - 60*m2*m1**3 + 24*m1**5
        k6 = (m6 - 6*m5*m1 - 15*m4*m2 + 30*m4*m1**2 - 10*m3**2 + 120*m3*m2*m1 - 120*m3*m1**3
              + 30*m2**3 - 270*m2**2*m1**2 + 360*m2*m1**4 - 120*m1**6)
        for r, v in enumerate([k1, k2, k3, k4, k5, k6]):
            cumulants[r] += v
    print(side, t, 'logMassSum', mp.nstr(log_mass, 20), 'tailSum', mp.nstr(tail_sum, 20),
          'cumulants', [mp.nstr(v, 20) for v in cumulants])

binomial('high', 1.25)
binomial('low', 0.8)
cut('high', 1.25)
cut('low', 0.8)
