#!/usr/bin/env python3
"""Reference value for mettle's paired comparison of two models
(src/explain/paired.rs): SciPy's paired t-test, scipy.stats.ttest_rel, on
the per-row negative log densities of two models on six rows.

Model A has errors e = (1, -2, 0.5, 3, -1, 0) and sd 1; model B is model A
plus a bias of 1 (errors e - 1), sd 1. The per-row NLPD is
0.5 ln(2 pi) + e^2 / 2.

Usage:
    python3 -m venv /tmp/venv && /tmp/venv/bin/pip install scipy
    /tmp/venv/bin/python tests/reference/paired_t.py

Prints the t statistic of ttest_rel(nlpd_B, nlpd_A), which the test
`known_bias_by_hand_and_scipy` holds as SCIPY_TTEST_REL_T.
"""

import math

import scipy
from scipy.stats import ttest_rel

e_a = [1.0, -2.0, 0.5, 3.0, -1.0, 0.0]
e_b = [e - 1.0 for e in e_a]
c = 0.5 * math.log(2.0 * math.pi)
l_a = [c + e * e / 2.0 for e in e_a]
l_b = [c + e * e / 2.0 for e in e_b]
r = ttest_rel(l_b, l_a)
print(f"scipy {scipy.__version__}")
print(f"t = {r.statistic!r}")
print(f"p = {r.pvalue!r}")
