"""Reference optima of minimum variance at a riskless corner (src/optimize/minimum-variance.ts).

Run from the repository root:
    /path/to/python scripts/reference/minimum_variance_riskless_reference.py
Writes test/reference/fixtures/minimum-variance-riskless.json. Tests only read the JSON (CI never
runs Python).

Data: the invented reproducer test/fixtures/cases/D5-zero-variance-cash.json (five assets, 60
months; A5 returns a constant 0.002 every month). Its sample covariance (numpy, divisor T - 1) is
the risk model; A5's row and column are zero up to rounding. Problems (minimise w^T S w):
  - long-only, budget 1, S as numpy computes it (A5's variance 1.7e-36 and covariances of order
    1e-36: the rounding noise of a constant column);
  - the same with A5's row and column set to exact zeros;
  - long-only, budget 1, A5 at most 0.3 (the riskless corner is cut off, so the rest is a
    genuine minimum-variance mix of the risky assets).

Independent solver: cvxpy with the Clarabel interior-point solver (tolerances tightened below),
a separate code base and algorithm from the project's primal active-set method. Solver names and
versions are written into the JSON beside the values.
"""
import json
import pathlib

import clarabel
import cvxpy as cp
import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[2]
CASE = ROOT / "test" / "fixtures" / "cases" / "D5-zero-variance-cash.json"
OUT = ROOT / "test" / "reference" / "fixtures" / "minimum-variance-riskless.json"
SOLVER_OPTS = dict(tol_gap_abs=1e-12, tol_gap_rel=1e-12, tol_feas=1e-12, max_iter=500)


def solve(cov, upper):
    n = cov.shape[0]
    w = cp.Variable(n)
    constraints = [cp.sum(w) == 1, w >= 0]
    for i, u in enumerate(upper):
        if u is not None:
            constraints.append(w[i] <= u)
    problem = cp.Problem(cp.Minimize(cp.quad_form(w, cp.psd_wrap(cov))), constraints)
    problem.solve(solver=cp.CLARABEL, **SOLVER_OPTS)
    assert problem.status == cp.OPTIMAL, problem.status
    x = np.asarray(w.value, dtype=float)
    return x, float(x @ cov @ x)


def main():
    case = json.loads(CASE.read_text())
    returns = np.asarray(case["inputs"]["returns"], dtype=float)
    cov = np.cov(returns, rowvar=False, ddof=1)
    exact = cov.copy()
    exact[4, :] = 0.0
    exact[:, 4] = 0.0
    problems = []
    for label, matrix, upper in [
        ("long-only, numpy sample covariance", cov, [None] * 5),
        ("long-only, A5 row and column exactly zero", exact, [None] * 5),
        ("long-only, A5 at most 0.3", cov, [None, None, None, None, 0.3]),
    ]:
        x, variance = solve(matrix, upper)
        problems.append(
            {
                "label": label,
                "covariance": [float(v) for v in matrix.ravel()],
                "upper": [float("inf") if u is None else u for u in upper],
                "weights": [float(v) for v in x],
                "variance": variance,
            }
        )
    OUT.write_text(
        json.dumps(
            {
                "source": "cvxpy "
                + cp.__version__
                + " with Clarabel "
                + clarabel.__version__
                + "; numpy "
                + np.__version__
                + " np.cov(ddof=1) of the D5 reproducer's returns",
                "assets": case["assets"],
                "problems": problems,
            },
            indent=1,
            allow_nan=True,
        ).replace("Infinity", '"Infinity"')
        + "\n"
    )


main()
