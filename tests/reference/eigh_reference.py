"""Reference eigenvalues for the symmetric eigen-solvers of src/linalg.rs.

Run once with SciPy 1.17 (scipy.linalg.eigh, LAPACK's dsyevr); the printed
values are pasted into the unit tests of src/linalg.rs
(`ql_eigenvalues_match_scipy_eigh`). The matrices are defined by formulas,
so the test rebuilds them without this script:

- the Hilbert matrix H_ij = 1/(i + j + 1), order 6 (a classic ill-conditioned
  test matrix; Higham 2002, Accuracy and Stability of Numerical Algorithms,
  §28.1);
- the symmetric Pascal matrix P_ij = C(i + j, i), order 6 (its eigenvalues
  come in reciprocal pairs λ, 1/λ: Higham 2002, §28.4);
- W_ij = min(i, j) + 1 + 0.1·cos(i·j), order 8: a dense matrix with no
  special structure.
"""

import math

import numpy as np
import scipy
import scipy.linalg


def hilbert(n):
    return np.array([[1.0 / (i + j + 1) for j in range(n)] for i in range(n)])


def pascal(n):
    return np.array([[float(math.comb(i + j, i)) for j in range(n)] for i in range(n)])


def dense(n):
    return np.array(
        [[min(i, j) + 1 + 0.1 * math.cos(i * j) for j in range(n)] for i in range(n)]
    )


if __name__ == "__main__":
    print("scipy", scipy.__version__)
    for name, a in [("hilbert6", hilbert(6)), ("pascal6", pascal(6)), ("dense8", dense(8))]:
        w = scipy.linalg.eigh(a, eigvals_only=True)
        print(name, "[" + ", ".join(repr(float(x)) for x in w) + "]")
