"""Reference timing for the stress benchmark (test/bench/stress.bench.ts, case B).

A careful numpy + cvxpy loop doing the same solves wobble does for the 30-asset target case:
per bootstrap draw, re-estimate the mean and the sample covariance, then
  - mean-variance (lambda = 4) in three channels: joint (draw mu, draw Sigma), mean-only
    (draw mu, base Sigma), covariance-only (base mu, draw Sigma);
  - minimum variance once (it ignores the means, so its channels need no extra solve);
  - risk parity once, by Spinu's (2013) convex problem min 1/2 |L^T x|^2 - (1/N) sum log x, then
    w = x / sum(x) (long-only, budget 1; the caps are not applied, as in wobble).
Constraints: sum(w) = 1, 0 <= w <= 0.15, first ten assets together <= 0.5.

Every cvxpy problem is built once with Parameters and is DPP (Disciplined Parametrized
Programming, cvxpy >= 1.1), so it is compiled once; each draw only sets the parameter values.
Sigma enters through its Cholesky factor L (a Parameter), so |L^T w|^2 = w^T Sigma w is a
parameter-affine expression. Three configurations are timed (CONFIGURATIONS below):
  clarabel         all five solves through cvxpy + CLARABEL (interior point), tolerances 1e-8;
                   risk parity as an exponential-cone problem (CLARABEL sometimes ends it as
                   "optimal_inaccurate"; those are counted and kept);
  clarabel+newton  the QPs through cvxpy + CLARABEL; risk parity by a damped Newton method on
                   Spinu's objective in numpy/scipy (Cholesky solves), to max_i |x_i(Sx)_i - 1/N| <= 1e-12;
  osqp+newton      the QPs through cvxpy + OSQP (eps_abs = eps_rel = 1e-8, polished, warm-started),
                   risk parity by the same Newton method.
The bench compares wobble with the fastest (lowest CPU time) of the three.

Same data as the bench: the Park-Miller LCG + Box-Muller cosine-branch generator of
test/bench/problems.ts is re-implemented below and every return rounded to 1e-6, so the
history is identical; the script prints the same checksum the bench prints. The bootstrap
draws are numpy's (Generator, PCG64), not wobble's streams: same scheme (stationary bootstrap,
Politis & Romano 1994, mean block length 3), different random numbers.

Timing: time.process_time (CPU of all threads of the process) and time.perf_counter (wall)
around the 500-draw loop only; the one-off compilation is timed separately. Median of 3 runs
(the 1-minute load average before and after is recorded: other work on the 2 cores inflates both).

Run from the repository root with the local wheels (see the header of the JSON for versions):
    python3 -m venv .venv-bench
    .venv-bench/bin/pip install --no-index --find-links <the machine image's wheel folder> numpy scipy cvxpy threadpoolctl
    env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE .venv-bench/bin/python scripts/reference/stress_bench_reference.py
(OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE may be set on this machine and can slow a current numpy;
they are unset for this one command so numpy picks its own kernel, and the kernel threadpoolctl
reports is recorded.)
Writes test/bench/fixtures/stress-reference.json.
"""
import datetime
import json
import math
import os
import pathlib
import platform
import statistics
import subprocess
import sys
import time

import cvxpy as cp
import numpy as np
import scipy
import scipy.linalg

# Same settings as TARGET_CASE in test/bench/problems.ts.
N_ASSETS = 30
PERIODS = 240
SEED = 20260501
RISK_AVERSION = 4.0
UPPER = 0.15
GROUP_SIZE = 10
GROUP_MAX = 0.5
MEAN_BLOCK_LENGTH = 3
DRAWS = 500
RUNS = 3
FACTORS = 3
TOL = 1e-8
# (QP solver through cvxpy, risk-parity solver, label). OSQP cannot take the exponential cone of the log barrier.
CONFIGURATIONS = (
    ("CLARABEL", "CLARABEL", "clarabel"),
    ("CLARABEL", "NEWTON", "clarabel+newton"),
    ("OSQP", "NEWTON", "osqp+newton"),
)

PM_MODULUS = 2147483647
PM_MULTIPLIER = 16807

OUT = pathlib.Path(__file__).resolve().parents[2] / "test" / "bench" / "fixtures" / "stress-reference.json"


class ParkMillerNormals:
    """Park & Miller (1988) minimal standard LCG; Box-Muller (1958) cosine branch."""

    def __init__(self, seed):
        self.state = seed

    def uniform(self):
        self.state = (PM_MULTIPLIER * self.state) % PM_MODULUS
        return self.state / PM_MODULUS

    def normal(self):
        u1 = self.uniform()
        u2 = self.uniform()
        return math.sqrt(-2 * math.log(u1)) * math.cos(2 * math.pi * u2)


