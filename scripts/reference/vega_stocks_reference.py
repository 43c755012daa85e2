"""Open-dataset fixture: monthly stock returns from the vega-datasets npm package (BSD-3-Clause),
with sample moments and reference optima from general-purpose solvers.

Run from the repository root (after npm ci, which installs vega-datasets):
    python3 scripts/reference/vega_stocks_reference.py
Writes test/reference/fixtures/vega-stocks.json. Tests only read the JSON (CI never runs Python).

Data: node_modules/vega-datasets/data/stocks.csv (columns symbol,date,price; month-start prices).
Symbols: AAPL, AMZN, GOOG, IBM, MSFT (every symbol in the file). Common dates: the months on which
all five have a price, Aug 2004 .. Mar 2010 (68 prices; GOOG starts in Aug 2004), giving 67
monthly simple returns r_t = p_t / p_{t-1} - 1, each stamped with the month it ends.

Moments: per-period (monthly) sample mean and sample covariance with ddof = 1.

Reference optima (long-only, budget 1 unless stated), each with its objective value:
- minimum variance:        min w'Sw
- mean-variance, lam = 5:  max mu'w - (lam/2) w'Sw
- equal risk contribution: Spinu (2013): min 0.5 x'Sx - sum_i (1/N) ln x_i, x > 0 (scipy trust-exact,
                           then scipy root on its first-order conditions), then w = x/sum(x);
                           objective recorded at the unnormalised minimiser x, plus the RC spread
- inverse volatility:      w_i ∝ 1/sqrt(S_ii) (closed form)
- equal weight:            w_i = 1/N (closed form)
- Kelly (log utility):     max (1/T) sum_t ln(1 + r_t'w) over the 67 return rows
Primary solver: cvxpy with CLARABEL at tight tolerances; the two QPs are then polished by solving
their KKT equations exactly on CLARABEL's support (kept only when every KKT condition holds).
Cross-check: scipy SLSQP (ftol 1e-15); the largest weight gap to it is recorded per problem
(SLSQP is the less accurate of the two: its stationarity residual is ~1e-10..1e-9 here).
Every optimum records its KKT residual (largest violation of stationarity / complementarity /
dual sign for the long-only budget-1 set, computed from the gradient).
"""
import csv
import datetime
import json
import pathlib
import platform

import clarabel
import cvxpy as cp
import numpy as np
import scipy
from scipy.optimize import minimize, root

CSV = pathlib.Path("node_modules/vega-datasets/data/stocks.csv")
PACKAGE = pathlib.Path("node_modules/vega-datasets/package.json")
TARGET = pathlib.Path("test/reference/fixtures/vega-stocks.json")
RISK_AVERSION = 5.0
CLARABEL_SETTINGS = dict(
    tol_gap_abs=1e-12, tol_gap_rel=1e-12, tol_feas=1e-12, tol_ktratio=1e-10, max_iter=500
)


def load_prices():
    prices = {}
    with CSV.open(newline="") as handle:
        for row in csv.DictReader(handle):
            day = datetime.datetime.strptime(row["date"], "%b %d %Y").date()
            prices.setdefault(row["symbol"], {})[day] = float(row["price"])
    return prices


def monthly_returns(prices):
    symbols = sorted(prices)
    common = sorted(set.intersection(*(set(prices[s]) for s in symbols)))
    # The common months must be consecutive, or a "monthly" return would span a gap.
    for before, after in zip(common, common[1:]):
        months = (after.year - before.year) * 12 + after.month - before.month
        assert months == 1, f"gap between {before} and {after}"
    level = np.array([[prices[s][d] for s in symbols] for d in common])
    returns = level[1:] / level[:-1] - 1.0
    return symbols, common, returns


def solve_clarabel(problem):
    problem.solve(solver=cp.CLARABEL, **CLARABEL_SETTINGS)
    assert problem.status == cp.OPTIMAL, problem.status


def slsqp(objective, gradient, n):
    result = minimize(
        objective,
        np.full(n, 1.0 / n),
        jac=gradient,
        method="SLSQP",
        bounds=[(0.0, 1.0)] * n,
        constraints=[{"type": "eq", "fun": lambda w: np.sum(w) - 1.0, "jac": lambda w: np.ones_like(w)}],
        options={"ftol": 1e-15, "maxiter": 1000},
    )
    assert result.success, result.message
    return result.x


