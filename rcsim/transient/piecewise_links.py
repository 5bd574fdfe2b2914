"""The links the piecewise-exact path carries as remainders, one column each.

Two kinds share the treatment of :mod:`.piecewise`: a reference conductance g built into the
modes, and a remainder r = q - g (T_a - T_b) given on the time grid and found by waveform
relaxation:

* nonlinear segments (radiation, film correlations; :class:`rcsim.nonlinear.SegmentTerm`), whose
  flow q depends on the temperatures at their ends;
* segments whose conductance varies in time (:class:`rcsim.varying.VaryingTerm`), whose flow
  beyond the conductance at t = 0 (already in K) is q = (G_eff(t) - G_eff(0)) (T_a - T_b).

:class:`RemainderLinks` puts both behind one set of arrays (the nonlinear columns first), so
the solver and the energy accounting of :mod:`.piecewise_path` see one kind of link.
"""

from __future__ import annotations

import numpy as np

__all__ = ["RemainderLinks", "remainder_links"]


def remainder_links(model):
    """The :class:`RemainderLinks` of an energy-form model, or None when it has none."""
    nonlinear = [t for t in model.terms if not getattr(t, "timed", False)]
    varying = [t for t in model.terms if getattr(t, "timed", False)]
    if not nonlinear and not varying:
        return None
    return RemainderLinks(nonlinear[0] if nonlinear else None, varying[0] if varying else None)


class RemainderLinks:
    """Nonlinear and time-varying segments as one list of remainder columns.

    Attributes
    ----------
    a_is_node, a_idx, b_is_node, b_idx : ndarray
        Each column's ends: a state (node) or an input column (boundary).
    e_rows : list of (column, boundary-link column, sign)
        Energy into the network through boundary links.
    """

    def __init__(self, nonlinear=None, varying=None):
        self.nonlinear, self.varying = nonlinear, varying
        terms = [t for t in (nonlinear, varying) if t is not None]
        self.n_nl = 0 if nonlinear is None else len(nonlinear.nl)
        for name in ("a_is_node", "a_idx", "b_is_node", "b_idx"):
            setattr(self, name, np.concatenate([getattr(t, name) for t in terms]))
        self.e_rows = list(nonlinear.e_rows) if nonlinear is not None else []
        if varying is not None:
            self.e_rows += [(self.n_nl + k, col, sign) for k, col, sign in varying.e_rows]
        self.size = self.a_idx.size

    def __len__(self) -> int:
        return self.size

    @staticmethod
    def gather(Tm, w, is_node, idx):
        """Temperatures at segment ends: a state (node) or an input (boundary) each."""
        out = np.empty(Tm.shape[:-1] + (idx.size,))
        out[..., is_node] = Tm[..., idx[is_node]]
        out[..., ~is_node] = w[..., idx[~is_node]]
        return out

    def ends(self, Tm, w):
        """Temperatures at the first and second end of every column."""
        return self.gather(Tm, w, self.a_is_node, self.a_idx), \
            self.gather(Tm, w, self.b_is_node, self.b_idx)

    def flows(self, ta, tb, t, side: str = "right"):
        """Flow of every column [W] (beyond what K carries) with end temperatures ta, tb at
        times t (one per row; ``side`` 'left' for values just before a step of a conductance)."""
        q = np.empty(np.broadcast_shapes(ta.shape, tb.shape))
        k = self.n_nl
        if k:
            q[..., :k] = self.nonlinear.nl.flows(ta[..., :k], tb[..., :k])
        if self.varying is not None:
            q[..., k:] = self.varying.varying.extra(t, side) * (ta[..., k:] - tb[..., k:])
        return q

    def flows_on_grid(self, ta_r, tb_r, ta_l, tb_l, grid):
        """Flows at the start (just right of each grid point: ``ta_r``, ``tb_r``) and at the
        end (just left of the next: ``ta_l``, ``tb_l``) of every interval of ``grid``, as
        :meth:`flows` gives them.

        At a point where an interval's end and the next one's start see the same end
        temperatures (every input continuous there), the nonlinear columns are evaluated once:
        about half the evaluations of the correlations and radiation laws.
        """
        J = ta_r.shape[0]
        qR = np.empty(ta_r.shape)
        qL = np.empty(ta_l.shape)
        k = self.n_nl
        if k:
            same = ((ta_l[:-1, :k] == ta_r[1:, :k]) & (tb_l[:-1, :k] == tb_r[1:, :k])).all(axis=1)
            differ = np.flatnonzero(~same)
            q = self.nonlinear.nl.flows(
                np.concatenate([ta_r[:, :k], ta_l[-1:, :k], ta_l[differ, :k]]),
                np.concatenate([tb_r[:, :k], tb_l[-1:, :k], tb_l[differ, :k]]))
            qR[:, :k] = q[:J]
            qL[:, :k] = q[1:J + 1]
            qL[differ, :k] = q[J + 1:]
        if self.varying is not None:
            qR[:, k:] = self.varying.varying.extra(grid[:-1], "right") \
                * (ta_r[:, k:] - tb_r[:, k:])
            qL[:, k:] = self.varying.varying.extra(grid[1:], "left") \
                * (ta_l[:, k:] - tb_l[:, k:])
        return qR, qL

    def reference(self, ta, tb, t) -> np.ndarray:
        """Reference conductance of every column for end temperatures and times along a
        trajectory (rows): the mid-range of its tangent. A nonlinear column's stays positive; a
        varying column's may be negative (its value at t = 0 is in K already)."""
        g = np.empty(ta.shape[-1])
        k = self.n_nl
        if k:
            _, da, db = self.nonlinear.nl.solve(ta[..., :k], tb[..., :k])
            tangent = 0.5 * (da - db)
            g[:k] = np.maximum(0.5 * (tangent.min(axis=0) + tangent.max(axis=0)), 1e-12)
        if self.varying is not None:
            extra = self.varying.varying.extra(t)
            g[k:] = 0.5 * (extra.min(axis=0) + extra.max(axis=0))
        return g
