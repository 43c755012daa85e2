"""Reference order-statistic indices of the distribution-free one-sided quantile bounds
(src/statistics/quantile-bound.ts).

Writes test/reference/fixtures/quantile-bound.json with, for each case (n, q, alpha):
  upper  k = scipy.stats.binom.ppf(1 - alpha, n, q) + 1
         (the smallest 1-based k with P(X <= k - 1) >= 1 - alpha, X ~ Binomial(n, q))
  lower  j = the largest 1-based j with P(X >= j) >= 1 - alpha, i.e. P(X <= j - 1) <= alpha,
         from scipy.stats.binom.cdf; null when none (too few draws)
  upper is null when k > n.

Run with scipy installed (wheels on disk, see the project preamble):
  python3 scripts/reference/quantile_bound_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import os

import scipy
from scipy.stats import binom

OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'quantile-bound.json')

cases = []
for n in [3, 5, 10, 20, 57, 100, 200, 500, 1000, 2000, 5000, 20000]:
    for q in [0.05, 0.25, 0.5, 0.9, 0.95]:
        for alpha in [0.05, 0.025, 0.01, 0.1]:
            k = int(binom.ppf(1 - alpha, n, q)) + 1
            j = None
            m = int(binom.ppf(alpha, n, q))
            # largest m' with cdf(m') <= alpha; j = m' + 1
            while m >= 0 and binom.cdf(m, n, q) > alpha:
                m -= 1
            while m + 1 <= n and binom.cdf(m + 1, n, q) <= alpha:
                m += 1
            j = m + 1 if m + 1 >= 1 else None
            if j is not None and j > n:
                j = None
            cases.append({'n': n, 'q': q, 'alpha': alpha, 'upper': k if k <= n else None, 'lower': j})

with open(OUT, 'w') as f:
    json.dump({'source': f'scipy {scipy.__version__} scipy.stats.binom ppf and cdf', 'cases': cases}, f, indent=1)
    f.write('\n')
print(f'wrote {len(cases)} cases to {OUT}')