def clean(w):
    """Set interior-point round-off (weights below 1e-9, which never reach 0 exactly) to zero and
    renormalise; the KKT residual recorded afterwards shows the cleaned point is optimal."""
    w = np.where(w < 1e-9, 0.0, w)
    return w / w.sum()


def polish_on_support(weights, hessian, linear):
    """Re-solve a long-only budget-1 QP min 0.5 w'Hw - linear'w exactly on the solver's support.

    With the support S fixed, the KKT conditions are the linear system
    [H_SS 1; 1' 0] [w_S; nu] = [linear_S; 1] (Nocedal & Wright, Numerical Optimization, 2nd ed.,
    §16.1). The polished point is kept only if it is feasible and the multipliers of the zero
    weights have the right sign (gradient off the support >= -nu), i.e. it satisfies every KKT
    condition; then it is exact to rounding instead of the interior-point tolerance.
    """
    support = weights > 1e-9
    k = int(support.sum())
    system = np.zeros((k + 1, k + 1))
    system[:k, :k] = hessian[np.ix_(support, support)]
    system[:k, k] = 1.0
    system[k, :k] = 1.0
    rhs = np.concatenate([linear[support], [1.0]])
    solution = np.linalg.solve(system, rhs)
    polished = np.zeros_like(weights)
    polished[support] = solution[:k]
    nu = solution[k]
    gradient = hessian @ polished - linear
    assert np.all(polished[support] > 0), "support changed while polishing"
    assert np.all(gradient[~support] + nu >= -1e-12), "polished point violates dual feasibility"
    return polished, float(np.max(np.abs(gradient[support] + nu)))


def kkt_residual(weights, gradient):
    """Largest KKT violation of min f(w) s.t. sum(w) = 1, w >= 0, from the gradient g of f at w:
    g_i + nu = 0 where w_i > 0, g_i + nu >= 0 where w_i = 0 (nu fitted on the support)."""
    support = weights > 1e-9
    nu = -float(np.mean(gradient[support]))
    stationarity = float(np.max(np.abs(gradient[support] + nu)))
    dual = float(np.max(np.maximum(0.0, -(gradient[~support] + nu)))) if np.any(~support) else 0.0
    return max(stationarity, dual, float(abs(weights.sum() - 1.0)), float(max(0.0, -weights.min())))


def minimum_variance(sigma):
    n = sigma.shape[0]
    w = cp.Variable(n)
    solve_clarabel(cp.Problem(cp.Minimize(cp.quad_form(w, cp.psd_wrap(sigma))), [cp.sum(w) == 1, w >= 0]))
    primary, _ = polish_on_support(clean(w.value), sigma, np.zeros(n))
    check = slsqp(lambda v: v @ sigma @ v, lambda v: 2 * sigma @ v, n)
    return primary, check, float(primary @ sigma @ primary)


def mean_variance(mu, sigma, lam):
    n = sigma.shape[0]
    w = cp.Variable(n)
    utility = mu @ w - (lam / 2) * cp.quad_form(w, cp.psd_wrap(sigma))
    solve_clarabel(cp.Problem(cp.Maximize(utility), [cp.sum(w) == 1, w >= 0]))
    primary, _ = polish_on_support(clean(w.value), lam * sigma, mu)
    check = slsqp(lambda v: -(mu @ v - lam / 2 * v @ sigma @ v), lambda v: -(mu - lam * sigma @ v), n)
    return primary, check, float(mu @ primary - lam / 2 * primary @ sigma @ primary)


def kelly(returns):
    t, n = returns.shape
    w = cp.Variable(n)
    growth = cp.sum(cp.log(1 + returns @ w)) / t
    solve_clarabel(cp.Problem(cp.Maximize(growth), [cp.sum(w) == 1, w >= 0]))
    primary = clean(w.value)

    def negative_growth(v):
        return -np.mean(np.log(1 + returns @ v))

    def gradient(v):
        return -(returns / (1 + returns @ v)[:, None]).mean(axis=0)

    check = slsqp(negative_growth, gradient, n)
    return primary, check, float(np.mean(np.log(1 + returns @ primary)))


