"""Events of the piecewise-exact path: where an event function turns positive inside a run.

Event functions are affine in the stored energies, so they are checked at the grid points of a
run; :func:`find_dips` finds the intervals where one rises above zero and falls back between two
grid points (a hump test on its closed-form rates at both ends), and :func:`locate_event` finds
the first crossing inside an interval: a 32-point bracket of all candidates at once on their
closed form (:class:`EventCurve`), then Newton's method on it with its exact rate
(:func:`crossings_past`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["EventCurve", "find_dips", "locate_event", "crossings_past"]


def find_dips(reg, s, h, z0, Z, FR, FL, zp, dzp, vals, upto):
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
    z_start = Z[np.maximum(near - 1, 0)]                     # states at s[near] (only there)
    z_start[near == 0] = z0
    z_end = Z[near]
    d_start = -lam * z_start + FR[near]
    d_end = -lam * z_end + FL[near]
    if zp is not None:                                        # modal sine forcing
        d_start += dzp[near] + lam * zp[near]
        d_end += dzp[near + 1] + lam * zp[near + 1]
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
            st = reg.state_at(s[i], taus, h[i], z_start[r], FR[i], FL[i] - FR[i])
            if np.any(st @ CV[e] + dev[e] > 0.0):
                found[int(e)] = float(tx[r, e])
        if found:
            return i, found
    return None


class EventCurve:
    """Event functions ``g_k(tau) = rows_k . z(tau) + d_k`` inside one interval, in closed form.

    In a regime the modal state over an interval of length h starting at t0 is

        z(tau) = E0(lam tau) (z0 - zp(t0)) + tau E1 FR + tau^2/h E2 dF + zp(t0 + tau)

    (:meth:`Regime.state_at`), so each event function is a sum of exponentials, a line, a
    parabola-like term and sines, with coefficients fixed for the interval: they are projected
    onto the rows once here, and a value with its rate (d/dtau (tau E1) = E0 and
    d/dtau (tau^2 E2) = tau E1) costs one evaluation of E0..E2 on the modes.
    """

    def __init__(self, reg, t0, h, z0, FR, dF, rows, d):
        self.lam, self.t0 = reg.lam, float(t0)
        per_mode = np.empty((3, self.lam.size))             # of E0, tau E1, tau^2 E2
        per_mode[0] = z0 - reg.particular(np.array([t0]))[0] if reg.cz else z0
        per_mode[1] = FR
        per_mode[2] = dF / h
        rate_per_mode = np.stack([FR - self.lam * per_mode[0], per_mode[2]])   # of E0, tau E1
        self.coef = rows[:, None, :] * per_mode[None]                          # (k, 3, n)
        self.rate_coef = rows[:, None, :] * rate_per_mode[None]                # (k, 2, n)
        self.d = d
        # the sines: Im(sum_s P[s, k] exp(i om_s t)), P = cz_s projected on the rows
        self.om = reg.cz_omega
        self.P = reg.cz_matrix @ rows.T                                        # (sines, k)

    def subset(self, ks: np.ndarray) -> "EventCurve":
        """The same interval for rows ``ks`` only."""
        out = object.__new__(EventCurve)
        out.lam, out.t0, out.om = self.lam, self.t0, self.om
        out.coef, out.rate_coef = self.coef[ks], self.rate_coef[ks]
        out.d, out.P = self.d[ks], self.P[:, ks]
        return out

    def values(self, taus: np.ndarray) -> np.ndarray:
        """g of every row at times ``taus`` into the interval: (len(taus), rows)."""
        k = self.d.size
        out = _phi_terms(taus, self.lam).reshape(taus.size, -1) @ self.coef.reshape(k, -1).T
        out += self.d
        if self.om.size:
            out += (np.exp(1j * np.outer(self.t0 + taus, self.om)) @ self.P).imag
        return out

    def value_and_rate(self, taus: np.ndarray):
        """g and dg/dtau of every row k at its own time ``taus[k]`` into the interval."""
        phi = _phi_terms(taus, self.lam)
        g = (phi * self.coef).sum(axis=(1, 2)) + self.d
        rate = (phi[:, :2] * self.rate_coef).sum(axis=(1, 2))
        if self.om.size:
            ph = np.exp(1j * np.outer(self.t0 + taus, self.om)) * self.P.T      # (k, sines)
            g += ph.imag.sum(axis=1)
            rate += (ph.real * self.om).sum(axis=1)
        return g, rate


#: below this x = lam tau, E1 and E2 come from three terms of their Taylor series (the first
#: neglected one, x^3/24, is under 5e-17), above it from expm1 (relative error of E2 below
#: about 1e-16 / x: 1e-11, far inside the 1e-6 to which events are placed)
_SERIES_BELOW = 1e-5


def _phi_terms(tau, lam):
    """E0(x), tau E1(x) and tau^2 E2(x) for x = lam tau, stacked: (len(tau), 3, len(lam)); the
    terms of an event function (E0 = exp(-x), E1 = (1 - E0)/x, E2 = (1 - E1)/x)."""
    tt = tau[:, None]
    x = tt * lam[None, :]
    out = np.empty((tau.size, 3, lam.size))
    np.exp(-x, out=out[:, 0])
    if x.min(initial=np.inf) >= _SERIES_BELOW:
        e1 = -np.expm1(-x) / x
        e2 = (1.0 - e1) / x
    else:
        small = x < _SERIES_BELOW
        xl = np.where(small, 1.0, x)
        e1 = np.where(small, 1.0 - x * (0.5 - x / 6), -np.expm1(-xl) / xl)
        e2 = np.where(small, 0.5 - x * (1 / 6 - x / 24), (1.0 - e1) / xl)
    np.multiply(tt, e1, out=out[:, 1])
    np.multiply(tt * tt, e2, out=out[:, 2])
    return out


#: points of the bracketing scan, as fractions of the interval
_BRACKET = np.arange(1, 33) / 32.0


def locate_event(reg, t0, h, z0, FR, dF, vals_end, dips=None):
    """Earliest time in (t0, t0 + h] where an event function turns positive (those positive
    at the end, and those of ``dips`` that rise above zero and fall back inside).

    The time returned lies just past the crossing (within 1e-6 of the interval), on
    the side where the function is positive, so the new regime starts strictly inside.

    All candidate functions are bracketed at once on 32 points of the interval (and the peaks
    of humps) through their closed form (:class:`EventCurve`); the crossing in the first
    bracket is then found by Newton's method on the closed form and its exact rate, kept
    inside the bracket, half a tolerance past it (:func:`crossings_past`): one or two evaluations.
    """
    xtol = 1e-6 * max(1.0, h)
    fired = np.flatnonzero(vals_end > 0.0)
    probe = np.empty(0)
    if dips:
        fired = np.concatenate([fired, list(dips)]).astype(np.int64)
        probe = np.asarray(list(dips.values()), dtype=float)
    rows = reg.CevV[fired]
    d = reg.dev[fired]
    f0 = rows @ z0 + d
    if (f0 > 0.0).any():  # already past at the start (rounding): switch at once
        return t0 + min(h, xtol), int(fired[int(np.argmax(f0))])
    curve = EventCurve(reg, t0, h, z0, FR, dF, rows, d)
    taus = h * _BRACKET
    if probe.size:
        taus = np.union1d(taus, probe[(probe > 0.0) & (probe < h)])
    vals = curve.values(taus)                               # (points, candidates)
    positive = vals > 0.0
    if not positive.any():
        return None, None          # humps that stay below zero (not met: callers found one)
    first = np.where(positive.any(axis=0), np.argmax(positive, axis=0), taus.size)
    i = int(first.min())
    ks = np.flatnonzero(first == i)           # a later bracket holds a later crossing
    lo = np.full(ks.size, taus[i - 1] if i else 0.0)
    f_lo = vals[i - 1, ks] if i else f0[ks]
    t_hit = crossings_past(curve.subset(ks), lo, np.full(ks.size, taus[i]), f_lo,
                           vals[i, ks], xtol)
    best = int(np.argmin(t_hit))
    return t0 + float(t_hit[best]), int(fired[ks[best]])


def crossings_past(curve: EventCurve, lo, hi, f_lo, f_hi, xtol: float,
                   max_iter: int = 100) -> np.ndarray:
    """A time just past the crossing of each event function of ``curve`` in its
    bracket [lo, hi] (f_lo <= 0 < f_hi): within ``xtol`` after it, where the function is
    positive.

    Newton's method on the closed form and its exact rate, for all functions at once, aimed a
    quarter of the tolerance past the crossing and started at the secant's crossing (for the
    nearly linear functions met here, that start is often the answer): a point where the
    function is positive and the Newton step back to the crossing is within half the tolerance
    is returned as it is, as is the bracket's upper end once the bracket is narrower than the
    tolerance. A Newton step that leaves the bracket is replaced by regula falsi in it, and by
    bisection when the same end moved twice in a row (regula falsi stalls on a function that
    bends sharply: a fast mode settling next to the crossing).
    """
    lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
    f_lo, f_hi = np.array(f_lo, dtype=float), np.array(f_hi, dtype=float)
    ahead = 0.25 * xtol
    t = np.minimum(lo - f_lo * (hi - lo) / (f_hi - f_lo) + ahead, hi)
    out = hi.copy()
    todo = np.ones(lo.size, dtype=bool)
    side = np.zeros(lo.size)                       # +1: the last step moved hi, -1: lo
    for _ in range(max_iter):
        g, rate = curve.value_and_rate(t)
        up = g > 0.0
        hi = np.where(up, t, hi)
        lo = np.where(up, lo, t)
        with np.errstate(divide="ignore", invalid="ignore"):
            back = np.where(rate > 0.0, g / rate, np.inf)      # Newton step back to the root
        done = (up & (back <= 2.0 * ahead)) | (hi - lo <= xtol)
        out = np.where(todo & done, hi, out)
        todo &= ~done
        if not todo.any():
            break
        f_hi = np.where(up, g, f_hi)
        f_lo = np.where(up, f_lo, g)
        again = side == np.where(up, 1.0, -1.0)
        side = np.where(up, 1.0, -1.0)
        tn = t - back + ahead
        bad = ~((lo < tn) & (tn <= hi))
        if bad.any():
            with np.errstate(divide="ignore", invalid="ignore"):
                falsi = lo - f_lo * (hi - lo) / (f_hi - f_lo)
            falsi_ok = (lo < falsi) & (falsi < hi) & ~again
            tn = np.where(bad, np.where(falsi_ok, falsi, 0.5 * (lo + hi)), tn)
        t = tn
    return out
