"""Reference values for the exact binomial tails of the gate's quantile tests
(src/statistics/binomial-tail.ts).

Writes test/reference/fixtures/binomial-tail.json with, for each case (k, n, p):
  cdf        scipy.stats.binom.cdf(k, n, p)        = P(X <= k)
  survival   scipy.stats.binom.sf(k - 1, n, p)     = P(X >= k)
  logPmf     scipy.stats.binom.logpmf(k, n, p)
The cases cover the gate's use (p = 0.05 at the band edges, n from 2 to 20 000 draws, k in both
tails, at the mean and at the ends) and a few other p.

Run with scipy installed (wheels on disk, see the project preamble):
  python3 scripts/reference/binomial_tail_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import math
import os

import scipy
from scipy.stats import binom

OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'binomial-tail.json')

cases = []
for n in [2, 5, 20, 57, 100, 200, 500, 1000, 2000, 5000, 20000]:
    for p in [0.05, 0.5, 0.95, 0.01, 0.3]:
        mean = n * p
        sd = math.sqrt(n * p * (1 - p))
        ks = {0, 1, n - 1, n, int(mean), int(mean) + 1}
        for m in [-8, -5, -3, -1.645, -1, 1, 1.645, 3, 5, 8]:
            ks.add(int(round(mean + m * sd)))
        for k in sorted(ks):
            if 0 <= k <= n:
                cases.append({
                    'k': k, 'n': n, 'p': p,
                    'cdf': float(binom.cdf(k, n, p)),
                    'survival': float(binom.sf(k - 1, n, p)),
                    'logPmf': float(binom.logpmf(k, n, p)),
                })

with open(OUT, 'w') as f:
    json.dump({'source': f'scipy {scipy.__version__} scipy.stats.binom', 'cases': cases}, f, indent=1)
    f.write('\n')
print(f'wrote {len(cases)} cases to {OUT}')
