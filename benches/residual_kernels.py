#!/usr/bin/env python3
"""Diagnosis on training rows only (issue 29): which Gaussian process on the committee's
residuals would help the mean, judged by k-fold cross-validation inside the training part
of a standard UCI split (the folds of benches/inner_cv.py; test parts never read).

    python3 benches/residual_kernels.py --dataset concrete --outer 0 --folds 4

For each fold: `mettle train --kriging off` on the other folds (the committee alone), its
means on its own training rows (in-sample residuals r = t - committee mean, what mettle's
residual process is fitted to) and on the left-out fold. Then scikit-learn Gaussian
processes on r, inputs scaled to [-0.5, 0.5] over the fold's training rows (mettle's
scaling; age-like skewed inputs as mettle scaled them is not reproduced: raw linear scaling,
or --log-cols), target r in its own units, normalize_y=False:

  single:  C*RBF(ARD) + White          (the shape of mettle's process)
  sum:     C*RBF(ARD) + C*RBF(ARD) + White   (two correlated parts, each with its own
           length scales: e.g. a mix's offset shared over all ages plus a part that
           changes with age)

Printed: out-of-fold RMSE of the committee alone, of committee + each process mean, and of
mettle's default (auto kriging) when --with-default.
"""

import argparse
import json
import math
import os
import subprocess
import tempfile
from pathlib import Path

p = argparse.ArgumentParser()
p.add_argument("--dataset", required=True)
p.add_argument("--data-root", type=Path, default=Path("/work/shared/datasets/uci"))
p.add_argument("--outer", type=int, default=0)
p.add_argument("--folds", type=int, default=4)
p.add_argument("--log-cols", default="", help="comma-separated input names scaled by ln")
p.add_argument("--restarts", type=int, default=2)
p.add_argument("--mettle", type=Path,
               default=Path(os.environ.get("CARGO_TARGET_DIR", "")) / "release/mettle")
ARGS = p.parse_args()
for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "2"
import numpy as np  # noqa: E402
from sklearn.gaussian_process import GaussianProcessRegressor  # noqa: E402
from sklearn.gaussian_process.kernels import RBF, ConstantKernel as C, WhiteKernel  # noqa: E402

DATA = ARGS.data_root / ARGS.dataset
with open(DATA / "data.csv", encoding="utf-8") as f:
    HEADER = f.readline().strip().split(",")
DATA_ALL = np.loadtxt(DATA / "data.csv", delimiter=",", skiprows=1)
LOG = [HEADER.index(c) for c in ARGS.log_cols.split(",") if c]


def write_csv(path, rows):
    np.savetxt(path, rows, delimiter=",", header=",".join(HEADER), comments="", fmt="%.17g")


def mettle_means(model, rows, work):
    path = work / "p.csv"
    write_csv(path, rows)
    out = subprocess.run([ARGS.mettle, "predict", "--model", model, "--input", path,
                          "--format", "json"], check=True, capture_output=True, text=True)
    return np.array([r["estimates"][HEADER[-1]]["mean"] for r in json.loads(out.stdout)["rows"]])


def scale(xa, xb):
    xa, xb = xa.copy(), xb.copy()
    for j in LOG:
        xa[:, j], xb[:, j] = np.log(xa[:, j]), np.log(xb[:, j])
    lo, hi = xa.min(axis=0), xa.max(axis=0)
    w = np.where(hi > lo, hi - lo, 1.0)
    return (xa - lo) / w - 0.5, (xb - lo) / w - 0.5


def gp(kernel, xa, r, xb, seed):
    g = GaussianProcessRegressor(kernel, normalize_y=False, n_restarts_optimizer=ARGS.restarts,
                                 random_state=seed)
    g.fit(xa, r)
    return g.predict(xb), g.kernel_


def main():
    tr = np.loadtxt(DATA / f"splits/train_{ARGS.outer}.txt", dtype=int)
    fold = np.random.default_rng(1000 + ARGS.outer).permutation(len(tr)) % ARGS.folds
    y = DATA_ALL[tr, -1]
    d = DATA_ALL.shape[1] - 1
    preds = {k: np.empty(len(tr)) for k in ("committee", "single", "sum")}
    work = Path(tempfile.mkdtemp(prefix="mettle-resid-"))
    for f in range(ARGS.folds):
        a, b = DATA_ALL[tr[fold != f]], DATA_ALL[tr[fold == f]]
        write_csv(work / "tr.csv", a)
        model = work / "m.json"
        subprocess.run([ARGS.mettle, "train", "--data", work / "tr.csv", "--target", HEADER[-1],
                        "--out", model, "--quiet", "--kriging", "off"], check=True,
                       stderr=subprocess.DEVNULL, env=dict(os.environ, RAYON_NUM_THREADS="2"))
        ma, mb = mettle_means(model, a, work), mettle_means(model, b, work)
        r = a[:, -1] - ma
        xa, xb = scale(a[:, :-1], b[:, :-1])
        v = float(np.var(r))
        single = C(v / 2, (1e-4 * v, 10 * v)) * RBF(np.full(d, 0.3), (1e-2, 1e2)) \
            + WhiteKernel(v / 2, (1e-4 * v, 10 * v))
        two = C(v / 4, (1e-4 * v, 10 * v)) * RBF(np.full(d, 0.3), (1e-2, 1e2)) \
            + C(v / 4, (1e-4 * v, 10 * v)) * RBF(np.full(d, 3.0), (1e-2, 1e2)) \
            + WhiteKernel(v / 2, (1e-4 * v, 10 * v))
        sel = fold == f
        preds["committee"][sel] = mb
        ps, ks = gp(single, xa, r, xb, f)
        pt, kt = gp(two, xa, r, xb, f)
        preds["single"][sel] = mb + ps
        preds["sum"][sel] = mb + pt
        rm = {k: math.sqrt(np.mean((b[:, -1] - v_[sel]) ** 2)) for k, v_ in preds.items()}
        print(f"{ARGS.dataset} outer {ARGS.outer} fold {f}: in-sample residual sd "
              f"{np.std(r):.3f}; fold RMSE " + " ".join(f"{k} {v_:.4f}" for k, v_ in rm.items()),
              flush=True)
        print(f"  single: {ks}\n  sum: {kt}", flush=True)
    for k, v_ in preds.items():
        print(f"{ARGS.dataset} outer {ARGS.outer} {k}: CV RMSE {math.sqrt(np.mean((y - v_) ** 2)):.4f}")
    np.savetxt(f"/tmp/acc-resid-{ARGS.dataset}-{ARGS.outer}.csv",
               np.column_stack([tr, y] + [preds[k] for k in preds]), delimiter=",",
               header="row,y," + ",".join(preds), comments="")


main()
