#!/usr/bin/env python3
"""mettle's default committee, scikit-learn's ARD Gaussian process and an ensemble of
scikit-learn MLPs, trained one after the other in one run on the same UCI concrete splits.

Run by hand (not part of `make test`; a full run takes about an hour on 2 cores):

    pip install scikit-learn
    cargo build --release --locked
    python3 benches/side_by_side.py --markdown /tmp/side_by_side.md          # 20 splits
    python3 benches/side_by_side.py --splits 2                              # a quick look

Options: --data-dir DIR (default: $METTLE_SHARED/datasets/uci/concrete, else
/work/shared/datasets/uci/concrete, else ../shared/datasets/uci/concrete from the repository
root), --mettle PATH (default: $CARGO_TARGET_DIR/release/mettle, else
~/.cache/mettle/target/release/mettle), --splits N, --first-split K, --threads T (default 2),
--gp-restarts R (default 2), --mlp-members M (default 5), --markdown FILE, --keep DIR.

Run with (the versions of the published table): Python 3.11.7, scikit-learn 1.9.1,
numpy 2.4.6 (OpenBLAS 0.3.31), scipy 1.17.1.

What it measures. The data are data.csv (header row; target = last column) and the 20
standard 90/10 splits (splits/train_K.txt, splits/test_K.txt: 0-based row indices). On each
split, in this order:

  a. mettle: the release binary with default settings,
     `mettle train --data train.csv --target <col> --out m.json --quiet`, timed as the wall time
     of that process; then `mettle predict` on the test part (mean and sd per row), scored by
     the code below, and `mettle evaluate --format json`, whose rmse / nlpd / coverages must
     agree with that scoring (a check of the scoring code; the run stops if they differ).
  b. GaussianProcessRegressor, kernel ConstantKernel * RBF(length_scale=ones(d)) + WhiteKernel
     (one length scale per input: ARD), normalize_y=True, inputs standardised with the mean
     and sd of the training part, n_restarts_optimizer=--gp-restarts, random_state=split.
     Timed: fit(). Predictive sd from predict(return_std=True), which includes the fitted
     white-noise level (the kernel's diagonal), in the target's units.
  c. An ensemble of --mlp-members MLPRegressor (one hidden layer of 50 ReLU units, adam,
     early_stopping=True, max_iter=2000, random_state differing per member), inputs and
     target standardised on the training part. A plain baseline, not a published method:
     the training part is cut into M folds (seeded) and member k is trained on every fold
     but k, so each training row is predicted by exactly one member that did not see it.
     Predictive mean = mean of the M members; predictive variance = variance of the M
     members' predictions (ddof 0) + a noise variance, the mean squared out-of-fold residual.
     Timed: the M fits plus the noise estimate. Members are fitted one after the other.

Scores on the test part only: RMSE, test log-likelihood LL = mean log N(y | mean, sd^2)
(natural log, target in its own units; LL = -NLPD), and the share of test rows inside
mean ± 1 sd and mean ± 2 sd. The table gives mean ± standard error over the splits, the
median fit time per method and the ratios of median fit times GP / mettle and
MLP ensemble / mettle (and the median of the per-split ratios), both in wall time and in
CPU time (user + system of all threads; for mettle, of the child process). On a machine
shared with other jobs the CPU ratio is the steadier of the two: a process with two busy
threads gets a larger share of a loaded machine than one with one busy thread.

Thread budget: every method gets the same T threads (default 2 = the cores of the build
machine). mettle: RAYON_NUM_THREADS=T (it fixes its own OpenBLAS at 1 thread; its
parallelism is candidate networks on rayon threads). scikit-learn: OPENBLAS_NUM_THREADS =
OMP_NUM_THREADS = MKL_NUM_THREADS = T, set before numpy is imported and enforced with
threadpoolctl; the GP's Cholesky and gradient products and the MLPs' matrix products use
those BLAS threads. The load average is printed at the start, after every split and at the
end: the machine may be shared.
"""

import argparse
import json
import math
import os
import platform
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent


