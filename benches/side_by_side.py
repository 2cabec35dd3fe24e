#!/usr/bin/env python3
"""mettle's default committee, scikit-learn's ARD Gaussian process, an ensemble of
scikit-learn MLPs and CatBoost's gradient-boosted trees, trained one after the other in one
run on the same standard UCI splits (concrete, energy, yacht, red wine).

Run by hand (not part of `make test`; all four methods on the 20 concrete splits take about
an hour on 2 cores, mettle alone on the 20 splits of all four sets about half an hour):

    ~/.cache/mettle/venv/bin/pip install scikit-learn catboost
    cargo build --release --locked
    python3 benches/side_by_side.py --markdown /tmp/side_by_side.md          # concrete, 20 splits
    python3 benches/side_by_side.py --datasets concrete,energy,yacht,wine-quality-red \
        --methods mettle,catboost --markdown /tmp/side_by_side.md            # issue 29's table
    python3 benches/side_by_side.py --splits 2                              # a quick look
    python3 benches/side_by_side.py --datasets energy \
        --methods mettle,mettle-schema,catboost,catboost-cat \
        --schema energy=benches/schemas/energy.toml --markdown /tmp/energy-schema.md
                                         # energy's glazing code declared, beside the plain runs
    python3 benches/side_by_side.py --datasets concrete,energy,yacht,wine-quality-red \
        --methods mettle,mettle-schema,catboost,catboost-cat \
        --schema energy=benches/schemas/energy.toml --mettle-args "--partitions 2"
                                         # the schema rows only on energy; options for mettle

Options: --datasets A,B,... (default concrete; any of concrete, energy, yacht,
wine-quality-red), --methods A,B,... (default mettle,gp,mlp,catboost; a run can leave out
slow ones; also mettle-schema and catboost-cat, see e. and f.), --schema DATASET=PATH
(repeatable: a schema for that data set, used by mettle-schema and catboost-cat; on a set
without one those two methods are skipped, so one run can mix sets with and without a
schema), --mettle-args "ARGS" (extra `mettle train` options, one quoted string, given to
both mettle rows and printed in every table's heading and row name; a single option without
a space is written --mettle-args=--OPTION), --data-root DIR (the folder holding one folder
per data set; default: $METTLE_SHARED/datasets/uci, else /work/shared/datasets/uci, else
../shared/datasets/uci from the repository root), --mettle PATH (default: $CARGO_TARGET_DIR/release/mettle, else
~/.cache/mettle/target/release/mettle), --splits N, --first-split K, --threads T (default 2),
--gp-restarts R (default 2), --mlp-members M (default 5), --markdown FILE, --keep DIR,
--max-minutes M (per data set).

Run with (the versions of the published tables): Python 3.11.7, scikit-learn 1.9.1,
numpy 2.4.6 (OpenBLAS 0.3.31), scipy 1.17.1, catboost 1.2.10, pandas 3.1.1 (catboost-cat only).

What it measures. Each data set is a folder NAME/ under the data root holding data.csv
(header row; target = last column) and the 20 standard 90/10 splits (splits/train_K.txt, splits/test_K.txt: 0-based row indices). On each
split, in this order:

  a. mettle: the release binary with default settings,
     `mettle train --data train.csv --target <col> --out m.json --quiet` (its default seed 0 on
     every split; with --mettle-seed-by-split, --seed K on split K), timed as the wall time
     of that process; then `mettle predict` on the test part (the mean per row) and
     `mettle evaluate --format json`. RMSE from predict's means, which must agree with
     evaluate's rmse (the run stops if they differ); LL = -nlpd and the coverages
     (coverage_68, coverage_95) are evaluate's, because mettle's predictive density is its
     own: the default lets the held-out part inside the training rows choose a Student-t
     shape and a share of gross errors, and the coverages count its central 68 % and 95 %
     intervals as predict prints them (lo95, hi95), not mean ± 1 or 2 sd.
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
  d. CatBoostRegressor with its default settings except loss_function="RMSEWithUncertainty"
     (a second output per row, the log of the noise variance, learnt jointly with the mean),
     random_seed=split, thread_count=T, verbose=False; raw inputs, raw target. Timed: fit().
     predict(prediction_type="RMSEWithUncertainty") returns per row the mean and the variance
     (a variance since catboost 0.24.2, release notes: "now it predicts variance, not standard
     deviation"); sd = sqrt(variance). This is the data (noise) variance alone: CatBoost's
     default model has no knowledge-uncertainty term (that needs posterior sampling and a
     virtual ensemble, not default settings).
  e. mettle-schema (only on a set given a --schema): as a., trained with
     `mettle train --schema PATH` (and the same --mettle-args); the model keeps a copy of the
     schema, and predict and evaluate read the test table through it, so they take no schema.
     The schema must name the data set's last column as its only target. Its row is
     "mettle (..., schema NAME)". benches/schemas/energy.toml declares energy's glazing area
     distribution a code (kind = "levels", docs/schema.md "Codes"): a declaration of what
     the column is, the user's knowledge of the data, not a setting tuned on these splits.
  f. catboost-cat (only on a set given a --schema): as d., with cat_features = the columns
     the schema declares `kind = "levels"` (given as integers), every other setting CatBoost's
     default, so both methods are told the same thing about the data. With its defaults
     CatBoost one-hot encodes a categorical input only up to one_hot_max_size = 2 levels
     (get_all_params() of catboost 1.2.10 on CPU); a code with more levels becomes its
     ordered target statistics (CTRs).

Scores on the test part only: RMSE, test log-likelihood LL = mean log N(y | mean, sd^2)
(natural log, target in its own units; LL = -NLPD), and the share of test rows inside
mean ± 1 sd and mean ± 2 sd (for mettle: its own density and central intervals, see a.). The table gives mean ± standard error over the splits, the
median fit time per method and the ratios of median fit times method / mettle
(and the median of the per-split ratios), both in wall time and in CPU time (user + system
of all threads; for mettle, of the child process). Under it, paired differences over the
splits (A − B, mean ± paired SE; for RMSE and test LL also on how many splits A is ahead)
in RMSE, test LL and both coverages:
every method against mettle, and with a schema, mettle with it against CatBoost and against
CatBoost with cat_features, and CatBoost with cat_features against plain CatBoost. On a machine
shared with other jobs the CPU ratio is the steadier of the two: a process with two busy
threads gets a larger share of a loaded machine than one with one busy thread.

Thread budget: every method gets the same T threads (default 2 = the cores of the build
machine). mettle: RAYON_NUM_THREADS=T (it fixes its own OpenBLAS at 1 thread; its
parallelism is candidate networks on rayon threads). scikit-learn: OPENBLAS_NUM_THREADS =
OMP_NUM_THREADS = MKL_NUM_THREADS = T, set before numpy is imported and enforced with
threadpoolctl; the GP's Cholesky and gradient products and the MLPs' matrix products use
those BLAS threads. CatBoost: thread_count=T. The load average is printed at the start, after every split and at the
end: the machine may be shared.
"""

