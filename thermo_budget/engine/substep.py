"""The integrator's sub-step, compiled: per design, the system frozen at a state (network.node_system),
symmetrised and eigen-decomposed (cyclic Jacobi rotations), the exact solution over the sub-step
(phi-functions), predictor then corrector, and the end state placed on the enthalpy change so that
the energy balance closes to round-off. Generic in the number of nodes k (the linear algebra), the
network's k = N_NODES. solver.py drives it; the numpy-facing decompose / propagate_* are there.
"""
from __future__ import annotations

import math

import numpy as np

from ..physics.compiled import kernel, parallel_kernel, prange
from ..physics.network import OIL, enthalpy, node_system, temperatures
from ..physics.oil import oil_transport
from ..physics.rig_params import AMBIENT, OIL_FIRST

JACOBI_SWEEPS = 50
# Off-diagonal sum of squares, relative to the whole, at which the rotations stop: off-diagonals at
# 1e-13 of the norm, so that the step solves a system within 1e-13 of its own (about 1e-9 K on the
# peaks, against 1e-6 K asked; one sweep fewer than round-off).
JACOBI_TOLERANCE = 1e-26


@kernel
def jacobi_eigh(A, lam, V):
    """Eigenvalues (into lam) and eigenvectors (columns of V) of the symmetric matrix V A V^T, by
    cyclic Jacobi rotations (Golub and Van Loan, Matrix Computations, 4th ed., sec. 8.5) applied to
    A (overwritten) and accumulated into V, to the round-off of A's Frobenius norm. V = I decomposes
    A itself; V = the eigenvectors of a nearby matrix (A = V^T S V) starts close, so that one or two
    sweeps finish it. Never raises."""
    n = A.shape[0]
    total = 0.0
    for i in range(n):
        for j in range(n):
            total += A[i, j] * A[i, j]
    for _ in range(JACOBI_SWEEPS):
        off = 0.0
        for p in range(n):
            for q in range(p + 1, n):
                off += A[p, q] * A[p, q]
        if not off > JACOBI_TOLERANCE * total:
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
                A[p, p] -= t * apq          # the rotation's effect on the pair (Numerical Recipes, 3rd ed., eq. 11.1.14)
                A[q, q] += t * apq
                A[p, q] = A[q, p] = 0.0
                for r in range(n):
                    if r != p and r != q:
                        a_rp, a_rq = A[r, p], A[r, q]
                        A[r, p] = A[p, r] = c * a_rp - s * a_rq
                        A[r, q] = A[q, r] = s * a_rp + c * a_rq
                for r in range(n):
                    v_rp, v_rq = V[r, p], V[r, q]
                    V[r, p], V[r, q] = c * v_rp - s * v_rq, s * v_rp + c * v_rq
    for i in range(n):
        lam[i] = A[i, i]


@kernel
def orthonormalise_columns(V):
    """V's columns made orthonormal in place (modified Gram-Schmidt): a warm start carried through
    thousands of sub-steps' rotations would otherwise drift from orthogonal by round-off (3e-12 in a
    200-pull day), and V^T S V would then no longer be similar to S. A V that is not a warm start
    at all (not finite, or a column nearly dependent on the others: room never filled) becomes I."""
    k = V.shape[0]
    for j in range(k):
        for i in range(j):
            dot = 0.0
            for r in range(k):
                dot += V[r, i] * V[r, j]
            for r in range(k):
                V[r, j] -= dot * V[r, i]
        norm = 0.0
        for r in range(k):
            norm += V[r, j] * V[r, j]
        norm = math.sqrt(norm)
        if not norm > 1e-3:         # an orthonormal start's columns keep a norm near 1
            for r in range(k):
                for c in range(k):
                    V[r, c] = 1.0 if r == c else 0.0
            return
        for r in range(k):
            V[r, j] /= norm


