#!/usr/bin/env python3
"""Diagnosis on training rows only (issue 29): k-fold cross-validation inside the training
part of a few standard UCI splits, for mettle under several settings and for CatBoost with
its default settings. The test parts of the standard splits are never read.

    python3 benches/inner_cv.py --dataset concrete --outer 0 --folds 4 \\
        --config default= --config restarts8=--restarts,8 --catboost --out /tmp/cv

--config NAME=ARGS: a mettle setting to try, ARGS = extra `mettle train` options separated
by commas (empty: the defaults); NAME@PATH=ARGS runs the mettle binary at PATH (two builds
of the engine side by side, paired on the same folds). For each outer split K, the training rows
(splits/train_K.txt) are cut into --folds folds by a seeded shuffle (seed 1000 + K); every
setting is trained on all folds but one and predicts the left-out fold, so every training
row is predicted once by a model that did not see it. Printed per setting: the
cross-validated RMSE, a Gaussian LL (mean log N(y | mean, sd^2), for mettle not its own density: a diagnostic of the mean first), coverage of ±1 sd and ±2 sd, the
paired RMSE difference against the first setting (mean over folds ± its SE), the CPU
time of the fits, and for mettle its own LL (−nlpd of `mettle evaluate`, with the model's error
shape and share of gross errors) and central-interval coverages over the folds. With --rows DIR the per-row out-of-fold predictions are written as
DIR/<dataset>_<outer>_<setting>.csv (row = index into data.csv, y, mean, sd, and the sd's
noise and model parts noise_sd, model_sd of `mettle predict`; NaN for CatBoost) for the
residual study (benches/inner_cv.py --groups) and --paired; files of four columns (row, y,
mean, sd: written before session 19) are still read, by every rule but poolrho.

--paired: instead of training, read the per-row files of --rows DIR for the outer splits
--outer and report, per setting against the first --config, the paired difference of the
fold RMSE and of the fold's mean Gaussian LL over all (outer split, fold) pairs (mean ± SE),
and on how many pairs the setting's RMSE is lower; beside it the SE over the outer splits of
their mean fold differences (the folds of one outer split are not independent pairs: they
share its rows, and a setting that changes the committee changes it much as another seed
would, so the pair SE can understate the scatter; on concrete a seed change alone moves one
outer split's mean fold RMSE by up to ±0.4 MPa — docs/benchmarks.md, ninth round); then,
pooled over every row of those outer splits, the RMSE, Gaussian LL, coverage of ±1 sd and
±2 sd, and the LL-optimal sd scale c = sqrt(mean z^2), z = (y − mean)/sd (the factor on the
sd that minimises the Gaussian NLPD: above 1 the bars are too narrow, below 1 too wide; with
the LL it would give), beside the
scale that would make the ±1 sd coverage 68.27 % (the 68.27 % quantile of |z|; the two
differ when the errors are not Gaussian about the sd, e.g. heavy-tailed). Pooled
models, e.g. two seeds' whole trainings averaged (the mean is the mean of the means μ_i):
`--config NAME=pool:A+B` gives them the equal mixture's variance,
mean(var_i) + mean((μ_i − μ)^2) (their disagreement added), and `--config NAME=poolin:A+B`
the mean of their own variances, mean(var_i) (their disagreement not counted again), and
`--config NAME=poolavg:A+B` a third: the error variance of the average itself when each
model's variance is that of its own error (noise, shared, plus s^2 from the model, the K
models' errors of any correlation ρ), i.e. noise + s^2 (1 + (K − 1) ρ)/K, which
mean(var_i) − mean((μ_i − μ)^2) estimates without bias; floored at mean(var_i)/K, the bound
for ρ ≥ 0. `--config NAME=poolrho<R>:A+B[+C...]` (e.g. `poolrho0.5:s0+s1+s2`) splits each
model's variance into its noise part n_i = noise_sd_i^2 and its model part
u_i = sd_i^2 − n_i (floored at 0; for a transformed target the parts are mapped back by the
slope, so u_i is what the total leaves beside the noise), and gives the average of the K
models, with n = mean(n_i), u = mean(u_i), s^2 = mean((μ_i − μ)^2) and a constant correlation
ρ = R between the models' errors, the variance
    n + u (1 + (K − 1) ρ)/K + max(0, s^2 − u (1 − ρ)(K − 1)/K):
the error variance of the average of K equally correlated errors of variance u on top of the
shared noise (the variance of a mean of K equicorrelated variables, u/K + (K − 1) ρ u/K: the
variance of a sum, Var Σe_i = Σ Var e_i + Σ_{i≠j} Cov(e_i, e_j); textbook algebra, cited from
memory), plus whatever spread of the means exceeds the spread that correlation expects,
E s^2 = u (1 − ρ)(K − 1)/K. Without the excess term ρ = 1 would give poolin; with it ρ = 1
gives pool (every bit of spread is excess when the errors are taken to be equal). The excess
term keeps the bars wide where the models disagree beyond what their own model variances
allow, while where they agree the model part shrinks as the average's error does (ρ = 0: by
1/K). It needs
per-row files with the noise_sd column. The Gaussian LL and coverages use the rule's sd. With
pooled settings, the coverages of every setting are also printed in the 10 % and 2 % of rows
where the models of a pooled setting disagree most (spread of their means over their mean
variance), once for each distinct set of averaged models: where the rules differ most, and
where a user extrapolates.

--groups: instead of training, read the per-row files of --rows DIR and report how much of
each setting's out-of-fold squared error is shared by the rows of one group (concrete: one
mix, i.e. the seven composition inputs, at several ages; energy: one building, i.e. every
input but orientation), and the error by value of each input with few distinct values.
"""

