"""Piecewise-exact integration of nonlinear networks: events plus waveform relaxation.

Phase change and thermostats make a network *piecewise linear*: between two events (a pack
starting or ending its melt, a thermostat switching, a proportional thermostat entering or
leaving its band) every capacity and every source is fixed, so the network is linear and is
advanced in closed form by its modes, exactly like a linear network (:mod:`.exact`). The state is
the stored energy H of each massive node; in one *regime* the temperatures are affine in it,
``T = a + b * H`` (:mod:`.piecewise_regimes`). Event functions are affine in H, so crossings
are found on the grid (and, for a function that rises above zero and falls back between two grid
points, by a hump test on its closed-form derivatives) and then located inside their interval
(:mod:`.piecewise_events`); the regime changes there and integration restarts.

The smooth nonlinear links (radiation, film correlations), and links whose conductance varies in
time (:mod:`.piecewise_links`), are split into a reference conductance
g, built into K' and E', and a remainder r = q(T_a, T_b) - g (T_a - T_b). The remainder is taken
piecewise linear in time between grid points, from the previous trajectory (waveform
relaxation), and the whole run is repeated until the remainder a trajectory implies matches the
one it was computed with (the mismatch, mapped to a temperature through the network's steady
gain, below the tolerance); Anderson mixing speeds this fixed-point iteration up. The grid
(output times and input knots) is refined where the remainder bends too much for linear
interpolation, and takes the events' times as points. Every sweep over the time axis is
vectorised: a Python loop runs only over regimes and events, never over time steps.

Energy accounting uses the same closed forms: the time integral of the state over each interval
comes from its own kernel, and the energy through boundary links, sources and thermostats follows
from it, so the energy balance closes to rounding whatever the grid (:mod:`.piecewise_path`).

When the method does not suit a network (complex modes from a proportional thermostat heating one
node and sensing another, too many states or samples, no convergence, frequent switching next to
nonlinear links) :class:`NotSuitable` is raised and the driver falls back to the stiff path.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from ..runinfo import RunStats
from .base import PIECEWISE_STATES, NotSuitable
from .exact import phi_functions, scan_stretches
from .inputs import linear_parts
from .mixing import Anderson
from .piecewise_grid import refined_grid, refinement_pieces
from .piecewise_events import find_dips, locate_event
from .piecewise_links import remainder_links
from .piecewise_regimes import Regime, Regimes

__all__ = ["NotSuitable", "PiecewiseSolver", "PiecewiseSolution", "PIECEWISE_STATES",
           "Anderson"]

#: Largest (grid points x states) the path holds in memory; larger runs use the stiff path.
PIECEWISE_ELEMENTS = 6_000_000
#: Waveform-relaxation sweeps before giving up.
MAX_SWEEPS = 60
#: Grid refinements before giving up.
MAX_REFINEMENTS = 12
#: Longest run (grid intervals advanced in one closed-form pass).
MAX_RUN = 8192
#: Events per sweep before giving up (a chattering model belongs to the stiff path).
MAX_EVENTS = 50_000
#: Largest (grid points x states) whose particular response to the sines is kept per regime
#: (two arrays of 8-byte values: 1.6 MB per regime at most).
PARTICULAR_CACHE_ELEMENTS = 100_000


@dataclass
class PiecewiseSolution:
    """What :meth:`PiecewiseSolver.solve` found.

    Attributes
    ----------
    grid : ndarray
        The final grid [s] (output times, input knots, refinements, event times).
    H : ndarray
        Stored energies of the states at the grid points [J], (len(grid), n).
    int_T : ndarray
        Integral of each state temperature over each grid interval [K s], (len(grid) - 1, n).
    int_P : ndarray
        Integral of each thermostat's power over each grid interval [J].
    rR, rL : ndarray
        Remainder flows of the nonlinear segments at the start and end of each interval [W].
    switches : list
        Switching times [s] of each thermostat (on/off control).
    """

    grid: np.ndarray
    H: np.ndarray
    int_T: np.ndarray
    int_P: np.ndarray
    rR: np.ndarray
    rL: np.ndarray
    switches: list


class SweepRecord(NamedTuple):
    """One waveform-relaxation sweep: points of its grid and its fixed-point residual [K]."""

    grid_points: int
    residual: float


class _Stretch(NamedTuple):
    """One closed-form pass of a regime over grid intervals j..j_end-1 (local intervals s)."""

    s: np.ndarray          # local times: the run's start, then grid points
    h: np.ndarray          # interval lengths
    FR: np.ndarray         # modal forcing at the start of each interval
    FL: np.ndarray         # ... and at its end
    phi: tuple             # E0..E3 per interval
    zp: np.ndarray | None  # particular response to the sines at s (None without sines)
    z0: np.ndarray         # modal state at s[0]
    Z: np.ndarray          # modal states at s[1:]
    Hs: np.ndarray         # stored energies at s[1:]
    vals: np.ndarray | None  # event functions at s[1:]
    fired_at: int          # first interval with an event (len(h) when none)
    dips: tuple | None     # (interval, {event: peak time estimate}) of a hump, or None


@dataclass
class _PendingIntegral:
    """What the state integrals over the k accepted intervals of a run need; they are computed
    after the last sweep only (:meth:`PiecewiseSolver._finish_integrals`)."""

    reg: Regime
    j: int                 # first grid interval
    s: np.ndarray          # local times (k + 1)
    h: np.ndarray          # interval lengths (k)
    zprev: np.ndarray      # modal states at the start of each interval
    FR: np.ndarray         # forcing at the start of each interval
    dF: np.ndarray         # its rise over the interval
    phi: tuple             # E1, E2, E3 per interval
    zp: np.ndarray | None  # particular response to the sines at s (None without sines)

    @classmethod
    def of(cls, reg, j: int, k: int, run: _Stretch) -> "_PendingIntegral":
        zprev = np.vstack([run.z0[None, :], run.Z[:k]])[:k]
        _, e1, e2, e3 = run.phi
        return cls(reg, j, run.s[:k + 1], run.h[:k], zprev, run.FR[:k],
                   run.FL[:k] - run.FR[:k], (e1[:k], e2[:k], e3[:k]),
                   None if run.zp is None else run.zp[:k + 1])


class PiecewiseSolver:
    """Integrate an :class:`~rcsim.transient.energy_model.EnergyModel` by events and waveform
    relaxation.

    Parameters
    ----------
    model : EnergyModel
        The network in energy form (its structure only is used here).
    t_out : array
        Output times [s], starting at 0.
    rtol, atol : float
        Tolerances in the sense of the stiff path: waveform relaxation stops when the remainder
        mismatch, as a temperature, is below ``atol + rtol * T_scale`` [K] (T_scale the largest
        temperature magnitude of the start and the inputs), and the grid is refined until the
        estimated interpolation error of the nonlinear remainder is below three times that.
    progress : callable, optional
        Called with a fraction that only grows, below 1.
    """

    def __init__(self, model, t_out, rtol: float = 1e-6, atol: float = 1e-6, progress=None):
        self.model = model
        self.progress = progress
        n = self.n = model.n
        if n > PIECEWISE_STATES:
            raise NotSuitable(f"{n} states (the piecewise path takes up to {PIECEWISE_STATES})")
        self.rtol, self.atol = float(rtol), float(atol)
        self.t_out = np.asarray(t_out, dtype=float)
        self.K = np.asarray(model.K.toarray() if hasattr(model.K, "toarray") else model.K)
        self.E = np.asarray(model.E.toarray() if hasattr(model.E, "toarray") else model.E)
        self.C = model.C
        self.profiles = model.profiles
        self.I = len(self.profiles)
        self.sines = [(i, amp, om, ph) for i, p in enumerate(self.profiles)
                      for amp, om, ph in p.sines()]
        # nonlinear and time-varying segments, carried as remainders
        seg = remainder_links(model)
        self.seg = seg
        self.n_nl = 0 if seg is None else len(seg)
        self.N = np.zeros((n, self.n_nl))
        if seg is not None:
            k = np.arange(self.n_nl)
            self.N[seg.a_idx[seg.a_is_node], k[seg.a_is_node]] -= 1.0
            self.N[seg.b_idx[seg.b_is_node], k[seg.b_is_node]] += 1.0
        # phase change and thermostats
        self.pcm = sorted(model.phase)                       # state indices
        self.ctrl = list(model.controllers)
        self.regimes = Regimes(model, self.N, self.sines)
        # the grid: output times and every knot of the inputs
        T_end = float(self.t_out[-1])
        knots = [p.knots(0.0, T_end) for p in self.profiles + model.varying_profiles]
        allk = np.concatenate(knots) if knots else np.empty(0)
        self.base_grid = np.union1d(self.t_out, allk) if allk.size else self.t_out.copy()
        self.history: list[SweepRecord] = []
        self._event_hints = np.empty(0)  # event times of the last sweep
        self._kinks = np.empty(0)        # grid points placed at events
        self.stats = RunStats(sweeps=0, regimes=0, events=0, refinements=0, runs=0)
        self._set_reference(np.zeros(self.n_nl))

    # -- reference conductances of the nonlinear segments -----------------------------------
    def _set_reference(self, g: np.ndarray) -> None:
        n, seg = self.n, self.seg
        self.g = np.asarray(g, dtype=float)
        Kp = self.K.copy()
        Ep = self.E.copy()
        if seg is not None:
            an, bn, ia, ib = seg.a_is_node, seg.b_is_node, seg.a_idx, seg.b_idx
            for k in range(self.n_nl):
                # the conductance g between the ends: into K' where an end is a node, into E'
                # (as an input column) where the other end is a boundary
                for this_node, i, other_node, o in ((an[k], ia[k], bn[k], ib[k]),
                                                    (bn[k], ib[k], an[k], ia[k])):
                    if this_node:
                        Kp[i, i] += self.g[k]
                        if other_node:
                            Kp[i, o] -= self.g[k]
                        else:
                            Ep[i, o] += self.g[k]
        self.regimes.set_matrices(Kp, Ep)
        try:
            self._Kp_inv = np.abs(np.linalg.inv(Kp)) if n else np.zeros((0, 0))
        except np.linalg.LinAlgError:
            self._Kp_inv = None

    # -- one sweep over the time axis --------------------------------------------------------
    def sweep(self, grid, rR, rL, H0):
        """Integrate over ``grid`` with the remainder given at the grid points.

        ``rR[j]``/``rL[j]`` are the remainder flows (per nonlinear segment) at the start/end of
        interval j. Returns the states H at the grid points and the switching times of each
        on/off thermostat; :meth:`_finish_integrals` then gives the integrals of the state
        temperatures and thermostat powers per interval.
        """
        n = self.n
        J = grid.size - 1
        Hg = np.empty((J + 1, n))
        Hg[0] = H0
        IntT = np.zeros((J, n))
        IntP = np.zeros((J, len(self.ctrl)))
        on = [c.on for c in self.ctrl]
        switches = [[] for _ in self.ctrl]
        t_c, H_c, j = float(grid[0]), H0.copy(), 0
        state = list(self.regimes.key_of(H0, on))   # explicit: never re-derived at a boundary
        # runs end a little past where the previous sweep met its events: later samples would be
        # recomputed after the event anyway
        hints = np.unique(np.searchsorted(grid, self._event_hints)) if self._event_hints.size \
            else None
        hit_times = []
        pending = []
        self.event_pieces = []           # the partial intervals up to each event (evaluators)
        chunk = 1024 if hints is None else MAX_RUN
        # with nonlinear links every sweep pays for every event, and each switch puts a kink in
        # the links' flows that the grid must resolve: many switches make the stiff path cheaper
        # (measured: 0.2 switches per grid interval still favour this path 2:1, 0.6 the stiff
        # one 1.7:1)
        event_budget = max(200, J // 3) if self.n_nl else MAX_EVENTS
        events = 0
        while j < J:
            reg = self.regimes.get(tuple(state))
            self.stats.runs += 1
            # a run is as long as events allow: it grows while none come, shrinks when they do
            # (the work after an event is thrown away), and ends a little past the next event
            # of the previous sweep
            j_end = min(J, j + chunk)
            if hints is not None:
                nxt = hints[hints > j + 1]
                if nxt.size:
                    j_end = min(j_end, int(nxt[0]) + 4)
            run = self._stretch(reg, j, j_end, t_c, H_c, rR, rL)
            k = run.fired_at
            m = run.h.size
            if k:       # accept the intervals before the event; their integrals come later
                pending.append(_PendingIntegral.of(reg, j, k, run))
                Hg[j + 1:j + k + 1] = run.Hs[:k]
            if self.progress is not None:    # sweep k of an unknown number: 1 - 0.6^k onwards
                done = 1.0 - 0.6 ** self.stats.sweeps
                self.progress(done + (1.0 - done) * 0.4 * float(run.s[min(k, m)])
                              / float(grid[-1]))
            if k == m:
                t_c, H_c, j = float(grid[j_end]), run.Hs[-1].copy(), j_end
                chunk = min(MAX_RUN, 2 * chunk)
                continue
            chunk = MAX_RUN if hints is not None else max(64, 4 * (k + 1))
            t_hit, H_c, which = self._event(reg, run, k, j, IntT, IntP)
            t_c = t_hit
            j = j + k
            events += self._switch(reg, H_c, which, state, on, switches, t_hit)
            hit_times.append(t_hit)
            if events > event_budget:
                raise NotSuitable(f"more than {event_budget} events in a sweep (frequent switching "
                                  "with radiation or film links: each switch bends the links' "
                                  "flows, and the stiff path steps to each switch anyway)"
                                  if self.n_nl else f"more than {event_budget} events")
            if t_c >= grid[j + 1]:  # the event sits on the grid point itself
                Hg[j + 1] = H_c
                j += 1
        self.stats.events = events
        self._pending = (pending, IntT, IntP)
        self._event_hints = np.asarray(hit_times)
        return Hg, switches

    def _stretch(self, reg, j, j_end, t_c, H_c, rR, rL) -> _Stretch:
        """Advance regime ``reg`` in closed form from (t_c, H_c) over grid intervals
        j..j_end-1 and find the first interval in which an event function turns positive."""
        s = np.concatenate([[t_c], self.grid[j + 1:j_end + 1]])
        m = s.size - 1
        h = np.diff(s)
        # piecewise-linear forcing (modal) at the start and end of each local interval
        theta = (t_c - self.grid[j]) / self._h_all[j]
        wr = self._wR[j:j_end].copy()
        rr = rR[j:j_end].copy()
        wr[0] += theta * (self._wL[j] - self._wR[j])
        rr[0] += theta * (rL[j] - rR[j])
        FR = wr @ reg.Ein.T + rr @ reg.Nm.T + reg.cm
        FL = self._wL[j:j_end] @ reg.Ein.T + rL[j:j_end] @ reg.Nm.T + reg.cm
        starts, (e0, e1, e2, e3) = self._phi_rows(reg, j, j_end, h)
        zp = dzp = None
        if reg.cz:
            zp, dzp = self._particular(reg, j, j_end, t_c)
        G = h[:, None] * (e1 * FR + e2 * (FL - FR))
        if zp is not None:
            G += zp[1:] - e0 * zp[:-1]
        z0 = reg.Vi @ H_c
        Z = scan_stretches(e0, starts, G, z0, reg.lam, s)
        Hs = Z @ reg.V.T
        fired_at, vals, dips = m, None, None
        if reg.dev.size:
            vals = Hs @ reg.Cev.T + reg.dev
            hit = np.flatnonzero((vals > 0.0).any(axis=1))
            if hit.size:
                fired_at = int(hit[0])
            # a function may also rise above zero and fall back between two grid points
            dips = find_dips(reg, s, h, z0, Z, FR, FL, zp, dzp, vals, min(fired_at, m - 1))
            if dips is not None and dips[0] < fired_at:
                fired_at = dips[0]
        return _Stretch(s, h, FR, FL, (e0, e1, e2, e3), zp, z0, Z, Hs, vals, fired_at, dips)

    def _event(self, reg, run: _Stretch, k: int, j: int, IntT, IntP):
        """Locate the first event inside local interval k of ``run`` (grid interval j + k); add
        the integrals up to it. Returns (time, stored energies there, the event)."""
        zk = run.z0 if k == 0 else run.Z[k - 1]
        dF = run.FL[k] - run.FR[k]
        dips = run.dips[1] if run.dips is not None and run.dips[0] == k else None
        t_hit, which = locate_event(reg, run.s[k], run.h[k], zk, run.FR[k], dF, run.vals[k], dips)
        tau = t_hit - run.s[k]
        Iz, z_hit = reg.partial(run.s[k], tau, run.h[k], zk, run.FR[k], dF)
        self.event_pieces.append((reg, run.s[k:k + 1], np.array([t_hit]), run.h[k:k + 1],
                                  zk[None, :], run.FR[k:k + 1], dF[None, :]))
        self._accumulate(reg, (Iz @ reg.V.T)[None, :], np.array([tau]), j + k, IntT, IntP)
        return t_hit, reg.V @ z_hit, which

    def _switch(self, reg, H_c, which, state, on, switches, t_hit) -> int:
        """Switch the regime (``state``, ``on``, ``switches`` in place) for the located event
        and any other due at the same instant (equal packs); returns the number of switches."""
        npcm = len(self.pcm)
        vals_hit = reg.Cev @ H_c + reg.dev
        slack = 1e-9 * (np.abs(reg.Cev) @ np.abs(H_c) + np.abs(reg.dev) + 1.0)
        due = set(np.flatnonzero(vals_hit > -slack).tolist()) | {which}
        count = 0
        for e in sorted(due):
            pos, target = reg.ev_owner[e]
            if state[pos] == target:
                continue
            state[pos] = target
            if pos >= npcm and self.ctrl[pos - npcm].control == "on-off":
                on[pos - npcm] = bool(target)
                switches[pos - npcm].append(t_hit)
            count += 1
        return count

    def _particular(self, reg, j, j_end, t_c):
        """The particular response to the sines (and its rate) at a run's local times: at
        ``t_c``, then grid points j+1..j_end. Kept per regime and grid, as the E functions are:
        each sweep's runs read the same grid points again."""
        if self.grid.size * self.n > PARTICULAR_CACHE_ELEMENTS:     # memory: afresh each run
            s = np.concatenate([[t_c], self.grid[j + 1:j_end + 1]])
            return reg.particular(s, with_rate=True)
        cached = reg.phi_cache.get("particular")
        if cached is None or cached[0] is not self.grid:
            cached = reg.phi_cache["particular"] = (self.grid,
                                                    *reg.particular(self.grid, with_rate=True))
        _, zp_grid, dzp_grid = cached
        if t_c == self.grid[j]:
            return zp_grid[j:j_end + 1], dzp_grid[j:j_end + 1]
        zp0, dzp0 = reg.particular(np.array([t_c]), with_rate=True)
        return (np.concatenate([zp0, zp_grid[j + 1:j_end + 1]]),
                np.concatenate([dzp0, dzp_grid[j + 1:j_end + 1]]))

    def _phi_rows(self, reg, j, j_end, h):
        """Starts of the stretches of equal interval length in a run over grid intervals
        j..j_end-1 (the first possibly shortened to ``h[0]``), and E0..E3 for every interval.

        The functions are computed once per regime and grid for each distinct length, then
        spread to the rows: grids are uniform apart from refined stretches.
        """
        m = h.size
        cached = reg.phi_cache.get("grid")
        if cached is None or cached[0] is not self.grid:
            E = np.stack(phi_functions(self._h_stretch[:, None] * reg.lam[None, :]), axis=1)
            cached = reg.phi_cache["grid"] = (self.grid, E)
        E = cached[1]                                             # (stretches, 4, n)
        sid = self._sid[j:j_end]
        Er = E[sid]
        if h[0] != self._h_all[j]:                                # a run starting mid-interval
            Er[0] = np.stack(phi_functions(h[0] * reg.lam))
            brk = np.flatnonzero(sid[2:] != sid[1:-1]) + 2
            starts = np.concatenate([[0, 1], brk]) if m > 1 else np.zeros(1, dtype=np.int64)
        else:
            brk = np.flatnonzero(sid[1:] != sid[:-1]) + 1
            starts = np.concatenate([[0], brk])
        return starts, (Er[:, 0], Er[:, 1], Er[:, 2], Er[:, 3])

    def _finish_integrals(self):
        """State and thermostat-power integrals of the last sweep (IntT, IntP), completed."""
        pending, IntT, IntP = self._pending
        self.last_pieces = [(p.reg, p.s[:-1], p.s[1:], p.h, p.zprev, p.FR, p.dF)  # evaluators
                            for p in pending] + list(self.event_pieces)
        for p in pending:
            e1, e2, e3 = p.phi
            hk = p.h[:, None]
            Iz = hk * (e1 * p.zprev + hk * (e2 * p.FR + e3 * p.dF))
            if p.zp is not None:
                Iz += p.reg.particular_integral(p.s[:-1], p.s[1:]) - hk * e1 * p.zp[:-1]
            self._accumulate(p.reg, Iz @ p.reg.V.T, p.h, p.j, IntT, IntP)
        self._pending = ([], IntT, IntP)
        return IntT, IntP

    @staticmethod
    def _accumulate(reg, IH, h, j0, IntT, IntP):
        """Add integrals of the state over pieces starting in grid intervals j0, j0+1, ..."""
        k = h.size
        IT = reg.a[None, :] * h[:, None] + reg.b[None, :] * IH
        if k == 1:
            IntT[j0] += IT[0]
        else:
            IntT[j0:j0 + k] += IT
        if IntP.shape[1]:
            P = reg.p_const[None, :] * h[:, None] + IH @ reg.p_lin.T
            if k == 1:
                IntP[j0] += P[0]
            else:
                IntP[j0:j0 + k] += P

    # -- inputs and remainder on a grid ------------------------------------------------------
    def _set_grid(self, grid: np.ndarray) -> None:
        self.grid = grid
        h = self._h_all = np.diff(grid)
        brk = np.flatnonzero(np.abs(np.diff(h)) > 1e-12 * h[1:]) + 1
        starts = np.concatenate([[0], brk])
        self._h_stretch = h[starts]                    # interval length of each stretch
        self._sid = np.repeat(np.arange(starts.size), np.diff(np.append(starts, h.size)))
        self._wR = linear_parts(self.profiles, grid[:-1], "right")
        self._wL = linear_parts(self.profiles, grid[1:], "left")
        if self.I:
            sin_left = np.zeros((grid.size, self.I))
            for i, amp, om, ph in self.sines:
                sin_left[:, i] += amp * np.sin(om * grid + ph)
            self._WR = self._wR + sin_left[:-1]              # full input values
            self._WL = self._wL + sin_left[1:]
        else:
            self._WR = self._WL = self._wR

    def input_integrals(self) -> np.ndarray:
        """Integral of each input over each interval of the current grid, exact."""
        h = np.diff(self.grid)
        Iw = 0.5 * h[:, None] * (self._wR + self._wL)
        for i, amp, om, ph in self.sines:
            Iw[:, i] += amp / om * (np.cos(om * self.grid[:-1] + ph)
                                    - np.cos(om * self.grid[1:] + ph))
        return Iw

    def _temperatures(self, Hg: np.ndarray) -> np.ndarray:
        T = Hg / self.C[None, :]
        for i in self.pcm:
            T[:, i] = self.model.phase[i].temperature_array(Hg[:, i])
        return T

    def _flows(self, Tg: np.ndarray):
        """Remainders of the nonlinear segments at the start (R) and end (L) of every interval."""
        seg = self.seg
        ta_r, tb_r = seg.ends(Tg[:-1], self._WR)
        ta_l, tb_l = seg.ends(Tg[1:], self._WL)
        qR, qL = seg.flows_on_grid(ta_r, tb_r, ta_l, tb_l, self.grid)
        return qR - self.g * (ta_r - tb_r), qL - self.g * (ta_l - tb_l)

    def _tangent_reference(self, Tg: np.ndarray) -> np.ndarray:
        """Mid-range of each segment's tangent conductance along the trajectory."""
        ta, tb = self.seg.ends(Tg[:-1], self._WR)
        return self.seg.reference(ta, tb, self.grid[:-1])

    # -- the whole run -----------------------------------------------------------------------
    def solve(self, H0: np.ndarray) -> PiecewiseSolution:
        """Integrate from stored energies H0 [J]."""
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            out = self._solve(H0)
        self.stats.regimes = self.regimes.built
        return out

    def _solution(self, Hg, rR, rL, switches) -> PiecewiseSolution:
        IntT, IntP = self._finish_integrals()
        return PiecewiseSolution(self.grid, Hg, IntT, IntP, rR, rL, switches)

    def _start(self, H0: np.ndarray):
        """Set the base grid, the tolerances and the first remainder; returns (rR, rL)."""
        grid = self.base_grid
        if grid.size * max(1, self.n) > PIECEWISE_ELEMENTS:
            raise NotSuitable("too many samples for the piecewise path")
        self._set_grid(grid)
        T0 = self._temperatures(H0[None, :])
        scale = max(float(np.abs(T0).max(initial=0.0)),
                    float(np.abs(self._WR[:, :self.model.M]).max(initial=0.0)))
        self.tol = self.atol + self.rtol * scale
        self.grid_tol = 3.0 * self.tol
        J = grid.size - 1
        rR = np.zeros((J, self.n_nl))
        rL = np.zeros((J, self.n_nl))
        if self.n_nl:
            # first guess: the network held at its starting temperatures under the inputs; the
            # reference is the mid-range of the tangents along that, replaced after one sweep
            Tg0 = np.repeat(T0, J + 1, axis=0)
            self._set_reference(self._tangent_reference(Tg0))
            rR, rL = self._flows(Tg0)
        return rR, rL

    def _solve(self, H0: np.ndarray) -> PiecewiseSolution:
        rR, rL = self._start(H0)
        on0 = [c.on for c in self.ctrl]
        refreshed = False
        grid_ok = False
        mixer = Anderson(5)
        res = res_prev = best = np.inf
        best_at = 0
        for _ in range(MAX_SWEEPS):
            for c, o in zip(self.ctrl, on0):
                c.on = o
            Hg, switches = self.sweep(self.grid, rR, rL, H0)   # integrals: see the end
            self.stats.sweeps += 1
            if not self.n_nl:
                return self._solution(Hg, rR, rL, switches)
            Tg = self._temperatures(Hg)
            if not (np.all(np.isfinite(Tg)) and Tg.min(initial=0.0) > -273.15):
                raise NotSuitable("the trajectory left the physical range")
            if not refreshed:
                # reference conductances from the first trajectory, then start over
                self._set_reference(self._tangent_reference(Tg))
                refreshed = True
                rR, rL = self._flows(Tg)
                continue
            nR, nL = self._flows(Tg)
            # fixed-point residual: how far the remainder this trajectory implies is from the one
            # it was computed with, as a temperature (steady gain of the network)
            res = self._as_temperature(np.maximum(np.abs(nR - rR), np.abs(nL - rL)))
            self.history.append(SweepRecord(self.grid.size, res))
            if res < 0.5 * best:
                best, best_at = res, len(self.history)
            elif len(self.history) - best_at >= 10:   # ten sweeps without halving the residual
                raise NotSuitable(f"the relaxation stalls (residual {res:.2g} K after "
                                  f"{len(self.history)} sweeps)")
            # is the grid fine enough for a linear remainder? (each sweep until it is, and again
            # at convergence)
            pieces = None
            if res <= self.tol or not grid_ok:
                pieces = self._refine_where(nR, nL)
                grid_ok = pieces is None
                if grid_ok and res <= self.tol:
                    return self._solution(Hg, rR, rL, switches)
            if res > 0.7 * res_prev:         # Anderson mixing stalls or lost its way: restart
                mixer = Anderson(5)
            res_prev = res
            rR, rL = self._mix(mixer, rR, rL, nR, nL)
            if pieces is not None:
                self.stats.refinements += 1
                if self.stats.refinements > MAX_REFINEMENTS:
                    raise NotSuitable("the grid could not be refined enough")
                rR, rL = self._refine(pieces)(rR, rL)
                mixer = Anderson(5)    # its history does not carry over to new points
                res_prev = np.inf
        raise NotSuitable(f"no convergence in {MAX_SWEEPS} relaxation sweeps (last residual "
                          f"{res:.2g} K)")

    @staticmethod
    def _mix(mixer, rR, rL, nR, nL):
        """The next remainder from the last one and the one it implied (Anderson mixing)."""
        x = np.concatenate([rR.ravel(), rL.ravel()])
        fx = np.concatenate([nR.ravel(), nL.ravel()])
        xn = mixer.step(x, fx)
        if not np.all(np.isfinite(xn)):
            raise NotSuitable("the relaxation diverged")
        return xn[:rR.size].reshape(rR.shape), xn[rR.size:].reshape(rL.shape)

    def _refine(self, pieces):
        """Split intervals into the given numbers of pieces (and put the last sweep's events on
        the grid); returns the map that carries a remainder over to the new grid."""
        new_grid, lift, self._kinks = refined_grid(self.grid, pieces, self._event_hints,
                                                   self._kinks)
        if new_grid.size * max(1, self.n) > PIECEWISE_ELEMENTS:
            raise NotSuitable("the grid the nonlinear links need is too fine")
        self._set_grid(new_grid)
        return lift

    def _as_temperature(self, dr: np.ndarray) -> float:
        """Largest temperature shift that remainder errors ``dr`` (W per segment, per row) can
        cause: |K'^-1| |N dr| (the steady gain bounds the lasting effect of a flow error)."""
        node = np.abs(dr @ self.N.T)
        if self._Kp_inv is None:       # pragma: no cover - a reference conductance grounds it
            return float(node.max(initial=0.0))
        return float((node @ self._Kp_inv.T).max(initial=0.0))

    def _refine_where(self, rR, rL):
        """Pieces to split each interval into where the remainder bends too much for linear
        interpolation (None when no interval needs it)."""
        if self._Kp_inv is None:
            return None
        return refinement_pieces(self.grid, rR, rL, self.N, self._Kp_inv, self._kinks,
                                 self.grid_tol)
