"""Regimes of the piecewise-exact path: the network's modal form while every pack and every
thermostat keeps its state.

In one regime (each pack solid, melting or liquid; each on/off thermostat on or off; each
proportional one at full power, in its band or off) the state temperatures are affine in the
stored energies, ``T = a + b H``, and the network obeys

    dH/dt = A H + c + E' w(t) + N r(t),      A = -K' diag(b) (+ a proportional thermostat)

with K', E' the conductances including the reference conductance of the nonlinear segments and
r their remainder. :class:`Regimes` builds (and keeps) the modal form of each regime met,
:class:`Regime`, with its event functions ``Cev H + dev`` (a regime ends where one turns
positive) and the closed forms of its response over an interval.
"""

from __future__ import annotations

import numpy as np

from .base import NotSuitable
from .exact import phi_functions

__all__ = ["Regime", "Regimes"]


class Regime:
    """Modal form of the network in one regime (fixed pack states and thermostat states).

    Attributes
    ----------
    key : tuple
        The regime: per pack 0/1/2 (solid, melting, liquid), per thermostat its state.
    lam, V, Vi : modes: dz/dt = -lam z + ..., H = V z, z = Vi H.
    a, b : T = a + b H per state.
    cm, Ein, Nm : modal constant forcing, input map and remainder map.
    cz : [(complex amplitude per mode, omega)] of the periodic response to the sine inputs.
    cz_matrix, cz_omega : the same as a (sines x modes) array and an array of omegas.
    Cev, CevV, dev : event functions Cev H + dev (CevV = Cev V), one row per event.
    ev_owner : per event, (position in the key, the state it switches to).
    p_const, p_lin : thermostat powers p_const + p_lin H [W].
    phi_cache : dict of E0..E3 on the current grid.
    """

    __slots__ = ("key", "lam", "V", "Vi", "a", "b", "cm", "Ein", "Nm", "cz", "cz_matrix",
                 "cz_omega", "Cev", "CevV", "dev", "ev_owner", "p_const", "p_lin", "phi_cache")

    # -- closed forms ------------------------------------------------------------------------
    def particular(self, t: np.ndarray, with_rate: bool = False):
        """Particular (periodic) modal response to the sine inputs at times t: (len(t), n), and
        its time derivative when ``with_rate``."""
        out = np.zeros((t.size, self.lam.size))
        rate = np.zeros_like(out) if with_rate else None
        for cz, om in self.cz:
            ph = np.exp(1j * om * t)[:, None]
            out += (ph * cz[None, :]).imag
            if with_rate:
                rate += (ph * (1j * om * cz)[None, :]).imag
        return (out, rate) if with_rate else out

    def particular_integral(self, t0: np.ndarray, t1: np.ndarray) -> np.ndarray:
        """Integral of :meth:`particular` over each [t0, t1]."""
        out = np.zeros((t0.size, self.lam.size))
        for cz, om in self.cz:
            out += (((np.exp(1j * om * t1) - np.exp(1j * om * t0)) / (1j * om))[:, None]
                    * cz[None, :]).imag
        return out

    def state_at(self, t0, tau, h, z0, FR, dF):
        """Modal state(s) ``tau`` (scalar or array) into an interval of length h starting at t0
        with state z0 and forcing FR rising by dF over the interval."""
        tau = np.asarray(tau, dtype=float)
        tt = tau[..., None]
        e0, e1, e2, _ = phi_functions(tt * self.lam)
        z = e0 * z0 + tt * (e1 * FR + e2 * (tt / h) * dF)
        if self.cz:
            zp = self.particular(np.append(t0, t0 + np.atleast_1d(tau)))
            z = z + (zp[1:] - e0.reshape(-1, self.lam.size) * zp[0]).reshape(z.shape)
        return z

    def partial(self, t0, tau, h, z0, FR, dF):
        """(integral of the modal state over [t0, t0 + tau], state at t0 + tau)."""
        x = tau * self.lam
        e0, e1, e2, e3 = phi_functions(x)
        slope = dF * (tau / h)
        z = e0 * z0 + tau * (e1 * FR + e2 * slope)
        Iz = tau * (e1 * z0 + tau * (e2 * FR + e3 * slope))
        if self.cz:
            zp = self.particular(np.array([t0, t0 + tau]))
            z = z + zp[1] - e0 * zp[0]
            Iz = Iz + self.particular_integral(np.array([t0]), np.array([t0 + tau]))[0] \
                - tau * e1 * zp[0]
        return Iz, z


