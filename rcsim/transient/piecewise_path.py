"""The piecewise-exact path: a nonlinear network solved by events and waveform relaxation
(:class:`.piecewise.PiecewiseSolver`), its energies from the same closed forms."""

from __future__ import annotations

import numpy as np

from ..profiles import common_period
from ..runinfo import RunStats
from .base import PIECEWISE_STATES, Progress, TransientPath
from .output import OutputMap, chunk_from_states, extras_of, thermostat_table
from .piecewise import PIECEWISE_ELEMENTS, PiecewiseSolver

__all__ = ["PiecewisePath"]

#: Samples handed to the recorder at a time.
_CHUNK = 20_000


class PiecewisePath(TransientPath):
    """Networks of up to :data:`PIECEWISE_STATES` states: closed form between events,
    waveform relaxation for radiation and film correlations."""

    name = "piecewise"
    description = "piecewise exact (events, waveform relaxation)"
    may_decline_while_running = True      # no convergence, too many events, complex modes

    def accepts(self, problem) -> str | None:
        n = problem.ss.n
        if n > PIECEWISE_STATES:
            return f"{n} states (the piecewise path takes up to {PIECEWISE_STATES})"
        if problem.times.size * max(1, n) > PIECEWISE_ELEMENTS:
            return "too many samples for the piecewise path"
        return None

    def run(self, problem, recorder, progress: Progress) -> RunStats:
        model = problem.energy_model
        solver = PiecewiseSolver(model, problem.times, rtol=problem.rtol, atol=problem.atol,
                                 progress=progress)
        start = problem.start
        Tm0 = start.temperatures
        H0 = start.energies if start.energies is not None else model.energy_of(Tm0)
        for c in model.controllers:
            c.reset(0.0, Tm0)
        sol = solver.solve(H0)
        for c, sw in zip(model.controllers, sol.switches):
            if c.control == "on-off":
                c.set_switches(sw)
        Y = self._states(model, solver, sol)
        rows = np.searchsorted(sol.grid, problem.times)
        H0_sum = float(H0.sum())
        out_map = OutputMap(model, recorder.out_nodes)
        extras_fn = extras_of(model)
        t_out = problem.times
        for k0 in range(0, rows.size, _CHUNK):
            recorder.add(chunk_from_states(model, t_out[k0:k0 + _CHUNK],
                                           Y[rows[k0:k0 + _CHUNK]], H0_sum, out_map, extras_fn))
        progress(1.0)
        if model.controllers:
            recorder.tables["thermostats"] = thermostat_table(model.controllers, t_out, recorder)
        stats = solver.stats
        stats.grid_points = int(sol.grid.size)
        return stats

    @staticmethod
    def _states(model, solver, sol) -> np.ndarray:
        """Full energy-form states at the grid points: stored energies, then the cumulative
        energies through the boundary links, from the sources and from the thermostats."""
        grid = sol.grid
        h = np.diff(grid)
        Iw = solver.input_integrals()
        M = model.M
        inc_links = np.zeros((h.size, model.nb))
        if model.nb:
            t_end = (model.A_end_sparse @ sol.int_T.T).T + Iw @ model.D_end.T
            flow = model.g_end[None, :] * (Iw[:, model.bcol] - t_end)
            inc_links = (model.to_links_sparse @ flow.T).T
            seg = solver.seg
            if seg is not None and seg.e_rows:
                Ir = 0.5 * h[:, None] * (sol.rR + sol.rL)
                ta = seg.gather(sol.int_T, Iw, seg.a_is_node, seg.a_idx)
                tb = seg.gather(sol.int_T, Iw, seg.b_is_node, seg.b_idx)
                Iq = solver.g[None, :] * (ta - tb) + Ir
                for k, col, sign in seg.e_rows:
                    inc_links[:, col] += sign * Iq[:, k]
        Y = np.zeros((grid.size, model.ny))
        n, nb, S = model.n, model.nb, model.S
        Y[:, :n] = sol.H
        Y[1:, n:n + nb] = np.cumsum(inc_links, axis=0)
        Y[1:, n + nb:n + nb + S] = np.cumsum(Iw[:, M:], axis=0)
        Y[1:, n + nb + S:] = np.cumsum(sol.int_P, axis=0)
        return Y

    def period_map(self, problem):
        """One period on the piecewise path (289 grid points), at a tenth of the tolerances."""
        model = problem.energy_model
        period = common_period(model.profiles, "simulation.initial")
        grid = np.linspace(0.0, period, 289)

        def one_period(H):
            solver = PiecewiseSolver(model, grid, rtol=0.1 * problem.rtol,
                                     atol=0.1 * problem.atol)
            for c in model.controllers:
                c.reset(0.0, model.temperatures(H)[0])
            return solver.solve(H).H[-1]

        return one_period

