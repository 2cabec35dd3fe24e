#!/usr/bin/env python3
"""Reference for mettle's indicator expansion of an input declared as a code
(schema kind = "levels", src/data/schema.rs; tests/levels.rs reads the output).

Source data: the glazing_area_distribution column of the UCI "Energy
efficiency" data set (Tsanas & Xifara 2012, Energy and Buildings 49,
560-567; 768 rows; codes 0 = no glazing, 1 = uniform, 2-5 = mostly north,
east, south, west, as the UCI description gives them), from the shared copy
../shared/datasets/uci/energy/data.csv. A sixth level, 6, is declared but
held by no row, as a schema may declare a level the data lack.

The expansion is made twice, independently of mettle:
  - pandas.get_dummies on a pandas.Categorical with the declared levels as
    categories (one column per level, in code order);
  - scikit-learn's OneHotEncoder(categories=[declared levels]).
The script checks the two agree cell for cell and writes
tests/data/indicator_expansion.json: the codes row by row, the declared
levels and the indicator matrix (rows x levels, 0/1), with the versions.

Usage (from the repo root; pandas and scikit-learn, e.g. `make python`'s venv):
    ~/.cache/mettle/venv/bin/python tests/reference/indicator_expansion.py
"""

import json
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import sklearn
from sklearn.preprocessing import OneHotEncoder

root = Path(__file__).resolve().parents[2]
src = Path(sys.argv[1]) if len(sys.argv) > 1 else root.parent / "shared/datasets/uci/energy/data.csv"
codes = pd.read_csv(src)["glazing_area_distribution"].astype(int).tolist()
levels = [0, 1, 2, 3, 4, 5, 6]

dummies = pd.get_dummies(pd.Categorical(codes, categories=levels)).astype(int).to_numpy()
enc = OneHotEncoder(categories=[levels], sparse_output=False)
onehot = enc.fit_transform(np.array(codes).reshape(-1, 1)).astype(int)
assert dummies.shape == (len(codes), len(levels)), dummies.shape
assert (dummies == onehot).all(), "pandas and scikit-learn disagree"

out = {
    "source": "UCI Energy efficiency (Tsanas & Xifara 2012), column glazing_area_distribution",
    "made_by": f"pandas {pd.__version__} get_dummies; scikit-learn {sklearn.__version__} OneHotEncoder (equal)",
    "levels": levels,
    "codes": codes,
    "indicators": dummies.tolist(),
}
dest = root / "tests/data/indicator_expansion.json"
dest.write_text(json.dumps(out, separators=(",", ":")) + "\n", encoding="utf-8")
print(f"{len(codes)} rows, {len(levels)} levels; column sums {dummies.sum(axis=0).tolist()}")
print(out["made_by"])
print(f"written {dest}")