import argparse
import json
import math
import os
import platform
import resource
import shlex
import shutil
import subprocess
import sys
import tempfile
import time
import tomllib
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent


DATASETS = ("concrete", "energy", "yacht", "wine-quality-red")
METHODS = ("mettle", "mettle-schema", "gp", "mlp", "catboost", "catboost-cat")
DEFAULT_METHODS = ("mettle", "gp", "mlp", "catboost")
# methods that need a data set's --schema; skipped on a set without one
SCHEMA_METHODS = ("mettle-schema", "catboost-cat")


def parse_args():
    p = argparse.ArgumentParser(
        description="mettle vs an ARD GP vs an MLP ensemble vs CatBoost on UCI sets, side by side.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=__doc__.split("What it measures.")[1] if __doc__ else None,
    )
    p.add_argument("--datasets", default="concrete",
                   help="comma-separated data sets (default concrete): " + ",".join(DATASETS))
    p.add_argument("--methods", default=",".join(DEFAULT_METHODS),
                   help="comma-separated methods (default " + ",".join(DEFAULT_METHODS)
                   + "): any of " + ",".join(METHODS))
    p.add_argument("--data-root", type=Path, default=None,
                   help="folder with one folder per data set (data.csv and splits/)")
    p.add_argument("--mettle", type=Path, default=None, help="the mettle release binary")
    p.add_argument("--mettle-args", default="",
                   help="extra `mettle train` options for mettle and mettle-schema, one "
                   "quoted string (e.g. \"--partitions 2\"); printed in each table's heading")
    p.add_argument("--schema", action="append", default=[], metavar="DATASET=PATH",
                   help="a schema (TOML) for one data set, repeatable; used by the methods "
                   "mettle-schema and catboost-cat, which are skipped on sets without one")
    p.add_argument("--mettle-seed-by-split", action="store_true",
                   help="train mettle on split k with --seed k, as examples/uci_benchmark.rs "
                   "does and as CatBoost's random_seed already is (default: mettle's default "
                   "seed 0 on every split, as every side-by-side table of docs/benchmarks.md "
                   "before the ninth round); on concrete the 20-split mean moves by about 0.07 "
                   "with the seeds")
    p.add_argument("--splits", type=int, default=20, help="number of splits (default 20)")
    p.add_argument("--first-split", type=int, default=0, help="first split index (default 0)")
    p.add_argument("--threads", type=int, default=2, help="threads for every method (default 2)")
    p.add_argument("--gp-restarts", type=int, default=2, help="GP optimiser restarts (default 2)")
    p.add_argument("--mlp-members", type=int, default=5, help="MLPs in the ensemble (default 5)")
    p.add_argument("--mlp-hidden", type=int, default=50, help="hidden units per MLP (default 50)")
    p.add_argument("--markdown", type=Path, default=None, help="write the tables here as well")
    p.add_argument("--keep", type=Path, default=None, help="keep split CSVs and models here")
    p.add_argument(
        "--max-minutes",
        type=float,
        default=None,
        help="per data set: start no new split when it would likely end after this many "
        "minutes; the table then covers the splits done (and says how many)",
    )
    args = p.parse_args()
    args.datasets = [d for d in args.datasets.split(",") if d]
    args.methods = [m for m in args.methods.split(",") if m]
    for d in args.datasets:
        if d not in DATASETS:
            p.error(f"unknown data set {d!r}; known: {', '.join(DATASETS)}")
    for m in args.methods:
        if m not in METHODS:
            p.error(f"unknown method {m!r}; known: {', '.join(METHODS)}")
    # table order is the canonical order, whatever order was asked for
    args.methods = [m for m in METHODS if m in args.methods]
    args.mettle_args = shlex.split(args.mettle_args)
    if args.mettle_seed_by_split and any(a == "--seed" or a.startswith("--seed=")
                                         for a in args.mettle_args):
        p.error("--mettle-seed-by-split gives each split its own --seed; leave --seed out of "
                "--mettle-args")
    schemas = {}
    for s in args.schema:
        name, sep, path = s.partition("=")
        if not sep or not path:
            p.error(f"--schema {s!r}: expected DATASET=PATH")
        if name not in DATASETS:
            p.error(f"--schema {s!r}: unknown data set {name!r}; known: {', '.join(DATASETS)}")
        if name in schemas:
            p.error(f"--schema given twice for {name}")
        path = Path(path).resolve()
        if not path.is_file():
            p.error(f"--schema {s!r}: {path} is not a file")
        schemas[name] = path
    args.schema = schemas
    if any(m in SCHEMA_METHODS for m in args.methods) and not schemas:
        p.error("methods " + ", ".join(SCHEMA_METHODS) + " need --schema DATASET=PATH")
    return args


