"""Reference Student-t quantiles (src/statistics/student-t-quantile.ts): scipy.stats.t.ppf for
integer degrees of freedom 1..60 and the one-sided levels a gate may use.

Writes test/reference/fixtures/student-t-quantile.json. Run with scipy installed:
  python3 scripts/reference/student_t_quantile_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import os

import scipy
from scipy.stats import t

OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'student-t-quantile.json')

cases = []
for nu in list(range(1, 41)) + [49, 59, 99]:
    for p in [0.75, 0.9, 0.95, 0.975, 0.99, 0.995, 0.999]:
        cases.append({'nu': nu, 'p': p, 'quantile': float(t.ppf(p, nu)), 'cdfAt2': float(t.cdf(2.0, nu))})

with open(OUT, 'w') as f:
    json.dump({'generator': 'scripts/reference/student_t_quantile_reference.py', 'scipy': scipy.__version__, 'cases': cases}, f, indent=1)
print(f'wrote {len(cases)} cases to {OUT}')
