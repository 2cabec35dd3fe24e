#!/usr/bin/env python3
"""Reference values for mettle's linear mode (Bayesian linear regression with
the evidence framework, MacKay 1992), produced with scikit-learn's
BayesianRidge on the diabetes data (Efron et al. 2004).

Usage:
    python3 tests/reference/bayesian_ridge_diabetes.py [DATA.csv.gz TARGET.csv.gz]

Without arguments the two files are taken from the linfa-datasets 0.8.1 crate
in the cargo registry (~/.cargo/registry/src/index.crates.io-*/linfa-datasets-0.8.1/data/).
Writes tests/data/bayesian_ridge_diabetes.json (relative to the repo root,
located from this script's path) and prints a short summary.

Naming: scikit-learn calls the NOISE precision `alpha_` and the WEIGHT
precision `lambda_`. MacKay (and mettle) call the weight precision alpha and
the noise precision beta. The JSON uses explicit names
(noise_precision_scaled, weight_precision_scaled) to avoid the clash.
"""

import datetime
import glob
import gzip
import hashlib
import json
import os
import platform
import sys

import numpy as np
import sklearn
from sklearn.linear_model import BayesianRidge

SCRIPT = "tests/reference/bayesian_ridge_diabetes.py"
REPO_ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
OUT_PATH = os.path.join(REPO_ROOT, "tests", "data", "bayesian_ridge_diabetes.json")
REGISTRY_GLOB = os.path.expanduser(
    "~/.cargo/registry/src/index.crates.io-*/linfa-datasets-0.8.1/data/"
)
PRED_ROWS = list(range(0, 20)) + list(range(400, 442))


def default_paths():
    dirs = sorted(glob.glob(REGISTRY_GLOB))
    if not dirs:
        sys.exit("linfa-datasets-0.8.1 not found in the cargo registry; "
                 "pass DATA.csv.gz TARGET.csv.gz explicitly")
    d = dirs[0]
    return os.path.join(d, "diabetes_data.csv.gz"), os.path.join(d, "diabetes_target.csv.gz")


def load_csv_gz(path):
    # Comma-separated, no header, one sample per line.
    with gzip.open(path, "rt") as f:
        return np.loadtxt(f, delimiter=",", dtype=np.float64, ndmin=2)