ARGS = parse_args()
# The BLAS thread count is read when numpy loads, so it is set before the import.
for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = str(ARGS.threads)

import numpy as np  # noqa: E402
import scipy  # noqa: E402
from threadpoolctl import threadpool_info, threadpool_limits  # noqa: E402

if "gp" in ARGS.methods or "mlp" in ARGS.methods:
    import sklearn  # noqa: E402
    from sklearn.gaussian_process import GaussianProcessRegressor  # noqa: E402
    from sklearn.gaussian_process.kernels import RBF, ConstantKernel, WhiteKernel  # noqa: E402
    from sklearn.neural_network import MLPRegressor  # noqa: E402
if "catboost" in ARGS.methods or "catboost-cat" in ARGS.methods:
    import catboost  # noqa: E402
if "catboost-cat" in ARGS.methods:
    import pandas  # noqa: E402


def find_data_root(given):
    if given is not None:
        return given
    candidates = []
    if os.environ.get("METTLE_SHARED"):
        candidates.append(Path(os.environ["METTLE_SHARED"]) / "datasets/uci")
    candidates += [Path("/work/shared/datasets/uci"), REPO.parent / "shared/datasets/uci"]
    for c in candidates:
        if (c / "concrete/data.csv").is_file():
            return c
    sys.exit("UCI data not found; tried " + ", ".join(map(str, candidates)))


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


