#!/usr/bin/env python3
"""Reference values for planner/gp from scikit-learn's
GaussianProcessRegressor (Debian package python3-sklearn).

For fixed hyperparameters it records the log marginal likelihood, and the
posterior mean, variance and covariance at test points, on several data
sets: 1-D, 3-D and 6-D, with and without noise, with a duplicated input,
for the three kernels. The Go tests read the JSON this prints and need no
Python.

    apt-get install -y python3-sklearn
    python3 sklearn_vectors.py > sklearn_vectors.json

Mapping to planner/gp: inputs are already in the unit box; normalize_y=True
is our standardisation (mean and standard deviation with divisor n);
ConstantKernel(s2) * Matern(l, nu) is SignalVar * k(r); alpha is NoiseVar
(added to the training diagonal only, so predicted variances are of the
latent function, as ours are); the prior mean is 0 after standardisation
(Params.Mean = 0).
"""
import json

import numpy as np
import sklearn
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import RBF, ConstantKernel, Matern


def dataset(name, kernel, d, n, noise, seed, duplicate=False, ntest=6):
    rng = np.random.RandomState(seed)
    x = rng.uniform(size=(n, d))
    if duplicate:
        x[-1] = x[0]
        x[-2] = x[1]
    w = rng.normal(size=d)
    y = np.sin(3 * x @ w) + 0.5 * np.cos(5 * x[:, 0]) + 10.0
    if noise > 0:
        y = y + rng.normal(scale=0.05, size=n)
    xt = rng.uniform(size=(ntest, d))
    ls = list(rng.uniform(0.2, 0.9, size=d))
    s2 = float(rng.uniform(0.5, 2.0))
    if kernel == "matern52":
        base = Matern(length_scale=ls, length_scale_bounds="fixed", nu=2.5)
    elif kernel == "matern32":
        base = Matern(length_scale=ls, length_scale_bounds="fixed", nu=1.5)
    else:
        base = RBF(length_scale=ls, length_scale_bounds="fixed")
    k = ConstantKernel(s2, constant_value_bounds="fixed") * base
    alpha = noise if noise > 0 else 1e-10
    gpr = GaussianProcessRegressor(kernel=k, alpha=alpha, normalize_y=True, optimizer=None)
    gpr.fit(x, y)
    mean, cov = gpr.predict(xt, return_cov=True)
    _, std = gpr.predict(xt, return_std=True)
    return {
        "name": name,
        "kernel": kernel,
        "length_scales": ls,
        "signal_var": s2,
        "noise_var": alpha,
        "x": x.tolist(),
        "y": y.tolist(),
        "xtest": xt.tolist(),
        "lml": float(gpr.log_marginal_likelihood_value_),
        "mean": mean.tolist(),
        "var": (std ** 2).tolist(),
        "cov": cov.tolist(),
    }


sets = [
    dataset("1d_noiseless", "matern52", 1, 8, 0, 1),
    dataset("1d_noisy", "matern52", 1, 15, 1e-3, 2),
    dataset("3d_noiseless", "matern52", 3, 20, 0, 3),
    dataset("3d_noisy", "matern52", 3, 30, 1e-2, 4),
    dataset("3d_duplicate_noisy", "matern52", 3, 25, 1e-3, 5, duplicate=True),
    dataset("6d_noisy", "matern52", 6, 60, 1e-2, 6),
    dataset("6d_noiseless", "matern52", 6, 40, 0, 7),
    dataset("3d_matern32_noisy", "matern32", 3, 30, 1e-2, 8),
    dataset("3d_se_noisy", "squared_exponential", 3, 30, 1e-2, 9),
    dataset("3d_se_duplicate", "squared_exponential", 3, 20, 1e-4, 10, duplicate=True),
]
print(json.dumps({"source": "scikit-learn %s, numpy %s (sklearn_vectors.py)" % (sklearn.__version__, np.__version__), "sets": sets}))
