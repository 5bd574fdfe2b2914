"""Which method for large linear networks: measured at equal accuracy (issue 14, item 3).

A chain of N nodes (capacities 1-10 kJ/K, links 0.01-0.1 K/W, a skin to a daily outdoor sine
every 100 nodes, a 200 W heater stepping on at 1 h in the middle), 6 hours at one-minute output.
The reference is rcsim's exact path (N = 2,000 is within its limit). Compared, each timed from
the assembled matrices, with the largest temperature difference to the reference:

* rcsim's large-linear path (SDIRK3, one sparse factorisation per step length, step doubling)
  and the general stiff path (BDF), each at its default tolerances and at tighter ones;
* a reduced modal basis: the k slowest modes from ``scipy.sparse.linalg.eigsh`` (shift-invert on
  the generalised problem K v = lambda C v), advanced exactly with first-order-hold inputs, plus
  the exact static correction of the modes left out (K^-1 E - V_k Lambda_k^-1 V_k^T E) w(t);
* Krylov exponentials: ``scipy.sparse.linalg.expm_multiply`` on the system augmented with the
  input and its slope over each output step (first-order hold), one call per step.

Run:  python tests/benchmarks/bench_large.py [--nodes 2000] [--hours 6]
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla


def chain(n):
    import rcsim

    rng = np.random.default_rng(0)
    net = rcsim.Network()
    net.add_boundary("amb", temperature=rcsim.Sine(mean=20, amplitude=5, period=86400))
    for i in range(n):
        net.add_node(f"n{i}", capacity=float(rng.uniform(1e3, 1e4)), initial=20.0)
    for i in range(n - 1):
        net.add_link(f"n{i}", f"n{i+1}", resistance=float(rng.uniform(0.01, 0.1)))
    for i in range(0, n, 100):
        net.add_link(f"n{i}", "amb", resistance=1.0, name=f"skin{i}")
    net.add_source(f"n{n // 2}", power=rcsim.Steps([0, 3600], [0.0, 200.0]))
    return net


def inputs(asm, t):
    profiles = list(asm.boundary_profiles) + list(asm.source_profiles)
    return np.column_stack([p.value(t) for p in profiles])


def modal_reduced(asm, t, T0, k):
    """k slowest modes exactly (first-order hold) plus the static correction of the rest."""
    from rcsim.statespace import state_space

    ss = state_space(asm)
    C, K, E = ss.C, ss.K.tocsc(), ss.E.toarray()
    lam, V = spla.eigsh(K, k=k, M=sp.diags(C).tocsc(), sigma=0.0, which="LM")
    V = V / np.sqrt(np.einsum("ij,i,ij->j", V, C, V))[None, :]     # C-orthonormal
    W = V.T @ E
    static = spla.splu(K).solve(E) - V @ (W / lam[:, None])          # (n, I)
    U = inputs(asm, t)
    h = float(t[1] - t[0])
    x = lam * h
    e0, e1 = np.exp(-x), -np.expm1(-x) / x
    e2 = (1 - e1) / x
    F = U @ W.T
    z = V.T @ (C * T0)                        # the slow modes of the start (V^T C static = 0)
    Z = np.empty((t.size, k))
    Z[0] = z
    for j in range(1, t.size):                # a short loop over samples (a baseline only)
        z = e0 * z + h * ((e1 - e2) * F[j - 1] + e2 * F[j])
        Z[j] = z
    return Z @ V.T + U @ static.T


def krylov(asm, t, T0):
    """expm_multiply on [T; w; dw/dt] with first-order-hold inputs, one call per step."""
    from rcsim.statespace import state_space

    ss = state_space(asm)
    C, K, E = ss.C, ss.K, ss.E
    n, I = ss.n, E.shape[1]
    Cinv = sp.diags(1.0 / C)
    A = sp.bmat([[-Cinv @ K, Cinv @ E, None],
                 [None, sp.csr_matrix((I, I)), sp.identity(I)],
                 [None, None, sp.csr_matrix((I, I))]]).tocsc()
    U = inputs(asm, t)
    h = float(t[1] - t[0])
    out = np.empty((t.size, n))
    out[0] = T0
    y = T0.copy()
    for j in range(1, t.size):
        v = np.concatenate([y, U[j - 1], (U[j] - U[j - 1]) / h])
        y = spla.expm_multiply(A * h, v)[:n]
        out[j] = y
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--nodes", type=int, default=2000)
    ap.add_argument("--hours", type=float, default=6.0)
    args = ap.parse_args(argv)
    from rcsim.threads import kernels

    net = chain(args.nodes)
    asm = net.assemble()
    duration = args.hours * 3600.0
    print(f"{args.nodes}-node chain, {args.hours:g} h at 1 min output; load average "
          f"{os.getloadavg()[0]:.2f}")
    t0 = time.perf_counter()
    ref = net.simulate(duration, 60.0, solver="exact")
    t_exact = time.perf_counter() - t0
    T_ref = ref.temperatures.to_numpy()
    t = ref.time
    rows = [("exact path (reference)", t_exact, 0.0)]
    for label, solver, kw in (
            ("large-linear, default tolerances", "large-linear", {}),
            ("large-linear, rtol = atol = 1e-8", "large-linear", {"rtol": 1e-8, "atol": 1e-8}),
            ("stiff path (BDF), default tolerances", "stiff", {}),
            ("stiff path (BDF), rtol = atol = 1e-8", "stiff", {"rtol": 1e-8, "atol": 1e-8})):
        t0 = time.perf_counter()
        res = net.simulate(duration, 60.0, solver=solver, **kw)
        rows.append((label, time.perf_counter() - t0,
                     float(np.abs(res.temperatures.to_numpy() - T_ref).max())))
    with kernels():
        for k in (20, 100, 400):
            t0 = time.perf_counter()
            T = modal_reduced(asm, t, T_ref[0], k)
            rows.append((f"reduced modal basis, {k} modes + static", time.perf_counter() - t0,
                         float(np.abs(T - T_ref).max())))
        n_steps = min(t.size - 1, 30)
        t0 = time.perf_counter()
        T = krylov(asm, t[:n_steps + 1], T_ref[0])
        per_step = (time.perf_counter() - t0) / n_steps
        rows.append((f"expm_multiply (first {n_steps} steps, time scaled to the run)",
                     per_step * (t.size - 1), float(np.abs(T - T_ref[:n_steps + 1]).max())))
    print(f"  {'method':<58} {'time [s]':>9} {'max |dT| [K]':>13}")
    for label, secs, err in rows:
        print(f"  {label:<58} {secs:9.2f} {err:13.1e}")


if __name__ == "__main__":
    sys.exit(main())