def factor_history(n, periods, seed):
    """Mirror of factorHistory in test/bench/problems.ts (same draws, same order, same rounding)."""
    g = ParkMillerNormals(seed)
    mean, specific, loadings = [], [], []
    for _ in range(n):
        sigma = 0.02 + 0.05 * g.uniform()
        share = 0.3 + 0.5 * g.uniform()
        raw = [0.5 + 0.7 * g.uniform(), 1.4 * g.uniform() - 0.7, 1.2 * g.uniform() - 0.6]
        raw_variance = raw[0] * raw[0] + raw[1] * raw[1] + raw[2] * raw[2]
        scale = math.sqrt((share * sigma * sigma) / raw_variance)
        loadings.append([l * scale for l in raw])
        specific.append(sigma * math.sqrt(1 - share))
        mean.append(sigma * (0.05 + 0.15 * g.uniform()))
    micro = []
    for _ in range(periods):
        f = [g.normal() for _ in range(FACTORS)]
        for i in range(n):
            r = mean[i] + specific[i] * g.normal()
            for k in range(FACTORS):
                r += loadings[i][k] * f[k]
            micro.append(math.floor(r * 1e6 + 0.5))
    returns = np.array(micro, dtype=float).reshape(periods, n) / 1e6
    return returns, micro


def checksum(micro):
    total, h = 0, 0
    for k in micro:
        total += k
        h = (h * 31 + (k % PM_MODULUS)) % PM_MODULUS
    return {"sum": total, "hash": h}


def stationary_bootstrap(rng, t, mean_block_length, out):
    """Politis & Romano (1994): blocks start at a uniform row, Geometric(1/m) lengths, circular wrap."""
    p = 1.0 / mean_block_length
    pos = 0
    while pos < t:
        start = int(rng.integers(t))
        length = int(rng.geometric(p))
        end = min(t, pos + length)
        k = end - pos
        out[pos:end] = (start + np.arange(k)) % t
        pos = end
    return out


class Solvers:
    """The three DPP problems, compiled once (the first solve), re-solved with new parameter values."""

    def __init__(self, n, qp_solver, rp_solver):
        self.qp_solver = qp_solver
        self.rp_solver = rp_solver
        self.inaccurate = 0
        self.mu = cp.Parameter(n)
        self.chol = cp.Parameter((n, n))
        w = cp.Variable(n)
        constraints = [cp.sum(w) == 1, w >= 0, w <= UPPER, cp.sum(w[:GROUP_SIZE]) <= GROUP_MAX]
        self.w_mv = w
        self.mv = cp.Problem(cp.Maximize(self.mu @ w - (RISK_AVERSION / 2) * cp.sum_squares(self.chol.T @ w)), constraints)
        self.chol_min = cp.Parameter((n, n))
        v = cp.Variable(n)
        self.w_min = v
        self.minvar = cp.Problem(
            cp.Minimize(cp.sum_squares(self.chol_min.T @ v)),
            [cp.sum(v) == 1, v >= 0, v <= UPPER, cp.sum(v[:GROUP_SIZE]) <= GROUP_MAX],
        )
        self.chol_rp = cp.Parameter((n, n))
        x = cp.Variable(n)
        self.x_rp = x
        self.rp = cp.Problem(cp.Minimize(0.5 * cp.sum_squares(self.chol_rp.T @ x) - cp.sum(cp.log(x)) / n))
        for prob in (self.mv, self.minvar, self.rp):
            assert prob.is_dpp(), "problem is not DPP"
        if qp_solver == "CLARABEL":
            self.qp_options = {"solver": "CLARABEL", "tol_gap_abs": TOL, "tol_gap_rel": TOL, "tol_feas": TOL}
        else:
            self.qp_options = {"solver": "OSQP", "eps_abs": TOL, "eps_rel": TOL, "polish": True, "max_iter": 100000, "warm_start": True}
        self.rp_options = {"solver": "CLARABEL", "tol_gap_abs": TOL, "tol_gap_rel": TOL, "tol_feas": TOL}

    def mean_variance(self, mu, chol):
        self.mu.value = mu
        self.chol.value = chol
        self.mv.solve(**self.qp_options)
        check(self.mv)
        return self.w_mv.value

    def minimum_variance(self, chol):
        self.chol_min.value = chol
        self.minvar.solve(**self.qp_options)
        check(self.minvar)
        return self.w_min.value

    def risk_parity(self, chol, cov):
        if self.rp_solver == "NEWTON":
            x = spinu_newton(cov)
            return x / x.sum()
        self.chol_rp.value = chol
        self.rp.solve(**self.rp_options)
        if self.rp.status == cp.OPTIMAL_INACCURATE:
            # Clarabel's exponential-cone iterations sometimes stop just short of 1e-8; count, keep the point.
            self.inaccurate += 1
        else:
            check(self.rp)
        x = self.x_rp.value
        return x / x.sum()


