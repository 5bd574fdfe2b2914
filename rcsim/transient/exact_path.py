"""The exact path: a linear network advanced mode by mode in closed form (:mod:`.exact`).

The state and its time integral come from two different kernels, so the energy balance (stored
change against the heat through the boundary links and from the sources) is a real check.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..modes import modal_decomposition
from ..recording import Chunk
from ..runinfo import RunStats
from ..statespace import state_space
from ..threads import kernels
from .base import EXACT_LIMIT, Progress, TransientPath
from .exact_chunks import ModalEvaluator, ModalRunner

__all__ = ["ExactPath", "exact_declines", "EXACT_LIMIT", "MODE_SPREAD"]

#: Largest ratio of the fastest to the slowest time constant the exact path takes: the dense
#: eigenproblem resolves the slow modes to about 2.2e-16 times that ratio at worst (tiny
#: capacities next to ordinary ones: at 1e-15 J/K beside 8 kJ/K it was 100 % off).
MODE_SPREAD = 1e15

_NONLINEAR = ("needs a linear network (this one has radiation, film correlations, phase change "
              "or thermostats)")


def exact_declines(asm, thermostats=()) -> str | None:
    """Why the exact path does not take the assembled network ``asm`` (None when it does).

    The one exact-or-not decision, for runs and fits alike: a linear, time-invariant network (no
    radiation, film correlation, phase change, thermostat or conductance that varies in time) of
    at most :data:`EXACT_LIMIT` states.
    """
    if asm.varying is not None and asm.nl is None and not asm.phase_change and not thermostats:
        links = ", ".join(repr(name) for name in dict.fromkeys(asm.varying.links))
        return (f"needs a network that does not change with time (the conductance of link(s) "
                f"{links} varies in time)")
    if not asm.is_linear or thermostats:
        return _NONLINEAR
    n = state_space(asm).n
    if n > EXACT_LIMIT:
        return f"handles up to {EXACT_LIMIT} states, this network has {n}"
    modes = modal_decomposition(asm)        # cached: the path uses it next
    lam = modes.eigenvalues[modes.n_floating:]
    if lam.size > 1 and not lam[-1] <= MODE_SPREAD * lam[0]:
        spread = f"{lam[-1] / lam[0]:.1e}" if lam[0] > 0 else "beyond double precision"
        return (f"cannot resolve this network's time constants (their spread, {spread}, is "
                f"above {MODE_SPREAD:.0e}: look for tiny capacities or huge conductances)")
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
        with kernels():          # fits call this directly: rcsim's threads (rcsim.threads)
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
        runner = ModalRunner(prop, A_out, D_out, A_e, D_e, q_store)
        runner.plan(t_out)

        w0 = prop.inputs_at(t_out[:1])
        recorder.add(Chunk(t_out[:1], z0[None, :] @ A_out.T + w0 @ D_out.T, w0[:, :M],
                           w0[:, M:], np.zeros((1, nb)), np.zeros((1, S)), np.zeros(1)))
        e_links = np.zeros(nb)
        e_src = np.zeros(S)
        N = t_out.size - 1
        length = prop.chunk_length()
        k0, z = 0, z0
        while k0 < N:
            k1 = runner.chunk_end(k0, length)
            tt = t_out[k0:k1 + 1]
            ch = runner.chunk(tt, z, k0, recorder.output_slot(k1 - k0),
                              states=recorder.tracker is not None)
            w, U = ch.w, ch.U
            if nb:
                inc = (e_g[None, :] * (U[:, e_b] - ch.int_Te)) @ to_links
                cum_links = np.cumsum(inc, axis=0)
                cum_links += e_links[None, :]
                e_links = cum_links[-1].copy()
            else:
                cum_links = np.zeros((k1 - k0, 0))
            cum_src = np.cumsum(U[:, M:], axis=0)
            cum_src += e_src[None, :]
            if S:
                e_src = cum_src[-1].copy()
            evaluate = ModalEvaluator(prop, A_out, D_out, tt, z, ch.Z) \
                if recorder.tracker is not None else None
            recorder.add(Chunk(tt[1:], ch.T, w[:, :M], w[:, M:], cum_links, cum_src,
                               ch.stored - stored0, evaluate=evaluate))
            z = ch.z_end
            k0 = k1
            progress(k1 / N)
        return RunStats(modes=int(prop.lam.size), samples=int(t_out.size))
