"""Reference values for the stress statistics layer (src/statistics/quantiles.ts, batch-means.ts,
weight-accumulator.ts, channel-variance.ts, scalar-accumulator.ts).

Writes test/reference/fixtures/statistics.json with:
  percentiles     numpy.quantile(method='linear') (Hyndman & Fan 1996 type 7, numpy's default
                  percentile) on deterministic samples, including ties, constants, n = 1 and 2
  midRanks        scipy.stats.percentileofscore(kind='mean') — the mid-rank percentile
  moments         mean and sample sd (numpy, ddof=1) and sd/sqrt(n)
  batchMeans      Monte Carlo errors computed the documented way (src/statistics/batch-means.ts):
                  percentiles by the exact bootstrap sd of the order statistic(s) the type-7
                  percentile interpolates (Maritz & Jarrett 1978, scipy.stats.binom over every
                  position; 0 when tied over q -/+ 7 s of rank); band widths with the asymptotic
                  quantile correlation; sds by the delta method; failed draws (NaN) excluded
  weights         a whole WeightAccumulator summary recomputed with numpy
  channels        mean-driven shares from numpy.var(ddof=1), including a badly conditioned case
                  (weights 0.3 + 1e-7 noise) where a naive one-pass variance loses digits, and
                  the delete-one-group jackknife error over m = min(30, floor(B/10)) groups

Run with numpy and scipy installed (wheels on disk, see the project preamble):
  python3 scripts/reference/statistics_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import math
import os

import numpy as np
import scipy
from scipy.stats import binom, percentileofscore

PROBS = [0.0, 0.05, 0.25, 0.5, 0.75, 0.95, 1.0, 0.1234, 0.9999]
OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'statistics.json')


def clean(x):
    """JSON has no NaN: use None."""
    if isinstance(x, float) and math.isnan(x):
        return None
    return x


def batch_count(B):
    return min(30, B // 10)


def batch_bounds(B, m):
    return [(k * B // m, (k + 1) * B // m) for k in range(m)]


def bootstrap_order_stat_sd(x, r):
    """Exact bootstrap sd of the r-th smallest of the sorted x (Maritz & Jarrett 1978):
    P(X*_(r) <= x_(i)) = P(Binomial(n, i/n) >= r), every position counted."""
    n = len(x)
    w = np.diff(binom.sf(r - 1, n, np.arange(0, n + 1) / n))
    mean = np.sum(w * x)
    return math.sqrt(max(0.0, float(np.sum(w * (x - mean) ** 2))))


def order_stat_se(x, q):
    x = np.sort(x[np.isfinite(x)])
    n = len(x)
    if n < 2:
        return float('nan')
    s = math.sqrt(q * (1 - q) / n)
    if s == 0:
        # q = 0 or 1: the gap between the two outermost draws.
        return float(x[1] - x[0]) if q == 0 else float(x[n - 1] - x[n - 2])
    # 0 when the draws within q -/+ 7 s of rank are tied (a point mass no rerun plausibly leaves).
    first = max(1, math.ceil(n * (q - 7 * s)))
    last = min(n, math.floor(n * (q + 7 * s)) + 1)
    if x[first - 1] == x[last - 1]:
        return 0.0
    h = (n - 1) * q
    j = math.floor(h)
    g = h - j
    a = bootstrap_order_stat_sd(x, j + 1)
    return a if g == 0 or j + 1 >= n else (1 - g) * a + g * bootstrap_order_stat_sd(x, j + 2)


def jackknife_se(loo):
    loo = np.asarray([s for s in loo if np.isfinite(s)])
    k = len(loo)
    if k < 2:
        return float('nan')
    return float(math.sqrt((k - 1) / k * np.sum((loo - loo.mean()) ** 2)))


def finite(x):
    return x[np.isfinite(x)]


def quantile_se(x, q):
    return order_stat_se(x, q)


def width_se(x, lo, hi):
    a = order_stat_se(x, lo)
    b = order_stat_se(x, hi)
    rho = lo * (1 - hi) / math.sqrt(lo * (1 - lo) * hi * (1 - hi))
    return math.sqrt(max(0.0, a * a + b * b - 2 * rho * a * b))


def sd_se(x):
    s = finite(x)
    n = len(s)
    sd = np.std(s, ddof=1)
    if sd == 0:
        return 0.0
    m4 = np.mean((s - s.mean()) ** 4)
    return float(math.sqrt(max(0.0, m4 - sd ** 4) / (4 * sd ** 2 * n)))


def moments(x):
    s = finite(x)
    n = len(s)
    mean = float(np.mean(s))
    sd = float(np.std(s, ddof=1)) if n > 1 else float('nan')
    return {'count': n, 'mean': mean, 'sd': clean(sd), 'stdErr': clean(sd / math.sqrt(n)) if n > 1 else None}


rng = np.random.default_rng(20240611)

# --- percentiles -----------------------------------------------------------------------------
samples = {
    'single': [0.42],
    'pair': [3.0, -1.0],
    'ties': [1.0, 2.0, 2.0, 2.0, 3.0, 3.0, 5.0, 8.0, 8.0, 8.0, 8.0],
    'constant': [0.25] * 7,
    'integers': [float(v) for v in rng.integers(-5, 6, size=40)],
    'normal101': rng.standard_normal(101).tolist(),
    'lognormal1000': rng.lognormal(0.0, 1.5, size=1000).tolist(),
    'weights': np.round(rng.dirichlet(np.ones(5) * 0.3, size=60)[:, 0], 4).tolist(),
}
percentiles = {}
for name, values in samples.items():
    x = np.asarray(values)
    percentiles[name] = {
        'values': values,
        'probabilities': PROBS,
        'quantiles': [float(np.quantile(x, p, method='linear')) for p in PROBS],
        # numpy.percentile with q in percent gives the same numbers for these probabilities.
        'percentile5_50_95': [float(v) for v in np.percentile(x, [5, 50, 95])],
    }

mid_ranks = []
for name in ['ties', 'integers', 'weights', 'constant', 'pair']:
    x = np.asarray(samples[name])
    for score in sorted(set(list(x[:5]) + [float(np.min(x)) - 1, float(np.max(x)) + 1, float(np.median(x))])):
        mid_ranks.append({'sample': name, 'score': float(score), 'percentile': float(percentileofscore(x, score, kind='mean'))})

# --- moments and batch means -----------------------------------------------------------------
def with_failures(x, every):
    x = np.array(x, dtype=float)
    x[::every] = np.nan
    return x


batch_cases = {
    'normal37': rng.standard_normal(37),
    'normal99': rng.standard_normal(99),
    'normal100': rng.standard_normal(100),
    'exponential250': rng.exponential(1.0, 250),
    'normal1000failures': with_failures(rng.standard_normal(1000), 17),
    'uniform5000': rng.uniform(0.0, 1.0, 5000),
    'normal1234': rng.standard_normal(1234) * 0.01 + 0.2,
}
batch_means = {}
for name, x in batch_cases.items():
    B = len(x)
    batch_means[name] = {
        'values': [clean(float(v)) for v in x],
        'batches': batch_count(B),
        'moments': moments(x),
        'quantiles': [float(np.quantile(finite(x), p, method='linear')) for p in (0.05, 0.5, 0.95)],
        'quantileStdErrs': [quantile_se(x, p) for p in (0.05, 0.5, 0.95)],
        'bandWidthStdErr': width_se(x, 0.05, 0.95),
    }

# --- a weight accumulator summary ------------------------------------------------------------
B, N = 230, 4
W = rng.dirichlet(np.array([2.0, 1.0, 0.2, 0.05]), size=B)
W[:, 3] = np.where(W[:, 3] < 1e-3, 0.0, W[:, 3])  # exact zeros: selection threshold matters
W[[5, 77, 140], :] = np.nan  # failed draws
proposal = [0.5, 0.25, float(np.nanmedian(W[:, 2])), 0.0]
threshold = 1e-4
per_asset = []
for i in range(N):
    col = W[:, i]
    s = finite(col)
    per_asset.append({
        'mean': float(np.mean(s)),
        'meanStdErr': float(np.std(s, ddof=1) / math.sqrt(len(s))),
        'sd': float(np.std(s, ddof=1)),
        'sdStdErr': sd_se(col),
        'bands': [float(np.quantile(s, p, method='linear')) for p in (0.05, 0.25, 0.5, 0.75, 0.95)],
        'p05StdErr': quantile_se(col, 0.05),
        'p95StdErr': quantile_se(col, 0.95),
        'p50StdErr': quantile_se(col, 0.5),
        'selectionRateStdErr': float(math.sqrt(np.mean(np.abs(s) > threshold) * (1 - np.mean(np.abs(s) > threshold)) / (len(s) - 1))),
        'selectionRate': float(np.mean(np.abs(s) > threshold)),
        'proposalPercentile': float(percentileofscore(s, proposal[i], kind='mean')),
        'proposalPercentileStdErr': float(np.std(100 * ((s < proposal[i]) + 0.5 * (s == proposal[i])), ddof=1) / math.sqrt(len(s))),
    })
weights = {
    'draws': B, 'assets': N, 'rows': [[clean(float(v)) for v in row] for row in W],
    'proposal': proposal, 'threshold': threshold, 'perAsset': per_asset,
}

# --- channels ------------------------------------------------------------------------------
def channel_case(mean_rows, cov_rows):
    B = mean_rows.shape[0]
    vm = np.var(mean_rows, axis=0, ddof=1)
    vc = np.var(cov_rows, axis=0, ddof=1)
    tot = vm + vc
    per = np.where(tot > 0, vm / np.where(tot > 0, tot, 1), 0.0)
    overall = float(vm.sum() / tot.sum()) if tot.sum() > 0 else 0.0
    m = max(1, batch_count(B))
    loo = []
    for a, b in batch_bounds(B, m):
        keep = np.ones(B, dtype=bool)
        keep[a:b] = False
        bm = np.var(mean_rows[keep], axis=0, ddof=1).sum()
        bc = np.var(cov_rows[keep], axis=0, ddof=1).sum()
        loo.append(bm / (bm + bc) if bm + bc > 0 else 0.0)
    se = jackknife_se(loo) if m >= 2 else 0.5
    return {
        'meanRows': mean_rows.tolist(), 'covarianceRows': cov_rows.tolist(),
        'meanVariance': vm.tolist(), 'covarianceVariance': vc.tolist(),
        'perAsset': per.tolist(), 'overall': overall, 'overallStdErr': se,
    }


B = 300
base = np.array([0.3, 0.5, 0.2])
channels = {
    'ordinary': channel_case(base + 0.05 * rng.standard_normal((B, 3)), base + 0.02 * rng.standard_normal((B, 3))),
    'illConditioned': channel_case(0.3 + 1e-7 * rng.standard_normal((B, 3)), 0.3 + 3e-7 * rng.standard_normal((B, 3))),
    'smallB25': channel_case(base + 0.05 * rng.standard_normal((25, 3)), base + 0.05 * rng.standard_normal((25, 3))),
}

with open(OUT, 'w') as f:
    json.dump({
        'generator': 'scripts/reference/statistics_reference.py',
        'numpy': np.__version__, 'scipy': scipy.__version__,
        'percentiles': percentiles, 'midRanks': mid_ranks, 'batchMeans': batch_means,
        'weights': weights, 'channels': channels,
    }, f, indent=1, allow_nan=False)
print('wrote', OUT)