def read_schema(path, header):
    """The columns a schema declares as codes (kind = "levels"), after checking that its
    target is the data set's target (the last column) and that every code is a column."""
    with open(path, "rb") as f:
        schema = tomllib.load(f)
    columns = schema.get("column", [])
    targets = [c["name"] for c in columns if c.get("role") == "target"]
    if targets != [header[-1]]:
        sys.exit(f"{path}: its targets {targets} are not the data set's target [{header[-1]!r}]")
    codes = [c["name"] for c in columns if c.get("kind") == "levels"]
    for c in codes:
        if c not in header[:-1]:
            sys.exit(f"{path}: code column {c!r} is not an input of the data set ({header})")
    return codes


def fit_mettle(binary, work, header, train, test, threads, extra, schema=None):
    """mettle train (with `extra` options; with --schema when a schema is given), predict and
    evaluate on one split. A model trained with a schema keeps a copy of it, and predict and
    evaluate read the test table through it (docs/schema.md), so they take no schema."""
    target = header[-1]
    train_csv, test_csv, model = work / "train.csv", work / "test.csv", work / "m.json"
    write_csv(train_csv, header, train)
    write_csv(test_csv, header, test)
    env = dict(os.environ, RAYON_NUM_THREADS=str(threads))
    cmd = [binary, "train", "--data", train_csv, "--target", target, "--out", model, "--quiet"]
    if schema is not None:
        cmd += ["--schema", schema]
    with Clock(children=True) as clock:
        run(cmd + extra, env)
    out = json.loads(
        run([binary, "predict", "--model", model, "--input", test_csv, "--format", "json"], env)
    )
    mean = np.array([r["estimates"][target]["mean"] for r in out["rows"]])
    ev = json.loads(
        run([binary, "evaluate", "--model", model, "--data", test_csv, "--format", "json"], env)
    )
    rmse = float(np.sqrt(np.mean((test[:, -1] - mean) ** 2)))
    if abs(rmse - ev["rmse"]) > 1e-6 * max(1.0, ev["rmse"]):
        sys.exit(f"scoring disagrees with mettle evaluate: rmse {rmse} vs {ev['rmse']}")
    # mettle's predictive density is its own (a Student-t shape and a share of gross
    # errors when the held-out part chose them): LL and coverages are evaluate's
    s = {"rmse": rmse, "ll": -ev["nlpd"], "cov68": ev["coverage_68"],
         "cov95": ev["coverage_95"]}
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


def catboost_frame(x, names, codes):
    """The inputs as a table whose code columns hold integers (CatBoost refuses a
    categorical feature given as a real number)."""
    frame = pandas.DataFrame(x, columns=names)
    for c in codes:
        col = frame[c].to_numpy()
        if not np.all(col == np.round(col)):
            sys.exit(f"code column {c!r} holds a value that is not a whole number")
        frame[c] = col.astype(np.int64)
    return frame


