"""
Coefficients d[k][n] of Temme's uniform asymptotic expansion of the regularized incomplete
gamma function (NIST DLMF 8.12.3, 8.12.8 and 8.12.11-12; Temme 1979, "The asymptotic
expansion of the incomplete gamma functions", SIAM J. Math. Anal. 10):

    Q(a, x) = erfc(eta sqrt(a/2)) / 2 + exp(-a eta^2 / 2) / sqrt(2 pi a) * sum_k c_k(eta) a^-k,
    c_k(eta) = sum_n d[k][n] eta^n,  eta^2 / 2 = lambda - 1 - ln lambda,  lambda = x / a.

Computed here in exact rational arithmetic (no floating point until the last step):
eta(mu) as a power series in mu = lambda - 1, reverted to mu(eta); c_0 = 1/mu - 1/eta;
the Stirling coefficients g_k of Gamma*(a) from the Bernoulli numbers; then
d[k][n] = (-1)^k g_k d[0][n] + (n + 2) d[k-1][n+2].
Writes src/chance/temme-coefficients.ts. Run: python3 scripts/temme-coefficients.py (about 20 s).
"""
from fractions import Fraction as F
K, N = 10, 30
M = N + 2 * K + 6
def mul(a, b):
    out = [F(0)] * M
    for i, x in enumerate(a):
        if x == 0: continue
        for j in range(M - i):
            out[i + j] += x * b[j]
    return out
def sqrt1(a):  # a[0] == 1
    s = [F(0)] * M; s[0] = F(1)
    for n in range(1, M):
        acc = a[n] - sum(s[i] * s[n - i] for i in range(1, n))
        s[n] = acc / 2
    return s
f = [F(2 * (-1) ** n, n + 2) for n in range(M)]
r = sqrt1(f)
eta_of_mu = [F(0)] + r[:M - 1]  # eta = mu * sqrt(f)
def compose(outer, inner):  # outer(inner(x)), inner[0] == 0
    res = [F(0)] * M
    for c in reversed(outer):
        res = mul(res, inner)
        res[0] += c
    return res
# revert: find mu(eta) with eta_of_mu(mu(eta)) = eta, iteratively by coefficient
mus = [F(0)] * M; mus[1] = F(1)
for n in range(2, M):
    comp = compose(eta_of_mu[:n + 1], mus)
    mus[n] = -comp[n]  # eta_of_mu'(0) = 1
# 1/mu - 1/eta: mu = eta * (1 + u), 1/mu = (1/eta) * 1/(1+u)
u = mus[1:] + [F(0)]  # mu/eta
inv = [F(0)] * M; inv[0] = F(1)
for n in range(1, M):
    inv[n] = -sum(u[i] * inv[n - i] for i in range(1, n + 1))
c0 = inv[1:]  # (1/eta)(inv - 1) = sum inv[n] eta^(n-1), n>=1
# Stirling: Gamma*(a) = exp(sum B2j/(2j(2j-1)) x^(2j-1))
def bernoulli(n):
    A = [F(0)] * (n + 1)
    B = []
    for m in range(n + 1):
        A[m] = F(1, m + 1)
        for j in range(m, 0, -1):
            A[j - 1] = j * (A[j - 1] - A[j])
        B.append(A[0])
    return B  # B[1] = +1/2 convention, even ones fine
Bn = bernoulli(2 * K + 4)
lg = [F(0)] * M
for j in range(1, K + 2):
    if 2 * j - 1 < M: lg[2 * j - 1] = Bn[2 * j] / (2 * j * (2 * j - 1))
ex = [F(0)] * M; ex[0] = F(1)
# exp of series: e' = lg' e
for n in range(1, M):
    ex[n] = sum(k * lg[k] * ex[n - k] for k in range(1, n + 1)) / n
g = ex[:K]
d = [c0]
for k in range(1, K):
    d.append([(-1) ** k * g[k] * c0[n] + (n + 2) * d[k - 1][n + 2] for n in range(len(d[k - 1]) - 2)])

rows = []
for row in d:
    rows.append('  [' + ', '.join(repr(float(v)) for v in row[:N]) + '],')
out = """/**
 * Coefficients d[k][n] of Temme's uniform asymptotic expansion of the incomplete gamma ratio
 * (NIST DLMF 8.12.11-12): c_k(eta) = sum_n d[k][n] eta^n. Generated in exact rational
 * arithmetic by scripts/temme-coefficients.py; do not edit by hand.
 * Check values (DLMF 8.12.12; DiDonato and Morris 1986, ACM TOMS 12): d[0] starts
 * -1/3, 1/12, -2/135, 1/864, 1/2835; d[1] starts -1/540, -1/288.
 */
export const TEMME_COEFFICIENTS: readonly (readonly number[])[] = [
""" + '\n'.join(rows) + """
];
"""
open('src/chance/temme-coefficients.ts', 'w').write(out)
