"""Peer timing for the solver benchmark: the same square case discretised
independently (5-point finite volumes, permittivity per cell, Dirichlet top
and bottom rows eliminated) and solved with pyamg's smoothed-aggregation
solver as a CG preconditioner, setup included.

Not part of the test suite. Needs numpy, scipy and pyamg:
    pip install numpy scipy pyamg
    python3 benches/peer_pyamg.py 1024
Prints the same columns as `cargo bench --bench solver` where they apply,
and the potential at the centre as a fraction of the applied voltage.
"""
import sys
import time

import numpy as np
import scipy.sparse as sp
import pyamg


def build(n):
    h = 1.0 / (n - 1)
    xc = (np.arange(n - 1) + 0.5) * h
    X, Y = np.meshgrid(xc, xc)  # cell centres, rows = y
    eps = np.where(Y < 0.5, 4.0, 1.0)
    eps[(X - 0.5) ** 2 + (Y - 0.5) ** 2 <= 0.15 ** 2] = 80.0
    idx = np.arange(n * n).reshape(n, n)  # node (j, i)
    rows, cols, vals = [], [], []
    # horizontal edges (j, i)-(j, i+1): half cells above and below
    gx = np.zeros((n, n - 1))
    gx[:-1, :] += 0.5 * eps
    gx[1:, :] += 0.5 * eps
    gy = np.zeros((n - 1, n))
    gy[:, :-1] += 0.5 * eps
    gy[:, 1:] += 0.5 * eps
    a = idx[:, :-1].ravel(); b = idx[:, 1:].ravel(); g = gx.ravel()
    c = idx[:-1, :].ravel(); d = idx[1:, :].ravel(); k = gy.ravel()
    i_all = np.concatenate([a, b, a, b, c, d, c, d])
    j_all = np.concatenate([a, b, b, a, c, d, d, c])
    v_all = np.concatenate([g, g, -g, -g, k, k, -k, -k])
    A = sp.csr_matrix((v_all, (i_all, j_all)), shape=(n * n, n * n))
    phi_fixed = np.zeros(n * n)
    fixed = np.zeros(n * n, dtype=bool)
    fixed[idx[0, :]] = True
    fixed[idx[-1, :]] = True
    phi_fixed[idx[-1, :]] = 1.0
    free = ~fixed
    Aff = A[free][:, free].tocsr()
    rhs = -A[free][:, fixed] @ phi_fixed[fixed]
    return Aff, rhs, free, phi_fixed, idx


def main():
    sizes = [int(s) for s in sys.argv[1:]] or [256, 512, 1024, 2048]
    print("nodes unknowns setup solve total iter centre/V")
    for n in sizes:
        A, b, free, phi, idx = build(n)
        t = time.perf_counter()
        ml = pyamg.smoothed_aggregation_solver(A)
        setup = time.perf_counter() - t
        res = []
        t = time.perf_counter()
        x = ml.solve(b, tol=1e-8, accel="cg", residuals=res)
        solve = time.perf_counter() - t
        phi[free] = x
        centre = phi[idx[n // 2, n // 2]] if n % 2 else 0.25 * (
            phi[idx[n // 2, n // 2]] + phi[idx[n // 2 - 1, n // 2]] + phi[idx[n // 2, n // 2 - 1]] + phi[idx[n // 2 - 1, n // 2 - 1]])
        rel = np.linalg.norm(b - A @ x) / np.linalg.norm(b)
        print(f"{n}² {A.shape[0]} {setup:.3f} {solve:.3f} {setup + solve:.3f} {len(res) - 1} {centre:.6f} (rel {rel:.1e})")


if __name__ == "__main__":
    main()