def fit_catboost(train, test, seed, threads, names=None, codes=()):
    """CatBoost with default settings (RMSEWithUncertainty); with `codes`, those input
    columns are given as cat_features (CatBoost's own handling of categorical inputs, its
    defaults), every other setting the same."""
    model = catboost.CatBoostRegressor(
        loss_function="RMSEWithUncertainty",
        random_seed=seed,
        thread_count=threads,
        verbose=False,
        allow_writing_files=False,
        cat_features=list(codes) if codes else None,
    )
    xtr, xte = train[:, :-1], test[:, :-1]
    if codes:
        xtr, xte = catboost_frame(xtr, names, codes), catboost_frame(xte, names, codes)
    with Clock() as clock:
        model.fit(xtr, train[:, -1])
    pred = np.asarray(model.predict(xte, prediction_type="RMSEWithUncertainty"))
    mean, var = pred[:, 0], pred[:, 1]
    return scores(test[:, -1], mean, np.sqrt(var)), clock.times


def mean_se(v):
    v = np.asarray(v, dtype=float)
    se = v.std(ddof=1) / math.sqrt(len(v)) if len(v) > 1 else float("nan")
    return v.mean(), se


def loadavg():
    return "load average %.2f %.2f %.2f" % os.getloadavg()


def versions():
    parts = [f"Python {platform.python_version()}", f"numpy {np.__version__}",
             f"scipy {scipy.__version__}"]
    if "gp" in ARGS.methods or "mlp" in ARGS.methods:
        parts.append(f"scikit-learn {sklearn.__version__}")
    if "catboost" in ARGS.methods or "catboost-cat" in ARGS.methods:
        parts.append(f"catboost {catboost.__version__}")
    if "catboost-cat" in ARGS.methods:
        parts.append(f"pandas {pandas.__version__}")
    blas = [(i["internal_api"], i["version"], i["num_threads"]) for i in threadpool_info()]
    return ", ".join(parts) + f", BLAS {blas}"


def run_dataset(name, data_dir, binary, work):
    """Every asked-for method on the splits of one data set; {method: [(scores, times)]}."""
    header, data = read_csv(data_dir / "data.csv")
    print(f"== {name}: {data_dir} ({data.shape[0]} rows, {data.shape[1] - 1} inputs, "
          f"target {header[-1]})", flush=True)
    schema = ARGS.schema.get(name)
    codes = read_schema(schema, header) if schema is not None else []
    methods = [m for m in ARGS.methods if schema is not None or m not in SCHEMA_METHODS]
    if schema is not None:
        print(f"schema {schema}: codes {', '.join(codes) or '(none)'}", flush=True)
    skipped = [m for m in ARGS.methods if m not in methods]
    if skipped:
        print(f"no --schema for {name}: skipping {', '.join(skipped)}", flush=True)
    results = {m: [] for m in methods}
    splits = range(ARGS.first_split, ARGS.first_split + ARGS.splits)
    started, done = time.perf_counter(), 0
    for k in splits:
        elapsed = time.perf_counter() - started
        if ARGS.max_minutes is not None and done > 0:
            if elapsed * (done + 1) / done > 60.0 * ARGS.max_minutes:
                print(f"stopping after {done} splits: --max-minutes {ARGS.max_minutes}")
                break
        tr = np.loadtxt(data_dir / f"splits/train_{k}.txt", dtype=int)
        te = np.loadtxt(data_dir / f"splits/test_{k}.txt", dtype=int)
        train, test = data[tr], data[te]
        kern = None
        extra = ARGS.mettle_args + (["--seed", str(k)] if ARGS.mettle_seed_by_split else [])
        if "mettle" in results:
            sw = work / name / f"split_{k}"
            sw.mkdir(parents=True, exist_ok=True)
            results["mettle"].append(
                fit_mettle(binary, sw, header, train, test, ARGS.threads, extra))
        if "mettle-schema" in results:
            sw = work / name / f"split_{k}_schema"
            sw.mkdir(parents=True, exist_ok=True)
            results["mettle-schema"].append(fit_mettle(
                binary, sw, header, train, test, ARGS.threads, extra, schema))
        if "gp" in results:
            s, t, kern = fit_gp(train, test, ARGS.gp_restarts, k)
            results["gp"].append((s, t))
        if "mlp" in results:
            results["mlp"].append(
                fit_mlp_ensemble(train, test, ARGS.mlp_members, ARGS.mlp_hidden, k))
        if "catboost" in results:
            results["catboost"].append(fit_catboost(train, test, k, ARGS.threads))
        if "catboost-cat" in results:
            results["catboost-cat"].append(
                fit_catboost(train, test, k, ARGS.threads, header[:-1], codes))
        line = " | ".join(
            f"{m} rmse {r[-1][0]['rmse']:.3f} ll {r[-1][0]['ll']:.3f} "
            f"cov {r[-1][0]['cov68']:.3f}/{r[-1][0]['cov95']:.3f} "
            f"{r[-1][1][0]:.1f} s ({r[-1][1][1]:.1f} s CPU)"
            for m, r in results.items()
        )
        print(f"{name} split {k}: {line} | {loadavg()}", flush=True)
        if kern is not None:
            print(f"  GP kernel: {kern}", flush=True)
        done += 1
    return results, done, schema, codes


