"""Reference values for src/estimate, computed with numpy / scikit-learn on a deterministic input.

Run from the repository root:
    python3 scripts/reference/estimation_reference.py
Writes test/reference/fixtures/estimation.json. Tests only read the JSON (CI never runs Python).

Input (rebuilt by the tests in TypeScript to prove the generator is the stated one):
Park-Miller minimal standard LCG, s <- 16807*s mod 2147483647, u = s/2147483647 (first value
after one step), seed 20251202. For each period t = 0..59, in this order:
  two factor draws      f_ta = 0.05*(u - 0.5)                       (a = 0, 1)
  five asset draws      r_ti = 0.002*(i+1) + sum_a B_ia f_ta + 0.02*(u - 0.5)
with B = [[1, .2], [.8, -.3], [1.2, .5], [.5, .9], [.9, 0]].
Then a row selection of length 60 (as a bootstrap draw makes): rows_p = floor(60*u).

Conventions (those documented in src/estimate):
- sample covariance: numpy.cov(..., ddof=1)
- EWMA: normalised weights w_p = lam^(m-1-p) / sum_q lam^q, last row newest;
  mean 'zero': sum_p w_p x_p x_p^T; mean 'weighted': numpy.cov(..., aweights=w, ddof=0)
- Ledoit-Wolf (scaled identity): sklearn.covariance.LedoitWolf
- Ledoit-Wolf constant correlation: the formulas of Ledoit & Wolf (2004), J. Portfolio
  Management 30(4), Appendix, written out below with numpy (divisor T, mean removed)
- regression factor model: numpy.linalg.lstsq on [1, f] per asset; residual variance SSR/(T-K-1);
  factor covariance numpy.cov(f, ddof=1)
- PCA: numpy.linalg.eigh of the ddof=1 sample covariance; B = top-k eigenvectors (sign: the
  largest-magnitude entry positive), F = diag(eigenvalues), D = max(diag(S - B F B^T), 1e-8*tr(S)/N)
"""
import json
import pathlib
import platform

import numpy as np
import sklearn
from sklearn.covariance import LedoitWolf

SEED = 20251202
T, N, K = 60, 5, 2
TRUE_LOADINGS = np.array([[1, 0.2], [0.8, -0.3], [1.2, 0.5], [0.5, 0.9], [0.9, 0.0]])
PCA_COMPONENTS = 2
EWMA_DECAYS = [0.94, 0.97]


class ParkMiller:
    def __init__(self, seed):
        self.state = seed

    def next(self):
        self.state = (16807 * self.state) % 2147483647
        return self.state / 2147483647


def build_input():
    gen = ParkMiller(SEED)
    factors = np.zeros((T, K))
    returns = np.zeros((T, N))
    for t in range(T):
        for a in range(K):
            factors[t, a] = 0.05 * (gen.next() - 0.5)
        for i in range(N):
            common = sum(TRUE_LOADINGS[i, a] * factors[t, a] for a in range(K))
            returns[t, i] = 0.002 * (i + 1) + common + 0.02 * (gen.next() - 0.5)
    rows = np.array([int(np.floor(T * gen.next())) for _ in range(T)], dtype=np.int64)
    return returns, factors, rows


def ewma_weights(lam, m):
    w = lam ** np.arange(m - 1, -1, -1, dtype=float)
    return w / w.sum()


def ewma(x, lam):
    w = ewma_weights(lam, x.shape[0])
    zero_mean = (x * w[:, None]).T @ x
    weighted = np.cov(x, rowvar=False, aweights=w, ddof=0)
    return {
        "decay": lam,
        "zeroMean": zero_mean.tolist(),
        "weightedMean": weighted.tolist(),
        "effectiveObservations": float(1.0 / np.sum(w**2)),
    }


def constant_correlation(x):
    t, n = x.shape
    y = x - x.mean(axis=0)
    s = y.T @ y / t
    sd = np.sqrt(np.diag(s))
    r = s / np.outer(sd, sd)
    rbar = (r.sum() - n) / (n * (n - 1))
    f = rbar * np.outer(sd, sd)
    np.fill_diagonal(f, np.diag(s))
    y2 = y**2
    pi_mat = y2.T @ y2 / t - s**2
    theta = (y**3).T @ y / t - np.diag(s)[:, None] * s
    np.fill_diagonal(theta, 0.0)
    rho = np.trace(pi_mat) + rbar * np.sum(np.outer(1 / sd, sd) * theta)
    gamma = np.sum((f - s) ** 2)
    kappa = (pi_mat.sum() - rho) / gamma
    delta = max(0.0, min(kappa / t, 1.0))
    return {"shrinkage": delta, "meanCorrelation": rbar, "covariance": (delta * f + (1 - delta) * s).tolist()}


def regression(x, f):
    t, n = x.shape
    k = f.shape[1]
    design = np.column_stack([np.ones(t), f])
    coef, _, _, _ = np.linalg.lstsq(design, x, rcond=None)
    resid = x - design @ coef
    return {
        "alpha": coef[0].tolist(),
        "loadings": coef[1:].T.tolist(),
        "factorCovariance": np.atleast_2d(np.cov(f, rowvar=False, ddof=1)).tolist(),
        "specificVariance": (np.sum(resid**2, axis=0) / (t - k - 1)).tolist(),
    }


def pca(x, k):
    s = np.cov(x, rowvar=False, ddof=1)
    n = s.shape[0]
    values, vectors = np.linalg.eigh(s)
    order = np.argsort(values)[::-1]
    values, vectors = values[order], vectors[:, order]
    for a in range(n):
        pivot = int(np.argmax(np.abs(vectors[:, a])))
        if vectors[pivot, a] < 0:
            vectors[:, a] = -vectors[:, a]
    b = vectors[:, :k]
    fcov = np.diag(values[:k])
    floor = 1e-8 * np.trace(s) / n
    spec = np.maximum(np.diag(s - b @ fcov @ b.T), floor)
    return {
        "components": k,
        "eigenvalues": values.tolist(),
        "loadings": b.tolist(),
        "factorVariances": values[:k].tolist(),
        "specificVariance": spec.tolist(),
    }


def estimates(x, f):
    lw = LedoitWolf().fit(x)
    return {
        "sampleMean": x.mean(axis=0).tolist(),
        "sampleCovariance": np.cov(x, rowvar=False, ddof=1).tolist(),
        "ewma": [ewma(x, lam) for lam in EWMA_DECAYS],
        "ledoitWolf": {"shrinkage": float(lw.shrinkage_), "covariance": lw.covariance_.tolist()},
        "constantCorrelation": constant_correlation(x),
        "regression": regression(x, f),
        "pca": pca(x, PCA_COMPONENTS),
    }


def main():
    returns, factors, rows = build_input()
    out = {
        "source": "scripts/reference/estimation_reference.py (see its docstring for the generator and conventions)",
        "libraries": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "scikit-learn": sklearn.__version__,
        },
        "generator": {"seed": SEED, "periods": T, "assets": N, "factors": K},
        "returns": returns.tolist(),
        "factors": factors.tolist(),
        "rows": rows.tolist(),
        "full": estimates(returns, factors),
        "selected": estimates(returns[rows], factors[rows]),
    }
    target = pathlib.Path("test/reference/fixtures/estimation.json")
    target.write_text(json.dumps(out, indent=1) + "\n")
    print(f"wrote {target}")


if __name__ == "__main__":
    main()
