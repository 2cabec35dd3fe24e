#!/usr/bin/env python3
"""Reference values for mettle's residual process (a Gaussian process with an
ARD squared-exponential kernel and a known noise variance per row), produced
with scikit-learn's GaussianProcessRegressor on the diabetes data (Efron et
al. 2004) as shipped in the linfa-datasets 0.8.1 crate.

Usage:
    python3 tests/reference/gp_residual_diabetes.py [DATA.csv.gz TARGET.csv.gz]

Without arguments the two files are taken from the cargo registry, as for
bayesian_ridge_diabetes.py. Writes tests/data/gp_residual_diabetes.json.

What is fixed (the hyperparameters are not optimised: the test checks the
formulas, not an optimiser):
- inputs: the first 10 feature columns scaled to [-0.5, 0.5] by their min and
  max over all 442 rows; fitted on rows 0-149, predicted at rows 400-419;
- "residuals": the target scaled to [-0.5, 0.5], minus its mean over rows
  0-149 (a zero-mean process);
- per-row noise variance: 0.002 * (1 + (i mod 3)) for row i, times the noise
  factor s = 0.8, given to sklearn as `alpha` (its per-row diagonal term);
- kernel: ConstantKernel(tau2) * RBF(length_scale=ell), both fixed.

sklearn's predict(return_std=True) returns the sd of the latent process
(no noise), i.e. sqrt(tau2 - k*^T K_y^-1 k*), which is what mettle's
ResidualKriging::predict returns as its variance.
"""

import datetime
import json
import os
import platform
import sys

import numpy as np
import sklearn
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import RBF, ConstantKernel

# the data are found and read as for the linear-mode reference
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from bayesian_ridge_diabetes import default_paths, load_csv_gz, sha256  # noqa: E402

REPO_ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
OUT_PATH = os.path.join(REPO_ROOT, "tests", "data", "gp_residual_diabetes.json")
TRAIN_ROWS = list(range(0, 150))
TEST_ROWS = list(range(400, 420))
LENGTH_SCALES = [0.6, 0.9, 0.35, 0.5, 1.2, 0.8, 0.45, 0.7, 0.3, 1.0]
SIGNAL_VAR = 0.02
NOISE_FACTOR = 0.8


def main():
    data_path, target_path = sys.argv[1:3] if len(sys.argv) == 3 else default_paths()
    X = load_csv_gz(data_path)
    t = load_csv_gz(target_path)[:, 0]
    assert X.shape == (442, 10) and t.shape == (442,)
    lo, hi = X.min(axis=0), X.max(axis=0)
    Xs = (X - lo) / (hi - lo) - 0.5
    ts = (t - t.min()) / (t.max() - t.min()) - 0.5
    x_tr, x_te = Xs[TRAIN_ROWS], Xs[TEST_ROWS]
    r = ts[TRAIN_ROWS] - ts[TRAIN_ROWS].mean()
    noise_var = np.array([0.002 * (1 + (i % 3)) for i in range(len(TRAIN_ROWS))])

    kernel = ConstantKernel(SIGNAL_VAR, "fixed") * RBF(LENGTH_SCALES, "fixed")
    gp = GaussianProcessRegressor(kernel=kernel, alpha=NOISE_FACTOR * noise_var,
                                  optimizer=None, normalize_y=False)
    gp.fit(x_tr, r)
    mean, sd = gp.predict(x_te, return_std=True)

    out = {
        "source": {
            "script": "tests/reference/gp_residual_diabetes.py",
            "library": "scikit-learn GaussianProcessRegressor (optimizer=None)",
            "sklearn_version": sklearn.__version__,
            "numpy_version": np.__version__,
            "python_version": platform.python_version(),
            "date_utc": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"),
            "data_origin": "diabetes data of Efron, Hastie, Johnstone & Tibshirani (2004), "
                           "Annals of Statistics 32(2), from linfa-datasets 0.8.1",
            "data": {"name": os.path.basename(data_path), "sha256": sha256(data_path)},
            "target": {"name": os.path.basename(target_path), "sha256": sha256(target_path)},
        },
        "length_scales": LENGTH_SCALES,
        "signal_var": SIGNAL_VAR,
        "noise_factor": NOISE_FACTOR,
        "x_train": x_tr.tolist(),
        "residual": r.tolist(),
        "noise_var": noise_var.tolist(),
        "x_test": x_te.tolist(),
        "log_marginal_likelihood": float(gp.log_marginal_likelihood_value_),
        "mean": mean.tolist(),
        "latent_var": (sd ** 2).tolist(),
    }
    with open(OUT_PATH, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"wrote {OUT_PATH}: log marginal likelihood {out['log_marginal_likelihood']:.6f}, "
          f"mean[0] {mean[0]:.6f}, sd[0] {sd[0]:.6f}")


if __name__ == "__main__":
    main()
