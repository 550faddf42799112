#!/usr/bin/python3
"""What an engineer would write instead of knee: Newton-Raphson on the MNA equations of
the bench ladder (bench/gen_circuits.py, same parts and values), with the Jacobian
assembled by NumPy and factored by SciPy's sparse LU (scipy.sparse.linalg.splu) at every
step, the same junction limiting and the same convergence tests as knee's defaults
(docs/solver.md): |dx| <= 1e-6 V + 1e-6 |x| and |F| <= 1e-12 A + 1e-6 flow.

Usage: scipy_newton.py N [REPEATS]
Prints key=value pairs: steps, solve_s (best of REPEATS), v_first, v_last.
"""

import sys
import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

K_BOLTZMANN = 1.380649e-23
Q_ELECTRON = 1.602176634e-19
VT = K_BOLTZMANN * (25.0 + 273.15) / Q_ELECTRON
IS, N_IDEAL, VBR, IBR = 2e-9, 1.9, 75.0, 5e-6
NVT = N_IDEAL * VT
G = 1.0 / 100.0
VSRC = 5.0
EXP_LIMIT = 80.0


def safe_exp(x):
    return np.where(x <= EXP_LIMIT, np.exp(np.minimum(x, EXP_LIMIT)),
                    np.exp(EXP_LIMIT) * (1.0 + x - EXP_LIMIT))


def diode(v):
    x = v / NVT
    y = -(v + VBR) / VT
    i = IS * np.where(x <= EXP_LIMIT, np.expm1(np.minimum(x, EXP_LIMIT)), safe_exp(x) - 1.0)
    g = IS / NVT * np.exp(np.minimum(x, EXP_LIMIT))
    i -= IBR * safe_exp(y)
    g += IBR / VT * np.exp(np.minimum(y, EXP_LIMIT))
    return i, g


def limit(v_old, v_new):
    v_crit = NVT * np.log(NVT / (np.sqrt(2.0) * IS))
    base = np.maximum(v_old, v_crit)
    mask = (v_new > v_crit) & (v_new - v_old > 2.0 * NVT) & (v_new > base)
    limited = np.where(mask, base + NVT * np.log1p(np.maximum(v_new - base, 0.0) / NVT), v_new)
    return limited, bool(mask.any())


def solve(n):
    # Unknowns: v[0] = src, v[1..n] = n1..nN, x[n+1] = source current.
    size = n + 2
    k = np.arange(1, n + 1)
    # Pattern of the resistors (between k-1 and k), the diodes (k, k) and the source.
    rows = np.concatenate([k - 1, k - 1, k, k, k, [0, n + 1]])
    cols = np.concatenate([k - 1, k, k - 1, k, k, [n + 1, 0]])
    x = np.zeros(size)
    v_eval = np.zeros(n)
    steps = 0
    update_ok = False
    for step in range(1, 201):
        v = x[: n + 1]
        vd = v[1:]
        at, limited = limit(v_eval, vd) if step > 1 else (vd.copy(), False)
        v_eval = at
        i_d, g_d = diode(at)
        i_d = i_d + g_d * (vd - at)
        i_r = G * (v[:-1] - v[1:])
        f = np.zeros(size)
        flow = np.zeros(size)
        np.add.at(f, k - 1, i_r)
        np.add.at(f, k, -i_r + i_d)
        f[0] += x[n + 1]
        f[n + 1] = v[0] - VSRC
        flow[k - 1] = np.abs(i_r)
        flow[k] = np.maximum(np.abs(i_r), np.abs(i_d))
        residual_ok = bool(np.all(np.abs(f[: n + 1]) <= 1e-12 + 1e-6 * flow[: n + 1]))
        residual_ok &= abs(f[n + 1]) <= 1e-6
        if step > 1 and update_ok and not limited and residual_ok:
            break
        steps = step
        gr = np.full(n, G)
        data = np.concatenate([gr, -gr, -gr, gr, g_d, [1.0, 1.0]])
        jac = sp.csc_matrix((data, (rows, cols)), shape=(size, size))
        dx = spla.splu(jac).solve(-f)
        x += dx
        tol = np.concatenate([1e-6 + 1e-6 * np.abs(x[: n + 1]), [1e-12 + 1e-6 * abs(x[n + 1])]])
        update_ok = bool(np.all(np.abs(dx) <= tol))
    return steps, x


def main():
    if len(sys.argv) < 2:
        sys.exit(__doc__)
    n = int(sys.argv[1])
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        steps, x = solve(n)
        best = min(best, time.perf_counter() - t0)
    print(f"steps={steps} solve_s={best:.6e} v_first={x[1]:.12g} v_last={x[n]:.12g}")


if __name__ == "__main__":
    main()
