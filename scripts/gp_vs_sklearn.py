#!/usr/bin/env python3
"""Times planner/gp's fit and scikit-learn's side by side on the same data,
the same kernel and the same number of restarts, and prints the ratio.
Run through scripts/gp-vs-sklearn.sh (which builds the Go half).

Both fit a Matérn 5/2 kernel with one length-scale per factor, a signal
variance and a learned Gaussian noise, on the response standardised
(normalize_y=True), from the default start plus RESTARTS random starts:
  scikit-learn: ConstantKernel * Matern(nu=2.5, ARD) + WhiteKernel,
                n_restarts_optimizer=RESTARTS, L-BFGS-B (SciPy)
  planner/gp:   Fit with Starts=RESTARTS, L-BFGS (gonum), plus its weak
                priors and a fitted constant mean
Each time is the median of REPEATS fits. scikit-learn uses the BLAS numpy
is linked with (printed below).
"""
import json
import os
import statistics
import subprocess
import sys
import time
import warnings

import numpy as np
import sklearn
from sklearn.exceptions import ConvergenceWarning
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel

warnings.filterwarnings("ignore", category=ConvergenceWarning)

fitclock = sys.argv[1]
sizes = [(int(s.split("x")[0]), int(s.split("x")[1])) for s in sys.argv[2].split(",")]
repeats = int(os.environ.get("REPEATS", "5"))
restarts = int(os.environ.get("RESTARTS", "1"))


def data(n, d, seed):
    rng = np.random.RandomState(seed)
    x = rng.uniform(size=(n, d))
    w = rng.normal(size=d)
    y = np.sin(3 * x @ w) + 0.5 * np.cos(5 * x[:, 0]) + rng.normal(scale=0.05, size=n)
    return x, y


def sk_fit(x, y, seed):
    d = x.shape[1]
    k = ConstantKernel(1.0, (1e-5, 1e5)) * Matern(length_scale=[0.3] * d, length_scale_bounds=(1e-3, 1e2), nu=2.5) + WhiteKernel(1e-2, (1e-6, 1e1))
    g = GaussianProcessRegressor(kernel=k, normalize_y=True, n_restarts_optimizer=restarts, random_state=seed)
    t = time.perf_counter()
    g.fit(x, y)
    ms = (time.perf_counter() - t) * 1000
    params = {"length_scales": np.atleast_1d(g.kernel_.k1.k2.length_scale).tolist(),
              "signal": float(g.kernel_.k1.k1.constant_value), "noise": float(g.kernel_.k2.noise_level)}
    return ms, g.log_marginal_likelihood_value_, params


try:
    from threadpoolctl import threadpool_info
    blas = ", ".join("%s %s (%s threads)" % (i.get("internal_api"), i.get("version"), i.get("num_threads")) for i in threadpool_info()) or "unknown"
except Exception:
    blas = "unknown (threadpoolctl missing)"
print("scikit-learn %s, numpy %s, BLAS: %s; planner/gp with GOMAXPROCS=%s" % (sklearn.__version__, np.__version__, blas, os.environ.get("GOMAXPROCS", "all")))
print("restarts %d, median of %d fits each; objective = log marginal likelihood + planner/gp's weak priors, at each side's fitted hyperparameters\n" % (restarts, repeats))
print("| N | d | planner/gp ms | scikit-learn ms | speed-up | LML ours | LML sklearn | objective ours | objective at sklearn's |")
print("| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |")
for n, d in sizes:
    x, y = data(n, d, 1000 * n + d)
    sk = [sk_fit(x, y, r) for r in range(repeats)]
    sk_ms = statistics.median(t for t, _, _ in sk)
    line = json.dumps({"x": x.tolist(), "y": y.tolist(), "other": sk[0][2]})
    out = subprocess.run([fitclock, "-repeats", str(repeats), "-restarts", str(restarts)], input=line + "\n", capture_output=True, text=True, check=True).stdout.split()
    go_ms, go_lml, go_post, sk_post = float(out[0]), float(out[1]), float(out[2]), float(out[3])
    print("| %d | %d | %.0f | %.0f | %.1f× | %.2f | %.2f | %.2f | %.2f |" % (n, d, go_ms, sk_ms, sk_ms / go_ms, go_lml, sk[0][1], go_post, sk_post), flush=True)
