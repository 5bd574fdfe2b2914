"""Piecewise-exact integration of nonlinear networks: events plus waveform relaxation.

Phase change and thermostats make a network *piecewise linear*: between two events (a pack
starting or ending its melt, a thermostat switching, a proportional thermostat entering or
leaving its band) every capacity and every source is fixed, so the network is linear and is
advanced in closed form by its modes, exactly like a linear network (:mod:`.exact`). The state is
the stored energy H of each massive node; in one *regime* the temperatures are affine in it,
``T = a + b * H`` (b = 1/C, or the slope of a pack's enthalpy curve), and

    dH/dt = A H + c + E' w(t) + N r(t),      A = -K' diag(b) (+ a proportional thermostat)

Event functions are affine in H, so crossings are found on the grid (and, for a function that
rises above zero and falls back between two grid points, by a hump test on its closed-form
derivatives) and then located inside their interval by a bracketing root search on the
closed-form state; the regime changes there and integration restarts.

The smooth nonlinear links (radiation, film correlations) are split into a reference conductance
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
from it, so the energy balance closes to rounding whatever the grid.

When the method does not suit a network (complex modes from a proportional thermostat heating one
node and sensing another, too many states or samples, no convergence, frequent switching next to
nonlinear links) :class:`NotSuitable` is raised and the driver falls back to the stiff
integrator.
"""

from __future__ import annotations

import numpy as np

from .exact import linear_recurrence, linear_recurrence_times, phi_functions

__all__ = ["NotSuitable", "PiecewiseSolver", "run_piecewise_network", "PIECEWISE_STATES"]

#: Up to this many states the piecewise-exact path is tried (dense eigenproblems per regime).
PIECEWISE_STATES = 200
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


class NotSuitable(Exception):
    """The piecewise-exact path cannot handle this run (the stiff path takes over)."""


class _Regime:
    """Modal form of the network in one regime (fixed pack states and thermostat states)."""

    __slots__ = ("key", "lam", "V", "Vi", "a", "b", "cm", "Ein", "Nm", "cz", "Cev", "CevV", "dev",
                 "ev_owner", "p_const", "p_lin", "phi_cache")