def half_kelly(returns):
    """Fractional Kelly f = 1/2 read as CRRA gamma = 2: maximise (1/T) sum_t (1 - 1/(1 + r_t'w)).
    CLARABEL reports this power-cone form as inaccurate, so SLSQP finds the support and Newton's
    method on the budget-constrained KKT system of that support polishes it to rounding level."""
    t, n = returns.shape

    def negative_utility(v):
        return -np.mean(1 - 1 / (1 + returns @ v))

    def gradient(v):
        return -(returns / (1 + returns @ v)[:, None] ** 2).mean(axis=0)

    def hessian(v):
        weights = 2 / (1 + returns @ v) ** 3
        return (returns.T * weights) @ returns / t

    start = slsqp(negative_utility, gradient, n)
    w = clean(start)
    support = w > 0
    k = int(support.sum())
    for _ in range(50):
        g = gradient(w)[support]
        h = hessian(w)[np.ix_(support, support)]
        kkt = np.block([[h, np.ones((k, 1))], [np.ones((1, k)), np.zeros((1, 1))]])
        step = np.linalg.solve(kkt, np.concatenate([-g, [0.0]]))[:k]
        w[support] += step
        if np.max(np.abs(step)) < 1e-16:
            break
    return w, start, float(np.mean(1 - 1 / (1 + returns @ w)))


def spinu_erc(sigma):
    """Equal risk contribution through Spinu's strictly convex problem, solved by scipy's exact-Hessian trust region."""
    n = sigma.shape[0]
    b = np.full(n, 1.0 / n)

    def objective(x):
        if np.any(x <= 0):
            return np.inf  # outside the domain: the trust region rejects the step and shrinks
        return 0.5 * x @ sigma @ x - b @ np.log(x)

    result = minimize(
        objective,
        np.full(n, 1.0 / np.sqrt(np.ones(n) @ sigma @ np.ones(n))),
        jac=lambda x: sigma @ x - b / x,
        hess=lambda x: sigma + np.diag(b / x**2),
        method="trust-exact",
        options={"gtol": 1e-15, "maxiter": 1000},
    )
    # trust-exact stops once rounding hides further decrease (first-order residual ~1e-11);
    # polish on the first-order system x∘(Σx) = b with scipy's root finder (MINPACK hybrj).
    polished = root(
        lambda x: x * (sigma @ x) - b,
        result.x,
        jac=lambda x: np.diag(sigma @ x) + np.diag(x) @ sigma,
        method="hybr",
        options={"xtol": 1e-15},
    )
    x = polished.x
    assert np.all(x > 0)
    residual = float(np.max(np.abs(x * (sigma @ x) - b)))
    assert residual < 1e-14, (result.message, polished.message, residual)
    w = x / x.sum()
    contributions = w * (sigma @ w)
    shares = contributions / contributions.sum()
    return w, {
        "x": x.tolist(),
        "spinuObjective": float(0.5 * x @ sigma @ x - b @ np.log(x)),
        "firstOrderResidual": residual,
        "riskContributionShareSpread": float(shares.max() - shares.min()),
        "solverMessage": f"trust-exact: {result.message}; root(hybr): {polished.message}",
    }


def method_entry(weights, objective_name, objective_value, sigma, check=None, **extra):
    entry = {
        "weights": weights.tolist(),
        "objective": {"definition": objective_name, "value": objective_value},
        "variance": float(weights @ sigma @ weights),
    }
    if check is not None:
        entry["crossCheck"] = {"solver": "scipy SLSQP", "weights": check.tolist(), "maxWeightGap": float(np.max(np.abs(weights - check)))}
    entry.update(extra)
    return entry


