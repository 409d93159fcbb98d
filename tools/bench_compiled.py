"""A compiled kernel for the sub-step, measured: `python tools/bench_compiled.py` (needs numba,
which the package does not: `pip install numba`). Prints its figures; asserts nothing.

The kernel does the sub-step's linear algebra per design in compiled code (the symmetrised system,
its eigen-decomposition by cyclic Jacobi rotations, the phi-functions and the exact solution); the
conductances stay in numpy (network.node_equations). It is timed against solver.propagate_linear at
1, 24 and 128 designs (one run, a search, the band), beside node_equations itself, with the cost of
loading it in a fresh process. CHANGELOG.md quotes the figures and the decision they led to.
"""
from __future__ import annotations

import sys as _sys
from pathlib import Path as _Path

_sys.path.insert(0, str(_Path(__file__).resolve().parents[1]))   # the checkout's package, run as a script

import time

import numpy as np


def _kernel():
    from numba import njit

    @njit(cache=False)
    def jacobi_eigh(S):
        n = S.shape[0]
        A, V = S.copy(), np.eye(n)
        for _ in range(30):
            off = 0.0
            for p in range(n):
                for q in range(p + 1, n):
                    off += A[p, q] * A[p, q]
            if off < 1e-30 * (1.0 + np.sum(A * A)):
                break
            for p in range(n):
                for q in range(p + 1, n):
                    if abs(A[p, q]) < 1e-300:
                        continue
                    theta = (A[q, q] - A[p, p]) / (2.0 * A[p, q])
                    t = np.sign(theta) / (abs(theta) + np.sqrt(theta * theta + 1.0)) if theta != 0 else 1.0
                    c = 1.0 / np.sqrt(t * t + 1.0)
                    s = t * c
                    for k in range(n):
                        akp, akq = A[k, p], A[k, q]
                        A[k, p], A[k, q] = c * akp - s * akq, s * akp + c * akq
                    for k in range(n):
                        apk, aqk = A[p, k], A[q, k]
                        A[p, k], A[q, k] = c * apk - s * aqk, s * apk + c * aqk
                    for k in range(n):
                        vkp, vkq = V[k, p], V[k, q]
                        V[k, p], V[k, q] = c * vkp - s * vkq, s * vkp + c * vkq
        return np.diag(A).copy(), V

    @njit(cache=False)
    def propagate(C, L, b, T0, h):
        N, k = C.shape
        T1, T_int = np.empty((N, k)), np.empty((N, k))
        for d in range(N):
            root = np.sqrt(C[d])
            inv = 1.0 / root
            S = np.empty((k, k))
            for i in range(k):
                for j in range(k):
                    S[i, j] = -L[d, i, j] * inv[i] * inv[j]
            lam, V = jacobi_eigh(S)
            z0, w = V.T @ (T0[d] * root), V.T @ (b[d] * inv)
            z1, zi = np.empty(k), np.empty(k)
            for i in range(k):
                x = lam[i] * h[d]
                if abs(x) < 1e-4:
                    p1, p2 = 1 + x / 2 + x * x / 6, 0.5 + x / 6 + x * x / 24
                else:
                    em1 = np.expm1(x)
                    p1, p2 = em1 / x, (em1 - x) / (x * x)
                rate = lam[i] * z0[i] + w[i]
                z1[i] = z0[i] + h[d] * p1 * rate
                zi[i] = h[d] * z0[i] + h[d] * h[d] * p2 * rate
            T1[d], T_int[d] = (V @ z1) * inv, (V @ zi) * inv
        return T1, T_int
    return propagate


def _per_call_us(function, repeats=2000) -> float:
    start = time.perf_counter()
    for _ in range(repeats):
        function()
    return (time.perf_counter() - start) / repeats * 1e6


def main():
    start = time.perf_counter()
    try:
        propagate = _kernel()
    except ImportError:
        print("numba is not installed (pip install numba): nothing measured")
        return
    from thermo_budget.network import N_NODES, Inputs, node_equations
    from thermo_budget.scenario import DEFAULT_SCENARIO, load_scenario
    from thermo_budget.rig_build import build_rig
    from thermo_budget.solver import propagate_linear
    rig = build_rig(load_scenario(DEFAULT_SCENARIO))
    T = np.full((1, N_NODES), 330.0)
    C, L, b, _, _ = node_equations(rig, T, Inputs(power_W=np.full(1, 7000.0), volume_flow_m3_s=np.full(1, 7.5e-4)))
    propagate(C, L, b, T, np.full(1, 60.0))
    print(f"loading numba and compiling the kernel: {time.perf_counter() - start:.2f} s in this process")
    for n in (1, 24, 128):
        T = np.full((n, N_NODES), 330.0)
        T[:, 1] = 320.0 + 0.1 * np.arange(n)
        inputs = Inputs(power_W=np.full(n, 7000.0), volume_flow_m3_s=np.full(n, 7.5e-4))
        C, L, b, _, _ = node_equations(rig, T, inputs)
        h = np.full(n, 60.0)
        ours, compiled = propagate_linear(C, L, b, T, h), propagate(C, L, b, T, h)
        diff = max(np.max(np.abs(ours[0] - compiled[0])), np.max(np.abs(ours[1] - compiled[1])) / 60.0)
        print(f"N = {n:3d}: node_equations {_per_call_us(lambda: node_equations(rig, T, inputs)):.0f} us; "
              f"linear algebra numpy {_per_call_us(lambda: propagate_linear(C, L, b, T, h)):.0f} us, "
              f"compiled {_per_call_us(lambda: propagate(C, L, b, T, h)):.0f} us (max difference {diff:.1e} K)")


if __name__ == "__main__":
    main()
