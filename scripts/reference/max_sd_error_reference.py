"""Reference values for the error of the max weight sd (src/statistics/max-sd-error.ts).

1. The sd of the largest of k independent standard normals, k = 2, 3, 6, 10: the order-statistic
   density k * phi(x) * Phi(x)^(k-1) integrated numerically (scipy.integrate.quad). For k = 2 it
   is also sqrt(1 - 1/pi) in closed form (Var max(X, Y) = 1 - 1/pi for independent standard
   normals; max(X, Y) = (X + Y)/2 + |X - Y|/2 and E|X - Y|^2 = 2, E|X - Y| = 2/sqrt(pi)).
   When k sample sds are exactly tied and their errors independent with equal variance, the error
   of their maximum is this sd times each one's error.
2. A normal-model table (documentation, not asserted by tests): for true sds sigma (in units of
   one error tau = 1, independent errors), the true spread of max_i(sigma_i + e_i) across 3000
   runs divided by the mean of three one-run estimates: the leader's own error (tau), the sd of
   max_j(c_j + e*_j) with plug-in centres c = s, and with the method-of-moments centres of
   max-sd-error.ts (deviations from the contenders' mean scaled by sqrt(max(0, 1 - (k-1)/S))).

Writes test/reference/fixtures/max-sd-error.json. Run with numpy and scipy installed:
  python3 scripts/reference/max_sd_error_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import math
import os

import numpy as np
import scipy
from scipy import integrate, stats

OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'max-sd-error.json')


def sd_of_max(k):
    density = lambda x: k * stats.norm.pdf(x) * stats.norm.cdf(x) ** (k - 1)
    mean = integrate.quad(lambda x: x * density(x), -12, 12, epsabs=1e-13)[0]
    second = integrate.quad(lambda x: x * x * density(x), -12, 12, epsabs=1e-13)[0]
    return math.sqrt(second - mean * mean)


def centres(s, mode):
    k = len(s)
    leader = int(np.argmax(s))
    gap = s[leader] - s
    contenders = gap < 4 * math.sqrt(2)
    x = s[contenders]
    if mode == 'plug-in' or len(x) < 2:
        return x
    spread = ((x - x.mean()) ** 2).sum()
    shrink = math.sqrt(max(0.0, 1 - (len(x) - 1) / spread)) if spread > 0 else 0.0
    return x.mean() + shrink * (x - x.mean())


def model_row(rng, sigma, runs=3000, estimates=500, replicates=400):
    sigma = np.array(sigma, dtype=float)
    sampled = sigma + rng.standard_normal((runs, len(sigma)))
    truth = sampled.max(axis=1).std(ddof=1)
    row = {'sigma': sigma.tolist(), 'leader': truth / 1.0}
    for mode in ('plug-in', 'moments'):
        errs = []
        for j in range(estimates):
            c = centres(sampled[j], mode)
            if len(c) < 2:
                errs.append(1.0)
                continue
            z = rng.standard_normal((replicates, len(c)))
            errs.append((c + z).max(axis=1).std(ddof=1))
        row[mode] = truth / float(np.mean(errs))
    return row


def main():
    rng = np.random.default_rng(20261203)
    sd_max = {str(k): sd_of_max(k) for k in (2, 3, 6, 10)}
    assert abs(sd_max['2'] - math.sqrt(1 - 1 / math.pi)) < 1e-10
    table = [model_row(rng, s) for s in ([0, 0, 0], [0] * 6, [0] * 10, [0, -0.5], [0, -1], [0, -2], [0, -3], [0, -1.5, -1.5], [0, -1, -2, -3], [0, -0.15, -1, -3], [0, 0, 0, -3, -3, -3], [0, -4, -4, -4, -4, -4, -4])]
    for row in table:
        print(row['sigma'], ' '.join(f"{k}={row[k]:.2f}" for k in ('leader', 'plug-in', 'moments')))
    out = {
        'source': 'scripts/reference/max_sd_error_reference.py',
        'versions': {'numpy': np.__version__, 'scipy': scipy.__version__},
        'sdOfMaxOfStandardNormals': sd_max,
        'normalModelRatios': table,
    }
    with open(OUT, 'w') as f:
        json.dump(out, f, indent=2)
        f.write('\n')
    print(json.dumps(sd_max))


if __name__ == '__main__':
    main()