def sha256(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def minmax_scale(a, lo, hi):
    # x' = (x - min) / (max - min) - 0.5, maps [min, max] onto [-0.5, 0.5]
    return (a - lo) / (hi - lo) - 0.5


def main():
    if len(sys.argv) == 3:
        data_path, target_path = sys.argv[1], sys.argv[2]
    elif len(sys.argv) == 1:
        data_path, target_path = default_paths()
    else:
        sys.exit(__doc__)

    X = load_csv_gz(data_path)
    t = load_csv_gz(target_path)[:, 0]
    assert X.shape == (442, 10), X.shape
    assert t.shape == (442,), t.shape
    n, d = X.shape

    # ---- scaling (same as mettle) ----
    x_min, x_max = X.min(axis=0), X.max(axis=0)
    t_min, t_max = float(t.min()), float(t.max())
    t_range = t_max - t_min
    Xs = minmax_scale(X, x_min, x_max)
    ts = minmax_scale(t, t_min, t_max)

    # ---- fit ----
    params = dict(fit_intercept=True, tol=1e-10, max_iter=10000,
                  alpha_1=1e-12, alpha_2=1e-12, lambda_1=1e-12, lambda_2=1e-12,
                  compute_score=True)
    model = BayesianRidge(**params)
    model.fit(Xs, ts)

    beta = float(model.alpha_)    # noise precision (sklearn alpha_)
    alpha = float(model.lambda_)  # weight precision (sklearn lambda_)

    # ---- effective number of parameters, recomputed explicitly ----
    # sklearn centres X' and t' (column means subtracted), so the eigenvalues
    # are those of Xc^T Xc with Xc = X' - mean(X').
    Xc = Xs - Xs.mean(axis=0)
    tc = ts - ts.mean()
    lam = np.linalg.eigvalsh(Xc.T @ Xc)          # eigenvalues of Xc^T Xc
    gamma = float(np.sum(beta * lam / (beta * lam + alpha)))
    # equivalently sum(lam_i / (lam_i + alpha/beta)); in MacKay's notation with
    # eigenvalues mu_i of beta*Xc^T Xc: gamma = sum(mu_i / (mu_i + alpha)).

    # ---- check the MacKay fixed point on the centred problem ----
    w = model.coef_
    resid = tc - Xc @ w
    sse = float(resid @ resid)
    alpha_fixed_point = gamma / float(w @ w)
    beta_fixed_point = (n - gamma) / sse

    # ---- log evidence recomputed (no hyper-prior terms) on the centred data ----
    # ln p(tc | alpha, beta) = d/2 ln alpha + N/2 ln beta - beta/2 ||tc - Xc w||^2
    #                          - alpha/2 w^T w - 1/2 ln det(alpha I + beta Xc^T Xc)
    #                          - N/2 ln(2 pi)
    log_ev = float(0.5 * (d * np.log(alpha) + n * np.log(beta) - beta * sse
                          - alpha * float(w @ w)
                          - np.sum(np.log(alpha + beta * lam))
                          - n * np.log(2 * np.pi)))
    score_last = float(model.scores_[-1])

    # ---- predictions ----
    rows = PRED_ROWS
    mean_s, sd_s = model.predict(Xs[rows], return_std=True)
    mean_o = (mean_s + 0.5) * t_range + t_min
    sd_o = sd_s * t_range

    # coefficients in original units (t = b0 + sum_j b_j x_j)
    coef_orig = w * t_range / (x_max - x_min)
    intercept_orig = (float(model.intercept_) + 0.5) * t_range + t_min \
        - float(np.sum(coef_orig * (x_min + 0.5 * (x_max - x_min))))

    noise_sd_scaled = 1.0 / np.sqrt(beta)
    out = {
        "source": {
            "script": SCRIPT,
            "generator": "scikit-learn BayesianRidge",
            "sklearn_version": sklearn.__version__,
            "numpy_version": np.__version__,
            "python_version": platform.python_version(),
            "date_utc": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
            "data": ("Diabetes data of Efron, Hastie, Johnstone & Tibshirani (2004), "
                     "'Least Angle Regression', Annals of Statistics 32(2), as shipped in "
                     "the Rust crate linfa-datasets 0.8.1 (data/diabetes_data.csv.gz, "
                     "data/diabetes_target.csv.gz). The features in that file are the "
                     "standardised version (as in sklearn.datasets.load_diabetes); "
                     "the target is the raw disease-progression measure."),
            "data_files": {
                "data": {"name": os.path.basename(data_path), "sha256": sha256(data_path)},
                "target": {"name": os.path.basename(target_path), "sha256": sha256(target_path)},
            },
            "data_format": "gzip CSV, comma-delimited, no header; 442 rows x 10 features; target 442 x 1",
            "n_samples": n,
            "n_features": d,
        },
        "naming_note": ("scikit-learn's alpha_ is the NOISE precision and lambda_ the WEIGHT "
                        "precision, the reverse of MacKay's alpha (weights) / beta (noise). "
                        "Here: noise_precision_scaled = sklearn alpha_ = MacKay beta; "
                        "weight_precision_scaled = sklearn lambda_ = MacKay alpha."),
        "sklearn_params": params,
        "n_iter": int(model.n_iter_),
        "scaling": {
            "formula": "x' = (x - min) / (max - min) - 0.5, per feature column and for the target",
            "feature_min": x_min.tolist(),
            "feature_max": x_max.tolist(),
            "target_min": t_min,
            "target_max": t_max,
        },
        "noise_precision_scaled": beta,
        "weight_precision_scaled": alpha,
        "noise_sd_scaled": float(noise_sd_scaled),
        "noise_sd_original": float(noise_sd_scaled * t_range),
        "coef_scaled": w.tolist(),
        "intercept_scaled": float(model.intercept_),
        "coef_original": coef_orig.tolist(),
        "intercept_original": float(intercept_orig),
        "gamma": gamma,
        "gamma_formula": ("gamma = sum_i beta*lam_i / (beta*lam_i + alpha) = sum_i lam_i / (lam_i + alpha/beta), "
                          "lam_i = eigenvalues of Xc^T Xc, Xc = scaled X with column means removed "
                          "(as sklearn does), alpha = weight precision (sklearn lambda_), "
                          "beta = noise precision (sklearn alpha_), both at their fitted values"),
        "fixed_point_check": {
            "note": ("MacKay updates evaluated at the fitted coefficients on the centred data: "
                     "alpha = gamma / w^T w, beta = (N - gamma) / ||tc - Xc w||^2 with N = 442 "
                     "(sklearn does not subtract a degree of freedom for the intercept)"),
            "weight_precision_from_update": alpha_fixed_point,
            "noise_precision_from_update": beta_fixed_point,
            "sse_scaled_centred": sse,
        },
        "log_marginal_likelihood": score_last,
        "log_marginal_likelihood_note": (
            "sklearn scores_[-1]: log marginal likelihood of the CENTRED scaled target given the "
            "centred scaled features (intercept not part of the model), N = 442, including "
            "sklearn's hyper-prior terms lambda_1*ln(lambda_) - lambda_2*lambda_ + "
            "alpha_1*ln(alpha_) - alpha_2*alpha_ (negligible here at 1e-12), with the "
            "-N/2 ln(2 pi) constant and no Gamma-normalising constants. In scaled units."),
        "log_evidence_recomputed": log_ev,
        "log_evidence_recomputed_note": (
            "Same quantity recomputed here without hyper-prior terms: d/2 ln alpha + N/2 ln beta "
            "- beta/2 ||tc - Xc w||^2 - alpha/2 w^T w - 1/2 ln det(alpha I + beta Xc^T Xc) "
            "- N/2 ln(2 pi), alpha = weight precision, beta = noise precision, scaled units. "
            "To express in original target units subtract N*ln(target_max - target_min)."),
        "predictions": {
            "note": ("predict(return_std=True) on the scaled training rows, mapped back: "
                     "mean = (mean' + 0.5) * (target_max - target_min) + target_min, "
                     "sd = sd' * (target_max - target_min). sd includes the noise variance "
                     "1/beta and the weight-posterior variance of the centred features; it "
                     "excludes any uncertainty in the intercept."),
            "rows": rows,
            "mean": mean_o.tolist(),
            "sd": sd_o.tolist(),
            "mean_scaled": mean_s.tolist(),
            "sd_scaled": sd_s.tolist(),
        },
    }

    os.makedirs(os.path.dirname(OUT_PATH), exist_ok=True)
    with open(OUT_PATH, "w") as f:
        json.dump(out, f, indent=2)
        f.write("\n")

    print(f"sklearn {sklearn.__version__}, numpy {np.__version__}, python {platform.python_version()}")
    print(f"data: {data_path}\n      {target_path}")
    print(f"converged in {model.n_iter_} iterations")
    print("(sklearn alpha_ = noise precision = MacKay beta; sklearn lambda_ = weight precision = MacKay alpha)")
    print(f"noise precision (scaled)  {beta:.10g}")
    print(f"weight precision (scaled) {alpha:.10g}")
    print(f"noise sd scaled {noise_sd_scaled:.10g}, original units {noise_sd_scaled * t_range:.10g}")
    print(f"gamma {gamma:.10g}")
    print(f"fixed-point check: alpha {alpha_fixed_point:.10g}, beta {beta_fixed_point:.10g}")
    print(f"log marginal likelihood (sklearn) {score_last:.10g}, recomputed {log_ev:.10g}")
    print(f"intercept scaled {float(model.intercept_):.10g}")
    for r, m, s in list(zip(rows, mean_o, sd_o))[:3]:
        print(f"row {r:3d}: mean {m:.6f} sd {s:.6f}  (target {t[r]:g})")
    print(f"wrote {OUT_PATH}")


if __name__ == "__main__":
    main()