def check(prob):
    if prob.status != cp.OPTIMAL:
        raise RuntimeError(f"solver status {prob.status}")


def spinu_newton(cov, tol=1e-12, max_iter=50):
    """Damped Newton on Spinu's (2013) f(x) = 1/2 x^T S x - (1/N) sum log x from x0 = 1/sqrt(1^T S 1),
    backtracking (Armijo) while keeping x > 0, full steps once the decrement is small; stops when max_i |x_i (S x)_i - 1/N| <= tol."""
    n = cov.shape[0]
    b = 1.0 / n
    x = np.full(n, 1.0 / math.sqrt(cov.sum()))
    for _ in range(max_iter):
        s = cov @ x
        if np.abs(x * s - b).max() <= tol:
            return x
        g = s - b / x
        h = cov + np.diag(b / (x * x))
        step = scipy.linalg.cho_solve(scipy.linalg.cho_factor(h), g)
        f = 0.5 * x @ s - b * np.log(x).sum()
        slope = g @ step  # squared Newton decrement
        t = 1.0
        if slope < 1e-6 and (x - step > 0).all():
            # Quadratic phase (Boyd & Vandenberghe 2004, section 9.5): the full step is accepted; the Armijo test
            # cannot see decreases below the rounding of f here.
            x = x - step
            continue
        while True:
            trial = x - t * step
            if (trial > 0).all() and 0.5 * trial @ (cov @ trial) - b * np.log(trial).sum() <= f - 1e-4 * t * slope:
                break
            t *= 0.5
            if t < 1e-12:
                raise RuntimeError("risk parity line search failed")
        x = trial
    raise RuntimeError("risk parity Newton did not converge")


def moments(x):
    """Sample mean and covariance (divisor T - 1), as wobble's 'sample' estimator."""
    mu = x.mean(axis=0)
    xc = x - mu
    return mu, (xc.T @ xc) / (x.shape[0] - 1)


def run_once(returns, qp_solver, rp_solver, seed):
    t, n = returns.shape
    setup_cpu, setup_wall = time.process_time(), time.perf_counter()
    s = Solvers(n, qp_solver, rp_solver)
    mu0, cov0 = moments(returns)
    l0 = np.linalg.cholesky(cov0)
    # Base optima: the first solve of each problem compiles it (DPP), as wobble solves its base optima first.
    base = {"mean-variance": s.mean_variance(mu0, l0), "minimum-variance": s.minimum_variance(l0), "risk-parity": s.risk_parity(l0, cov0)}
    setup = (time.process_time() - setup_cpu, time.perf_counter() - setup_wall)

    rng = np.random.default_rng(seed)
    rows = np.empty(t, dtype=np.int64)
    parts = {"estimation": 0.0, "mean-variance": 0.0, "minimum-variance": 0.0, "risk-parity": 0.0}
    checksum_w = 0.0
    cpu0, wall0 = time.process_time(), time.perf_counter()
    for _ in range(DRAWS):
        p0 = time.perf_counter()
        stationary_bootstrap(rng, t, MEAN_BLOCK_LENGTH, rows)
        mu_b, cov_b = moments(returns[rows])
        l_b = np.linalg.cholesky(cov_b)
        p1 = time.perf_counter()
        w_joint = s.mean_variance(mu_b, l_b)
        w_mean_only = s.mean_variance(mu_b, l0)
        w_cov_only = s.mean_variance(mu0, l_b)
        p2 = time.perf_counter()
        w_min = s.minimum_variance(l_b)
        p3 = time.perf_counter()
        w_rp = s.risk_parity(l_b, cov_b)
        p4 = time.perf_counter()
        parts["estimation"] += p1 - p0
        parts["mean-variance"] += p2 - p1
        parts["minimum-variance"] += p3 - p2
        parts["risk-parity"] += p4 - p3
        checksum_w += w_joint[0] + w_mean_only[0] + w_cov_only[0] + w_min[0] + w_rp[0]
    cpu, wall = time.process_time() - cpu0, time.perf_counter() - wall0
    return {"cpu": cpu, "wall": wall, "setupCpu": setup[0], "setupWall": setup[1], "parts": parts, "base": base,
            "weightSum": checksum_w, "inaccurateRiskParity": s.inaccurate}


def machine_info():
    model = None
    try:
        for line in pathlib.Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                model = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    try:
        nproc = int(subprocess.run(["nproc"], capture_output=True, text=True, check=True).stdout.strip())
    except (OSError, subprocess.CalledProcessError, ValueError):
        nproc = os.cpu_count()
    return {"nproc": nproc, "cpuModel": model, "platform": platform.platform(), "python": platform.python_version()}


