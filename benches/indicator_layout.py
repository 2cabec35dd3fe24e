#!/usr/bin/env python3
"""A copy of a UCI data-set folder with chosen integer-coded inputs replaced by indicator
(one-hot) columns, for the diagnosis on training rows only (issue 29, fourth round):

    python3 benches/indicator_layout.py --dataset energy \\
        --column glazing_area_distribution --drop 0 --out /tmp/s17b/gad1h
    python3 benches/inner_cv.py --dataset energy --data-root /tmp/s17b/gad1h \\
        --outer 0,1,2,3,4 --config gad1h= --rows /tmp/cv

Writes OUT/<dataset>/data.csv with the same rows in the same order (so the split files'
row indices still hold) and every column as it was except each --column, which becomes
one column per level, named <column>_<level>, holding 1 where the row has that level and 0
elsewhere, in the column's place. --drop LEVEL (repeatable, as COLUMN=LEVEL or, after a
single --column, LEVEL) leaves one level without a column: it is then the row whose
indicators are all 0 (energy's glazing_area_distribution 0 is the row without glazing,
already told by glazing_area 0). Only the training split files (splits/train_K.txt) are
copied: the test parts are not needed by benches/inner_cv.py and are left where they are.
The other cells are copied as text, unchanged.

Energy's codes (Tsanas & Xifara 2012, Energy and Buildings 49, 560–567, the data set's
paper): orientation 2–5 = north, east, south, west; glazing area distribution 0 = none,
1 = uniform, 2–5 = north, east, south, west.
"""

import argparse
from pathlib import Path

import dataset_folder

p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
p.add_argument("--dataset", required=True)
p.add_argument("--data-root", type=Path, default=Path("/work/shared/datasets/uci"))
p.add_argument("--column", action="append", required=True)
p.add_argument("--drop", action="append", default=[])
p.add_argument("--out", type=Path, required=True)
ARGS = p.parse_args()

src, header, data_rows = dataset_folder.read(ARGS.data_root, ARGS.dataset)
drops = {}
for d in ARGS.drop:
    col, _, level = d.rpartition("=")
    if not col:
        if len(ARGS.column) != 1:
            p.error("--drop LEVEL needs a single --column; else write --drop COLUMN=LEVEL")
        col = ARGS.column[0]
    drops.setdefault(col, set()).add(float(level))
expand = {}
for col in ARGS.column:
    if col not in header:
        p.error(f"{src / 'data.csv'}: no column {col!r}")
    j = header.index(col)
    if j == len(header) - 1:
        p.error(f"{col} is the target (the last column)")
    cells = [row.split(",")[j] for row in data_rows]
    levels = sorted({float(c) for c in cells})
    if any(v != round(v) for v in levels):
        p.error(f"{col}: not an integer code (levels {levels})")
    expand[j] = [v for v in levels if v not in drops.get(col, set())]

out_header = []
for j, h in enumerate(header):
    out_header += [f"{h}_{v:g}" for v in expand[j]] if j in expand else [h]
rows = []
for n, row in enumerate(data_rows, start=2):
    cells = row.split(",")
    if len(cells) != len(header):
        raise SystemExit(f"{src / 'data.csv'} row {n}: {len(cells)} cells, header has "
                         f"{len(header)}")
    out = []
    for j, c in enumerate(cells):
        out += ["1" if float(c) == v else "0" for v in expand[j]] if j in expand else [c]
    rows.append(",".join(out))

dest, copied = dataset_folder.write(ARGS.out, ARGS.dataset, out_header, rows, src)
print(f"{dest / 'data.csv'}: {len(rows)} rows, inputs {', '.join(out_header[:-1])}; "
      f"{copied} training split files")