@kernel
def decompose_one(C, L, root, inv_root, lam, V, warm, S, W):
    """S = -C^-1/2 L C^-1/2 of C dT/dt = -L T + b, eigen-decomposed into (root, inv_root, lam, V).
    warm: V holds the eigenvectors of a nearby system to start from (jacobi_eigh). S, W: (k, k)
    scratch. Returns True (failed) where the system is not finite: then lam = 0, V = I (no change)."""
    k = C.shape[0]
    finite = True
    for i in range(k):
        root[i] = math.sqrt(C[i])
        inv_root[i] = 1.0 / root[i]
    for i in range(k):
        for j in range(k):
            S[i, j] = -L[i, j] * inv_root[i] * inv_root[j]
            finite = finite and math.isfinite(S[i, j])
    if not finite or not warm:
        for i in range(k):
            for j in range(k):
                V[i, j] = 1.0 if i == j else 0.0
                if not finite:
                    S[i, j] = 0.0
    else:       # S in the basis of V: W = S V, then S = V^T W, its upper half mirrored (exactly symmetric)
        orthonormalise_columns(V)
        for i in range(k):
            for j in range(k):
                acc = 0.0
                for m in range(k):
                    acc += S[i, m] * V[m, j]
                W[i, j] = acc
        for i in range(k):
            for j in range(i, k):
                acc = 0.0
                for m in range(k):
                    acc += V[m, i] * W[m, j]
                S[i, j] = S[j, i] = acc
    jacobi_eigh(S, lam, V)
    return not finite


@kernel
def propagate_one(root, inv_root, lam, V, failed, b, T0, h, with_integral, T1, T_int, work):
    """Exact solution over h seconds of the decomposed system with source b (W) from T0 (K): T(h)
    into T1 and, with_integral, the integral of T over the sub-step (K s) into T_int. A design whose
    system or result is not finite keeps its state (T1 = T0, T_int = T0 h). work: (4, k) scratch."""
    k = T0.shape[0]
    z0, w, z1, zi = work[0], work[1], work[2], work[3]
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
def substep_one(p, T0, flow, power, h, air, reuse, failed, sys_b, sys_root, sys_inv, sys_lam, sys_V, T1, scratch,
                mats):
    """One sub-step of one design: the predictor (the system at T0, or where `reuse`, the one in
    sys_*, `failed` its flag), the corrector frozen at the predicted mid-point (its system written
    into sys_*), the energy-exact end state into T1. scratch (11, k), mats (3, k, k): work space.
    Returns (the corrector's failed flag, heat in J, heat lost J, return-line rise at T1 K)."""
    k = T0.shape[0]
    C, g, T_pred, T_mid, T_lin, T_int, H = (scratch[0], scratch[1], scratch[2], scratch[3], scratch[4], scratch[5],
                                            scratch[6])
    work = scratch[7:11]
    L, S, W = mats[0], mats[1], mats[2]
    if not reuse:       # sys_V: the last system's eigenvectors (or I), a warm start for the rotations
        node_system(p, T0, flow, power, air, C, L, sys_b, g)
        failed = decompose_one(C, L, sys_root, sys_inv, sys_lam, sys_V, True, S, W)
    propagate_one(sys_root, sys_inv, sys_lam, sys_V, failed, sys_b, T0, h, False, T_pred, T_int, work)
    for i in range(k):
        T_mid[i] = 0.5 * (T0[i] + T_pred[i])
    offset = node_system(p, T_mid, flow, power, air, C, L, sys_b, g)
    failed = decompose_one(C, L, sys_root, sys_inv, sys_lam, sys_V, not failed, S, W)
    propagate_one(sys_root, sys_inv, sys_lam, sys_V, failed, sys_b, T0, h, True, T_lin, T_int, work)
    lost = 0.0
    for i in range(k):
        lost += g[i] * (T_int[i] - p[AMBIENT] * h)
    enthalpy(p, T0, H)
    for i in range(k):
        H[i] += C[i] * (T_lin[i] - T0[i])
    temperatures(p, H, T1)
    return failed, power * h, lost + offset * h, return_rise(p, T1[OIL], flow, power)


@kernel
def return_rise(p, T_oil_K, flow, power):
    """Return-line oil temperature minus bulk, P / (m_dot c_p), K; 0 with no flow."""
    if not flow > 0:
        return 0.0
    _, _, cp, rho, _ = oil_transport(p[OIL_FIRST:], T_oil_K)
    return power / max(rho * flow * cp, 1e-30)