import argparse
import math
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
p.add_argument("--dataset", required=True)
p.add_argument("--data-root", type=Path, default=Path("/work/shared/datasets/uci"))
p.add_argument("--outer", default="0", help="outer split indices, comma-separated")
p.add_argument("--folds", type=int, default=4)
p.add_argument("--config", action="append", default=[])
p.add_argument("--catboost", action="store_true")
p.add_argument("--mettle", type=Path,
               default=Path(os.environ.get("CARGO_TARGET_DIR", "")) / "release/mettle")
p.add_argument("--threads", type=int, default=2)
p.add_argument("--rows", type=Path, default=None)
p.add_argument("--groups", action="store_true")
p.add_argument("--paired", action="store_true")
ARGS = p.parse_args()
for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = str(ARGS.threads)
import numpy as np  # noqa: E402

DATA = ARGS.data_root / ARGS.dataset


def read():
    with open(DATA / "data.csv", encoding="utf-8") as f:
        header = f.readline().strip().split(",")
    return header, np.loadtxt(DATA / "data.csv", delimiter=",", skiprows=1, ndmin=2)


def write_csv(path, header, rows):
    np.savetxt(path, rows, delimiter=",", header=",".join(header), comments="", fmt="%.17g")


def child_cpu():
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def mettle_fold(header, train, test, config, work):
    binary, extra = config
    tr, te, m = work / "tr.csv", work / "te.csv", work / "m.json"
    write_csv(tr, header, train)
    write_csv(te, header, test)
    env = dict(os.environ, RAYON_NUM_THREADS=str(ARGS.threads))
    c0 = child_cpu()
    cmd = [binary, "train", "--data", tr, "--target", header[-1], "--out", m, "--quiet"]
    subprocess.run(cmd + extra, env=env, check=True)
    cpu = child_cpu() - c0
    import json
    out = subprocess.run([binary, "predict", "--model", m, "--input", te, "--format",
                          "json", "--exact"], env=env, check=True, capture_output=True, text=True)
    rows = json.loads(out.stdout)["rows"]
    est = [r["estimates"][header[-1]] for r in rows]
    # mettle's own density and central intervals (`mettle evaluate`), summed over the fold's rows
    ev = json.loads(subprocess.run([binary, "evaluate", "--model", m, "--data", te, "--format",
                                    "json"], env=env, check=True, capture_output=True,
                                   text=True).stdout)
    ev = ev[0] if isinstance(ev, list) else ev
    n = len(test)
    OWN.append((n, n * ev["nlpd"], n * ev["coverage_68"], n * ev["coverage_95"]))
    parts = np.array([[e["noise_sd"], e["model_sd"]] for e in est]).reshape(-1, 2)
    return (np.array([e["mean"] for e in est]), np.array([e["sd"] for e in est]), parts,
            cpu)