class Regimes:
    """Builds and keeps the :class:`Regime` of each key met, for one set of conductances.

    Parameters
    ----------
    model : rcsim.transient.energy_model.EnergyModel
        Capacities, packs and thermostat run states.
    N : ndarray
        (states x nonlinear segments) map of the remainder flows into the states.
    sines : list of (input index, amplitude, omega, phase)
    """

    def __init__(self, model, N: np.ndarray, sines):
        self.model = model
        self.n = model.n
        self.C = model.C
        self.N = N
        self.sines = sines
        self.pcm = sorted(model.phase)                       # state indices
        self.ctrl = list(model.controllers)
        self.built = 0                                       # regimes built so far
        self._cache: dict = {}
        self.Kp = self.Ep = None

    def set_matrices(self, Kp: np.ndarray, Ep: np.ndarray) -> None:
        """Conductance matrix K' and input map E' (reference conductances included)."""
        self.Kp, self.Ep = Kp, Ep
        self._cache = {}

    def key_of(self, H: np.ndarray, on: list) -> tuple:
        """The regime of stored energies H with on/off thermostats ``on``."""
        key = []
        for i in self.pcm:
            pc = self.model.phase[i]
            key.append(0 if H[i] < 0.0 else (2 if H[i] > pc.h_melt_end else 1))
        for c, is_on in zip(self.ctrl, on):
            if c.control == "on-off":
                key.append(1 if is_on else 0)
            else:
                a, b = self.affine_T(c.sensor_idx, key)
                al, be = c.settings.fraction_coefficients()
                x = al + be * (a + b * H[c.sensor_idx])
                key.append(0 if x >= 1.0 else (2 if x <= 0.0 else 1))
        return tuple(key)

    def affine_T(self, i: int, key) -> tuple[float, float]:
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

    def get(self, key: tuple) -> Regime:
        """The regime ``key`` (built on first use)."""
        reg = self._cache.get(key)
        if reg is None:
            reg = self._cache[key] = self._build(key)
            self.built += 1
        return reg

    # -- building one regime -------------------------------------------------------------------
    def _build(self, key: tuple) -> Regime:
        n = self.n
        a = np.zeros(n)
        b = 1.0 / self.C
        for i in self.pcm:
            a[i], b[i] = self.affine_T(i, key)
        A = -self.Kp * b[None, :]
        c = -self.Kp @ a
        events = _Events(n)
        self._pack_events(key, events)
        p_const, p_lin, symmetric = self._thermostat_terms(key, a, b, A, c, events)
        lam, V, Vi = _modes(A, b, symmetric)
        reg = Regime()
        reg.key, reg.lam, reg.V, reg.Vi, reg.a, reg.b = key, lam, V, Vi, a, b
        reg.cm = Vi @ c
        reg.Ein = Vi @ self.Ep
        reg.Nm = Vi @ self.N
        reg.cz = [(amp * np.exp(1j * ph) * reg.Ein[:, i] / (lam + 1j * om), om)
                  for i, amp, om, ph in self.sines]
        reg.cz_matrix = np.array([cz for cz, _ in reg.cz], dtype=complex).reshape(-1, n)
        reg.cz_omega = np.array([om for _, om in reg.cz], dtype=float)
        reg.Cev = np.asarray(events.rows).reshape(-1, n)
        reg.CevV = reg.Cev @ V
        reg.dev = np.asarray(events.offsets, dtype=float)
        reg.ev_owner = events.owner
        reg.p_const, reg.p_lin = p_const, p_lin
        reg.phi_cache = {}
        return reg

    def _pack_events(self, key, events) -> None:
        """A solid pack starts melting at H = 0, a melting one ends at H = h_melt_end (or
        freezes back at 0), a liquid one starts freezing at h_melt_end."""
        for p, i in enumerate(self.pcm):
            top = self.model.phase[i].h_melt_end
            r = key[p]
            if r == 0:
                events.add(1.0, i, 0.0, (p, 1))
            elif r == 1:
                events.add(-1.0, i, 0.0, (p, 0))
                events.add(1.0, i, -top, (p, 2))
            else:
                events.add(-1.0, i, top, (p, 1))

    def _thermostat_terms(self, key, a, b, A, c, events):
        """Add each thermostat's power in its state to A and c (in place), with its events;
        returns (p_const, p_lin, symmetric) with powers p_const + p_lin H [W] and whether A
        stays similar to a symmetric matrix."""
        n, npcm = self.n, len(self.pcm)
        p_const = np.zeros(len(self.ctrl))
        p_lin = np.zeros((len(self.ctrl), n))      # power = p_const + p_lin @ H
        symmetric = True
        for k, ctl in enumerate(self.ctrl):
            s, j = ctl.sensor_idx, ctl.node_idx
            state = key[npcm + k]
            sa, sb = a[s], b[s]
            half = 0.5 * ctl.band
            if ctl.control == "on-off":
                p_const[k] = ctl.sign * ctl.power * state
                low, high = ctl.setpoint - half, ctl.setpoint + half
                if (ctl.mode == "heat") == bool(state):     # heater on / cooler off: rises to high
                    events.add(sb, s, sa - high, (npcm + k, 1 - state))
                else:                                        # falls to low
                    events.add(-sb, s, low - sa, (npcm + k, 1 - state))
            else:
                al, be = ctl.settings.fraction_coefficients()
                if state == 0:                               # full power while x >= 1
                    p_const[k] = ctl.sign * ctl.power
                    events.add(-be * sb, s, 1.0 - al - be * sa, (npcm + k, 1))
                elif state == 2:                             # off while x <= 0
                    events.add(be * sb, s, al + be * sa, (npcm + k, 1))
                else:
                    p_const[k] = ctl.sign * ctl.power * (al + be * sa)
                    p_lin[k, s] = ctl.sign * ctl.power * be * sb
                    events.add(be * sb, s, al + be * sa - 1.0, (npcm + k, 0))
                    events.add(-be * sb, s, -al - be * sa, (npcm + k, 2))
                    if j != s:
                        symmetric = False
            c[j] += p_const[k]
            A[j] += p_lin[k]
        return p_const, p_lin, symmetric