@kernel
def advance_design(d, params, T, held, T_first, flows, powers, h, air, constant, reuse_first, give_up_above_K,
                   sys_b, sys_root, sys_inv, sys_lam, sys_V, sys_failed, energy_in, energy_lost, temps, rises):
    """The sub-steps of one step for design d (advance_step's, its results into temps[:, d] and
    rises[:, d])."""
    k = T.shape[1]
    scratch, mats, T1 = np.empty((11, k)), np.empty((3, k, k)), np.empty(k)
    p = params[d] if params.shape[0] > 1 else params[0]
    for j in range(flows.shape[0]):
        was_held = held[d]
        T0 = T_first[d] if was_held else T[d]
        reuse = (j > 0 or (constant and reuse_first)) and not was_held
        failed, q_in, q_lost, rise = substep_one(p, T0, flows[j, d], powers[j, d], h[d], air, reuse, sys_failed[d],
                                                 sys_b[d], sys_root[d], sys_inv[d], sys_lam[d], sys_V[d], T1,
                                                 scratch, mats)
        sys_failed[d] = failed
        finite = True
        for i in range(k):
            finite = finite and math.isfinite(T1[i])
        if was_held or not finite:
            held[d] = True
            q_in, q_lost = 0.0, 0.0
            rise = return_rise(p, T[d, OIL], flows[j, d], powers[j, d])
        else:
            for i in range(k):
                T[d, i] = T1[i]
        if T[d, OIL] > give_up_above_K:
            held[d] = True
        energy_in[d] += q_in
        energy_lost[d] += q_lost
        rises[j, d] = rise
        for i in range(k):
            temps[j, d, i] = T[d, i]


@kernel
def advance_step(params, T, held, T_first, flows, powers, h, air, constant, reuse_first, give_up_above_K,
                 sys_b, sys_root, sys_inv, sys_lam, sys_V, sys_failed, energy_in, energy_lost):
    """The sub-steps of one step for every design (flows, powers: (m, N), one row per sub-step).

    T (N,k) is advanced in place; held (N,) designs (not finite, or their oil past give_up_above_K)
    keep their state and gain no heat; their evaluation is at T_first (its result discarded). The
    predictor of a sub-step is the design's last corrector system (sys_*): from the second sub-step
    on (within a step the inputs are constant, or an engine curve's change little from one sub-step
    to the next; the corrector is always frozen at the sub-step's own), from the first where the
    inputs are constant and reuse_first, and never while the design is held. Each design's sub-steps
    are its own, whatever the batch holds (advance_design). energy_in and energy_lost (N,)
    accumulate, J. Returns (the states after each sub-step (m,N,k), the return-line rise at them
    (m,N) K)."""
    m, n = flows.shape[0], T.shape[0]
    temps, rises = np.empty((m, n, T.shape[1])), np.empty((m, n))
    for d in range(n):
        advance_design(d, params, T, held, T_first, flows, powers, h, air, constant, reuse_first, give_up_above_K,
                       sys_b, sys_root, sys_inv, sys_lam, sys_V, sys_failed, energy_in, energy_lost, temps, rises)
    return temps, rises


# From this many designs in a batch a step runs on every core (a thread per core; below it the
# threads' start costs more than they save).
PARALLEL_FROM_DESIGNS = 16


@parallel_kernel
def advance_step_parallel(params, T, held, T_first, flows, powers, h, air, constant, reuse_first, give_up_above_K,
                          sys_b, sys_root, sys_inv, sys_lam, sys_V, sys_failed, energy_in, energy_lost):
    """advance_step with the designs shared among threads, to the same bits (the designs are
    independent)."""
    m, n = flows.shape[0], T.shape[0]
    temps, rises = np.empty((m, n, T.shape[1])), np.empty((m, n))
    for d in prange(n):
        advance_design(np.int64(d), params, T, held, T_first, flows, powers, h, air, constant, reuse_first,
                       give_up_above_K, sys_b, sys_root, sys_inv, sys_lam, sys_V, sys_failed, energy_in, energy_lost,
                       temps, rises)
    return temps, rises


@kernel
def decompose_many(C, L):
    n, k = C.shape
    root, inv_root, lam, V = np.empty((n, k)), np.empty((n, k)), np.empty((n, k)), np.empty((n, k, k))
    failed = np.zeros(n, np.bool_)
    S, W = np.empty((k, k)), np.empty((k, k))
    for d in range(n):
        failed[d] = decompose_one(C[d], L[d], root[d], inv_root[d], lam[d], V[d], False, S, W)
    return root, inv_root, lam, V, failed


@kernel
def propagate_many(root, inv_root, lam, V, failed, b, T0, h, with_integral):
    n, k = T0.shape
    T1, T_int, work = np.empty((n, k)), np.empty((n, k)), np.empty((4, k))
    for d in range(n):
        propagate_one(root[d], inv_root[d], lam[d], V[d], failed[d], b[d], T0[d], h[d], with_integral, T1[d], T_int[d],
                      work)
    return T1, T_int