OWN = []


def own_scores():
    """mettle's own LL (−nlpd) and coverages over the folds since the last call."""
    a = np.array(OWN) if OWN else np.zeros((1, 4))
    OWN.clear()
    n = a[:, 0].sum()
    return (-a[:, 1].sum() / n, a[:, 2].sum() / n, a[:, 3].sum() / n) if n else None


def catboost_fold(train, test, seed):
    import catboost
    model = catboost.CatBoostRegressor(loss_function="RMSEWithUncertainty", random_seed=seed,
                                       thread_count=ARGS.threads, verbose=False,
                                       allow_writing_files=False)
    c0 = time.process_time()
    model.fit(train[:, :-1], train[:, -1])
    cpu = time.process_time() - c0
    pred = np.asarray(model.predict(test[:, :-1], prediction_type="RMSEWithUncertainty"))
    return pred[:, 0], np.sqrt(pred[:, 1]), np.full((len(test), 2), np.nan), cpu


def scores(y, mean, sd):
    r = y - mean
    ll = -0.5 * np.log(2 * math.pi * sd * sd) - r * r / (2 * sd * sd)
    z = np.abs(r) / sd
    return (math.sqrt(np.mean(r * r)), np.mean(ll), np.mean(z <= 1), np.mean(z <= 2))


def train_all():
    header, data = read()
    configs = []
    for c in ARGS.config:
        name, _, extra = c.partition("=")
        name, _, binary = name.partition("@")
        configs.append((name, (Path(binary) if binary else ARGS.mettle,
                               [a for a in extra.split(",") if a])))
    if ARGS.catboost:
        configs.append(("catboost", None))
    work = Path(tempfile.mkdtemp(prefix="mettle-inner-cv-"))
    if ARGS.rows:
        ARGS.rows.mkdir(parents=True, exist_ok=True)
    for k in map(int, ARGS.outer.split(",")):
        tr = np.loadtxt(DATA / f"splits/train_{k}.txt", dtype=int)
        fold = np.random.default_rng(1000 + k).permutation(len(tr)) % ARGS.folds
        y = data[tr, -1]
        per_fold_rmse = {}
        for name, extra in configs:
            mean, sd, cpu = np.empty(len(tr)), np.empty(len(tr)), 0.0
            parts = np.empty((len(tr), 2))
            for f in range(ARGS.folds):
                a, b = data[tr[fold != f]], data[tr[fold == f]]
                if extra is None:
                    m, s, q, c = catboost_fold(a, b, 100 * k + f)
                else:
                    m, s, q, c = mettle_fold(header, a, b, extra, work)
                mean[fold == f], sd[fold == f], parts[fold == f] = m, s, q
                cpu += c
            per_fold_rmse[name] = np.array([
                math.sqrt(np.mean((y[fold == f] - mean[fold == f]) ** 2))
                for f in range(ARGS.folds)])
            rmse, ll, c68, c95 = scores(y, mean, sd)
            own = own_scores()
            own = (f" | own LL {own[0]:.3f} cov68 {own[1]:.3f} cov95 {own[2]:.3f}"
                   if own else "")
            first = per_fold_rmse[configs[0][0]]
            d = per_fold_rmse[name] - first
            se = d.std(ddof=1) / math.sqrt(len(d)) if len(d) > 1 else float("nan")
            print(f"{ARGS.dataset} outer {k} {name:>16}: CV RMSE {rmse:.4f} LL {ll:.3f} "
                  f"cov68 {c68:.3f} cov95 {c95:.3f} | RMSE − {configs[0][0]} "
                  f"{d.mean():+.4f} ± {se:.4f} (folds) | CPU {cpu:.1f} s{own}", flush=True)
            if ARGS.rows:
                np.savetxt(ARGS.rows / f"{ARGS.dataset}_{k}_{name}.csv",
                           np.column_stack([tr, y, mean, sd, parts]), delimiter=",",
                           header="row,y,mean,sd,noise_sd,model_sd", comments="",
                           fmt="%.10g")


