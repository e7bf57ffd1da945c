#!/usr/bin/env python3
# qualify benchmarks: times SciPy's HiGHS (scipy.optimize.linprog) on LPs written by lp_peers.hpp.
# SPDX-License-Identifier: MIT
"""Usage: highs_peer.py METHODS FILE...  (METHODS: comma-separated, of highs, highs-ipm, highs-ds)

Each FILE holds one LP  min c^T x + c0  s.t.  row_lower <= A x <= row_upper,
col_lower <= x <= col_upper  in the layout of lp_peers.hpp's write_lp_file. Reading the file
and converting it to linprog's form (A_ub x <= b_ub, A_eq x = b_eq, bounds; a two-sided row
becomes two rows of A_ub) are not timed; linprog itself is, with time.perf_counter, as the
best of up to 5 runs within about 1 s. Prints one line per file and method:
FILE METHOD STATUS OBJECTIVE SECONDS (STATUS is linprog's: 0 optimal, 2 infeasible, 3
unbounded).
"""
import struct
import sys
import time

import numpy as np
from scipy import sparse
from scipy.optimize import linprog


def read_lp(path):
    with open(path, "rb") as f:
        data = f.read()
    m, n, nnz = struct.unpack_from("<3q", data, 0)
    at = 24

    def doubles(k):
        nonlocal at
        v = np.frombuffer(data, dtype="<f8", count=k, offset=at)
        at += 8 * k
        return v

    def ints(k):
        nonlocal at
        v = np.frombuffer(data, dtype="<i8", count=k, offset=at)
        at += 8 * k
        return v

    c, rl, ru, cl, cu = doubles(n), doubles(m), doubles(m), doubles(n), doubles(n)
    c0 = doubles(1)[0]
    ptr, idx, val = ints(n + 1), ints(nnz), doubles(nnz)
    A = sparse.csc_matrix((val, idx, ptr), shape=(m, n)).tocsr()
    return A, c, rl, ru, cl, cu, c0


def linprog_form(A, rl, ru):
    equal = rl == ru
    upper = np.isfinite(ru) & ~equal
    lower = np.isfinite(rl) & ~equal
    A_ub = sparse.vstack([A[upper], -A[lower]]).tocsr()
    b_ub = np.concatenate([ru[upper], -rl[lower]])
    return A_ub, b_ub, A[equal].tocsr(), rl[equal]


def main():
    methods, files = sys.argv[1].split(","), sys.argv[2:]
    for path in files:
        A, c, rl, ru, cl, cu, c0 = read_lp(path)
        A_ub, b_ub, A_eq, b_eq = linprog_form(A, rl, ru)
        kwargs = dict(bounds=np.column_stack([cl, cu]))
        if A_ub.shape[0] > 0:
            kwargs.update(A_ub=A_ub, b_ub=b_ub)
        if A_eq.shape[0] > 0:
            kwargs.update(A_eq=A_eq, b_eq=b_eq)
        for method in methods:
            best, spent, runs, result = float("inf"), 0.0, 0, None
            while runs < 5 and (runs == 0 or spent < 1.0):
                t0 = time.perf_counter()
                result = linprog(c, method=method, **kwargs)
                t = time.perf_counter() - t0
                best, spent, runs = min(best, t), spent + t, runs + 1
            objective = result.fun + c0 if result.status == 0 else float("nan")
            print(f"{path} {method} {result.status} {objective!r} {best!r}", flush=True)


if __name__ == "__main__":
    main()