class PiecewiseSolver:
    """Integrate a :class:`~rcsim.transient.stiff.StiffModel` by events and waveform relaxation.

    Parameters
    ----------
    model : StiffModel
        The network in energy form (its structure only is used here).
    t_out : array
        Output times [s], starting at 0.
    rtol, atol : float
        Tolerances in the sense of the stiff path: waveform relaxation stops when the remainder
        mismatch, as a temperature, is below ``atol + rtol * T_scale`` [K] (T_scale the largest
        temperature magnitude of the start and the inputs), and the grid is refined until the
        estimated interpolation error of the nonlinear remainder is below three times that.
    """

    def __init__(self, model, t_out, rtol: float = 1e-6, atol: float = 1e-6, progress=None):
        self.model = model
        self.progress = progress         # called with a fraction that only grows, below 1
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
        # nonlinear segments
        seg = model.terms[0] if model.terms else None
        self.seg = seg
        self.n_nl = 0 if seg is None else len(seg.nl)
        if seg is not None:
            self.N = np.zeros((n, self.n_nl))
            k = np.arange(self.n_nl)
            self.N[seg.a_idx[seg.a_is_node], k[seg.a_is_node]] -= 1.0
            self.N[seg.b_idx[seg.b_is_node], k[seg.b_is_node]] += 1.0
        else:
            self.N = np.zeros((n, 0))
        # phase change and thermostats
        self.pcm = sorted(model.phase)                       # state indices
        self.ctrl = list(model.controllers)
        # the grid: output times and every knot of the inputs
        T_end = float(self.t_out[-1])
        knots = [p.knots(0.0, T_end) for p in self.profiles]
        allk = np.concatenate(knots) if knots else np.empty(0)
        self._base_grid = np.union1d(self.t_out, allk) if allk.size else self.t_out.copy()
        self.history: list = []          # (grid points, residual [K]) per sweep
        self._event_hints = np.empty(0)  # event times of the last sweep
        self._kinks = np.empty(0)        # grid points placed at events
        self.stats = {"sweeps": 0, "regimes": 0, "events": 0, "refinements": 0, "runs": 0}
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
        self.Kp, self.Ep = Kp, Ep
        self._regimes: dict = {}
        try:
            self._Kp_inv = np.abs(np.linalg.inv(Kp)) if n else np.zeros((0, 0))
        except np.linalg.LinAlgError:
            self._Kp_inv = None

    # -- regimes -----------------------------------------------------------------------------
    def _regime_key(self, H: np.ndarray, on: list) -> tuple:
        key = []
        for i in self.pcm:
            pc = self.model.phase[i]
            key.append(0 if H[i] < 0.0 else (2 if H[i] > pc.h_melt_end else 1))
        for c, is_on in zip(self.ctrl, on):
            if c.control == "on-off":
                key.append(1 if is_on else 0)
            else:
                a, b = self._affine_T(c._sensor_idx, key)
                x = self._x_of(c, a + b * H[c._sensor_idx])
                key.append(0 if x >= 1.0 else (2 if x <= 0.0 else 1))
        return tuple(key)

    def _affine_T(self, i: int, key) -> tuple[float, float]:
        """(a, b) with T_i = a + b H_i in the regime ``key`` (its pack part)."""
        if i in self.model.phase:
            pc = self.model.phase[i]
            r = key[self.pcm.index(i)]
            m, cs, cl = pc.mass, pc.specific_heat_solid, pc.specific_heat_liquid
            if r == 0:
                return pc.melting_low, 1.0 / (m * cs)
            if r == 2:
                return pc.melting_high - pc.h_melt_end / (m * cl), 1.0 / (m * cl)
            if pc.width == 0.0:
                return pc.melting_low, 0.0
            return pc.melting_low, 1.0 / (m * (cs + pc.latent_heat / pc.width))
        return 0.0, 1.0 / self.C[i]

    @staticmethod
    def _x_coeffs(c) -> tuple[float, float]:
        """(alpha, beta) with the proportional thermostat's fraction x = alpha + beta T."""
        half = 0.5 * c.band
        if c.mode == "heat":
            return (c.setpoint + half) / c.band, -1.0 / c.band
        return (half - c.setpoint) / c.band, 1.0 / c.band

    def _x_of(self, c, T: float) -> float:
        al, be = self._x_coeffs(c)
        return al + be * T

    def _regime(self, key: tuple) -> _Regime:
        reg = self._regimes.get(key)
        if reg is not None:
            return reg
        n = self.n
        a = np.zeros(n)
        b = 1.0 / self.C
        for i in self.pcm:
            a[i], b[i] = self._affine_T(i, key)
        A = -self.Kp * b[None, :]
        c = -self.Kp @ a
        npcm = len(self.pcm)
        rows, ds, owner = [], [], []

        def event(coef_i, i, d, who):
            row = np.zeros(n)
            row[i] = coef_i
            rows.append(row)
            ds.append(d)
            owner.append(who)

        for p, i in enumerate(self.pcm):
            top = self.model.phase[i].h_melt_end
            r = key[p]
            if r == 0:
                event(1.0, i, 0.0, (p, 1))
            elif r == 1:
                event(-1.0, i, 0.0, (p, 0))
                event(1.0, i, -top, (p, 2))
            else:
                event(-1.0, i, top, (p, 1))
        p_const = np.zeros(len(self.ctrl))
        p_lin = np.zeros((len(self.ctrl), n))      # power = p_const + p_lin @ H
        symmetric = True
        for k, ctl in enumerate(self.ctrl):
            s, j = ctl._sensor_idx, ctl._node_idx
            state = key[npcm + k]
            sa, sb = a[s], b[s]
            half = 0.5 * ctl.band
            if ctl.control == "on-off":
                p_const[k] = ctl.sign * ctl.power * state
                low, high = ctl.setpoint - half, ctl.setpoint + half
                if (ctl.mode == "heat") == bool(state):     # heater on / cooler off: rises to high
                    event(sb, s, sa - high, (npcm + k, 1 - state))
                else:                                        # falls to low
                    event(-sb, s, low - sa, (npcm + k, 1 - state))
            else:
                al, be = self._x_coeffs(ctl)
                if state == 0:                               # full power while x >= 1
                    p_const[k] = ctl.sign * ctl.power
                    event(-be * sb, s, 1.0 - al - be * sa, (npcm + k, 1))
                elif state == 2:                             # off while x <= 0
                    event(be * sb, s, al + be * sa, (npcm + k, 1))
                else:
                    p_const[k] = ctl.sign * ctl.power * (al + be * sa)
                    p_lin[k, s] = ctl.sign * ctl.power * be * sb
                    event(be * sb, s, al + be * sa - 1.0, (npcm + k, 0))
                    event(-be * sb, s, -al - be * sa, (npcm + k, 2))
                    if j != s:
                        symmetric = False
            c[j] += p_const[k]
            A[j] += p_lin[k]
        if symmetric and np.all(b > 0):
            # A = -K' B is similar to the symmetric -B^1/2 K' B^1/2
            sq = np.sqrt(b)
            S = sq[:, None] * (-A / b[None, :]) * sq[None, :]
            lam, U = np.linalg.eigh(0.5 * (S + S.T))
            V = U / sq[:, None]
            Vi = U.T * sq[None, :]
        else:
            mu, V = np.linalg.eig(A)
            scale = max(1.0, float(np.abs(mu).max()))
            if np.abs(mu.imag).max(initial=0.0) > 1e-9 * scale:
                raise NotSuitable("oscillating modes (a proportional thermostat heating one "
                                  "node and sensing another)")
            V = V.real
            lam = -mu.real
            try:
                Vi = np.linalg.inv(V)
            except np.linalg.LinAlgError:
                raise NotSuitable("a regime without a full set of modes") from None
            if np.linalg.cond(V) > 1e10:
                raise NotSuitable("ill-conditioned modes")
        reg = _Regime()
        reg.key, reg.lam, reg.V, reg.Vi, reg.a, reg.b = key, lam, V, Vi, a, b
        reg.cm = Vi @ c
        reg.Ein = Vi @ self.Ep
        reg.Nm = Vi @ self.N
        reg.cz = [(amp * np.exp(1j * ph) * reg.Ein[:, i] / (lam + 1j * om), om)
                  for i, amp, om, ph in self.sines]
        reg.Cev = np.asarray(rows).reshape(-1, n)
        reg.CevV = reg.Cev @ V
        reg.dev = np.asarray(ds, dtype=float)
        reg.ev_owner = owner
        reg.p_const, reg.p_lin = p_const, p_lin
        reg.phi_cache = {}
        self._regimes[key] = reg
        self.stats["regimes"] += 1
        return reg

    # -- closed forms ------------------------------------------------------------------------
    @staticmethod
    def _zp(reg: _Regime, t: np.ndarray, with_rate: bool = False):
        """Particular (periodic) modal response to the sine inputs at times t: (len(t), n), and
        its time derivative when ``with_rate``."""
        out = np.zeros((t.size, reg.lam.size))
        rate = np.zeros_like(out) if with_rate else None
        for cz, om in reg.cz:
            ph = np.exp(1j * om * t)[:, None]
            out += (ph * cz[None, :]).imag
            if with_rate:
                rate += (ph * (1j * om * cz)[None, :]).imag
        return (out, rate) if with_rate else out

    @staticmethod
    def _zp_integral(reg: _Regime, t0: np.ndarray, t1: np.ndarray) -> np.ndarray:
        out = np.zeros((t0.size, reg.lam.size))
        for cz, om in reg.cz:
            out += (((np.exp(1j * om * t1) - np.exp(1j * om * t0)) / (1j * om))[:, None]
                    * cz[None, :]).imag
        return out

    # -- one sweep over the time axis --------------------------------------------------------
    def sweep(self, grid, rR, rL, H0):
        """Integrate over ``grid`` with the remainder given at the grid points.

        ``rR[j]``/``rL[j]`` are the remainder flows (per nonlinear segment) at the start/end of
        interval j. Returns the states H at the grid points, the arrays that
        :meth:`_finish_integrals` completes with the integrals of the state temperatures and
        thermostat powers per interval, and the switching times of each on/off thermostat.
        """
        n = self.n
        J = grid.size - 1
        h_all = self._h_all
        wR, wL = self._wR, self._wL
        Hg = np.empty((J + 1, n))
        Hg[0] = H0
        IntT = np.zeros((J, n))
        IntP = np.zeros((J, len(self.ctrl)))
        on = [c.on for c in self.ctrl]
        switches = [[] for _ in self.ctrl]
        t_c, H_c, j = float(grid[0]), H0.copy(), 0
        state = list(self._regime_key(H0, on))   # explicit: never re-derived at a boundary
        npcm = len(self.pcm)
        # runs end a little past where the previous sweep met its events: later samples would be
        # recomputed after the event anyway
        hints = np.unique(np.searchsorted(grid, self._event_hints)) if self._event_hints.size \
            else None
        hit_times = []
        pending = []
        chunk = 1024 if hints is None else MAX_RUN
        # with nonlinear links every sweep pays for every event, and each switch puts a kink in
        # the links' flows that the grid must resolve: many switches make the stiff path cheaper
        # (measured: 0.2 switches per grid interval still favour this path 2:1, 0.6 the stiff
        # one 1.7:1)
        event_budget = max(200, J // 3) if self.n_nl else MAX_EVENTS
        events = 0
        while j < J:
            reg = self._regime(tuple(state))
            self.stats["runs"] += 1
            # a run is as long as events allow: it grows while none come, shrinks when they do
            # (the work after an event is thrown away), and ends a little past the next event
            # of the previous sweep
            j_end = min(J, j + chunk)
            if hints is not None:
                nxt = hints[hints > j + 1]
                if nxt.size:
                    j_end = min(j_end, int(nxt[0]) + 4)
            s = np.concatenate([[t_c], grid[j + 1:j_end + 1]])
            m = s.size - 1
            h = np.diff(s)
            # piecewise-linear forcing (modal) at the start and end of each local interval
            theta = (t_c - grid[j]) / h_all[j]
            wr = wR[j:j_end].copy()
            rr = rR[j:j_end].copy()
            wr[0] += theta * (wL[j] - wR[j])
            rr[0] += theta * (rL[j] - rR[j])
            FR = wr @ reg.Ein.T + rr @ reg.Nm.T + reg.cm
            FL = wL[j:j_end] @ reg.Ein.T + rL[j:j_end] @ reg.Nm.T + reg.cm
            dF = FL - FR
            starts, (e0, e1, e2, e3) = self._phi_rows(reg, j, j_end, h)
            zp = dzp = None
            if reg.cz:
                if reg.dev.size:
                    zp, dzp = self._zp(reg, s, with_rate=True)
                else:
                    zp = self._zp(reg, s)
            G = h[:, None] * (e1 * FR + e2 * dF)
            if zp is not None:
                G += zp[1:] - e0 * zp[:-1]
            z0 = reg.Vi @ H_c
            Z = _scan(e0, starts, G, z0, reg.lam, s)
            Hs = Z @ reg.V.T
            fired_at = m
            dips = None
            if reg.dev.size:
                vals = Hs @ reg.Cev.T + reg.dev
                hit = np.flatnonzero((vals > 0.0).any(axis=1))
                if hit.size:
                    fired_at = int(hit[0])
                # a function may also rise above zero and fall back between two grid points
                dips = self._dips(reg, s, h, z0, Z, FR, FL, zp, dzp, vals, min(fired_at, m - 1))
                if dips is not None and dips[0] < fired_at:
                    fired_at = dips[0]
            # accept the intervals before the event
            k = fired_at
            zprev = np.vstack([z0[None, :], Z[:k]])[:k] if k else np.empty((0, n))
            if k:
                # the integrals are needed from the last sweep only: kept as a task till then
                pending.append((reg, k, j, s, h, zprev, FR, dF, e1, e2, e3, zp))
                Hg[j + 1:j + k + 1] = Hs[:k]
            if self.progress is not None:    # sweep k of an unknown number: 1 - 0.6^k onwards
                done = 1.0 - 0.6 ** self.stats["sweeps"]
                self.progress(done + (1.0 - done) * 0.4 * float(s[min(k, m)]) / float(grid[-1]))
            if k == m:
                t_c, H_c, j = float(grid[j_end]), Hs[-1].copy(), j_end
                chunk = min(MAX_RUN, 2 * chunk)
                continue
            chunk = MAX_RUN if hints is not None else max(64, 4 * (k + 1))
            # locate the first event inside interval k of this run
            zk = z0 if k == 0 else Z[k - 1]
            t_hit, which = self._locate(reg, s[k], h[k], zk, FR[k], dF[k], vals[k],
                                        dips[1] if dips is not None and dips[0] == k else None)
            tau = t_hit - s[k]
            Iz, z_hit = self._partial(reg, s[k], tau, h[k], zk, FR[k], dF[k])
            self._accumulate(reg, (Iz @ reg.V.T)[None, :], np.array([tau]), j + k, IntT, IntP)
            H_c = reg.V @ z_hit
            t_c = t_hit
            j = j + k
            # the located event and any other that is due at the same instant (equal packs)
            vals_hit = reg.Cev @ H_c + reg.dev
            slack = 1e-9 * (np.abs(reg.Cev) @ np.abs(H_c) + np.abs(reg.dev) + 1.0)
            due = set(np.flatnonzero(vals_hit > -slack).tolist()) | {which}
            for e in sorted(due):
                pos, target = reg.ev_owner[e]
                if state[pos] == target:
                    continue
                state[pos] = target
                if pos >= npcm and self.ctrl[pos - npcm].control == "on-off":
                    on[pos - npcm] = bool(target)
                    switches[pos - npcm].append(t_hit)
                events += 1
            hit_times.append(t_hit)
            if events > event_budget:
                raise NotSuitable(f"more than {event_budget} events in a sweep (frequent switching "
                                  "with radiation or film links: each switch bends the links' "
                                  "flows, and the stiff path steps to each switch anyway)"
                                  if self.n_nl else f"more than {event_budget} events")
            if t_c >= grid[j + 1]:  # the event sits on the grid point itself
                Hg[j + 1] = H_c
                j += 1
        self.stats["events"] = events
        self._pending = (pending, IntT, IntP)
        self._event_hints = np.asarray(hit_times)
        return Hg, IntT, IntP, switches

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
        for reg, k, j, s, h, zprev, FR, dF, e1, e2, e3, zp in pending:
            hk = h[:k, None]
            Iz = hk * (e1[:k] * zprev + hk * (e2[:k] * FR[:k] + e3[:k] * dF[:k]))
            if zp is not None:
                Iz += self._zp_integral(reg, s[:k], s[1:k + 1]) - hk * e1[:k] * zp[:k]
            self._accumulate(reg, Iz @ reg.V.T, h[:k], j, IntT, IntP)
        self._pending = ([], IntT, IntP)
        return IntT, IntP

    def _accumulate(self, reg, IH, h, j0, IntT, IntP):
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

    def _state_at(self, reg, t0, tau, h, z0, FR, dF):
        """Modal state(s) ``tau`` (scalar or array) into an interval starting at t0 with z0."""
        tau = np.asarray(tau, dtype=float)
        tt = tau[..., None]
        e0, e1, e2, _ = phi_functions(tt * reg.lam)
        z = e0 * z0 + tt * (e1 * FR + e2 * (tt / h) * dF)
        if reg.cz:
            zp = self._zp(reg, np.append(t0, t0 + np.atleast_1d(tau)))
            z = z + (zp[1:] - e0.reshape(-1, reg.lam.size) * zp[0]).reshape(z.shape)
        return z

    def _partial(self, reg, t0, tau, h, z0, FR, dF):
        """(integral of the modal state over [t0, t0 + tau], state at t0 + tau)."""
        x = tau * reg.lam
        e0, e1, e2, e3 = phi_functions(x)
        slope = dF * (tau / h)
        z = e0 * z0 + tau * (e1 * FR + e2 * slope)
        Iz = tau * (e1 * z0 + tau * (e2 * FR + e3 * slope))
        if reg.cz:
            zp = self._zp(reg, np.array([t0, t0 + tau]))
            z = z + zp[1] - e0 * zp[0]
            Iz = Iz + self._zp_integral(reg, np.array([t0]), np.array([t0 + tau]))[0] \
                - tau * e1 * zp[0]
        return Iz, z

    def _dips(self, reg, s, h, z0, Z, FR, FL, zp, dzp, vals, upto):
        """The first interval (index <= ``upto``) in which an event function that is not positive
        at either end rises above zero in between, with {event: time of its peak estimate}; or
        None.

        Candidates are humps: the function climbs at the interval's start and falls at its end
        (derivatives from the closed form), and the two end tangents meet above zero (an upper
        bound of a concave hump). Each is then checked on 32 points and at that meeting point.
        """
        if upto < 0:
            return None
        lam, CV, dev = reg.lam, reg.CevV, reg.dev
        v1 = vals[:upto + 1]
        v0 = np.vstack([(CV @ z0 + dev)[None, :], vals[:upto]])
        # only intervals whose ends lie within twice the largest step of the function from zero
        # can hold a hump above it
        reach = 2.0 * np.abs(v1 - v0).max(axis=0)
        near = np.flatnonzero((np.maximum(v0, v1) > -reach).any(axis=1))
        if near.size == 0:
            return None
        zs = np.vstack([z0[None, :], Z[:upto + 1]])              # states at s[0..upto+1]
        d_start = -lam * zs[near] + FR[near]
        d_end = -lam * zs[near + 1] + FL[near]
        if zp is not None:
            fp = dzp + lam * zp                                   # modal sine forcing
            d_start += fp[near]
            d_end += fp[near + 1]
        v0, v1 = v0[near], v1[near]
        g0 = d_start @ CV.T
        g1 = d_end @ CV.T
        cand = (v0 < 0.0) & (v1 <= 0.0) & (g0 > 0.0) & (g1 < 0.0)
        if not cand.any():
            return None
        hh = h[near, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            tx = np.clip((v1 - v0 - g1 * hh) / (g0 - g1), 0.0, hh)
        cand &= v0 + g0 * tx > 0.0
        for r in np.flatnonzero(cand.any(axis=1)):
            i = int(near[r])
            found = {}
            for e in np.flatnonzero(cand[r]):
                taus = np.union1d(h[i] * np.arange(1, 33) / 32.0, [tx[r, e]])
                st = self._state_at(reg, s[i], taus, h[i], zs[i], FR[i], FL[i] - FR[i])
                if np.any(st @ CV[e] + dev[e] > 0.0):
                    found[int(e)] = float(tx[r, e])
            if found:
                return i, found
        return None

    def _locate(self, reg, t0, h, z0, FR, dF, vals_end, dips=None):
        """Earliest time in (t0, t0 + h] where an event function turns positive (those positive
        at the end, and those of ``dips`` that rise above zero and fall back inside).

        The time returned lies just past the crossing (within 1e-6 of the interval), on
        the side where the function is positive, so the new regime starts strictly inside.
        """
        xtol = 1e-6 * max(1.0, h)
        fired = np.flatnonzero(vals_end > 0.0)
        probe = np.full(fired.size, np.nan)
        if dips:
            fired = np.concatenate([fired, list(dips)]).astype(np.int64)
            probe = np.concatenate([probe, list(dips.values())])
        rows = reg.CevV[fired]
        f0 = rows @ z0 + reg.dev[fired]
        if (f0 > 0.0).any():  # already past at the start (rounding): switch at once
            return t0 + min(h, xtol), int(fired[int(np.argmax(f0))])
        # most likely first: the crossing of the straight line between the interval's ends (or
        # the peak of a hump)
        with np.errstate(divide="ignore", invalid="ignore"):
            guess = np.where(np.isnan(probe), f0 / (f0 - vals_end[fired]), probe / h)
        best_t, best_e = None, None
        for k in np.argsort(guess):
            row, d = rows[k], reg.dev[fired[k]]

            def f(tau, row=row, d=d):
                return float(row @ self._state_at(reg, t0, tau, h, z0, FR, dF) + d)

            lo, hi = 0.0, h
            if best_t is not None:
                hi = best_t - t0 - xtol
                if hi <= 0.0 or f(hi) <= 0.0:
                    continue   # not earlier than the best so far by more than the tolerance
            # bracket on 32 points at once (and the peak of a hump), then regula falsi in it
            taus = hi * np.arange(1, 33) / 32.0
            if not np.isnan(probe[k]) and probe[k] < hi:
                taus = np.union1d(taus, [probe[k]])
            vals = self._state_at(reg, t0, taus, h, z0, FR, dF) @ row + d
            i = int(np.argmax(vals > 0.0))
            if vals[i] <= 0.0:
                continue       # a hump that stays below zero up to the best time so far
            lo, hi = (taus[i - 1] if i else 0.0), taus[i]
            root = _root_in_bracket(f, lo, hi, float(vals[i - 1]) if i else float(f0[k]),
                                    float(vals[i]), 0.25 * xtol)
            t_hi = min(hi, root + 0.5 * xtol)
            if f(t_hi) <= 0.0:
                t_hi = hi
            best_t, best_e = t0 + t_hi, int(fired[k])
        return best_t, best_e

    # -- inputs and remainder on a grid ------------------------------------------------------
    def _set_grid(self, grid: np.ndarray) -> None:
        self.grid = grid
        h = self._h_all = np.diff(grid)
        brk = np.flatnonzero(np.abs(np.diff(h)) > 1e-12 * h[1:]) + 1
        starts = np.concatenate([[0], brk])
        self._h_stretch = h[starts]                    # interval length of each stretch
        self._sid = np.repeat(np.arange(starts.size), np.diff(np.append(starts, h.size)))
        I = self.I
        if I:
            self._wR = np.column_stack([p._pl(grid[:-1], "right") for p in self.profiles])
            self._wL = np.column_stack([p._pl(grid[1:], "left") for p in self.profiles])
            sin_left = np.zeros((grid.size, I))
            for i, amp, om, ph in self.sines:
                sin_left[:, i] += amp * np.sin(om * grid + ph)
            self._WR = self._wR + sin_left[:-1]              # full input values
            self._WL = self._wL + sin_left[1:]
        else:
            self._wR = self._wL = np.zeros((grid.size - 1, 0))
            self._WR = self._WL = self._wR

    def _temperatures(self, Hg: np.ndarray) -> np.ndarray:
        T = Hg / self.C[None, :]
        for i in self.pcm:
            T[:, i] = self.model.phase[i].temperature_array(Hg[:, i])
        return T

    def _flows(self, Tg: np.ndarray):
        """Nonlinear flows q and remainders at the start (R) and end (L) of every interval."""
        seg = self.seg
        ta_r, tb_r = seg._ends(Tg[:-1], self._WR)
        ta_l, tb_l = seg._ends(Tg[1:], self._WL)
        qR = seg.nl.flows(ta_r, tb_r)
        qL = seg.nl.flows(ta_l, tb_l)
        return qR - self.g * (ta_r - tb_r), qL - self.g * (ta_l - tb_l), (ta_r, tb_r)

    def _tangent_reference(self, Tg: np.ndarray) -> np.ndarray:
        """Mid-range of each segment's tangent conductance along the trajectory."""
        seg = self.seg
        ta, tb = seg._ends(Tg[:-1], self._WR)
        _, da, db = seg.nl.solve(ta, tb)
        g = 0.5 * (da - db)
        return np.maximum(0.5 * (g.min(axis=0) + g.max(axis=0)), 1e-12)

    # -- the whole run -----------------------------------------------------------------------
    def solve(self, H0: np.ndarray):
        """Integrate from energies H0; returns (grid, Hg, IntT, IntP, rR, rL, switches)."""
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            return self._solve(H0)

    def _solve(self, H0: np.ndarray):
        grid = self._base_grid
        if grid.size * max(1, self.n) > PIECEWISE_ELEMENTS:
            raise NotSuitable("too many samples for the piecewise path")
        self._set_grid(grid)
        T0 = self._temperatures(H0[None, :])
        scale = max(float(np.abs(T0).max(initial=0.0)),
                    float(np.abs(self._WR[:, :self.model.M]).max(initial=0.0)))
        self.tol = self.atol + self.rtol * scale
        self.grid_tol = 3.0 * self.tol
        nnl = self.n_nl
        J = grid.size - 1
        on0 = [c.on for c in self.ctrl]
        rR = np.zeros((J, nnl))
        rL = np.zeros((J, nnl))
        if nnl:
            # first guess: the network held at its starting temperatures under the inputs; the
            # reference is the mid-range of the tangents along that, replaced after one sweep
            Tg0 = np.repeat(T0, J + 1, axis=0)
            self._set_reference(self._tangent_reference(Tg0))
            rR, rL, _ = self._flows(Tg0)
        refreshed = False
        refinements = 0
        grid_ok = False
        mixer = Anderson(5)
        res = res_prev = best = np.inf
        best_at = 0
        for _ in range(MAX_SWEEPS):
            for c, o in zip(self.ctrl, on0):
                c.on = o
            Hg, _, _, switches = self.sweep(self.grid, rR, rL, H0)   # integrals: see the end
            self.stats["sweeps"] += 1
            if not nnl:
                return (self.grid, Hg, *self._finish_integrals(), rR, rL, switches)
            Tg = self._temperatures(Hg)
            if not (np.all(np.isfinite(Tg)) and Tg.min(initial=0.0) > -273.15):
                raise NotSuitable("the trajectory left the physical range")
            if not refreshed:
                # reference conductances from the first trajectory, then start over
                self._set_reference(self._tangent_reference(Tg))
                refreshed = True
                rR, rL, _ = self._flows(Tg)
                continue
            nR, nL, _ = self._flows(Tg)
            # fixed-point residual: how far the remainder this trajectory implies is from the one
            # it was computed with, as a temperature (steady gain of the network)
            res = self._as_temperature(np.maximum(np.abs(nR - rR), np.abs(nL - rL)))
            self.history.append((self.grid.size, res))
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
                    return (self.grid, Hg, *self._finish_integrals(), rR, rL, switches)
            if res > 0.7 * res_prev:         # Anderson mixing stalls or lost its way: restart
                mixer = Anderson(5)
            res_prev = res
            x = np.concatenate([rR.ravel(), rL.ravel()])
            fx = np.concatenate([nR.ravel(), nL.ravel()])
            xn = mixer.step(x, fx)
            if not np.all(np.isfinite(xn)):
                raise NotSuitable("the relaxation diverged")
            rR = xn[:rR.size].reshape(rR.shape)
            rL = xn[rR.size:].reshape(rL.shape)
            if pieces is not None:
                refinements += 1
                self.stats["refinements"] = refinements
                if refinements > MAX_REFINEMENTS:
                    raise NotSuitable("the grid could not be refined enough")
                rR, rL = self._refine(pieces)(rR, rL)
                mixer = Anderson(5)    # its history does not carry over to new points
                res_prev = np.inf
        raise NotSuitable(f"no convergence in {MAX_SWEEPS} relaxation sweeps (last residual "
                          f"{res:.2g} K)")

    def _refine(self, pieces):
        """Split intervals into the given numbers of pieces; returns the map that carries a
        remainder (start and end values per interval) over to the new grid, linearly."""
        old = self.grid
        h = np.diff(old)
        idx = np.flatnonzero(pieces > 1)
        new_pts = [old[j] + h[j] * np.arange(1, pieces[j]) / pieces[j] for j in idx]
        # the last sweep's events become grid points too: the links' flows bend sharply there
        # (a pack starts melting, a heater switches), which linear pieces then follow
        ev = self._event_hints
        ev = ev[(ev > old[0]) & (ev < old[-1])]
        if ev.size:
            pos = np.searchsorted(old, ev)
            gap = np.minimum(ev - old[pos - 1], old[pos] - ev)
            ev = ev[gap > 1e-3 * h[pos - 1]]
            self._kinks = np.union1d(self._kinks, ev)
            new_pts.append(ev)
        new_grid = np.union1d(old, np.concatenate(new_pts)) if new_pts else old
        if new_grid.size * max(1, self.n) > PIECEWISE_ELEMENTS:
            raise NotSuitable("the grid the nonlinear links need is too fine")
        # each new interval lies inside one old interval: interpolate its end values there
        k = np.searchsorted(old, new_grid[:-1], side="right") - 1
        frac0 = ((new_grid[:-1] - old[k]) / h[k])[:, None]
        frac1 = ((new_grid[1:] - old[k]) / h[k])[:, None]
        self._set_grid(new_grid)

        def lift(rR, rL):
            return rR[k] + frac0 * (rL[k] - rR[k]), rR[k] + frac1 * (rL[k] - rR[k])

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
        if self._Kp_inv is None or rR.shape[0] < 2:
            return None
        h = np.diff(self.grid)
        # curvature from consecutive slopes where the remainder is continuous
        slope = (rL - rR) / h[:, None]
        cont = np.abs(rR[1:] - rL[:-1]) <= 1e-12 * (1.0 + np.abs(rR[1:]))
        if self._kinks.size:   # event points: the flows may bend there, linear on each side
            cont[np.isin(self.grid[1:-1], self._kinks)] = False
        d2 = np.where(cont, np.abs(slope[1:] - slope[:-1]), 0.0) / (0.5 * (h[1:] + h[:-1]))[:, None]
        # interpolation error ~ h^2/8 |r''| on each side of an interior point
        err = np.zeros_like(rR)
        err[1:] = np.maximum(err[1:], d2 * (h[1:, None] ** 2) / 8.0)
        err[:-1] = np.maximum(err[:-1], d2 * (h[:-1, None] ** 2) / 8.0)
        dT = np.abs(err @ self.N.T) @ self._Kp_inv.T            # K'^-1 |flow error|
        worst = dT.max(axis=1) / self.grid_tol
        if worst.max(initial=0.0) <= 1.0:
            return None
        # the error falls as h^2: split each interval enough to meet the tolerance (and then some)
        # (the much larger errors sit where the flows are not smooth, e.g. a film at a vanishing
        # temperature difference, and fall more slowly: those get more pieces)
        n = np.where(worst > 100.0, 1.5 * worst ** 0.75, 1.5 * np.sqrt(worst))
        return np.where(worst > 1.0, np.clip(np.ceil(n), 2, 128), 1).astype(int)


def _root_in_bracket(f, lo, hi, f_lo, f_hi, xtol, max_iter=60):
    """A root of f in [lo, hi] (f_lo <= 0 < f_hi) to within ``xtol``: Illinois regula falsi,
    which needs two or three evaluations for the nearly linear event functions met here."""
    side = 0
    root = hi
    for _ in range(max_iter):
        width = hi - lo
        if width <= xtol:
            return hi
        t = lo - f_lo * width / (f_hi - f_lo)
        if not (lo < t < hi):
            t = 0.5 * (lo + hi)
        ft = f(t)
        slope = (f_hi - f_lo) / width
        root = t - ft / slope
        if abs(ft) <= slope * xtol:       # the next step would be below the tolerance
            return min(max(root, lo), hi)
        if ft > 0.0:
            hi, f_hi = t, ft
            if side == 1:
                f_lo *= 0.5
            side = 1
        else:
            lo, f_lo = t, ft
            if side == -1:
                f_hi *= 0.5
            side = -1
    return root


def _scan(e0, starts, G, z0, lam=None, s=None):
    """States after each interval of ``z[k+1] = e0[k] z[k] + G[k]``, one vectorised recurrence
    per stretch of equal decay factors (``e0 = exp(-lam h)``; on a grid of mostly unequal
    intervals, given ``lam`` and the times ``s``, one recurrence over the whole grid)."""
    m = G.shape[0]
    if lam is not None and m > 32 and starts.size > m // 4:
        return linear_recurrence_times(lam, s, G, z0)
    out = np.empty_like(G)
    bounds = np.append(starts, m)
    z = z0
    for a, b in zip(bounds[:-1].tolist(), bounds[1:].tolist()):
        if b - a <= 12:  # short stretches (refined spots): step by step is cheaper
            decay = e0[a]
            for i in range(a, b):
                z = decay * z + G[i]
                out[i] = z
        else:
            out[a:b] = linear_recurrence(np.ascontiguousarray(e0[a]), G[a:b], z)
            z = out[b - 1]
    return out


class Anderson:
    """Anderson mixing for the fixed point x = F(x) (type II, small memory)."""

    def __init__(self, m: int):
        self.m = m
        self.X: list = []
        self.R: list = []

    def remap(self, lift) -> None:
        """Carry the history over to a refined grid (a linear map of every stored vector)."""
        self.X = [lift(v) for v in self.X]
        self.R = [lift(v) for v in self.R]

    def step(self, x, fx):
        r = fx - x
        self.X.append(x)
        self.R.append(r)
        if len(self.X) > self.m + 1:
            self.X.pop(0)
            self.R.pop(0)
        if len(self.X) < 2:
            return fx
        dX = np.column_stack([self.X[i + 1] - self.X[i] for i in range(len(self.X) - 1)])
        dR = np.column_stack([self.R[i + 1] - self.R[i] for i in range(len(self.R) - 1)])
        gamma, *_ = np.linalg.lstsq(dR, r, rcond=None)
        out = fx - (dX + dR) @ gamma
        return out


def run_piecewise_network(network, asm, t_out, T0, mode, recorder, out_nodes, boundary_links,
                          rtol, atol, progress, thermostats=()) -> dict:
    """Build the model of ``network`` and run it on the piecewise-exact path.

    Raises :class:`NotSuitable` before anything is recorded when the path cannot take it.
    """
    from ..nonlinear import build_terms
    from ..profiles import common_period
    from .stiff import (OutputMap, StiffModel, chunk_from_states, extras_of, periodic_start,
                        thermostat_table)

    terms, phase, controllers = build_terms(network, asm, thermostats)
    model = StiffModel(asm, terms, phase, controllers)
    ss = model.ss
    solver = PiecewiseSolver(model, t_out, rtol=rtol, atol=atol, progress=progress)
    if mode == "periodic":
        period = common_period(model.profiles, "simulation.initial")

        def period_map(H):
            one = PiecewiseSolver(model, np.linspace(0.0, period, 289), rtol=0.1 * rtol,
                                  atol=0.1 * atol)
            for c in model.controllers:
                c.reset(0.0, model.temperatures(H)[0])
            return one.solve(H)[1][-1]

        try:
            H0 = periodic_start(network, model, asm, rtol, atol, period_map=period_map)
        except NotSuitable:
            H0 = periodic_start(network, model, asm, rtol, atol)
        Tm0 = model.temperatures(H0)[0]
    else:
        Tm0 = T0[ss.massive]
        H0 = model.energy_of(Tm0)
    for c in model.controllers:
        c.reset(0.0, Tm0)
    grid, Hg, IntT, IntP, rR, rL, switches = solver.solve(H0)
    for c, sw in zip(model.controllers, switches):
        if c.control == "on-off":
            on = c._log_on[0]
            c._log_t = [0.0] + list(sw)
            c._log_on = [on if k % 2 == 0 else not on for k in range(len(sw) + 1)]
    # energies over each grid interval
    h = np.diff(grid)
    Iw = 0.5 * h[:, None] * (solver._wR + solver._wL)
    for i, amp, om, ph in solver.sines:
        Iw[:, i] += amp / om * (np.cos(om * grid[:-1] + ph) - np.cos(om * grid[1:] + ph))
    M = model.M
    inc_links = np.zeros((h.size, model.nb))
    if model.nb:
        t_end = (model._A_end_sp @ IntT.T).T + Iw @ model.D_end.T
        flow = model.g_end[None, :] * (Iw[:, model.bcol] - t_end)
        inc_links = (model._to_links_sp @ flow.T).T
        if solver.seg is not None and solver.seg.e_rows:
            seg = solver.seg
            Ir = 0.5 * h[:, None] * (rR + rL)
            ta = seg._gather(IntT, Iw, seg.a_is_node, seg.a_idx)
            tb = seg._gather(IntT, Iw, seg.b_is_node, seg.b_idx)
            Iq = solver.g[None, :] * (ta - tb) + Ir
            for k, col, sign in seg.e_rows:
                inc_links[:, col] += sign * Iq[:, k]
    Y = np.zeros((grid.size, model.ny))
    Y[:, :model.n] = Hg
    n, nb, S = model.n, model.nb, model.S
    Y[1:, n:n + nb] = np.cumsum(inc_links, axis=0)
    Y[1:, n + nb:n + nb + S] = np.cumsum(Iw[:, M:], axis=0)
    Y[1:, n + nb + S:] = np.cumsum(IntP, axis=0)
    rows = np.searchsorted(grid, t_out)
    H0_sum = float(H0.sum())
    out_map = OutputMap(model, np.asarray(out_nodes))

    extras_fn = extras_of(model)

    step = 20_000
    for k0 in range(0, rows.size, step):
        sel = rows[k0:k0 + step]
        recorder.add(chunk_from_states(model, t_out[k0:k0 + step], Y[sel], H0_sum, out_map,
                                       extras_fn))
    if progress is not None:
        progress(1.0)
    if model.controllers:
        recorder.tables["thermostats"] = thermostat_table(model.controllers, t_out, recorder)
    stats = dict(solver.stats)
    stats["grid_points"] = int(grid.size)
    return stats