def parse_args():
    p = argparse.ArgumentParser(
        description="mettle vs scikit-learn ARD GP vs MLP ensemble on UCI concrete, side by side.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=__doc__.split("What it measures.")[1] if __doc__ else None,
    )
    p.add_argument("--data-dir", type=Path, default=None, help="folder with data.csv and splits/")
    p.add_argument("--mettle", type=Path, default=None, help="the mettle release binary")
    p.add_argument("--splits", type=int, default=20, help="number of splits (default 20)")
    p.add_argument("--first-split", type=int, default=0, help="first split index (default 0)")
    p.add_argument("--threads", type=int, default=2, help="threads for every method (default 2)")
    p.add_argument("--gp-restarts", type=int, default=2, help="GP optimiser restarts (default 2)")
    p.add_argument("--mlp-members", type=int, default=5, help="MLPs in the ensemble (default 5)")
    p.add_argument("--mlp-hidden", type=int, default=50, help="hidden units per MLP (default 50)")
    p.add_argument("--markdown", type=Path, default=None, help="write the table here as well")
    p.add_argument("--keep", type=Path, default=None, help="keep split CSVs and models here")
    p.add_argument(
        "--max-minutes",
        type=float,
        default=None,
        help="start no new split when it would likely end after this many minutes; "
        "the table then covers the splits done (and says how many)",
    )
    return p.parse_args()


ARGS = parse_args()
# The BLAS thread count is read when numpy loads, so it is set before the import.
for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = str(ARGS.threads)

import numpy as np  # noqa: E402
import scipy  # noqa: E402
import sklearn  # noqa: E402
from sklearn.gaussian_process import GaussianProcessRegressor  # noqa: E402
from sklearn.gaussian_process.kernels import RBF, ConstantKernel, WhiteKernel  # noqa: E402
from sklearn.neural_network import MLPRegressor  # noqa: E402
from threadpoolctl import threadpool_info, threadpool_limits  # noqa: E402


def find_data_dir(given):
    if given is not None:
        return given
    candidates = []
    if os.environ.get("METTLE_SHARED"):
        candidates.append(Path(os.environ["METTLE_SHARED"]) / "datasets/uci/concrete")
    candidates += [
        Path("/work/shared/datasets/uci/concrete"),
        REPO.parent / "shared/datasets/uci/concrete",
    ]
    for c in candidates:
        if (c / "data.csv").is_file():
            return c
    sys.exit("concrete data not found; tried " + ", ".join(map(str, candidates)))


def find_mettle(given):
    if given is not None:
        path = given
    elif os.environ.get("CARGO_TARGET_DIR"):
        path = Path(os.environ["CARGO_TARGET_DIR"]) / "release/mettle"
    else:
        path = Path.home() / ".cache/mettle/target/release/mettle"
    if not os.access(path, os.X_OK):
        sys.exit(f"{path}: no mettle binary (cargo build --release --locked, or --mettle PATH)")
    return path


def read_csv(path):
    with open(path, encoding="utf-8") as f:
        header = f.readline().strip().split(",")
    return header, np.loadtxt(path, delimiter=",", skiprows=1, ndmin=2)


def write_csv(path, header, rows):
    np.savetxt(path, rows, delimiter=",", header=",".join(header), comments="", fmt="%.17g")


def scores(y, mean, sd):
    """RMSE, mean log N(y | mean, sd^2), coverage of ±1 sd and ±2 sd."""
    r = y - mean
    var = sd * sd
    ll = -0.5 * np.log(2.0 * math.pi * var) - r * r / (2.0 * var)
    z = np.abs(r) / sd
    return {
        "rmse": float(np.sqrt(np.mean(r * r))),
        "ll": float(np.mean(ll)),
        "cov68": float(np.mean(z <= 1.0)),
        "cov95": float(np.mean(z <= 2.0)),
    }


class Clock:
    """Wall time and CPU time (user + system, all threads) of a block; with children=True the
    CPU time is that of child processes waited for in the block (the mettle binary)."""

    def __init__(self, children=False):
        self.children = children

    def cpu(self):
        if self.children:
            r = resource.getrusage(resource.RUSAGE_CHILDREN)
            return r.ru_utime + r.ru_stime
        return time.process_time()

    def __enter__(self):
        self.wall0, self.cpu0 = time.perf_counter(), self.cpu()
        return self

    def __exit__(self, *exc):
        self.times = (time.perf_counter() - self.wall0, self.cpu() - self.cpu0)


def run(cmd, env):
    p = subprocess.run(cmd, env=env, capture_output=True, text=True)
    if p.returncode != 0:
        sys.exit(f"{' '.join(map(str, cmd))} failed ({p.returncode}):\n{p.stderr}")
    return p.stdout


