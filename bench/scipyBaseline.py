"""Baseline for `npm run bench`: the same pinned Hamiltonian built as a stored sparse matrix with
vectorized NumPy, then SciPy's sparse eigensolver for the lowest states. Prints one JSON line.

usage: python3 bench/scipyBaseline.py SITES LEVELS STATES TUNNELLING EXCHANGE
(periodic chain, open ladder, uniform tunnelling and exchange weights, nearest-neighbour exchange)
"""
import json
import resource
import sys
import time

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import eigsh


def build(L, N, J, V):
    dim = N ** L
    idx = np.arange(dim, dtype=np.int64)
    strides = N ** np.arange(L, dtype=np.int64)
    digits = [(idx // strides[i]) % N for i in range(L)]
    rows, cols, vals = [], [], []
    for i in range(L):
        for n in range(N - 1):
            src = idx[digits[i] == n]
            dst = src + strides[i]
            rows += [dst, src]
            cols += [src, dst]
            vals += [np.full(src.size, -J), np.full(src.size, -J)]
    for i in range(L):
        j = (i + 1) % L
        for n in range(N - 1):
            src = idx[(digits[i] == n) & (digits[j] == n + 1)]
            dst = src + strides[i] - strides[j]
            rows += [dst, src]
            cols += [src, dst]
            vals += [np.full(src.size, V), np.full(src.size, V)]
    rows = np.concatenate(rows)
    cols = np.concatenate(cols)
    vals = np.concatenate(vals)
    return sp.csr_matrix((vals, (rows, cols)), shape=(dim, dim))


def main():
    L, N, k = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3])
    J, V = float(sys.argv[4]), float(sys.argv[5])
    t0 = time.perf_counter()
    H = build(L, N, J, V)
    t1 = time.perf_counter()
    x = np.random.default_rng(1).standard_normal(H.shape[0])
    reps = 5
    t2 = time.perf_counter()
    for _ in range(reps):
        H @ x
    t3 = time.perf_counter()
    counter = {"n": 0}

    def matvec(v):
        counter["n"] += 1
        return H @ v

    op = sp.linalg.LinearOperator(H.shape, matvec=matvec, dtype=np.float64)
    vals = eigsh(op, k=k, which="SA", tol=1e-10, return_eigenvectors=True)[0]
    t4 = time.perf_counter()
    print(json.dumps({
        "dimension": H.shape[0],
        "nonzeros": int(H.nnz),
        "build_s": t1 - t0,
        "matvec_s": (t3 - t2) / reps,
        "iterations": counter["n"],
        "total_s": (t1 - t0) + (t4 - t3),
        "peak_rss_bytes": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024,
        "energies": sorted(vals.tolist()),
    }))


if __name__ == "__main__":
    main()
