"""The integrator's sub-step, compiled: per design, the system frozen at a state (network.node_system),
symmetrised and eigen-decomposed (cyclic Jacobi rotations), the exact solution over the sub-step
(phi-functions), predictor then corrector, and the end state placed on the enthalpy change so that
the energy balance closes to round-off. Generic in the number of nodes k (the linear algebra), the
network's k = N_NODES. solver.py drives it; the numpy-facing decompose / propagate_* are there.
"""
from __future__ import annotations

import math

import numpy as np

from .compiled import kernel
from .network import OIL, enthalpy, node_system, temperatures
from .oil import oil_transport
from .rig_params import AMBIENT, OIL_FIRST

JACOBI_SWEEPS = 50


@kernel
def jacobi_eigh(A, lam, V):
    """Eigenvalues (into lam) and eigenvectors (columns of V) of the symmetric A (overwritten), by
    cyclic Jacobi rotations (Golub and Van Loan, Matrix Computations, 4th ed., sec. 8.5), to the
    round-off of A's Frobenius norm. Never raises."""
    n = A.shape[0]
    total = 0.0
    for i in range(n):
        for j in range(n):
            V[i, j] = 1.0 if i == j else 0.0
            total += A[i, j] * A[i, j]
    for _ in range(JACOBI_SWEEPS):
        off = 0.0
        for p in range(n):
            for q in range(p + 1, n):
                off += A[p, q] * A[p, q]
        if not off > 1e-32 * total:
            break
        for p in range(n):
            for q in range(p + 1, n):
                apq = A[p, q]
                if apq == 0.0:
                    continue
                theta = (A[q, q] - A[p, p]) / (2.0 * apq)
                t = (1.0 if theta >= 0 else -1.0) / (abs(theta) + math.sqrt(theta * theta + 1.0))
                c = 1.0 / math.sqrt(t * t + 1.0)
                s = t * c
                for r in range(n):
                    a_rp, a_rq = A[r, p], A[r, q]
                    A[r, p], A[r, q] = c * a_rp - s * a_rq, s * a_rp + c * a_rq
                for r in range(n):
                    a_pr, a_qr = A[p, r], A[q, r]
                    A[p, r], A[q, r] = c * a_pr - s * a_qr, s * a_pr + c * a_qr
                for r in range(n):
                    v_rp, v_rq = V[r, p], V[r, q]
                    V[r, p], V[r, q] = c * v_rp - s * v_rq, s * v_rp + c * v_rq
    for i in range(n):
        lam[i] = A[i, i]


@kernel
def decompose_one(C, L, root, inv_root, lam, V):
    """S = -C^-1/2 L C^-1/2 of C dT/dt = -L T + b, eigen-decomposed into (root, inv_root, lam, V).
    Returns True (failed) where the system is not finite: then lam = 0, V = I (no change)."""
    k = C.shape[0]
    S = np.empty((k, k))
    finite = True
    for i in range(k):
        root[i] = math.sqrt(C[i])
        inv_root[i] = 1.0 / root[i]
    for i in range(k):
        for j in range(k):
            S[i, j] = -L[i, j] * inv_root[i] * inv_root[j]
            finite = finite and math.isfinite(S[i, j])
    if not finite:
        S[:, :] = 0.0
    jacobi_eigh(S, lam, V)
    return not finite


@kernel
def propagate_one(root, inv_root, lam, V, failed, b, T0, h, with_integral, T1, T_int):
    """Exact solution over h seconds of the decomposed system with source b (W) from T0 (K): T(h)
    into T1 and, with_integral, the integral of T over the sub-step (K s) into T_int. A design whose
    system or result is not finite keeps its state (T1 = T0, T_int = T0 h)."""
    k = T0.shape[0]
    z0, w, z1, zi = np.empty(k), np.empty(k), np.empty(k), np.empty(k)
    for i in range(k):
        z0[i] = 0.0
        w[i] = 0.0
        for j in range(k):
            z0[i] += V[j, i] * T0[j] * root[j]
            w[i] += V[j, i] * b[j] * inv_root[j]
    for i in range(k):
        x = lam[i] * h
        if abs(x) < 1e-4:
            phi1, phi2 = 1.0 + x / 2.0 + x * x / 6.0, 0.5 + x / 6.0 + x * x / 24.0
        else:
            em1 = math.expm1(x)
            phi1, phi2 = em1 / x, (em1 - x) / (x * x)
        rate = lam[i] * z0[i] + w[i]
        z1[i] = z0[i] + h * phi1 * rate
        zi[i] = h * z0[i] + h * h * phi2 * rate
    bad = failed
    for i in range(k):
        T1[i] = 0.0
        T_int[i] = 0.0
        for j in range(k):
            T1[i] += V[i, j] * z1[j]
            T_int[i] += V[i, j] * zi[j]
        T1[i] *= inv_root[i]
        T_int[i] *= inv_root[i]
        bad = bad or not math.isfinite(T1[i]) or (with_integral and not math.isfinite(T_int[i]))
    if bad:
        for i in range(k):
            T1[i] = T0[i]
            T_int[i] = T0[i] * h


