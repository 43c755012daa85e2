"""Reference errors of a sample percentile (src/statistics/batch-means.ts, orderStatisticStdErr
and exactBootstrapStdErr): the exact bootstrap standard deviation of a sample order statistic
(Maritz & Jarrett 1978, JASA 73(361)), on smooth samples, on samples whose percentile sits on a
point mass, and at the edge of one.

For n sorted draws x_(1) <= ... <= x_(n), a resample's r-th smallest value is at or below
x_(i) when at least r of its n picks land on positions 1..i, so
P(X*_(r) <= x_(i)) = P(Binomial(n, i/n) >= r) (scipy.stats.binom.sf(r - 1, n, i / n)), every
position i = 1..n counted (no truncation). The type-7 percentile interpolates
(1 - g) x_(r) + g x_(r+1) with h = (n - 1) q, r = floor(h) + 1, g = h - floor(h); the reference
value is (1 - g) sd(X*_(r)) + g sd(X*_(r+1)).

The exact distribution is also checked here against a plain numpy bootstrap (200 000 resamples
of the type-7 percentile itself): its sd must agree within Monte Carlo error (and lie at or below
the Cauchy-Schwarz sum above).

Writes test/reference/fixtures/percentile-error.json. Run with numpy and scipy installed:
  python3 scripts/reference/point_mass_error_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import os

import numpy as np
import scipy
from scipy.stats import binom

OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'percentile-error.json')


def exact_sd(x, r):
    n = len(x)
    cdf = binom.sf(r - 1, n, np.arange(0, n + 1) / n)
    w = np.diff(cdf)
    mean = np.sum(w * x)
    return float(np.sqrt(max(0.0, np.sum(w * (x - mean) ** 2))))


def reference(x, q):
    n = len(x)
    h = (n - 1) * q
    j = int(np.floor(h))
    g = h - j
    a = exact_sd(x, j + 1)
    return a if g == 0 or j + 1 >= n else (1 - g) * a + g * exact_sd(x, j + 2)


def bootstrap_sd(x, q, rng, replicates=200_000):
    n = len(x)
    picks = rng.integers(0, n, size=(replicates, n))
    return float(np.std(np.quantile(x[picks], q, axis=1, method='linear'), ddof=1))


rng = np.random.default_rng(20261202)
cases = []


def add(name, x, q, resample=True, point_mass=False):
    x = np.sort(np.asarray(x, dtype=float))
    sd = reference(x, q)
    check = None
    if resample:
        check = bootstrap_sd(x, q, rng)
        # 200 000 resamples: the sd of a bootstrap sd is about sd / sqrt(2 * 200 000) for a
        # normal-ish statistic; a jump mixture is rougher, so allow 5 %, plus the Cauchy-Schwarz
        # slack of the interpolated percentile (the exact sum is an upper bound).
        assert sd * 0.8 <= check <= sd * 1.05, (name, sd, check)
    cases.append({'name': name, 'q': q, 'pointMass': point_mass, 'x': x.tolist(), 'sd': sd, 'bootstrapSd': check})


# The median on a mass covering ranks 0.20-0.68 of 200 draws: its edge is 5.1 sds of rank above.
spread = rng.normal(0.3, 0.05, 200)
x = np.concatenate([np.sort(spread)[:40], np.full(96, 0.25), np.sort(spread)[136:] + 0.1])
# Leaving it takes a 5-sd excursion (chance ~1e-7): no feasible resampling would see one, so
# only the exact distribution is recorded.
add('median on a mass reaching 5.1 sds above', x, 0.5, resample=False, point_mass=True)
# The median on a mass covering ranks 0.445-0.565 of 400 draws (edges 2.2 and 2.6 sds away).
y = np.sort(rng.gamma(2.0, 0.01, 400))
y[178:226] = y[178]
add('median on a mass with both edges within reach', y, 0.5, point_mass=True)
# A weight at the lower bound 0 in 9 % of 400 draws: its 5th percentile.
w = np.concatenate([np.zeros(36), rng.uniform(0.0, 0.3, 364)])
add('p05 of a weight at its bound in 9 % of the draws', w, 0.05, point_mass=True)
# A weight at the upper bound 0.3 in 10 % of 250 draws: its 95th percentile (type 7 interpolates).
v = np.concatenate([rng.uniform(0.0, 0.3, 225), np.full(25, 0.3)])
add('p95 of a weight at its upper bound in 10 % of the draws', v, 0.95, point_mass=True)
# Smooth samples: the median and the tails of normal draws.
for n in (200, 2000):
    z = rng.normal(0.0, 1.0, n)
    for q in (0.05, 0.5, 0.95):
        add(f'normal sample of {n}, q = {q}', z, q)
# The median at the upper edge of a cluster (a corner portfolio's turnover in 20 % of 300 draws,
# ranks 0.30-0.50), with the next cluster at ranks 0.55-0.63: a rerun's median jumps between them.
t = np.concatenate([rng.uniform(0.15, 0.30, 90), np.full(60, 0.32), rng.uniform(0.33, 0.36, 15), np.full(24, 0.36), rng.uniform(0.37, 0.6, 111)])
add('median at the upper edge of a cluster, the next one near', t, 0.5)

with open(OUT, 'w') as f:
    json.dump({'generator': 'scripts/reference/point_mass_error_reference.py', 'numpy': np.__version__, 'scipy': scipy.__version__, 'cases': cases}, f, indent=1)
print(f'wrote {len(cases)} cases to {OUT}')
for c in cases:
    print(c['name'], c['sd'], c['bootstrapSd'])
