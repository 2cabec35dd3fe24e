#!/usr/bin/env python3
"""Reference values for mettle's joint probability of several requirements
(src/screen/joint.rs): P(X >= a, Y >= b) for a standard bivariate normal pair
with correlation rho, and one trivariate upper orthant probability, from
SciPy's scipy.stats.multivariate_normal.cdf (Genz's algorithms inside SciPy).
By symmetry P(X >= a, Y >= b) = CDF(-a, -b) at the same rho.

Usage (SciPy in a throw-away virtual environment is enough):
    python3 -m venv /tmp/venv && /tmp/venv/bin/pip install scipy
    /tmp/venv/bin/python tests/reference/bivariate_normal.py

Writes src/screen/joint/reference.rs (the values the unit tests read), with
the SciPy version and the date in its header.
"""

import datetime
import os

import numpy as np
import scipy
from scipy.stats import multivariate_normal

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "..", "src", "screen", "joint", "reference.rs")

# Genz's integration settings (SciPy's defaults are 1e-5 and 1e-5).
ACCURACY = dict(abseps=1e-12, releps=1e-12, maxpts=10_000_000)


def upper(h, corr):
    h = np.asarray(h, dtype=float)
    return float(
        multivariate_normal(
            mean=np.zeros(len(h)), cov=np.asarray(corr), **ACCURACY
        ).cdf(-h)
    )


def box(lo, hi, corr):
    """P(lo_k < X_k < hi_k for every k) (SciPy >= 1.10: lower_limit)."""
    return float(
        multivariate_normal(
            mean=np.zeros(len(lo)), cov=np.asarray(corr), **ACCURACY
        ).cdf(np.asarray(hi, dtype=float), lower_limit=np.asarray(lo, dtype=float))
    )


rows = []
for a in (-1.5, 0.0, 0.8, 2.1):
    for b in (-0.7, 0.0, 1.2):
        for rho in (-0.95, -0.6, -0.2, 0.25, 0.6, 0.8, 0.93, 0.99):
            rows.append((a, b, rho, upper([a, b], [[1.0, rho], [rho, 1.0]])))

tri_h = [0.3, -0.5, 1.0]
tri_c = [[1.0, 0.6, 0.3], [0.6, 1.0, 0.5], [0.3, 0.5, 1.0]]
tri = upper(tri_h, tri_c)

# two-sided bounds on one variable, one-sided on the other
boxes = []
for lo1, hi1, lo2, hi2, rho in (
    (-1.0, 1.0, 0.5, np.inf, 0.7),
    (-0.5, 1.5, -np.inf, 0.2, -0.4),
    (0.0, 0.8, -1.2, 2.0, 0.9),
):
    boxes.append((lo1, hi1, lo2, hi2, rho, box([lo1, lo2], [hi1, hi2], [[1.0, rho], [rho, 1.0]])))

def rs(v):
    """A Rust f64 literal."""
    if v == np.inf:
        return "f64::INFINITY"
    if v == -np.inf:
        return "f64::NEG_INFINITY"
    return repr(float(v))


with open(OUT, "w") as f:
    f.write(
        "//! Reference values from SciPy {} `multivariate_normal.cdf`, written by\n"
        "//! tests/reference/bivariate_normal.py on {} (do not edit by hand).\n\n".format(
            scipy.__version__, datetime.date.today().isoformat()
        )
    )
    f.write("/// (a, b, rho, P(X >= a, Y >= b)).\n")
    f.write("pub const BIVARIATE: &[(f64, f64, f64, f64)] = &[\n")
    for a, b, rho, p in rows:
        f.write("    ({!r}, {!r}, {!r}, {!r}),\n".format(a, b, rho, p))
    f.write("];\n\n")
    f.write("/// (lo1, hi1, lo2, hi2, rho, P(lo1 < X < hi1, lo2 < Y < hi2)).\n")
    f.write("pub const BOXES: &[(f64, f64, f64, f64, f64, f64)] = &[\n")
    for b in boxes:
        f.write("    ({}, {}, {}, {}, {!r}, {!r}),\n".format(*[rs(v) for v in b[:4]], b[4], b[5]))
    f.write("];\n\n")
    f.write("/// (h, correlation, P(X_k > h_k for every k)).\n")
    f.write("#[allow(clippy::type_complexity)]\n")
    f.write("pub const TRIVARIATE: ([f64; 3], [[f64; 3]; 3], f64) = (\n")
    f.write("    [{!r}, {!r}, {!r}],\n".format(*tri_h))
    f.write("    [\n")
    for r in tri_c:
        f.write("        [{!r}, {!r}, {!r}],\n".format(*r))
    f.write("    ],\n    {!r},\n);\n".format(tri))
print("wrote", OUT, len(rows), "bivariate values; trivariate", tri)
