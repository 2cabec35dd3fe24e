#!/usr/bin/env python3
"""INVENTED near-noiseless data as a data directory for benches/inner_cv.py (--data-root): the
made-up smooth function of benches/support/near_noiseless.rs (12 inputs uniform on [0, 1],
x_12 without effect), with Gaussian noise of sd 1e-4 of the range of the noise-free target over
the rows. Drawn with numpy's generator from --seed, so the rows are not those of the Rust
generator; the function and the noise rule are the same. No measurements of anything.

    python3 benches/near_noiseless_csv.py --rows 5000 --out /tmp/synth/near-noiseless

writes OUT/data.csv (x01..x12, y) and OUT/splits/train_0.txt (every row: inner_cv.py cuts
its folds inside it; there is no test part).
"""

import argparse
from pathlib import Path

import numpy as np

p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
p.add_argument("--rows", type=int, default=5000)
p.add_argument("--seed", type=int, default=7)
p.add_argument("--out", type=Path, required=True)
ARGS = p.parse_args()


def truth(x):
    """The noise-free target of benches/support/near_noiseless.rs."""
    return (np.sin(np.pi * x[:, 0]) * (1 + 0.5 * x[:, 1]) + 0.5 * np.exp(0.8 * x[:, 2])
            + 2 * (x[:, 3] - 0.5) ** 2 + np.tanh(3 * (x[:, 4] - 0.5)) * x[:, 5]
            + 0.5 * x[:, 6] * x[:, 7] + 0.15 * np.cos(2 * np.pi * x[:, 8]) + 0.2 * x[:, 9]
            + 0.05 * x[:, 10])


rng = np.random.default_rng(ARGS.seed)
x = rng.random((ARGS.rows, 12))
f = truth(x)
y = f + rng.normal(0.0, 1e-4 * (f.max() - f.min()), ARGS.rows)
(ARGS.out / "splits").mkdir(parents=True, exist_ok=True)
header = ",".join([f"x{j + 1:02}" for j in range(12)] + ["y"])
np.savetxt(ARGS.out / "data.csv", np.column_stack([x, y]), delimiter=",", header=header,
           comments="", fmt="%.17g")
np.savetxt(ARGS.out / "splits/train_0.txt", np.arange(ARGS.rows), fmt="%d")