@kernel
def advance(params, T0, flow, power, h, air, reuse, sys_b, sys_root, sys_inv, sys_lam, sys_V, sys_failed):
    """One sub-step for every design: the predictor (the system at T0, or where `reuse`, the one
    passed in sys_*), the corrector frozen at the predicted mid-point, the energy-exact end state.
    The corrector's system is written into sys_* (the next sub-step with the same inputs reuses it).
    Returns (T1 (N,k), heat in (N,) J, heat lost (N,) J, return-line rise at T1 (N,) K)."""
    n, k = T0.shape
    T1, heat_in, heat_lost, rise = np.empty((n, k)), np.empty(n), np.empty(n), np.empty(n)
    C, L, g = np.empty(k), np.empty((k, k)), np.empty(k)
    T_pred, T_mid, T_lin, T_int, H = np.empty(k), np.empty(k), np.empty(k), np.empty(k), np.empty(k)
    for d in range(n):
        p = params[d if params.shape[0] > 1 else 0]
        if not reuse:
            node_system(p, T0[d], flow[d], power[d], air, C, L, sys_b[d], g)
            sys_failed[d] = decompose_one(C, L, sys_root[d], sys_inv[d], sys_lam[d], sys_V[d])
        propagate_one(sys_root[d], sys_inv[d], sys_lam[d], sys_V[d], sys_failed[d], sys_b[d], T0[d], h[d], False,
                      T_pred, T_int)
        for i in range(k):
            T_mid[i] = 0.5 * (T0[d, i] + T_pred[i])
        offset = node_system(p, T_mid, flow[d], power[d], air, C, L, sys_b[d], g)
        sys_failed[d] = decompose_one(C, L, sys_root[d], sys_inv[d], sys_lam[d], sys_V[d])
        propagate_one(sys_root[d], sys_inv[d], sys_lam[d], sys_V[d], sys_failed[d], sys_b[d], T0[d], h[d], True,
                      T_lin, T_int)
        heat_in[d] = power[d] * h[d]
        lost = 0.0
        for i in range(k):
            lost += g[i] * (T_int[i] - p[AMBIENT] * h[d])
        heat_lost[d] = lost + offset * h[d]
        enthalpy(p, T0[d], H)
        for i in range(k):
            H[i] += C[i] * (T_lin[i] - T0[d, i])
        temperatures(p, H, T1[d])
        rise[d] = 0.0
        if flow[d] > 0:
            _, _, cp, rho, _ = oil_transport(p[OIL_FIRST:], T1[d, OIL])
            rise[d] = power[d] / max(rho * flow[d] * cp, 1e-30)
    return T1, heat_in, heat_lost, rise


@kernel
def decompose_many(C, L):
    n, k = C.shape
    root, inv_root, lam, V = np.empty((n, k)), np.empty((n, k)), np.empty((n, k)), np.empty((n, k, k))
    failed = np.zeros(n, np.bool_)
    for d in range(n):
        failed[d] = decompose_one(C[d], L[d], root[d], inv_root[d], lam[d], V[d])
    return root, inv_root, lam, V, failed


@kernel
def propagate_many(root, inv_root, lam, V, failed, b, T0, h, with_integral):
    n, k = T0.shape
    T1, T_int = np.empty((n, k)), np.empty((n, k))
    for d in range(n):
        propagate_one(root[d], inv_root[d], lam[d], V[d], failed[d], b[d], T0[d], h[d], with_integral, T1[d], T_int[d])
    return T1, T_int
