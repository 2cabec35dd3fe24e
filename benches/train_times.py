#!/usr/bin/env python3
"""Training time of `mettle train` on the training part of the standard UCI splits, one
whole process per split, for the 1.5x time bar of issue 29:

    python3 benches/train_times.py --dataset wine-quality-red --splits 20 \\
        --mettle ~/.cache/mettle/target/release/mettle --label one
    python3 benches/train_times.py --dataset wine-quality-red --splits 20 \\
        --mettle ... --label two --args=--partitions,2,--partition-variance,mixture

For each split K the rows listed in splits/train_K.txt are written to a temporary CSV and
`mettle train --quiet` (plus --args, comma-separated) is run on them with RAYON_NUM_THREADS
and OPENBLAS_NUM_THREADS set to --threads. The CPU time of a split is the user + system
seconds of the child process (resource.getrusage(RUSAGE_CHILDREN) before and after, so the
whole process with every thread it started), printed per split with the load average, and
at the end the median, min and max over the splits. The test parts are never read. With
--out FILE the per-split seconds are also written as CSV (label, split, cpu_s, wall_s,
load1), so that runs of two settings can be compared split by split.
"""

import argparse
import csv
import os
import resource
import statistics
import subprocess
import tempfile
import time
from pathlib import Path

p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
p.add_argument("--dataset", required=True)
p.add_argument("--data-root", type=Path, default=Path("/work/shared/datasets/uci"))
p.add_argument("--splits", type=int, default=20)
p.add_argument("--mettle", type=Path, required=True)
p.add_argument("--args", default="", help="extra `mettle train` options, comma-separated")
p.add_argument("--label", default="default")
p.add_argument("--threads", type=int, default=1)
p.add_argument("--out", type=Path)
ARGS = p.parse_args()

DATA = ARGS.data_root / ARGS.dataset
lines = (DATA / "data.csv").read_text(encoding="utf-8").splitlines()
header, rows = lines[0], lines[1:]
target = header.split(",")[-1]
extra = [a for a in ARGS.args.split(",") if a]
env = dict(os.environ, RAYON_NUM_THREADS=str(ARGS.threads),
           OPENBLAS_NUM_THREADS=str(ARGS.threads))
work = Path(tempfile.mkdtemp(prefix="mettle-train-times-"))
records = []
for k in range(ARGS.splits):
    idx = [int(v) for v in (DATA / f"splits/train_{k}.txt").read_text().split()]
    tr = work / "train.csv"
    tr.write_text("\n".join([header] + [rows[i] for i in idx]) + "\n", encoding="utf-8")
    u0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    w0 = time.monotonic()
    subprocess.run([str(ARGS.mettle), "train", "--data", str(tr), "--target", target,
                    "--out", str(work / "m.json"), "--quiet"] + extra,
                   env=env, check=True, stderr=subprocess.DEVNULL)
    wall = time.monotonic() - w0
    u1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (u1.ru_utime - u0.ru_utime) + (u1.ru_stime - u0.ru_stime)
    load1 = os.getloadavg()[0]
    records.append((ARGS.label, k, cpu, wall, load1))
    print(f"{ARGS.dataset} {ARGS.label} split {k}: CPU {cpu:.1f} s, wall {wall:.1f} s, "
          f"load {load1:.2f}", flush=True)
cpus = [r[2] for r in records]
print(f"{ARGS.dataset} {ARGS.label}: median CPU {statistics.median(cpus):.1f} s "
      f"(min {min(cpus):.1f}, max {max(cpus):.1f}) over {len(cpus)} splits")
if ARGS.out:
    with open(ARGS.out, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(["label", "split", "cpu_s", "wall_s", "load1"])
        w.writerows(records)