def fit_mettle(binary, work, header, train, test, threads):
    target = header[-1]
    train_csv, test_csv, model = work / "train.csv", work / "test.csv", work / "m.json"
    write_csv(train_csv, header, train)
    write_csv(test_csv, header, test)
    env = dict(os.environ, RAYON_NUM_THREADS=str(threads))
    with Clock(children=True) as clock:
        run([binary, "train", "--data", train_csv, "--target", target, "--out", model, "--quiet"], env)
    rows = json.loads(
        run([binary, "predict", "--model", model, "--input", test_csv, "--format", "json"], env)
    )
    mean = np.array([r["mean"] for r in rows])
    sd = np.array([r["sd"] for r in rows])
    s = scores(test[:, -1], mean, sd)
    ev = json.loads(
        run([binary, "evaluate", "--model", model, "--data", test_csv, "--format", "json"], env)
    )
    for ours, theirs, sign in (("rmse", "rmse", 1), ("ll", "nlpd", -1),
                               ("cov68", "coverage_68", 1), ("cov95", "coverage_95", 1)):
        if abs(s[ours] - sign * ev[theirs]) > 1e-6 * max(1.0, abs(ev[theirs])):
            sys.exit(f"scoring disagrees with mettle evaluate: {ours} {s[ours]} vs {theirs} {ev[theirs]}")
    return s, clock.times


def standardise(train_x, test_x):
    mu, sd = train_x.mean(axis=0), train_x.std(axis=0)
    sd[sd == 0] = 1.0
    return (train_x - mu) / sd, (test_x - mu) / sd


def fit_gp(train, test, restarts, seed):
    xtr, xte = standardise(train[:, :-1], test[:, :-1])
    d = xtr.shape[1]
    kernel = ConstantKernel(1.0, (1e-3, 1e3)) * RBF(np.ones(d), (1e-2, 1e3)) + WhiteKernel(
        0.1, (1e-6, 1.0)
    )
    gp = GaussianProcessRegressor(
        kernel, normalize_y=True, n_restarts_optimizer=restarts, random_state=seed
    )
    with Clock() as clock:
        gp.fit(xtr, train[:, -1])
    mean, sd = gp.predict(xte, return_std=True)
    return scores(test[:, -1], mean, sd), clock.times, gp.kernel_


def fit_mlp_ensemble(train, test, members, hidden, seed):
    xtr, xte = standardise(train[:, :-1], test[:, :-1])
    ytr = train[:, -1]
    ymu, ysd = ytr.mean(), ytr.std()
    ztr = (ytr - ymu) / ysd
    n = len(ztr)
    folds = np.random.default_rng(seed).permutation(n) % members
    with Clock() as clock:
        nets, oof = [], np.empty(n)
        for k in range(members):
            net = MLPRegressor(
                hidden_layer_sizes=(hidden,),
                activation="relu",
                solver="adam",
                early_stopping=True,
                max_iter=2000,
                random_state=1000 * seed + k,
            )
            net.fit(xtr[folds != k], ztr[folds != k])
            oof[folds == k] = net.predict(xtr[folds == k])
            nets.append(net)
        noise_var = float(np.mean((ztr - oof) ** 2))
    preds = np.stack([net.predict(xte) for net in nets])
    mean = ymu + ysd * preds.mean(axis=0)
    sd = ysd * np.sqrt(preds.var(axis=0) + noise_var)
    return scores(test[:, -1], mean, sd), clock.times


def mean_se(v):
    v = np.asarray(v, dtype=float)
    se = v.std(ddof=1) / math.sqrt(len(v)) if len(v) > 1 else float("nan")
    return v.mean(), se


def loadavg():
    return "load average %.2f %.2f %.2f" % os.getloadavg()


