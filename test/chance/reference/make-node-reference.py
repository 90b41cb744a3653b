# Reference values for test/chance/share-sweep/taylor-nodes.test.ts; tests never run this.
#   pip install mpmath==1.3.0
#   python3 test/chance/reference/make-node-reference.py > test/chance/reference/taylor-nodes.json
# The Taylor coefficients in the offset e of one shard's tail T(k, xc + e) at a threshold k:
# a_n of T(e) / T(0) - 1 and b_n of log T(e), by mpmath.taylor (numerical differentiation at
# 60 digits) of the regularized incomplete gamma (Poisson: P(Y >= k) = P(k, mean), P(Y <= k)
# = Q(k + 1, mean)) and beta (binomial: P(X >= k) = I_p(k, N - k + 1), P(X <= k) =
# I_{1-p}(N - k, k + 1)) functions. Position x is share * scale; a Poisson shard's mean is
# rate * share. ratioPlus and ratioMinus are T(xc +- 1/2) / T(xc) themselves.
import json
from mpmath import mp, mpf, gammainc, betainc, log, taylor

mp.dps = 60
ORDER = 16

def tail(case, e):
    x = mpf(case['xc']) + e
    share = x / case['scale']
    k = case['k']
    if case['law'] == 'poisson':
        mean = case['rate'] * share
        if case['side'] == 'high':
            return gammainc(k, 0, mean, regularized=True)
        return gammainc(k + 1, mean, mp.inf, regularized=True)
    n = case['total']
    if case['side'] == 'high':
        return betainc(k, n - k + 1, 0, share, regularized=True)
    return betainc(n - k, k + 1, 0, 1 - share, regularized=True)

cases = [
    {'law': 'poisson', 'side': 'high', 'rate': 1000, 'total': 1000, 'scale': 1500, 'k': 30, 'xc': '29.5'},
    {'law': 'poisson', 'side': 'low', 'rate': 1000, 'total': 1000, 'scale': 1500, 'k': 10, 'xc': '10.5'},
    {'law': 'binomial', 'side': 'high', 'total': 1000, 'scale': 1500, 'k': 30, 'xc': '29.5'},
    {'law': 'binomial', 'side': 'low', 'total': 1000, 'scale': 1500, 'k': 10, 'xc': '10.5'},
    {'law': 'binomial', 'side': 'high', 'total': 100000, 'scale': 250000, 'k': 2000, 'xc': '1999.5'},
]
out = []
for case in cases:
    t0 = tail(case, 0)
    a = taylor(lambda e: tail(case, e) / t0 - 1, 0, ORDER)
    b = taylor(lambda e: log(tail(case, e)), 0, ORDER)
    out.append({**case, 'g0': mp.nstr(log(t0), 25),
                'ratioPlus': mp.nstr(tail(case, mpf(1) / 2) / t0, 25),
                'ratioMinus': mp.nstr(tail(case, -mpf(1) / 2) / t0, 25),
                'b': [mp.nstr(v, 25) for v in b[1:]], 'a': [mp.nstr(v, 25) for v in a[1:]]})
print(json.dumps({'command': 'python3 test/chance/reference/make-node-reference.py', 'cases': out}, indent=1))
