"""Reference values for the resampling layer's tests (src/resample).

Writes four fixtures under test/reference/fixtures/:
  resample-block-length.json        the four AR(1) cases of the shared reference/block-length.json,
                                    rebuilt from their generator and re-run through arch (the
                                    script checks it reproduces the shared values exactly)
  resample-stationary-bootstrap-variance.json
                                    the 60-point case of the shared
                                    reference/stationary-bootstrap-variance.json, rebuilt, with the
                                    exact variance computed two ways: the closed form, and directly
                                    from the resampling law (a Markov chain on row indices)
  resample-block-length-extra.json  arch.bootstrap.optimal_block_length on series beyond the
                                    shared reference/block-length.json (short, white noise,
                                    negative dependence, capped, multi-column)
  resample-distributions.json       scipy.stats quantiles and chi-square critical values used by
                                    the bin-count tests of the random variates

Run with numpy, scipy, pandas and arch installed (wheels on disk, see the project preamble):
  python3 scripts/reference/resample_reference.py
Tests read only the JSON; CI never runs this script.
"""
import json
import os

import numpy as np

# The project's shared reference folder sits beside the checkout (shared/reference); override with
# WOBBLE_SHARED_REFERENCE when it lives elsewhere.
SHARED_REFERENCE = os.environ.get(
    "WOBBLE_SHARED_REFERENCE",
    os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "..", "shared", "reference"))
import scipy
import scipy.stats as st
import arch
from arch.bootstrap import optimal_block_length

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "..", "test", "reference", "fixtures")


def park_miller(seed, count):
    """Park-Miller minimal standard LCG (as in REFERENCES.md): s <- 16807 s mod (2^31 - 1)."""
    s = seed
    out = []
    for _ in range(count):
        s = (16807 * s) % 2147483647
        out.append(s / 2147483647)
    return out


def ar1(seed, n, phi):
    e = [u - 0.5 for u in park_miller(seed, n)]
    x = [e[0]]
    for t in range(1, n):
        x.append(phi * x[-1] + e[t])
    return x


def block_cases():
    specs = [
        ("short n=9, capped at ceil(n/3) = 3", 11, 9, 0.5),
        ("short n=12", 12, 12, 0.3),
        ("n=30", 13, 30, 0.7),
        ("white noise n=40", 14, 40, 0.0),
        ("negative phi=-0.6 n=300", 15, 300, -0.6),
        ("near unit root phi=0.99 n=200", 16, 200, 0.99),
        ("phi=0.97 n=60", 17, 60, 0.97),
        # Two series where arch's index convention for the autocorrelation's sums of squares
        # (t >= i+1 and t <= n-i-2) changes the chosen M, hence the block length.
        ("convention-sensitive phi=0.3 n=40", 135, 40, 0.3),
        ("convention-sensitive phi=0.2 n=100", 153, 100, 0.2),
    ]
    cases = []
    for name, seed, n, phi in specs:
        x = ar1(seed, n, phi)
        r = optimal_block_length(np.array(x))
        cases.append({
            "name": name, "seed": seed, "n": n, "phi": phi, "x": x,
            "stationary": float(r["stationary"].iloc[0]),
            "circular": float(r["circular"].iloc[0]),
        })
    # Multi-column history: columns AR(1) with phi 0.2, 0.5, 0.8 (seeds 21, 22, 23), T = 300.
    phis = [0.2, 0.5, 0.8]
    cols = [ar1(21 + j, 300, phis[j]) for j in range(3)]
    mat = np.array(cols).T
    r = optimal_block_length(mat)
    multi = {
        "name": "three columns, T=300", "seeds": [21, 22, 23], "phis": phis, "nRows": 300, "nCols": 3,
        "rows": mat.tolist(),
        "stationary": [float(v) for v in r["stationary"]],
        "circular": [float(v) for v in r["circular"]],
    }
    return cases, multi


def shared_block_cases():
    """The shared cases: e_t = u_t - 0.5 from seed 20240601, AR(1) with the case's phi."""
    cases = []
    for phi, n in ((0.0, 500), (0.5, 250), (0.5, 500), (0.8, 1000)):
        x = ar1(20240601, n, phi)
        r = optimal_block_length(np.array(x))
        cases.append({"phi": phi, "n": n, "x": x,
                      "stationary": float(r["stationary"].iloc[0]),
                      "circular": float(r["circular"].iloc[0])})
    shared = os.path.join(SHARED_REFERENCE, "block-length.json")
    if os.path.exists(shared):
        with open(shared) as f:
            ref = json.load(f)["cases"]
        for a, b in zip(cases, ref):
            assert a["x"] == b["x"] and a["stationary"] == b["stationary"] and a["circular"] == b["circular"], a["phi"]
    return cases