def main():
    symbols, dates, returns = monthly_returns(load_prices())
    t, n = returns.shape
    mu = returns.mean(axis=0)
    sigma = np.cov(returns, rowvar=False, ddof=1)

    mv_w, mv_check, mv_obj = minimum_variance(sigma)
    mvo_w, mvo_check, mvo_obj = mean_variance(mu, sigma, RISK_AVERSION)
    kelly_w, kelly_check, kelly_obj = kelly(returns)
    # The log-utility optimum is a corner (all in one stock); half Kelly (gamma = 2) is interior.
    khalf_w, khalf_check, khalf_obj = half_kelly(returns)
    erc_w, erc_info = spinu_erc(sigma)
    inv_vol = 1.0 / np.sqrt(np.diag(sigma))
    iv_w = inv_vol / inv_vol.sum()
    ew_w = np.full(n, 1.0 / n)

    out = {
        "source": "vega-datasets stocks.csv (npm package vega-datasets, BSD-3-Clause); scripts/reference/vega_stocks_reference.py",
        "dataset": {
            "package": "vega-datasets",
            "version": json.loads(PACKAGE.read_text())["version"],
            "license": "BSD-3-Clause",
            "file": "data/stocks.csv",
            "returns": "monthly simple returns p_t/p_{t-1} - 1 over the months every symbol has a price",
            "firstPriceDate": dates[0].isoformat(),
            "lastPriceDate": dates[-1].isoformat(),
            "returnDates": [d.isoformat() for d in dates[1:]],
        },
        "solvers": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "cvxpy": cp.__version__,
            "clarabel": clarabel.__version__,
            "primary": "cvxpy + CLARABEL",
            "clarabelSettings": CLARABEL_SETTINGS,
            "crossCheck": "scipy.optimize.minimize SLSQP, ftol 1e-15",
            "riskParity": "scipy.optimize.minimize trust-exact on Spinu's objective (gtol 1e-15), polished by scipy.optimize.root hybr (xtol 1e-15) on x∘(Σx) = b",
        },
        "assets": symbols,
        "periods": t,
        "returns": returns.tolist(),
        "sampleMean": mu.tolist(),
        "sampleCovariance": sigma.tolist(),
        "constraints": "long-only, budget 1",
        "optima": {
            "minimumVariance": method_entry(
                mv_w, "w'Sw (minimised)", mv_obj, sigma, mv_check, kktResidual=kkt_residual(mv_w, 2 * sigma @ mv_w)
            ),
            "meanVariance": method_entry(
                mvo_w,
                "mu'w - (lambda/2) w'Sw (maximised), per-period mu and S",
                mvo_obj,
                sigma,
                mvo_check,
                riskAversion=RISK_AVERSION,
                kktResidual=kkt_residual(mvo_w, RISK_AVERSION * sigma @ mvo_w - mu),
            ),
            "riskParity": method_entry(
                erc_w, "w'Sw at the normalised Spinu minimiser (see spinu for the convex objective)", float(erc_w @ sigma @ erc_w), sigma, spinu=erc_info
            ),
            "inverseVolatility": method_entry(iv_w, "w'Sw (closed form weights, no optimisation)", float(iv_w @ sigma @ iv_w), sigma),
            "equalWeight": method_entry(ew_w, "w'Sw (closed form weights, no optimisation)", float(ew_w @ sigma @ ew_w), sigma),
            "kelly": method_entry(
                kelly_w,
                "(1/T) sum_t ln(1 + r_t'w) (maximised over the return rows)",
                kelly_obj,
                sigma,
                kelly_check,
                kktResidual=kkt_residual(kelly_w, -(returns / (1 + returns @ kelly_w)[:, None]).mean(axis=0)),
            ),
            "kellyHalf": method_entry(
                khalf_w,
                "(1/T) sum_t (1 - 1/(1 + r_t'w)) (CRRA gamma = 2, fraction 1/2; maximised over the return rows)",
                khalf_obj,
                sigma,
                khalf_check,
                fraction=0.5,
                solver="scipy SLSQP for the support, then Newton on the support KKT system (numpy.linalg.solve)",
                kktResidual=kkt_residual(khalf_w, -(returns / (1 + returns @ khalf_w)[:, None] ** 2).mean(axis=0)),
            ),
        },
    }
    TARGET.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {TARGET}")
    for name, entry in out["optima"].items():
        gap = entry.get("crossCheck", {}).get("maxWeightGap")
        print(f"{name:18s} {np.round(entry['weights'], 6)} obj={entry['objective']['value']:.12g} gap={gap} kkt={entry.get('kktResidual')}")
    print("spinu residual", erc_info["firstOrderResidual"], "rc spread", erc_info["riskContributionShareSpread"])


if __name__ == "__main__":
    main()
