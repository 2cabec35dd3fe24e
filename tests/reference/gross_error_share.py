#!/usr/bin/env python3
"""Reference values for mettle's share of gross errors
(committee::gross_errors): the posterior mode of the share pi of the
contamination model of Box & Tiao (1968),

    p(t) = (1 - pi) * N(t; m, v) + pi * N(t; tbar, s_t^2),

under a Beta(2, 2) prior on pi, found here by SciPy's general-purpose bounded scalar minimiser
(scipy.optimize.minimize_scalar, densities from scipy.stats.norm), not by EM
as in mettle.

Usage:
    python3 tests/reference/gross_error_share.py

Writes tests/data/gross_error_share.json: the rows (t, m, v), the background
(tbar, s_t), the mode pi, the mean negative log density there and with
pi = 0; also the two-part log density of three single rows for the
evaluation test in src/metrics.rs. The rows are invented (NumPy seed
20261203): 300 values, 5 % of them gross errors drawn from the background,
the rest from N(m, v).
"""

import datetime
import json
import os

import numpy as np
import scipy
from scipy.optimize import minimize_scalar
from scipy.stats import norm

rng = np.random.default_rng(20261203)
n = 300
m = rng.uniform(-0.3, 0.3, n)
v = rng.uniform(0.02, 0.05, n) ** 2
tbar, s_t = 0.0, 0.25
gross = rng.uniform(size=n) < 0.05
t = np.where(gross, rng.normal(tbar, s_t, n), m + np.sqrt(v) * rng.normal(size=n))


def nll(pi):
    dens = (1 - pi) * norm.pdf(t, m, np.sqrt(v)) + pi * norm.pdf(t, tbar, s_t)
    return -np.mean(np.log(dens))


def neg_log_post(pi):
    # mean negative log posterior per row: likelihood plus ln Beta(2, 2) / n
    return nll(pi) - (np.log(pi) + np.log(1 - pi)) / n


res = minimize_scalar(neg_log_post, bounds=(1e-9, 0.25), method="bounded", options={"xatol": 1e-12})
pi = float(res.x)

singles = [
    # (y, m, s, share, mean, sd)
    (52.0, 50.0, 2.0, 0.03, 40.0, 15.0),
    (20.0, 49.0, 2.5, 0.03, 40.0, 15.0),
    (0.31, 0.30, 0.05, 0.0, 0.2, 0.1),
]
single_ln = [
    float(np.log((1 - p) * norm.pdf(y, mu, s) + p * norm.pdf(y, bm, bs)))
    for (y, mu, s, p, bm, bs) in singles
]

out = {
    "source": "scipy.optimize.minimize_scalar (bounded) and scipy.stats.norm, "
    f"SciPy {scipy.__version__}, NumPy {np.__version__}; "
    f"script tests/reference/gross_error_share.py, {datetime.date.today()}",
    "t": t.tolist(),
    "m": m.tolist(),
    "v": v.tolist(),
    "background_mean": tbar,
    "background_sd": s_t,
    "share": pi,
    "nlpd_at_mode": float(nll(pi)),
    "nlpd_gaussian": float(-np.mean(norm.logpdf(t, m, np.sqrt(v)))),
    "singles": [list(s) for s in singles],
    "single_ln_density": single_ln,
}
path = os.path.join(os.path.dirname(__file__), "..", "data", "gross_error_share.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print(f"pi = {pi:.8f}, nlpd {nll(pi):.10f}; wrote {path}")
