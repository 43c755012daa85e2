"""Reference optima for the QP with many overlapping group limits (src/optimize/qp*.ts).

Run from the repository root:
    /path/to/python scripts/reference/qp_groups_reference.py
Writes test/reference/fixtures/qp-groups.json. Tests only read the JSON (CI never runs Python).

Problem (the form solved by src/optimize/qp.ts):
    minimise 1/2 x^T H x - c^T x
    s.t. lower <= x <= upper, sum(x) = budget, min_g <= sum_{i in g} x_i <= max_g.
H = B B^T + diag(d) is stored as its factors (B: N x 3, d > 0) to keep the fixture small.
Groups are random overlapping subsets (every asset in ~20-50 % of them). Limits are put around a
random point of the box and budget (so those problems are feasible), several made tight, and a
few problems get a deliberately inconsistent group pair (infeasible) to check that verdict too.
The reproducer test/fixtures/cases/false-infeasible-n60-g100-s0.json (dense covariance, group
maxima) is solved here as well.

Independent solver: cvxpy with the Clarabel interior-point solver (tolerances tightened below),
an entirely separate code base and algorithm from the project's primal active-set method.
Solver names and versions are written into the JSON beside the values.
"""
import json
import pathlib

import clarabel
import cvxpy as cp
import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[2]
OUT = ROOT / "test" / "reference" / "fixtures" / "qp-groups.json"
CASE = ROOT / "test" / "fixtures" / "cases" / "false-infeasible-n60-g100-s0.json"
SOLVER_OPTS = dict(tol_gap_abs=1e-12, tol_gap_rel=1e-12, tol_feas=1e-12, max_iter=500)


def solve(H, c, lower, upper, budget, groups):
    n = len(c)
    x = cp.Variable(n)
    cons = [cp.sum(x) == budget]
    lo = np.array(lower, dtype=float)
    hi = np.array(upper, dtype=float)
    if np.isfinite(lo).any():
        idx = np.where(np.isfinite(lo))[0]
        cons.append(x[idx] >= lo[idx])
    if np.isfinite(hi).any():
        idx = np.where(np.isfinite(hi))[0]
        cons.append(x[idx] <= hi[idx])
    for g in groups:
        s = cp.sum(x[g["members"]])
        if g.get("min") is not None:
            cons.append(s >= g["min"])
        if g.get("max") is not None:
            cons.append(s <= g["max"])
    obj = cp.Minimize(0.5 * cp.quad_form(x, cp.psd_wrap(H)) - c @ x)
    prob = cp.Problem(obj, cons)
    prob.solve(solver=cp.CLARABEL, **SOLVER_OPTS)
    if prob.status in ("infeasible", "infeasible_inaccurate"):
        return {"status": "infeasible"}
    assert prob.status == "optimal", prob.status
    return {"status": "optimal", "objective": float(prob.value)}


def random_problem(rng, t):
    n = int(rng.integers(10, 81))
    k = 3
    B = 0.1 * rng.standard_normal((n, k))
    d = 0.001 + 0.01 * rng.random(n)
    H = B @ B.T + np.diag(d)
    H *= 1 + 9 * rng.random()
    c = 0.05 + 0.05 * rng.standard_normal(n)
    long_only = t % 3 != 2
    lower = np.zeros(n) if long_only else -0.2 * rng.random(n)
    upper = np.minimum(1.0, (1.5 + 3 * rng.random(n)) / n) if t % 2 == 0 else np.full(n, np.inf)
    budget = 1.0
    # A point in the box with sum 1: Dirichlet clipped to the caps, excess spread by room.
    hi_f = np.where(np.isfinite(upper), upper, 1.0)
    p = rng.dirichlet(np.ones(n))
    p = np.clip(p, lower, hi_f)
    for _ in range(50):
        ex = p.sum() - budget
        room = (p - lower) if ex > 0 else (hi_f - p)
        p = np.clip(p - ex * room / room.sum(), lower, hi_f)
    g_count = int(rng.integers(20, 151))
    share = 0.2 + 0.3 * rng.random()
    groups = []
    for g in range(g_count):
        members = np.where(rng.random(n) < share)[0]
        if len(members) == 0:
            members = np.array([int(rng.integers(0, n))])
        s = float(p[members].sum())
        kind = rng.random()
        gmin = s - 0.05 * rng.random() if kind < 0.5 else None
        gmax = s + 0.05 * rng.random() if kind > 0.3 else None
        if rng.random() < 0.1:
            gmax = s  # tight at the generating point
        groups.append({"name": f"g{g}", "members": [int(i) for i in members], "min": gmin, "max": gmax})
    if t % 7 == 6:
        # Inconsistent: a group forced above a superset's maximum.
        sup = groups[0]["members"]
        groups.append({"name": "superset-cap", "members": sup, "min": None, "max": 0.2})
        groups.append({"name": "subset-floor", "members": sup[: max(1, len(sup) // 2)], "min": 0.5, "max": None})
    return {
        "n": n,
        "loadings": B.tolist(),
        "specific": d.tolist(),
        "scale": float(H[0, 0] / (B[0] @ B[0] + d[0])),
        "linear": c.tolist(),
        "lower": [float(v) if np.isfinite(v) else None for v in lower],
        "upper": [float(v) if np.isfinite(v) else None for v in upper],
        "budget": budget,
        "groups": groups,
    }, H


def main():
    rng = np.random.default_rng(20261202)
    problems = []
    for t in range(28):
        spec, H = random_problem(rng, t)
        lower = [v if v is not None else -np.inf for v in spec["lower"]]
        upper = [v if v is not None else np.inf for v in spec["upper"]]
        spec["expected"] = solve(H, np.array(spec["linear"]), lower, upper, spec["budget"], spec["groups"])
        problems.append(spec)
    # The reproducer: mean-variance with lambda = 2 is min (lambda/2) w^T S w - mu^T w.
    case = json.loads(CASE.read_text())
    S = np.array(case["inputs"]["covariance"])
    mu = np.array(case["inputs"]["mean"])
    lam = case["method"]["riskAversion"]
    index = {a: i for i, a in enumerate(case["assets"])}
    cgroups = [{"name": g["name"], "members": [index[a] for a in g["assets"]], "min": g.get("min"), "max": g.get("max")} for g in case["constraints"]["groups"]]
    n = len(mu)
    reproducer = solve(lam * S, mu, np.zeros(n), np.full(n, case["constraints"]["upper"]), 1.0, cgroups)
    OUT.write_text(
        json.dumps(
            {
                "generator": "scripts/reference/qp_groups_reference.py",
                "solver": f"cvxpy {cp.__version__} with Clarabel {clarabel.__version__} (interior point), numpy {np.__version__}",
                "solverOptions": SOLVER_OPTS,
                "problems": problems,
                "reproducer": {"case": "false-infeasible-n60-g100-s0.json", "riskAversion": lam, **reproducer},
            }
        )
        + "\n"
    )
    print(f"wrote {OUT}: {len(problems)} problems, {sum(p['expected']['status'] == 'infeasible' for p in problems)} infeasible")


if __name__ == "__main__":
    main()
