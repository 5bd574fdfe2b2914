"""Reference solutions for conduction through the walls of a box, shared by tests: steady heat
flow by finite volumes of our own (scipy.sparse), on one octant of the box (or a quarter of a long
duct), extrapolated over two grids.
"""

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

#: observed convergence order of the wall heat flow under grid refinement: the re-entrant
#: (270 degree) inside edges make T ~ r^(2/3) there, so the flux integral converges like h^(4/3)
#: (three grids of the cube gave 1.27)
ORDER = 4.0 / 3.0


def _faces(num, axis, step):
    """(this cell, neighbour) index arrays for every cell pair along ``axis`` in direction step."""
    n = num.shape[axis]
    a = [slice(None)] * num.ndim
    b = [slice(None)] * num.ndim
    a[axis], b[axis] = (slice(0, n - 1), slice(1, n)) if step == 1 else (slice(1, n),
                                                                           slice(0, n - 1))
    return num[tuple(a)], num[tuple(b)]


def wall_heat_flow(inside_half, thickness, h):
    """Steady heat flow [W] through a box wall, k = 1 W/(m K), 1 K from inside to outside.

    Finite volumes on one octant (symmetry planes through the box centre are adiabatic): cubic
    cells of size h; the cavity is [0, inside_half] in every axis; the inside and outside
    surfaces are held at 1 and 0 through half-cell conductances 2 k h. ``inside_half`` holds one
    half-size per axis (2 or 3 axes: a 2-D duct or a 3-D box). Returns the flow of the whole box.
    """
    inside_half = np.asarray(inside_half, dtype=float)
    dims = len(inside_half)
    m = np.rint(inside_half / h).astype(int)
    n = np.rint((inside_half + thickness) / h).astype(int)
    assert np.allclose(m * h, inside_half) and np.allclose(n * h, inside_half + thickness)
    grids = np.meshgrid(*[np.arange(k) for k in n], indexing="ij")
    cavity = np.logical_and.reduce([g < mm for g, mm in zip(grids, m)])
    num = -np.ones(tuple(n), dtype=np.int64)
    num[~cavity] = np.arange((~cavity).sum())
    N = int((~cavity).sum())
    g = h ** (dims - 2)        # k * face area / spacing (per unit depth in 2-D)
    rows, cols, vals = [], [], []
    diag = np.zeros(N)
    rhs = np.zeros(N)
    inner = []
    for axis in range(dims):
        for step in (1, -1):
            a, b = _faces(num, axis, step)
            both = (a >= 0) & (b >= 0)
            rows.append(a[both])
            cols.append(b[both])
            vals.append(np.full(both.sum(), -g))
            np.add.at(diag, a[both], g)
            to_cavity = a[(a >= 0) & (b < 0)]
            inner.append(to_cavity)
            np.add.at(diag, to_cavity, 2 * g)
            np.add.at(rhs, to_cavity, 2 * g)
        last = [slice(None)] * dims
        last[axis] = n[axis] - 1
        out = num[tuple(last)]
        np.add.at(diag, out[out >= 0], 2 * g)
    idx = np.arange(N)
    A = sp.csr_matrix((np.concatenate(vals + [diag]), (np.concatenate(rows + [idx]),
                                                       np.concatenate(cols + [idx]))),
                      shape=(N, N))
    if dims == 2:
        T = spla.spsolve(A.tocsc(), rhs)
    else:
        T, info = spla.cg(A, rhs, rtol=1e-11, maxiter=20000, M=sp.diags(1.0 / diag))
        assert info == 0
    q = sum(float((2 * g * (1.0 - T[c])).sum()) for c in inner)
    return q * 2 ** dims


def extrapolated(inside_half, thickness, coarse, fine):
    """Richardson extrapolation of two grids (fine = coarse / 2) with the order above."""
    q1 = wall_heat_flow(inside_half, thickness, coarse)
    q2 = wall_heat_flow(inside_half, thickness, fine)
    assert q1 < q2   # converging from below, as every refinement here did
    return q2 + (q2 - q1) / (2 ** ORDER - 1)