def blas_info():
    try:
        from threadpoolctl import threadpool_info
    except ImportError:
        return {"threadpoolctl": None}
    return {
        "threadpoolctl": [
            {k: lib.get(k) for k in ("internal_api", "version", "architecture", "num_threads", "threading_layer")} for lib in threadpool_info()
        ],
        "env": {k: os.environ.get(k) for k in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE", "OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS")},
    }


def solver_versions():
    out = {}
    for name in ("clarabel", "osqp"):
        try:
            mod = __import__(name)
            out[name] = getattr(mod, "__version__", None)
        except ImportError:
            out[name] = None
    return out


def median_of(runs, key):
    return statistics.median(r[key] for r in runs)


def main():
    returns, micro = factor_history(N_ASSETS, PERIODS, SEED)
    sums = checksum(micro)
    print(f"history {PERIODS}x{N_ASSETS} checksum sum={sums['sum']} hash={sums['hash']}; first row: {returns[0, :5].tolist()}")
    load_before = os.getloadavg()
    configs = []
    for qp_solver, rp_solver, label in CONFIGURATIONS:
        runs = []
        for k in range(RUNS):
            r = run_once(returns, qp_solver, rp_solver, seed=1000 + k)
            print(f"  {label} run {k + 1}: cpu {r['cpu']:.3f} s, wall {r['wall']:.3f} s (setup cpu {r['setupCpu']:.3f} s); parts (wall s) "
                  + ", ".join(f"{p} {v:.3f}" for p, v in r["parts"].items())
                  + (f"; {r['inaccurateRiskParity']} risk-parity solves flagged inaccurate" if r["inaccurateRiskParity"] else ""))
            runs.append(r)
        base = runs[0]["base"]
        configs.append({
            "name": label,
            "qpSolver": f"cvxpy {qp_solver}",
            "riskParitySolver": "cvxpy CLARABEL (exponential cone)" if rp_solver == "CLARABEL" else "numpy/scipy damped Newton (Spinu)",
            "tolerance": TOL,
            "riskParityTolerance": TOL if rp_solver == "CLARABEL" else "max_i |x_i (S x)_i - 1/N| <= 1e-12",
            "cpuSeconds": median_of(runs, "cpu"),
            "wallSeconds": median_of(runs, "wall"),
            "minCpuSeconds": min(r["cpu"] for r in runs),
            "setupCpuSeconds": median_of(runs, "setupCpu"),
            "setupWallSeconds": median_of(runs, "setupWall"),
            "runs": [{"cpuSeconds": r["cpu"], "wallSeconds": r["wall"], "inaccurateRiskParity": r["inaccurateRiskParity"]} for r in runs],
            "partsWallSeconds": {p: statistics.median(r["parts"][p] for r in runs) for p in runs[0]["parts"]},
            "baseWeights": {m: [float(v) for v in w] for m, w in base.items()},
        })
    best = min(configs, key=lambda c: c["cpuSeconds"])
    fixture = {
        "description": "Reference timing for case B of test/bench/stress.bench.ts (written by scripts/reference/stress_bench_reference.py).",
        "note": "Measured on this machine (the project's 2-core development machine) by a numpy + cvxpy loop doing the same solves as wobble: "
                "per draw, sample mean and covariance from stationary-bootstrap rows, mean-variance in three channels, minimum variance "
                "once, risk parity (Spinu) once, with DPP-compiled cvxpy problems. Times cover the draw loop only (compilation and base "
                "solves are reported apart as setup). Timings from another machine are not comparable.",
        "measuredOn": datetime.date.today().isoformat(),
        "case": {
            "assets": N_ASSETS, "periods": PERIODS, "generatorSeed": SEED, "riskAversion": RISK_AVERSION, "upper": UPPER,
            "groupSize": GROUP_SIZE, "groupMax": GROUP_MAX, "meanBlockLength": MEAN_BLOCK_LENGTH, "draws": DRAWS,
            "solvesPerDraw": {"mean-variance": 3, "minimum-variance": 1, "risk-parity": 1},
        },
        "historyChecksum": sums,
        "runsPerConfiguration": RUNS,
        "statistic": "median of runs",
        "best": best["name"],
        "cpuSeconds": best["cpuSeconds"],
        "wallSeconds": best["wallSeconds"],
        "configurations": configs,
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "cvxpy": cp.__version__, **solver_versions()},
        "blas": blas_info(),
        "machine": {**machine_info(), "loadAverage1mBeforeAfter": [load_before[0], os.getloadavg()[0]]},
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(fixture, indent=2) + "\n")
    print(f"best: {best['name']} cpu {best['cpuSeconds']:.3f} s, wall {best['wallSeconds']:.3f} s; wrote {OUT}")


if __name__ == "__main__":
    sys.exit(main())
