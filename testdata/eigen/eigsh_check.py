#!/usr/bin/python3
"""Reference eigenvalues of the symmetric normalized Laplacian with scipy.

Usage: /usr/bin/python3 eigsh_check.py FILE.mtx K [METHOD]

Reads a graph W with scipy.io.mmread (Matrix Market, NIST), builds
L = I - D^-1/2 W D^-1/2 and prints JSON {"values": [...], "seconds": t,
"method": METHOD, "n": N, "nnz": NNZ} with the K smallest eigenvalues of L
in ascending order. "seconds" covers the eigensolve only.

METHOD (default "shift-invert"):
  shift-invert  eigsh(L, k=K, sigma=-1e-3, which="LM", tol=1e-6): ARPACK on
                (L + 1e-3 I)^-1 (sparse LU), accurate relative to small
                eigenvalues. L is singular, hence the small negative shift.
  sm            eigsh(L, k=K, which="SM", tol=1e-6): plain ARPACK.
  la            eigsh(M, k=K, which="LA", tol=1e-6) with M = D^-1/2 W D^-1/2,
                eigenvalues 1 - mu.
  dense         numpy.linalg.eigvalsh of the dense L (small graphs only).
"""
import json
import sys
import time

import numpy as np
import scipy.io
import scipy.sparse as sp
import scipy.sparse.linalg as spla


def main():
    if len(sys.argv) not in (3, 4):
        sys.exit(__doc__)
    path, k = sys.argv[1], int(sys.argv[2])
    method = sys.argv[3] if len(sys.argv) == 4 else "shift-invert"
    w = sp.csr_matrix(scipy.io.mmread(path), dtype=np.float64)
    n = w.shape[0]
    d = np.asarray(w.sum(axis=1)).ravel()
    s = sp.diags(1.0 / np.sqrt(d))
    m = (s @ w @ s).tocsr()
    lap = (sp.identity(n, format="csr") - m).tocsr()
    v0 = np.ones(n) / np.sqrt(n)  # fixed start vector: reproducible runs
    t0 = time.perf_counter()
    if method == "shift-invert":
        vals = spla.eigsh(lap.tocsc(), k=k, sigma=-1e-3, which="LM", tol=1e-6, v0=v0, return_eigenvectors=False)
    elif method == "sm":
        vals = spla.eigsh(lap, k=k, which="SM", tol=1e-6, v0=v0, return_eigenvectors=False)
    elif method == "la":
        mu = spla.eigsh(m, k=k, which="LA", tol=1e-6, v0=v0, return_eigenvectors=False)
        vals = 1.0 - mu
    elif method == "dense":
        vals = np.linalg.eigvalsh(lap.toarray())[:k]
    else:
        sys.exit("unknown method " + method)
    secs = time.perf_counter() - t0
    vals = sorted(float(v) for v in vals)
    print(json.dumps({"values": vals, "seconds": secs, "method": method, "n": n, "nnz": int(w.nnz)}))


if __name__ == "__main__":
    main()
