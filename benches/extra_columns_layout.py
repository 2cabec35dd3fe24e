#!/usr/bin/env python3
"""A copy of a UCI data-set folder with further input columns computed from the others, for
the diagnosis on training rows only (issue 29, eighth round):

    python3 benches/extra_columns_layout.py --dataset concrete \\
        --ratio water_cement_ratio=water_kg_m3/cement_kg_m3 --out /tmp/s20/wc
    python3 benches/extra_columns_layout.py --dataset concrete \\
        --ratio water_binder_ratio=water_kg_m3/cement_kg_m3+slag_kg_m3+fly_ash_kg_m3 \\
        --out /tmp/s20/wb
    python3 benches/extra_columns_layout.py --dataset concrete --presence slag_kg_m3 \\
        --presence fly_ash_kg_m3 --presence superplasticizer_kg_m3 --out /tmp/s20/pres3
    python3 benches/inner_cv.py --dataset concrete --data-root /tmp/s20/wc \\
        --outer 0,1,2,3,4 --config wc= --rows /tmp/cv

Writes OUT/<dataset>/data.csv with the same rows in the same order (so the split files' row
indices still hold): every column as it was, then the new columns in the order given, then
the target (the last column, as the scripts expect). --ratio NAME=A/B[+C...] adds NAME =
A / (B + C + ...); --presence COL adds COL_present, 1 where COL is not 0 and 0 where it is.
Only the training split files (splits/train_K.txt) are copied: benches/inner_cv.py needs no
test part. Values are written with 6 significant digits; the other cells are copied as text.
"""

import argparse
from pathlib import Path

import dataset_folder

p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
p.add_argument("--dataset", required=True)
p.add_argument("--data-root", type=Path, default=Path("/work/shared/datasets/uci"))
p.add_argument("--ratio", action="append", default=[])
p.add_argument("--presence", action="append", default=[])
p.add_argument("--out", type=Path, required=True)
ARGS = p.parse_args()

src, header, data_rows = dataset_folder.read(ARGS.data_root, ARGS.dataset)


def column(name):
    if name not in header[:-1]:
        p.error(f"{src / 'data.csv'}: no input column {name!r}")
    return header.index(name)


new = []  # (name, function of a row's cells)
for spec in ARGS.ratio:
    name, _, formula = spec.partition("=")
    num, _, den = formula.partition("/")
    if not (name and num and den):
        p.error(f"--ratio {spec!r}: write NAME=A/B[+C...]")
    i, js = column(num), [column(d) for d in den.split("+")]
    new.append((name, lambda r, i=i, js=js: float(r[i]) / sum(float(r[j]) for j in js)))
for col in ARGS.presence:
    j = column(col)
    new.append((f"{col}_present", lambda r, j=j: 1.0 if float(r[j]) != 0.0 else 0.0))
if not new:
    p.error("nothing to add: give --ratio or --presence")

rows = []
for line in data_rows:
    r = line.split(",")
    rows.append(",".join(r[:-1] + ["%.6g" % fn(r) for _, fn in new] + r[-1:]))
dataset_folder.write(ARGS.out, ARGS.dataset, header[:-1] + [n for n, _ in new] + header[-1:],
                     rows, src)
