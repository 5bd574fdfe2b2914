"""The grid of the piecewise-exact path: where the nonlinear remainder needs more points.

The remainder of the radiation and film links is taken linear in time between grid points, with
an interpolation error of about h^2/8 |r''| on an interval of length h. :func:`refinement_pieces`
maps that error to a temperature through the network's steady gain and says how many pieces
each interval needs (halving those whose curvature cannot be estimated while the remainder
changes across them); :func:`refined_grid` splits them (and puts the last sweep's events on the
grid, where the flows bend sharply) and carries the remainder over to the new grid.
"""

from __future__ import annotations

import numpy as np

__all__ = ["refinement_pieces", "refined_grid"]


def refinement_pieces(grid, rR, rL, N, gain, kinks, tolerance):
    """Pieces to split each interval of ``grid`` into, or None when no interval needs it.

    ``rR``/``rL``: remainder flows [W] per segment at the start/end of each interval; ``N``: map
    of segment flows into the states; ``gain``: |K'^-1| (steady gain, K/W); ``kinks``: grid
    points placed at events (the flows may bend there, linear on each side); ``tolerance`` [K].

    The curvature of the remainder comes from the slopes of neighbouring intervals where it is
    continuous. An interval with no such neighbour (between the start or end of the run and a
    step of an input, or between two steps) gives no curvature: it is halved while the
    remainder changes across it by more than the tolerance (as a temperature), so that a fast
    transient inside it (a node settling in seconds after a step) is not taken as linear.
    """
    J = rR.shape[0]
    h = np.diff(grid)
    # continuity of the remainder at each interior point
    cont = np.abs(rR[1:] - rL[:-1]) <= 1e-12 * (1.0 + np.abs(rR[1:]))
    if kinks.size:
        cont[np.isin(grid[1:-1], kinks)] = False
    cont_any = cont.any(axis=1) if cont.size else np.zeros(0, dtype=bool)
    # intervals without a continuous neighbour on either side
    isolated = np.ones(J, dtype=bool)
    isolated[1:] &= ~cont_any
    isolated[:-1] &= ~cont_any
    change = (np.abs((rL - rR) @ N.T) @ gain.T).max(axis=1) / tolerance
    split = isolated & (change > 1.0)
    worst = np.zeros(J)
    if J >= 2:
        # curvature from consecutive slopes where the remainder is continuous
        slope = (rL - rR) / h[:, None]
        d2 = np.where(cont, np.abs(slope[1:] - slope[:-1]), 0.0) / (0.5 * (h[1:] + h[:-1]))[:, None]
        # interpolation error ~ h^2/8 |r''| on each side of an interior point
        err = np.zeros_like(rR)
        err[1:] = np.maximum(err[1:], d2 * (h[1:, None] ** 2) / 8.0)
        err[:-1] = np.maximum(err[:-1], d2 * (h[:-1, None] ** 2) / 8.0)
        dT = np.abs(err @ N.T) @ gain.T                          # K'^-1 |flow error|
        worst = dT.max(axis=1) / tolerance
    if worst.max(initial=0.0) <= 1.0 and not split.any():
        return None
    # the error falls as h^2: split each interval enough to meet the tolerance (and then some)
    # (the much larger errors sit where the flows are not smooth, e.g. a film at a vanishing
    # temperature difference, and fall more slowly: those get more pieces)
    n = np.where(worst > 100.0, 1.5 * worst ** 0.75, 1.5 * np.sqrt(worst))
    pieces = np.where(worst > 1.0, np.clip(np.ceil(n), 2, 128), 1).astype(int)
    pieces[split] = np.maximum(pieces[split], 2)
    return pieces


def refined_grid(old, pieces, event_times, kinks):
    """Split the intervals of ``old`` into ``pieces`` and add ``event_times`` as points.

    Returns (new grid, lift, kinks): ``lift(rR, rL)`` carries a remainder given at the start and
    end of each old interval over to the new intervals (linearly inside each old one), and
    ``kinks`` gains the event points added.
    """
    h = np.diff(old)
    idx = np.flatnonzero(pieces > 1)
    new_pts = [old[j] + h[j] * np.arange(1, pieces[j]) / pieces[j] for j in idx]
    # the last sweep's events become grid points too: the links' flows bend sharply there
    # (a pack starts melting, a heater switches), which linear pieces then follow
    ev = event_times[(event_times > old[0]) & (event_times < old[-1])]
    if ev.size:
        pos = np.searchsorted(old, ev)
        gap = np.minimum(ev - old[pos - 1], old[pos] - ev)
        ev = ev[gap > 1e-3 * h[pos - 1]]
        kinks = np.union1d(kinks, ev)
        new_pts.append(ev)
    new_grid = np.union1d(old, np.concatenate(new_pts)) if new_pts else old
    # each new interval lies inside one old interval: interpolate its end values there
    k = np.searchsorted(old, new_grid[:-1], side="right") - 1
    frac0 = ((new_grid[:-1] - old[k]) / h[k])[:, None]
    frac1 = ((new_grid[1:] - old[k]) / h[k])[:, None]

    def lift(rR, rL):
        return rR[k] + frac0 * (rL[k] - rR[k]), rR[k] + frac1 * (rL[k] - rR[k])

    return new_grid, lift, kinks
