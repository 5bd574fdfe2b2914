"""The exact path: a linear network advanced mode by mode in closed form (:mod:`.exact`).

The state and its time integral come from two different kernels, so the energy balance (stored
change against the heat through the boundary links and from the sources) is a real check.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..recording import Chunk
from ..runinfo import RunStats
from ..statespace import state_space
from .base import EXACT_LIMIT, Progress, TransientPath

__all__ = ["ExactPath", "exact_declines", "EXACT_LIMIT"]

_NONLINEAR = ("needs a linear network (this one has radiation, film correlations, phase change "
              "or thermostats)")


def exact_declines(asm, thermostats=()) -> str | None:
    """Why the exact path does not take the assembled network ``asm`` (None when it does).

    The one exact-or-not decision, for runs and fits alike: a linear network (no radiation,
    film correlation, phase change or thermostat) of at most :data:`EXACT_LIMIT` states.
    """
    if not asm.is_linear or thermostats:
        return _NONLINEAR
    n = state_space(asm).n
    if n > EXACT_LIMIT:
        return f"handles up to {EXACT_LIMIT} states, this network has {n}"
    return None


class ExactPath(TransientPath):
    """Linear networks: modal decomposition, every input integrated in closed form."""

    name = "exact"
    description = "exact (modal)"

    def accepts(self, problem) -> str | None:
        return exact_declines(problem.asm, problem.thermostats)

    def refusal(self, reason: str) -> Exception:
        return InputError(f"the exact solver {reason}", "solver", "use solver = 'stiff' or 'auto'")

    @staticmethod
    def _modal_start(problem) -> np.ndarray:
        start, prop = problem.start, problem.propagator
        if start.modal is not None:
            return start.modal
        return prop.z_from_temperatures(start.temperatures)

    def temperatures_at(self, problem, nodes) -> np.ndarray:
        """The modes propagated straight to the output times (no flows, energies or limits)."""
        prop = problem.propagator
        A, D = prop.output_maps(np.asarray(nodes))
        Z = prop.states_at(problem.times, self._modal_start(problem))
        return Z @ A.T + prop.inputs_at(problem.times) @ D.T

    def run(self, problem, recorder, progress: Progress) -> RunStats:
        prop = problem.propagator
        asm, ss, t_out = problem.asm, prop.ss, problem.times
        z0 = self._modal_start(problem)
        M = asm.n_boundaries
        A_out, D_out = prop.output_maps(np.asarray(recorder.out_nodes))
        # energy through boundary links: sum over their boundary segments of g (int u_b - int T)
        bseg = asm.boundary_segments()
        seg_col, e_nodes, e_b, e_g = bseg.link_column, bseg.node, bseg.boundary, bseg.conductance
        A_e, D_e = prop.output_maps(e_nodes)
        nb = len(recorder.boundary_links)
        to_links = np.zeros((seg_col.size, nb))
        to_links[np.arange(seg_col.size), seg_col] = 1.0
        q_store = prop.V.T @ ss.C                    # stored energy = q . z  (massive nodes)
        stored0 = float(z0 @ q_store)
        S = prop.n_inputs - M

        w0 = prop.inputs_at(t_out[:1])
        recorder.add(Chunk(t_out[:1], z0[None, :] @ A_out.T + w0 @ D_out.T, w0[:, :M],
                           w0[:, M:], np.zeros((1, nb)), np.zeros((1, S)), np.zeros(1)))
        e_links = np.zeros(nb)
        e_src = np.zeros(S)
        N = t_out.size - 1
        for k0, k1, Z, Zint, U in prop.chunks(t_out, z0):
            tt = t_out[k0:k1 + 1]
            w = prop.inputs_at(tt[1:])
            T = Z @ A_out.T + w @ D_out.T
            if nb:
                int_T = Zint @ A_e.T + U @ D_e.T
                inc = (e_g[None, :] * (U[:, e_b] - int_T)) @ to_links
                cum_links = e_links[None, :] + np.cumsum(inc, axis=0)
                e_links = cum_links[-1].copy()
            else:
                cum_links = np.zeros((k1 - k0, 0))
            cum_src = e_src[None, :] + np.cumsum(U[:, M:], axis=0)
            if S:
                e_src = cum_src[-1].copy()
            recorder.add(Chunk(tt[1:], T, w[:, :M], w[:, M:], cum_links, cum_src,
                               Z @ q_store - stored0))
            progress(k1 / N)
        return RunStats(modes=int(prop.lam.size), samples=int(t_out.size))