def main():
    root = find_data_root(ARGS.data_root)
    uses_mettle = "mettle" in ARGS.methods or "mettle-schema" in ARGS.methods
    binary = find_mettle(ARGS.mettle) if uses_mettle else None
    if binary is not None:
        version = run([binary, "--version"], dict(os.environ)).strip()
        print(f"{version} at {binary}")
    print(versions())
    print(f"data sets {', '.join(ARGS.datasets)} under {root}; methods {', '.join(ARGS.methods)}")
    if uses_mettle:
        print(f"mettle train options: {mettle_options()}")
    for name, path in ARGS.schema.items():
        print(f"schema for {name}: {path}")
    print(f"threads {ARGS.threads}, GP restarts {ARGS.gp_restarts}, "
          f"MLP ensemble {ARGS.mlp_members} x {ARGS.mlp_hidden} ReLU")
    print(f"start {time.strftime('%Y-%m-%d %H:%M:%S UTC', time.gmtime())}, {loadavg()}")
    work = ARGS.keep or Path(tempfile.mkdtemp(prefix="mettle-side-by-side-"))
    work.mkdir(parents=True, exist_ok=True)
    tables = []
    with threadpool_limits(limits=ARGS.threads):
        for name in ARGS.datasets:
            data_dir = root / name
            if not (data_dir / "data.csv").is_file():
                sys.exit(f"{data_dir / 'data.csv'}: not found")
            results, done, schema, codes = run_dataset(name, data_dir, binary, work)
            tables.append(markdown(name, results, done, schema, codes))
            print(tables[-1], flush=True)
    print(f"end {time.strftime('%Y-%m-%d %H:%M:%S UTC', time.gmtime())}, {loadavg()}")
    if ARGS.keep is None:
        shutil.rmtree(work)
    text = "\n".join(tables) + "\n" + versions() + "\n"
    if len(tables) > 1:
        print(text)
    if ARGS.markdown:
        ARGS.markdown.write_text(text, encoding="utf-8")


def mettle_options():
    """The `mettle train` options of the mettle rows, as printed in the log and headings."""
    text = shlex.join(ARGS.mettle_args) if ARGS.mettle_args else "(defaults)"
    return text + (", --seed K on split K" if ARGS.mettle_seed_by_split else "")


def method_names(schema, codes):
    plain = ("mettle (default committee)"
             if not ARGS.mettle_args and not ARGS.mettle_seed_by_split
             else f"mettle ({mettle_options()})")
    schema_name = schema.name if schema is not None else "?"
    return {
        "mettle": plain,
        "mettle-schema": plain[:-1] + f", schema {schema_name})",
        "gp": f"scikit-learn GP, ARD RBF + white noise ({ARGS.gp_restarts} restarts)",
        "mlp": f"{ARGS.mlp_members} scikit-learn MLPs ({ARGS.mlp_hidden} ReLU), cross-fitted noise",
        "catboost": "CatBoost, default settings, RMSEWithUncertainty",
        "catboost-cat": "CatBoost, default settings, RMSEWithUncertainty, cat_features "
        + (", ".join(codes) or "(none)"),
    }


SHORT = {"mettle": "mettle", "mettle-schema": "mettle with the schema", "gp": "GP",
         "mlp": "MLP ensemble", "catboost": "CatBoost", "catboost-cat": "CatBoost with cat_features"}