def main():
    data_dir = find_data_dir(ARGS.data_dir)
    binary = find_mettle(ARGS.mettle)
    header, data = read_csv(data_dir / "data.csv")
    version = run([binary, "--version"], dict(os.environ)).strip()
    blas = [(i["internal_api"], i["version"], i["num_threads"]) for i in threadpool_info()]
    print(f"data {data_dir} ({data.shape[0]} rows, {data.shape[1] - 1} inputs, target {header[-1]})")
    print(f"{version} at {binary}")
    print(
        f"Python {platform.python_version()}, scikit-learn {sklearn.__version__}, "
        f"numpy {np.__version__}, scipy {scipy.__version__}, BLAS {blas}"
    )
    print(f"threads {ARGS.threads}, GP restarts {ARGS.gp_restarts}, "
          f"MLP ensemble {ARGS.mlp_members} x {ARGS.mlp_hidden} ReLU")
    print(f"start {time.strftime('%Y-%m-%d %H:%M:%S UTC', time.gmtime())}, {loadavg()}")
    work = ARGS.keep or Path(tempfile.mkdtemp(prefix="mettle-side-by-side-"))
    work.mkdir(parents=True, exist_ok=True)
    results = {"mettle": [], "gp": [], "mlp": []}
    splits = range(ARGS.first_split, ARGS.first_split + ARGS.splits)
    started, done = time.perf_counter(), 0
    with threadpool_limits(limits=ARGS.threads):
        for k in splits:
            elapsed = time.perf_counter() - started
            if ARGS.max_minutes is not None and done > 0:
                if elapsed * (done + 1) / done > 60.0 * ARGS.max_minutes:
                    print(f"stopping after {done} splits: --max-minutes {ARGS.max_minutes}")
                    break
            tr = np.loadtxt(data_dir / f"splits/train_{k}.txt", dtype=int)
            te = np.loadtxt(data_dir / f"splits/test_{k}.txt", dtype=int)
            train, test = data[tr], data[te]
            sw = work / f"split_{k}"
            sw.mkdir(exist_ok=True)
            s, t = fit_mettle(binary, sw, header, train, test, ARGS.threads)
            results["mettle"].append((s, t))
            s, t, kern = fit_gp(train, test, ARGS.gp_restarts, k)
            results["gp"].append((s, t))
            s, t = fit_mlp_ensemble(train, test, ARGS.mlp_members, ARGS.mlp_hidden, k)
            results["mlp"].append((s, t))
            line = " | ".join(
                f"{m} rmse {r[-1][0]['rmse']:.3f} ll {r[-1][0]['ll']:.3f} "
                f"{r[-1][1][0]:.1f} s ({r[-1][1][1]:.1f} s CPU)"
                for m, r in results.items()
            )
            print(f"split {k}: {line} | {loadavg()}", flush=True)
            print(f"  GP kernel: {kern}", flush=True)
            done += 1
    print(f"end {time.strftime('%Y-%m-%d %H:%M:%S UTC', time.gmtime())}, {loadavg()}")
    if ARGS.keep is None:
        shutil.rmtree(work)
    table = markdown(results, done)
    print(table)
    if ARGS.markdown:
        ARGS.markdown.write_text(table, encoding="utf-8")


def markdown(results, n):
    names = {
        "mettle": "mettle (default committee)",
        "gp": f"scikit-learn GP, ARD RBF + white noise ({ARGS.gp_restarts} restarts)",
        "mlp": f"{ARGS.mlp_members} scikit-learn MLPs ({ARGS.mlp_hidden} ReLU), cross-fitted noise",
    }
    def med(m, i):
        return float(np.median([t[i] for _, t in results[m]]))

    def ratio(m, i):
        if m == "mettle":
            return "1"
        per_split = [t[i] / tm[i] for (_, t), (_, tm) in zip(results[m], results["mettle"])]
        return f"{med(m, i) / med('mettle', i):.2f} ({np.median(per_split):.2f})"

    out = [
        f"Concrete, {n} splits ({ARGS.first_split}..{ARGS.first_split + n - 1}), "
        f"{ARGS.threads} threads per method; mean ± SE over splits.",
        "",
        "| method | RMSE (MPa) | test LL | coverage ±1 sd | coverage ±2 sd "
        "| median fit wall s | wall / mettle's | median fit CPU s | CPU / mettle's |",
        "|---|---|---|---|---|---|---|---|---|",
    ]
    for m, r in results.items():
        cells = []
        for key in ("rmse", "ll", "cov68", "cov95"):
            mu, se = mean_se([s[key] for s, _ in r])
            cells.append(f"{mu:.3f} ± {se:.3f}")
        cells += [f"{med(m, 0):.1f}", ratio(m, 0), f"{med(m, 1):.1f}", ratio(m, 1)]
        out.append(f"| {names[m]} | " + " | ".join(cells) + " |")
    out += [
        "",
        "Ratios: median fit time of the method / median fit time of mettle; in brackets the "
        "median over splits of the per-split ratio. CPU = user + system time of all threads.",
    ]
    wins = {
        m: sum(s["ll"] < sm["ll"] for (s, _), (sm, _) in zip(results[m], results["mettle"]))
        for m in ("gp", "mlp")
    }
    out += [
        "",
        f"Splits where mettle's test LL is higher: {wins['gp']} / {n} against the GP, "
        f"{wins['mlp']} / {n} against the MLP ensemble.",
        "",
    ]
    return "\n".join(out)


if __name__ == "__main__":
    main()