def closed_form_variance(x, p):
    """Politis & Romano (1994): N Var* = c(0) + 2 sum_i [(1-i/N)(1-p)^i + (i/N)(1-p)^(N-i)] c(i)."""
    x = np.asarray(x)
    n = len(x)
    e = x - x.mean()
    c = np.array([e[: n - i] @ e[i:] / n for i in range(n)])
    q = 1 - p
    i = np.arange(1, n)
    w = (1 - i / n) * q**i + (i / n) * q ** (n - i)
    return (c[0] + 2 * np.sum(w * c[1:])) / n


def markov_variance(x, p):
    """Var* of the resampled mean straight from the resampling law: I_1 uniform, then
    I_{t+1} = I_t + 1 (mod N) with probability 1-p, uniform with probability p. Stationary law is
    uniform, so Cov*(X*_s, X*_t) = sum_ij (1/N) P^|t-s|_ij x_i x_j - xbar^2."""
    x = np.asarray(x)
    n = len(x)
    shift = np.roll(np.eye(n), 1, axis=1)  # row i has its 1 at column i+1 (mod n)
    P = (1 - p) * shift + p / n * np.ones((n, n))
    xbar = x.mean()
    cov_at_lag = []
    Pk = np.eye(n)
    for _ in range(n):
        cov_at_lag.append(x @ Pk @ x / n - xbar**2)
        Pk = Pk @ P
    total = sum((n - d) * cov_at_lag[d] * (1 if d == 0 else 2) for d in range(n))
    return total / n**2


def variance_case():
    x = [u - 0.5 for u in park_miller(777, 60)]
    for t in range(1, 60):
        x[t] += 0.6 * x[t - 1]
    p = 0.2
    out = {"x": x, "p": p, "meanBlockLength": 1 / p,
           "closedForm": float(closed_form_variance(x, p)),
           "markovChain": float(markov_variance(x, p)),
           "iidClosedForm": float(closed_form_variance(x, 1.0)),
           "iidMarkovChain": float(markov_variance(x, 1.0))}
    shared = os.path.join(SHARED_REFERENCE, "stationary-bootstrap-variance.json")
    if os.path.exists(shared):
        with open(shared) as f:
            ref = json.load(f)
        assert ref["x"] == x and ref["p"] == p
        out["sharedVarianceOfMean"] = ref["varianceOfMean"]
    return out


def distributions():
    probs = [k / 10 for k in range(1, 10)]
    return {
        "deciles": probs,
        "normal": [float(st.norm.ppf(q)) for q in probs],
        "gamma": {str(a): [float(st.gamma.ppf(q, a)) for q in probs] for a in (0.3, 1.0, 2.5, 10.0)},
        "chiSquare": {str(df): [float(st.chi2.ppf(q, df)) for q in probs] for df in (1, 4, 7, 59)},
        # Upper 1e-6 tail points of the chi-square statistic for bin-count tests.
        "chiSquareCritical1e6": {str(df): float(st.chi2.isf(1e-6, df)) for df in (6, 9, 10, 26, 63, 80)},
    }


def main():
    os.makedirs(OUT, exist_ok=True)
    with open(os.path.join(OUT, "resample-block-length.json"), "w") as f:
        json.dump({
            "source": f"arch {arch.__version__} arch.bootstrap.optimal_block_length (Politis & White 2004; Patton, Politis & White 2009)",
            "generator": "e_t = u_t - 0.5, Park-Miller LCG seed 20240601; x_0 = e_0; x_t = phi x_{t-1} + e_t",
            "cases": shared_block_cases(),
        }, f, indent=1)
    with open(os.path.join(OUT, "resample-stationary-bootstrap-variance.json"), "w") as f:
        json.dump({
            "source": "Politis & Romano (1994), JASA 89(428): exact stationary-bootstrap variance of the mean; closed form and direct Markov-chain computation (numpy " + np.__version__ + ")",
            "generator": "u - 0.5 from Park-Miller LCG seed 777 (60 values), then x_t += 0.6 x_{t-1}",
            **variance_case(),
        }, f, indent=1)
    cases, multi = block_cases()
    with open(os.path.join(OUT, "resample-block-length-extra.json"), "w") as f:
        json.dump({
            "source": f"arch {arch.__version__} arch.bootstrap.optimal_block_length (Politis & White 2004; Patton, Politis & White 2009)",
            "generator": "e_t = u_t - 0.5 from the Park-Miller LCG (seed per case); x_0 = e_0; x_t = phi x_{t-1} + e_t",
            "cases": cases,
            "multiColumn": multi,
        }, f, indent=1)
    with open(os.path.join(OUT, "resample-distributions.json"), "w") as f:
        json.dump({
            "source": f"scipy {scipy.__version__} scipy.stats norm.ppf, gamma.ppf, chi2.ppf, chi2.isf",
            **distributions(),
        }, f, indent=1)


if __name__ == "__main__":
    main()