class _Events:
    """Event functions of a regime as they are collected: coefficient rows, offsets, owners."""

    def __init__(self, n: int):
        self.n = n
        self.rows, self.offsets, self.owner = [], [], []

    def add(self, coefficient: float, i: int, offset: float, owner) -> None:
        row = np.zeros(self.n)
        row[i] = coefficient
        self.rows.append(row)
        self.offsets.append(offset)
        self.owner.append(owner)


def _modes(A: np.ndarray, b: np.ndarray, symmetric: bool):
    """(lam, V, Vi) of dz/dt = -lam z with A = V diag(-lam) Vi; NotSuitable for complex or
    defective modes."""
    if symmetric and np.all(b > 0):
        # A = -K' B is similar to the symmetric -B^1/2 K' B^1/2
        sq = np.sqrt(b)
        S = sq[:, None] * (-A / b[None, :]) * sq[None, :]
        lam, U = np.linalg.eigh(0.5 * (S + S.T))
        return lam, U / sq[:, None], U.T * sq[None, :]
    mu, V = np.linalg.eig(A)
    scale = max(1.0, float(np.abs(mu).max()))
    if np.abs(mu.imag).max(initial=0.0) > 1e-9 * scale:
        raise NotSuitable("oscillating modes (a proportional thermostat heating one "
                          "node and sensing another)")
    V = V.real
    try:
        Vi = np.linalg.inv(V)
    except np.linalg.LinAlgError:
        raise NotSuitable("a regime without a full set of modes") from None
    if np.linalg.cond(V) > 1e10:
        raise NotSuitable("ill-conditioned modes")
    return -mu.real, V, Vi
