"""Links whose conductance varies in time: a film that follows the wind, a vent that opens.

A link may hold one conductance given as a profile G(t) [W/K] (``add_link(a, b,
conductance=<profile>)``, or ``conductance = { table = ... }`` in a scenario), in series with
linear parts of resistance R beside it. Its segment then conducts

    q = G_eff(t) (T_a - T_b),    G_eff(t) = 1 / (R + 1 / G(t))

which is linear in the temperatures at every instant but not time-invariant. Assembly puts the
value at t = 0, G_eff(0), into the conductance matrix K (so the steady state at t = 0, the time
constants and every check of the linear network see it), and :class:`VaryingSegments` keeps the
rest, G_eff(t) - G_eff(0), for the transient paths:

* the stiff path adds it as a term of the energy form (:class:`VaryingTerm`, with its Jacobian);
* the piecewise path carries it like the remainder of a radiation or film law: a reference
  conductance built into the modes, the remainder given on its time grid, waveform relaxation;
* the exact path declines (its modes are those of one time-invariant network).

The steady state at another time ``t`` uses G(t) (:meth:`rcsim.assembly.Assembled.at_time`).
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp

from .errors import NetworkError, ProfileError
from .statespace import state_space

__all__ = ["VaryingSegments", "VaryingTerm"]

#: Points per period of a sinusoid where a conductance is checked to stay positive.
_CHECK_PER_PERIOD = 96


class VaryingSegments:
    """The segments of a network whose conductance varies in time.

    Parameters
    ----------
    segments : list of (segment index, profile, series resistance [K/W], link name)
    seg_g : ndarray
        Every segment's conductance in K (for these: G_eff(0)).
    """

    def __init__(self, segments, seg_g):
        self.seg = np.asarray([s[0] for s in segments], dtype=np.int64)
        self.profiles = [s[1] for s in segments]
        self.series = np.asarray([s[2] for s in segments], dtype=float)
        self.links = [s[3] for s in segments]
        self.reference = np.asarray(seg_g, dtype=float)[self.seg].copy()

    def __len__(self) -> int:
        return self.seg.size

    def conductance(self, t, side: str = "right") -> np.ndarray:
        """G_eff [W/K] of every varying segment at time(s) t: shape (n,) or (len(t), n).

        ``side='left'`` gives the values just before a step of G.
        """
        scalar = np.ndim(t) == 0
        tt = np.atleast_1d(np.asarray(t, dtype=float))
        g = np.column_stack([p.value(tt) if side == "right" else p.value_left(tt)
                             for p in self.profiles])
        out = 1.0 / (self.series[None, :] + 1.0 / g)
        return out[0] if scalar else out

    def extra(self, t, side: str = "right") -> np.ndarray:
        """G_eff(t) - G_eff(0) [W/K]: the part of each conductance that is not in K."""
        return self.conductance(t, side) - self.reference

    def knots(self, t0: float, t1: float) -> np.ndarray:
        """Times in (t0, t1) where a conductance has a kink or a step."""
        found = [p.knots(t0, t1) for p in self.profiles]
        return np.unique(np.concatenate(found)) if found else np.empty(0)

    def check(self, t0: float, t1: float) -> None:
        """Every conductance covers [t0, t1] and stays positive there (checked at its knots and
        ends, and at 96 points per period of any sinusoid in it)."""
        for p in self.profiles:
            p.check_span(t0, t1)
            t = np.concatenate([[t0, t1], p.knots(t0, t1)])
            omegas = [om for _, om, _ in p.sines()]
            if omegas:
                step = 2.0 * math.pi / max(omegas) / _CHECK_PER_PERIOD
                t = np.concatenate([t, np.arange(t0, t1, step)])
            values = np.concatenate([p.value(t), p.value_left(t)])
            if not np.all(values > 0):
                worst = float(np.min(values))
                raise ProfileError(f"a conductance must stay positive, but it reaches "
                                   f"{worst:g} W/K", p.where,
                                   "a link that can close entirely needs a small conductance left")

    def conductances_at(self, seg_g: np.ndarray, t: float) -> np.ndarray:
        """A copy of every segment's conductance ``seg_g`` with these at their value at ``t``."""
        out = np.array(seg_g, dtype=float)
        out[self.seg] = self.conductance(float(t))
        return out