def paired_pairs(methods):
    """(A, B) pairs whose per-split differences A - B are reported: every method against
    mettle; with a schema, mettle with it against plain CatBoost and CatBoost with the codes,
    and CatBoost with the codes against plain CatBoost."""
    base = "mettle" if "mettle" in methods else None
    pairs = [(m, base) for m in methods if base and m != base]
    for a, b in (("mettle-schema", "catboost"), ("mettle-schema", "catboost-cat"),
                 ("catboost-cat", "catboost")):
        if a in methods and b in methods:
            pairs.append((a, b))
    return pairs


def markdown(name, results, n, schema=None, codes=()):
    names = method_names(schema, codes)
    base = "mettle" if "mettle" in results else None

    def med(m, i):
        return float(np.median([t[i] for _, t in results[m]]))

    def ratio(m, i):
        if m == base:
            return "1"
        per_split = [t[i] / tm[i] for (_, t), (_, tm) in zip(results[m], results[base])]
        return f"{med(m, i) / med(base, i):.2f} ({np.median(per_split):.2f})"

    head = "| method | RMSE | test LL | coverage 68 % | coverage 95 % | median fit wall s "
    rule = "|---|---|---|---|---|---|"
    if base:
        head += "| wall / mettle's | median fit CPU s | CPU / mettle's |"
        rule += "---|---|---|"
    else:
        head += "| median fit CPU s |"
        rule += "---|"
    heading = (f"{name}, {n} splits ({ARGS.first_split}..{ARGS.first_split + n - 1}), "
               f"{ARGS.threads} threads per method; mean ± SE over splits.")
    if "mettle" in results or "mettle-schema" in results:
        heading += f" mettle train options: {mettle_options()}."
    if schema is not None:
        shown = schema.relative_to(REPO) if schema.is_relative_to(REPO) else schema
        heading += f" Schema {shown}; codes: {', '.join(codes) or '(none)'}."
    out = [heading, "", head, rule]
    for m, r in results.items():
        cells = []
        for key in ("rmse", "ll", "cov68", "cov95"):
            mu, se = mean_se([s[key] for s, _ in r])
            cells.append(f"{mu:.3f} ± {se:.3f}")
        if base:
            cells += [f"{med(m, 0):.1f}", ratio(m, 0), f"{med(m, 1):.1f}", ratio(m, 1)]
        else:
            cells += [f"{med(m, 0):.1f}", f"{med(m, 1):.1f}"]
        out.append(f"| {names[m]} | " + " | ".join(cells) + " |")
    if base and len(results) > 1:
        out += [
            "",
            "Ratios: median fit time of the method / median fit time of mettle; in brackets the "
            "median over splits of the per-split ratio. CPU = user + system time of all threads.",
        ]
    pairs = paired_pairs(list(results))
    if pairs:
        out += [
            "",
            "Paired differences over the splits (A − B, mean ± paired SE; negative RMSE and "
            "positive LL differences favour A):",
            "",
            "| A − B | RMSE A − B | A's RMSE lower on | test LL A − B | A's LL higher on "
            "| coverage 68 % A − B | coverage 95 % A − B |",
            "|---|---|---|---|---|---|---|",
        ]
        for a, b in pairs:
            rows = list(zip(results[a], results[b]))
            d_rmse = [sa["rmse"] - sb["rmse"] for (sa, _), (sb, _) in rows]
            d_ll = [sa["ll"] - sb["ll"] for (sa, _), (sb, _) in rows]
            (mr, ser), (ml, sel) = mean_se(d_rmse), mean_se(d_ll)
            cov = []
            for key in ("cov68", "cov95"):
                mc, sec = mean_se([sa[key] - sb[key] for (sa, _), (sb, _) in rows])
                cov.append(f"{mc:+.3f} ± {sec:.3f}")
            out.append(
                f"| {SHORT[a]} − {SHORT[b]} | {mr:+.4f} ± {ser:.4f} | "
                f"{sum(d < 0 for d in d_rmse)} / {n} | {ml:+.3f} ± {sel:.3f} | "
                f"{sum(d > 0 for d in d_ll)} / {n} | {cov[0]} | {cov[1]} |"
            )
    out.append("")
    return "\n".join(out)


if __name__ == "__main__":
    main()