def group_keys(header, data):
    x = data[:, :-1]
    if ARGS.dataset == "concrete":
        cols = [i for i, h in enumerate(header[:-1]) if not h.startswith("age")]
    elif ARGS.dataset == "energy":
        cols = [i for i, h in enumerate(header[:-1]) if h != "orientation"]
    else:
        sys.exit("--groups knows concrete and energy")
    _, key = np.unique(x[:, cols], axis=0, return_inverse=True)
    return key.ravel()


def groups():
    header, data = read()
    key = group_keys(header, data)
    for f in sorted(ARGS.rows.glob(f"{ARGS.dataset}_*.csv")):
        r = np.loadtxt(f, delimiter=",", skiprows=1)
        rows, y, mean = r[:, 0].astype(int), r[:, 1], r[:, 2]
        e = y - mean
        g = key[rows]
        # share of the squared error explained by group means of the residual
        # (groups with at least 2 rows among these), and the shrunk version
        ug, inv, cnt = np.unique(g, return_inverse=True, return_counts=True)
        gm = np.bincount(inv, weights=e) / cnt
        multi = cnt[inv] >= 2
        between = np.sum(gm[inv][multi] ** 2)
        total = np.sum(e[multi] ** 2)
        print(f"{f.stem}: RMSE {math.sqrt(np.mean(e * e)):.4f}; rows in groups of >=2: "
              f"{multi.sum()} in {np.sum(cnt >= 2)} groups; share of their squared error that "
              f"is the group mean residual {between / total:.3f}")
        x = data[rows, :-1]
        for j, h in enumerate(header[:-1]):
            vals = np.unique(x[:, j])
            if len(vals) <= 14:
                cells = []
                for v in vals:
                    sel = x[:, j] == v
                    cells.append(f"{v:g}:{math.sqrt(np.mean(e[sel] ** 2)):.3f}/{np.mean(e[sel]):+.3f}")
                print(f"    {h} (value:RMSE/mean residual) " + " ".join(cells))


POOL_RULES = ("pool", "poolin", "poolavg", "poolrho<R>")


def pool_rule(rule):
    """`rule` of `--config NAME=RULE:A+B` parsed: (kind, ρ) for a known rule, None otherwise."""
    if rule in ("pool", "poolin", "poolavg"):
        return rule, None
    if rule.startswith("poolrho"):
        try:
            rho = float(rule[len("poolrho"):])
        except ValueError:
            return None
        return ("poolrho", rho) if 0.0 <= rho <= 1.0 else None
    return None


def pooled_variance(rule, rs):
    """The variance the rule `rule` = (kind, ρ) gives the average of the K models whose
    per-row arrays are `rs` (columns row, y, mean, sd[, noise_sd, model_sd]); see the module
    docstring and load_rows."""
    kind, rho = rule
    K = len(rs)
    m = np.mean([r[:, 2] for r in rs], axis=0)
    v = np.mean([r[:, 3] ** 2 for r in rs], axis=0)
    s2 = np.mean([(r[:, 2] - m) ** 2 for r in rs], axis=0)
    if kind == "pool":
        return v + s2
    if kind == "poolin":
        return v
    if kind == "poolavg":
        # the average's own error variance if each model's variance is its own error's,
        # noise + s^2, the noise shared and the K models' mean errors of variance s^2 and
        # correlation rho: the average's is noise + s^2 (1 + (K-1) rho)/K, and
        # E mean((mu_i - mu)^2) = s^2 (1 - rho)(K-1)/K, so mean(var_i) less that spread is
        # unbiased for it whatever rho; floored at mean(var_i)/K (the bound for rho >= 0)
        return np.maximum(v - s2, v / K)
    # poolrho: noise n (shared) plus the variance of the mean of K model errors of variance u
    # and constant correlation rho, u (1 + (K-1) rho)/K, plus the spread of the means beyond
    # its expectation under that correlation, E s^2 = u (1 - rho)(K-1)/K
    if any(r.shape[1] < 5 or np.isnan(r[:, 4]).any() for r in rs):
        sys.exit("poolrho needs per-row files with the noise_sd column (written since "
                 "session 19); re-run the settings with --rows")
    n = np.mean([r[:, 4] ** 2 for r in rs], axis=0)
    u = np.mean([np.maximum(r[:, 3] ** 2 - r[:, 4] ** 2, 0.0) for r in rs], axis=0)
    expected = u * (1 - rho) * (K - 1) / K
    return n + u * (1 + (K - 1) * rho) / K + np.maximum(0.0, s2 - expected)


