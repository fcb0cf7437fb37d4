"""Reference Gaussian-process posterior from scikit-learn (Debian python3-sklearn).

usage: gp_sklearn.py CASE.json
CASE.json: {"length_scale": l, "signal_variance": s2, "noise": n,
            "x_train": [[...], ...], "y": [...], "x_test": [[...], ...]}
where y are residuals (observation minus prior mean): scikit-learn's regressor has a zero prior
mean, so the caller adds its own prior mean back. Prints JSON {"mean": [...], "var": [...]} with
the posterior mean of the residual and the predictive variance, which includes the WhiteKernel
noise (scikit-learn evaluates the whole kernel's diagonal at the test points).
"""
import json
import sys

import numpy as np
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel


def main():
    with open(sys.argv[1]) as f:
        case = json.load(f)
    kernel = ConstantKernel(case["signal_variance"], constant_value_bounds="fixed") * Matern(
        length_scale=case["length_scale"], length_scale_bounds="fixed", nu=2.5
    ) + WhiteKernel(case["noise"], noise_level_bounds="fixed")
    # Fixed hyper-parameters: no optimiser, and no extra jitter (alpha) on the diagonal.
    gp = GaussianProcessRegressor(kernel=kernel, alpha=0.0, optimizer=None, normalize_y=False)
    gp.fit(np.asarray(case["x_train"], dtype=float), np.asarray(case["y"], dtype=float))
    mean, std = gp.predict(np.asarray(case["x_test"], dtype=float), return_std=True)
    json.dump({"mean": [float(v) for v in mean], "var": [float(v) ** 2 for v in std]}, sys.stdout)


if __name__ == "__main__":
    main()
