# Reference values for test/judge/flagged-shards.test.ts, pasted there by hand; tests never run this.
#   pip install scipy==1.17.1 mpmath==1.3.0 && python3 test/judge/reference/make-flagged-reference.py
# Exact extreme-shard tails of a multinomial with equal shares (python fractions), and
# binomial tails from scipy 1.17.1.
from fractions import Fraction as F
from math import factorial
from scipy import stats
import mpmath
def p_all_between(n, m, lo, hi):
    # P(lo <= X_i <= hi for all i), X ~ Multinomial(n, 1/m each): n!/m^n [t^n] (sum t^x/x!)^m
    poly = [F(0)] * (n + 1); poly[0] = F(1)
    term = [F(1, factorial(x)) if lo <= x <= hi else F(0) for x in range(n + 1)]
    for _ in range(m):
        new = [F(0)] * (n + 1)
        for a, ca in enumerate(poly):
            if ca == 0: continue
            for b in range(n + 1 - a):
                if term[b]: new[a + b] += ca * term[b]
        poly = new
    return poly[n] * factorial(n) / F(m) ** n
def show(name, x): print(name, mpmath.nstr(mpmath.mpf(x.numerator) / x.denominator, 17))
n = 100
show('m2 fullest P(max>=70)', 1 - p_all_between(n, 2, 0, 69))
print('2*binom.sf(69)', repr(2 * stats.binom.sf(69, 100, 0.5)), 'binom.sf(69)', repr(stats.binom.sf(69, 100, 0.5)), 'binom.cdf(30)', repr(stats.binom.cdf(30, 100, 0.5)))
n = 400
show('m4 fullest P(max>=130)', 1 - p_all_between(n, 4, 0, 129))
show('m4 emptiest P(min<=70)', 1 - p_all_between(n, 4, 71, n))
show('m4 fullest P(max>=125)', 1 - p_all_between(n, 4, 0, 124))
print('binom.sf(129,400,.25)', repr(stats.binom.sf(129, 400, 0.25)), 'binom.cdf(70,400,.25)', repr(stats.binom.cdf(70, 400, 0.25)))
n = 50
show('m2 fullest P(max>=35 of 50)', 1 - p_all_between(n, 2, 0, 34))
print('binom.sf(34,50,.5)', repr(stats.binom.sf(34, 50, 0.5)))