def load_rows(k, name, pooled):
    """The per-row file of setting `name` on outer split k; with `pooled` = (rule, [settings])
    the equal-weight average of their models instead: the mean of their means, and as its
    variance the equal mixture's (rule "pool": mean of the variances plus the spread of the
    means, var = mean(var_i) + mean((mu_i - mu)^2)), the mean of the models' own variances
    alone (rule "poolin": var = mean(var_i), their disagreement not counted again), the
    average's own error variance (rule "poolavg": that less the spread, floored), or the
    constant-correlation rule "poolrho<R>" (pooled_variance). Returned columns: row, y, mean,
    sd, and for a single setting its noise_sd and model_sd when the file holds them."""
    if not pooled:
        return np.loadtxt(ARGS.rows / f"{ARGS.dataset}_{k}_{name}.csv", delimiter=",",
                          skiprows=1, ndmin=2)
    rule, members = pooled
    rs = [load_rows(k, p, None) for p in members]
    if any(not np.array_equal(r[:, :2], rs[0][:, :2]) for r in rs):
        sys.exit(f"{name}: the per-row files of {members} on outer split {k} differ in rows")
    m = np.mean([r[:, 2] for r in rs], axis=0)
    v = pooled_variance(rule, rs)
    return np.column_stack([rs[0][:, 0], rs[0][:, 1], m, np.sqrt(v)])


def sd_scale(y, mean, sd):
    """The LL-optimal factor on the sd: the c minimising the Gaussian NLPD of
    (y - mean) / (c sd), i.e. c^2 = mean z^2 with z = (y - mean) / sd (above 1: the bars are
    too narrow for the errors; below 1: too wide), and the Gaussian LL gained by it,
    -log c - 1/2 + c^2/2 per row."""
    c = math.sqrt(np.mean(((y - mean) / sd) ** 2))
    return c, -math.log(c) - 0.5 + c * c / 2