class VaryingTerm:
    """The part G_eff(t) - G_eff(0) of the varying segments in the energy form (stiff path).

    Flows into the states and the energy through boundary links, with their exact Jacobian
    (the flows are linear in the temperatures). A time-dependent term: it takes the time.
    """

    timed = True

    def __init__(self, asm, boundary_links):
        ss = state_space(asm)
        self.varying = var = asm.varying
        n_all = asm.n_nodes
        pos_m = ss.state_of
        self.n = ss.n
        a, b = asm.seg_a[var.seg], asm.seg_b[var.seg]
        for p in np.concatenate([a, b]):
            if p < n_all and int(p) not in pos_m:
                raise NetworkError(f"node {asm.node_names[int(p)]!r} has no heat capacity but "
                                   "touches a link whose conductance varies in time", None,
                                   "give it a small capacity")
        self.a_is_node = a < n_all
        self.b_is_node = b < n_all
        self.a_idx = np.where(self.a_is_node, [pos_m.get(int(p), 0) for p in a], a - n_all)
        self.b_idx = np.where(self.b_is_node, [pos_m.get(int(p), 0) for p in b], b - n_all)
        link_col = {li: c for c, li in enumerate(boundary_links)}
        seg_link = np.searchsorted(asm.link_last_seg, var.seg)
        #: (segment, boundary-link column, sign): energy into the network through that link
        self.e_rows = [(k, link_col[int(li)], 1.0 if not self.a_is_node[k] else -1.0)
                       for k, li in enumerate(seg_link)
                       if int(li) in link_col and not (self.a_is_node[k] and self.b_is_node[k])]
        self.nb = len(boundary_links)

    def __len__(self) -> int:
        return len(self.varying)

    @staticmethod
    def gather(Tm, w, is_node, idx):
        """Temperatures at segment ends: a state (node) or an input (boundary) each."""
        out = np.empty(Tm.shape[:-1] + (idx.size,))
        out[..., is_node] = Tm[..., idx[is_node]]
        out[..., ~is_node] = w[..., idx[~is_node]]
        return out

    def ends(self, Tm, w):
        return self.gather(Tm, w, self.a_is_node, self.a_idx), \
            self.gather(Tm, w, self.b_is_node, self.b_idx)

    def flows(self, Tm, w, t):
        ta, tb = self.ends(Tm, w)
        q = self.varying.extra(float(t)) * (ta - tb)
        dH = np.zeros(self.n)
        np.add.at(dH, self.a_idx[self.a_is_node], -q[self.a_is_node])
        np.add.at(dH, self.b_idx[self.b_is_node], q[self.b_is_node])
        if not self.e_rows:
            return dH, None
        e = np.zeros(self.nb)
        for k, col, sign in self.e_rows:
            e[col] += sign * q[k]
        return dH, e

    def jacobian(self, Tm, w, t):
        g = self.varying.extra(float(t))
        an, bn, ia, ib = self.a_is_node, self.b_is_node, self.a_idx, self.b_idx
        rows, cols, vals = [], [], []
        for mask_r, r_idx, sign in ((an, ia, -1.0), (bn, ib, 1.0)):
            for mask_c, c_idx, d in ((an, ia, g), (bn, ib, -g)):
                m = mask_r & mask_c
                rows.append(r_idx[m])
                cols.append(c_idx[m])
                vals.append(sign * d[m])
        J = sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                          shape=(self.n, self.n))
        if not self.e_rows:
            return J, None
        er, ec, ev = [], [], []
        for k, col, sign in self.e_rows:
            if an[k]:
                er.append(col), ec.append(ia[k]), ev.append(sign * g[k])
            if bn[k]:
                er.append(col), ec.append(ib[k]), ev.append(-sign * g[k])
        return J, sp.csr_matrix((ev, (er, ec)), shape=(self.nb, self.n))
