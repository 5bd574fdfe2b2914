"""Events of the piecewise-exact path: where an event function turns positive inside a run.

Event functions are affine in the stored energies, so they are checked at the grid points of a
run; :func:`find_dips` finds the intervals where one rises above zero and falls back between two
grid points (a hump test on its closed-form rates at both ends), and :func:`locate_event` finds
the first crossing inside an interval: a 32-point bracket, then Illinois regula falsi
(:func:`root_in_bracket`).
"""

from __future__ import annotations

import numpy as np

__all__ = ["find_dips", "locate_event", "root_in_bracket"]


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
            st = reg.state_at(s[i], taus, h[i], zs[i], FR[i], FL[i] - FR[i])
            if np.any(st @ CV[e] + dev[e] > 0.0):
                found[int(e)] = float(tx[r, e])
        if found:
            return i, found
    return None

def locate_event(reg, t0, h, z0, FR, dF, vals_end, dips=None):
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
            return float(row @ reg.state_at(t0, tau, h, z0, FR, dF) + d)

        lo, hi = 0.0, h
        if best_t is not None:
            hi = best_t - t0 - xtol
            if hi <= 0.0 or f(hi) <= 0.0:
                continue   # not earlier than the best so far by more than the tolerance
        # bracket on 32 points at once (and the peak of a hump), then regula falsi in it
        taus = hi * np.arange(1, 33) / 32.0
        if not np.isnan(probe[k]) and probe[k] < hi:
            taus = np.union1d(taus, [probe[k]])
        vals = reg.state_at(t0, taus, h, z0, FR, dF) @ row + d
        i = int(np.argmax(vals > 0.0))
        if vals[i] <= 0.0:
            continue       # a hump that stays below zero up to the best time so far
        lo, hi = (taus[i - 1] if i else 0.0), taus[i]
        root = root_in_bracket(f, lo, hi, float(vals[i - 1]) if i else float(f0[k]),
                                float(vals[i]), 0.25 * xtol)
        t_hi = min(hi, root + 0.5 * xtol)
        if f(t_hi) <= 0.0:
            t_hi = hi
        best_t, best_e = t0 + t_hi, int(fired[k])
    return best_t, best_e


def root_in_bracket(f, lo, hi, f_lo, f_hi, xtol, max_iter=60):
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