def paired():
    names, pools = [], {}
    for c in ARGS.config:
        name, _, extra = c.partition("=")
        name = name.partition("@")[0]
        names.append(name)
        # NAME=RULE:A+B averages the saved models of settings A and B (model averaging); RULE
        # (pool, poolin, poolavg, poolrho<R>) names the variance given to the average
        rule, colon, members = extra.partition(":")
        known = pool_rule(rule) if colon else None
        pools[name] = (known, members.split("+")) if known else None
        if colon and pools[name] is None:
            sys.exit(f"--config {c}: the rules are " + ", ".join(POOL_RULES) +
                     " (R in [0, 1]), each followed by :A+B[+C...]")
    rmse = {n: [] for n in names}
    ll = {n: [] for n in names}
    rows = {n: [] for n in names}
    for k in map(int, ARGS.outer.split(",")):
        for n in names:
            r = load_rows(k, n, pools[n])
            rows[n].append(r)
            fold = np.random.default_rng(1000 + k).permutation(len(r)) % ARGS.folds
            for f in range(ARGS.folds):
                y, mean, sd = r[fold == f, 1], r[fold == f, 2], r[fold == f, 3]
                rm, l, _, _ = scores(y, mean, sd)
                rmse[n].append(rm)
                ll[n].append(l)
    base = names[0]
    for n in names:
        a, b = np.array(rmse[n]), np.array(rmse[base])
        d, dl = a - b, np.array(ll[n]) - np.array(ll[base])
        se = d.std(ddof=1) / math.sqrt(len(d))
        sel = dl.std(ddof=1) / math.sqrt(len(dl))
        # the folds of one outer split share its rows and the setting's seed-to-seed luck, so
        # the pairs are not independent: also the SE over the outer splits' mean differences
        by_outer = d.reshape(-1, ARGS.folds).mean(axis=1)
        seo = by_outer.std(ddof=1) / math.sqrt(len(by_outer)) if len(by_outer) > 1 else float("nan")
        print(f"{ARGS.dataset} outer {ARGS.outer} {n:>16}: mean fold RMSE {a.mean():.4f} | "
              f"RMSE − {base} {d.mean():+.4f} ± {se:.4f} ({d.mean() / se if se > 0 else 0:+.1f} SE), "
              f"lower on {np.sum(d < 0)}/{len(d)} | LL − {base} {dl.mean():+.4f} ± {sel:.4f} | "
              f"by outer split ± {seo:.4f} ({d.mean() / seo if seo > 0 else 0:+.1f} SE), "
              f"lower on {np.sum(by_outer < 0)}/{len(by_outer)}")
    # pooled over every row of the outer splits (each predicted once per outer split)
    for n in names:
        r = np.vstack(rows[n])
        y, mean, sd = r[:, 1], r[:, 2], r[:, 3]
        rm, l, c68, c95 = scores(y, mean, sd)
        c, gain = sd_scale(y, mean, sd)
        print(f"{ARGS.dataset} outer {ARGS.outer} {n:>16}: pooled over {len(y)} rows: "
              f"RMSE {rm:.4f} Gaussian LL {l:.4f} cov68 {c68:.3f} cov95 {c95:.3f} | "
              f"LL-optimal sd scale {c:.3f} (LL {l + gain:.4f} with it); "
              f"scale for 68 % coverage {np.quantile(np.abs(y - mean) / sd, 0.6827):.3f}")
    # where the averaged models disagree most: coverage in the rows of the largest spread of a
    # pooled setting's models relative to their mean variance (the rows where an average's
    # variance rule matters most), once for each distinct set of averaged models
    sets = []
    for n in names:
        if pools[n] and pools[n][1] not in sets:
            sets.append(pools[n][1])
    for members in sets:
        disagreement_coverage(names, rows, members)


def disagreement_coverage(names, rows, members):
    """Coverage of ±1 sd and ±2 sd of every setting in the 10 % and 2 % of rows where the
    models `members` disagree most (spread of their means over their mean variance)."""
    ratio = []
    for k in map(int, ARGS.outer.split(",")):
        rs = [load_rows(k, p, None) for p in members]
        m = np.mean([r[:, 2] for r in rs], axis=0)
        spread = np.mean([(r[:, 2] - m) ** 2 for r in rs], axis=0)
        ratio.append(spread / np.mean([r[:, 3] ** 2 for r in rs], axis=0))
    ratio = np.concatenate(ratio)
    for share in (0.10, 0.02):
        top = ratio >= np.quantile(ratio, 1 - share)
        cells = []
        for n in names:
            r = np.vstack(rows[n])[top]
            z = np.abs(r[:, 1] - r[:, 2]) / r[:, 3]
            cells.append(f"{n} {np.mean(z < 1):.3f}/{np.mean(z < 2):.3f}")
        print(f"{ARGS.dataset} outer {ARGS.outer}: cov68/cov95 in the {share:.0%} of rows where "
              f"{'+'.join(members)} disagree most ({np.sum(top)} rows, spread/mean var ≥ "
              f"{np.quantile(ratio, 1 - share):.3f}): " + ", ".join(cells))


if ARGS.paired:
    paired()
elif ARGS.groups:
    groups()
else:
    train_all()
