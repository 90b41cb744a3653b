# Reference values for test/chance/temme-coefficients.test.ts; tests never run this.
#   pip install mpmath==1.3.0
#   python3 test/chance/reference/make-temme-reference.py > test/chance/reference/temme.json
# Independent of scripts/temme-coefficients.py: the Taylor coefficients of
# c_0(eta) = 1/mu - 1/eta (NIST DLMF 8.12.11, eta^2/2 = mu - ln(1 + mu), eta and mu of one
# sign) are taken numerically by Cauchy's integral on the circle |eta| = 1 (trapezoidal
# rule, 160 points, 60 digits), mu found by mpmath's findroot at each point; then
# c_k = (1/eta) c_{k-1}' + (-1)^k g_k / mu (DLMF 8.12.11) on the series, with 1/mu =
# 1/eta + c_0 and the Stirling coefficients g_k of Gamma* (DLMF 5.11.3-4, from memory,
# checked against mpmath's gamma below).
import json
from mpmath import mp, mpf, mpc, exp, pi, log, findroot, gamma, sqrt, e, fraction

mp.dps = 60
terms = 30
orders = 10
need = terms + 2 * (orders - 1)
points = 160

def mu_of(eta):
    guess = eta + eta**2 / 3 + eta**3 / 36
    return findroot(lambda m: m - log(1 + m) - eta**2 / 2, guess)

values = []
for j in range(points):
    eta = exp(2j * pi * j / points)
    values.append(1 / mu_of(eta) - 1 / eta)
c0 = []
for n in range(need):
    total = mpc(0)
    for j in range(points):
        total += values[j] * exp(-2j * pi * j * n / points)
    c0.append((total / points).real)

g = [mpf(1), mpf(1) / 12, mpf(1) / 288, mpf(-139) / 51840, mpf(-571) / 2488320,
     mpf(163879) / 209018880, mpf(5246819) / 75246796800, mpf(-534703531) / 902961561600,
     mpf(-4483131259) / 86684309913600, mpf(432261921612371) / 514904800886784000]
# Gamma*(a) = Gamma(a) / (sqrt(2 pi / a) (a / e)^a) ~ sum g_k a^-k: check the table at a = 40.
a = mpf(40)
star = gamma(a) / (sqrt(2 * pi / a) * (a / e) ** a)
assert abs(star - sum(g[k] * a ** -k for k in range(10))) < mpf(10) ** -19

series = [c0]
for k in range(1, orders):
    prev = series[-1]
    # The 1/eta terms cancel: prev[1] + (-1)^k g_k = 0.
    assert abs(prev[1] + (-1) ** k * g[k]) < mpf(10) ** -40, k
    series.append([(n + 2) * prev[n + 2] + (-1) ** k * g[k] * c0[n] for n in range(len(prev) - 2)])

print(json.dumps({
    'command': 'python3 test/chance/reference/make-temme-reference.py',
    'coefficients': [[mp.nstr(series[k][n], 25) for n in range(terms)] for k in range(orders)],
}, indent=1))
