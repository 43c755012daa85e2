"""Reference break-even forecast shifts for src/optimize/forecast-sensitivity-qp.ts.

Writes test/reference/fixtures/forecast-sensitivity.json: two long-only mean-variance problems with
per-asset caps and two group limits (one max, one min) — a dense covariance, and a factor model
with separate factor and specific risk aversion — and, for every asset and both directions, the
break-even shift of its per-period mean found by brute force with a general-purpose solver:

  pattern(t)  active pattern of argmax (mu + t e_i)'w - 1/2 w'Hw over the constraints, solved by
              cvxpy with CLARABEL (interior point), each weight / group sum classified as at its
              lower limit, inside or at its upper limit with tolerance CLASSIFY_TOL;
  break-even  doubling from 1e-4 per period (up to 0.2), then bisection to BISECT_TOL relative;
  below/past  cvxpy's optimum at (1 - DELTA) and (1 + DELTA) times the break-even, with patterns.

The inputs are drawn from the Park-Miller LCG of REFERENCES.md (s <- 16807 s mod 2^31 - 1) and
stored in the JSON, so the test rebuilds nothing. Invented data.

Run with the local wheels (numpy, scipy, cvxpy; see DEVELOPERS.md):
  python3 scripts/reference/forecast_sensitivity_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import os

import cvxpy as cp
import numpy as np

OUT = os.path.join(os.path.dirname(__file__), '..', '..', 'test', 'reference', 'fixtures', 'forecast-sensitivity.json')
CLASSIFY_TOL = 1e-6
BISECT_TOL = 1e-6
DELTA = 1e-2
N = 8


class ParkMiller:
    def __init__(self, seed):
        self.s = seed

    def uniform(self):
        self.s = (16807 * self.s) % 2147483647
        return self.s / 2147483647


def dense_case(g):
    vols = np.array([0.03 + 0.04 * g.uniform() for _ in range(N)])
    loadings = np.array([[0.4 + 0.5 * g.uniform(), g.uniform() - 0.5] for _ in range(N)])
    corr = loadings @ loadings.T
    d = np.sqrt(np.diag(corr) + 0.3)
    corr = (corr + 0.3 * np.eye(N)) / np.outer(d, d)
    cov = corr * np.outer(vols, vols)
    mean = vols * np.array([0.1 + 0.15 * g.uniform() for _ in range(N)])
    return {'kind': 'dense', 'covariance': cov.tolist(), 'riskAversion': 4.0, 'mean': mean.tolist()}


def factor_case(g):
    b = np.array([[0.6 + 0.8 * g.uniform(), 1.2 * g.uniform() - 0.6] for _ in range(N)])
    f = np.array([[0.0016, 0.0002], [0.0002, 0.0009]])
    spec = np.array([0.0004 + 0.0012 * g.uniform() for _ in range(N)])
    vols = np.sqrt(np.diag(b @ f @ b.T) + spec)
    mean = vols * np.array([0.1 + 0.15 * g.uniform() for _ in range(N)])
    return {
        'kind': 'factor', 'loadings': b.tolist(), 'factorCovariance': f.tolist(), 'specificVariance': spec.tolist(),
        'riskAversion': {'factor': 3.0, 'specific': 8.0}, 'mean': mean.tolist(),
    }


def hessian(case):
    if case['kind'] == 'dense':
        return case['riskAversion'] * np.array(case['covariance'])
    b = np.array(case['loadings'])
    f = np.array(case['factorCovariance'])
    ra = case['riskAversion']
    return ra['factor'] * b @ f @ b.T + ra['specific'] * np.diag(case['specificVariance'])


CONSTRAINTS = {
    'lower': 0.0,
    'upper': 0.3,
    'budget': 1.0,
    'groups': [
        {'name': 'first-three', 'members': [0, 1, 2], 'min': None, 'max': 0.45},
        {'name': 'last-three', 'members': [5, 6, 7], 'min': 0.2, 'max': None},
    ],
}


def solve(h, c):
    w = cp.Variable(N)
    cons = [w >= CONSTRAINTS['lower'], w <= CONSTRAINTS['upper'], cp.sum(w) == CONSTRAINTS['budget']]
    for grp in CONSTRAINTS['groups']:
        s = cp.sum(w[grp['members']])
        if grp['min'] is not None:
            cons.append(s >= grp['min'])
        if grp['max'] is not None:
            cons.append(s <= grp['max'])
    hs = cp.psd_wrap(0.5 * (h + h.T))
    prob = cp.Problem(cp.Minimize(0.5 * cp.quad_form(w, hs) - c @ w), cons)
    prob.solve(solver='CLARABEL', tol_gap_abs=1e-12, tol_gap_rel=1e-12, tol_feas=1e-12, max_iter=500)
    if prob.status != 'optimal':
        raise RuntimeError(prob.status)
    return np.array(w.value)


def pattern(w):
    assets = [(-1 if x - CONSTRAINTS['lower'] <= CLASSIFY_TOL else 1 if CONSTRAINTS['upper'] - x <= CLASSIFY_TOL else 0) for x in w]
    groups = []
    for grp in CONSTRAINTS['groups']:
        s = sum(w[m] for m in grp['members'])
        lo = grp['min'] if grp['min'] is not None else -np.inf
        hi = grp['max'] if grp['max'] is not None else np.inf
        groups.append(-1 if s - lo <= CLASSIFY_TOL else 1 if hi - s <= CLASSIFY_TOL else 0)
    return {'assets': assets, 'groups': groups}


def break_even(h, mean, base_pattern, i, sign):
    def changed(t):
        c = mean.copy()
        c[i] += sign * t
        return pattern(solve(h, c)) != base_pattern

    lo, hi = 0.0, None
    t = 1e-4
    while t <= 0.2:
        if changed(t):
            hi = t
            break
        lo = t
        t *= 2
    if hi is None:
        return None
    while hi - lo > BISECT_TOL * hi:
        mid = 0.5 * (lo + hi)
        if changed(mid):
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)


def run_case(case):
    h = hessian(case)
    mean = np.array(case['mean'])
    base = solve(h, mean)
    base_pattern = pattern(base)
    shifts = []
    for i in range(N):
        for sign, side in ((1, 'up'), (-1, 'down')):
            t = break_even(h, mean, base_pattern, i, sign)
            entry = {'asset': i, 'side': side, 'shift': t}
            if t is not None:
                for label, factor in (('below', 1 - DELTA), ('past', 1 + DELTA)):
                    c = mean.copy()
                    c[i] += sign * factor * t
                    w = solve(h, c)
                    entry[label] = {'shift': factor * t, 'weights': w.tolist(), 'pattern': pattern(w)}
            shifts.append(entry)
    return {**case, 'baseWeights': base.tolist(), 'basePattern': base_pattern, 'shifts': shifts}


def main():
    g = ParkMiller(20261202)
    cases = [run_case(dense_case(g)), run_case(factor_case(g))]
    out = {
        'source': 'cvxpy %s with CLARABEL (interior point), numpy %s; scripts/reference/forecast_sensitivity_reference.py' % (cp.__version__, np.__version__),
        'classifyTolerance': CLASSIFY_TOL,
        'bisectionRelativeTolerance': BISECT_TOL,
        'delta': DELTA,
        'constraints': CONSTRAINTS,
        'cases': cases,
    }
    with open(OUT, 'w') as fh:
        json.dump(out, fh, indent=1)
        fh.write('\n')
    print('wrote', os.path.relpath(OUT))


if __name__ == '__main__':
    main()
