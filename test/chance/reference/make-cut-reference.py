# Reference values for test/chance/share-sweep/accumulators.test.ts, pasted there by hand;
# tests never run this.
#   pip install mpmath==1.3.0 && python3 test/chance/reference/make-cut-reference.py
# One Poisson shard cut into Levin's sums: mean = rate * share, its tail T on the side
# (high: P(Y >= k), low: P(Y <= k)), the elasticity d log T / d log mean, and the Taylor
# coefficients u_0..u_5 in t of u(t) = -d/dt log M(mean e^t), M = 1 - T the shard's mass
# (mpmath.taylor of log M at 50 digits, u_n = -(n + 1) c_{n+1}).
from mpmath import mp, mpf, gammainc, exp, log, taylor, diff

mp.dps = 50

def tail(side, k, mean):
    if side == 'high':
        return gammainc(k, 0, mean, regularized=True)
    return gammainc(k + 1, mean, mp.inf, regularized=True)

for side, rate, share, k in [('high', 1000, '0.02', 30), ('low', 1000, '0.02', 10), ('high', 1000, '0.01', 30)]:
    mean = rate * mpf(share)
    t = tail(side, k, mean)
    elasticity = diff(lambda m: log(tail(side, k, m)), mean) * mean
    c = taylor(lambda s: log(1 - tail(side, k, mean * exp(s))), 0, 7)
    u = [-(n + 1) * c[n + 1] for n in range(6)]
    print(side, rate, share, k, 'tail', mp.nstr(t, 20), 'elasticity', mp.nstr(elasticity, 20),
          'log mass', mp.nstr(log(1 - t), 20), 'u', [mp.nstr(v, 20) for v in u])
