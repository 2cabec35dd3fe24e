#!/usr/bin/env python3
"""Coverage of mettle's error bars on test rows that are new, against rows
whose group is already in the training part.

Many archives hold groups of rows that share everything but one input: one
concrete mix tested at several ages, one hull form at several Froude numbers,
one weld tested at several temperatures. On random 90/10 splits most test rows
have their group in the training part, and a few have an exact duplicate there.
An engineer estimating a heat or mix that has not been made yet is in the
position of the *new* rows only, so this script reports the two apart.

Input: the per-row predictions written by the benchmark example with
METTLE_BENCH_ROWS=DIR (one DIR/<dataset>_<split>.csv per split, columns
row,y,mean,sd,noise_sd,model_sd; `row` indexes ../shared data.csv).

    METTLE_BENCH_ROWS=/tmp/rows cargo run --release --example uci_benchmark
    python3 benches/grouped_coverage.py --rows /tmp/rows

Groups (our choice; common practice, no source): rows whose inputs agree on
every column except the one named in GROUP_EXCEPT below. Red wine has no such
structure; only exact duplicates are counted there.

Standard library only.
"""

import argparse
import csv
import math
import os
import sys

# the input that varies inside a group, per data set (None: exact duplicates only)
GROUP_EXCEPT = {
    "concrete": "age_days",
    "energy": "orientation",
    "yacht": "froude_number",
    "wine-quality-red": None,
}


def read_table(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    return rows[0], [[float(v) for v in r] for r in rows[1:]]


def read_indices(path):
    with open(path) as f:
        return [int(v) for v in f.read().split()]


def summary(rows):
    """rows: (z, error) pairs, z = error / sd."""
    n = len(rows)
    if n == 0:
        return None
    z = [v for v, _ in rows]
    z2 = sum(v * v for v in z) / n
    return {
        "n": n,
        "rmse": math.sqrt(sum(e * e for _, e in rows) / n),
        "cov68": sum(abs(v) <= 1 for v in z) / n,
        "cov95": sum(abs(v) <= 2 for v in z) / n,
        # the sd scale that would maximise the Gaussian log-likelihood of these rows
        "sd_scale": math.sqrt(z2),
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--rows", required=True, help="directory written with METTLE_BENCH_ROWS")
    ap.add_argument("--data-dir", default=os.environ.get("METTLE_SHARED", "../shared") + "/datasets/uci")
    ap.add_argument("--splits", type=int, default=20)
    args = ap.parse_args()
    print("| dataset | test rows | share | RMSE | coverage_68 | coverage_95 | LL-optimal sd scale |")
    print("|---|---|---|---|---|---|---|")
    for ds, except_col in GROUP_EXCEPT.items():
        header, data = read_table(os.path.join(args.data_dir, ds, "data.csv"))
        inputs = list(range(len(header) - 1))
        if except_col is not None and except_col not in header:
            sys.exit(f"{ds}: no column {except_col!r} in data.csv (columns: {header})")
        group_cols = [j for j in inputs if except_col is None or header[j] != except_col]
        kinds = {"exact duplicate in training": [], "group in training": [], "new": []}
        found = 0
        for k in range(args.splits):
            path = os.path.join(args.rows, f"{ds}_{k}.csv")
            if not os.path.exists(path):
                continue
            found += 1
            train = read_indices(os.path.join(args.data_dir, ds, "splits", f"train_{k}.txt"))
            exact = {tuple(data[i][j] for j in inputs) for i in train}
            groups = {tuple(data[i][j] for j in group_cols) for i in train}
            _, pred = read_table(path)
            for row, y, mean, sd, _noise_sd, _model_sd in pred:
                r = int(row)
                z = ((y - mean) / sd, y - mean)
                if tuple(data[r][j] for j in inputs) in exact:
                    kinds["exact duplicate in training"].append(z)
                elif except_col is not None and tuple(data[r][j] for j in group_cols) in groups:
                    kinds["group in training"].append(z)
                else:
                    kinds["new"].append(z)
        if found == 0:
            continue
        total = sum(len(z) for z in kinds.values())
        for kind, z in kinds.items():
            s = summary(z)
            if s is None:
                continue
            print(
                f"| {ds} ({found} splits) | {kind}: {s['n']} | {s['n'] / total:.2f} | {s['rmse']:.3f} | "
                f"{s['cov68']:.3f} | {s['cov95']:.3f} | {s['sd_scale']:.2f} |"
            )


if __name__ == "__main__":
    main()
