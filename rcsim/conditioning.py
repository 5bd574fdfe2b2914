"""Links too stiff for double precision: found before any solve, refused with the link named.

A link whose conductance dwarfs the conductances around it joins its nodes into one *stiff group*.
The slow behaviour of that group (how fast it exchanges heat with the rest) is set by the
conductance *leaving* the group, but the conductance matrix K only holds it as the small
difference of its large diagonal sums: K's diagonal carries each node's total conductance with a
relative rounding of about 1.1e-16, so the conductance leaving a group is known to about
``1.1e-16 x (sum of the diagonal over the group) / (conductance leaving)``. Every solver that
works on K (the modal eigenproblem, the sparse factorisations of the steady state, the stiff and
large-linear integrators) inherits that error in the group's slow rates and in its energy
balance; above about 1e16 the leaving conductance is lost altogether (a group that never
exchanges heat, or a singular matrix).

:func:`check_stiff_groups` finds the groups by single linkage over the conductances between nodes
(the connected components of the links above a threshold, for thresholds half a decade apart) and
refuses a group whose ratio ``sum of K's diagonal over the group / conductance leaving it``
exceeds :data:`STIFF_RATIO` (1e10: rates then known to about 1e-6 or better). Boundaries take
part: a node tied to a boundary by such a link sits at its temperature, and the heat through
that link is lost in rounding alike.

A node (or a stiff group of nodes) linked to boundaries *only* has nothing leaving it to
compare with: what its link carries is the heat its own capacity takes up, C dT/dt, while the
link computes it as g (T_b - T), a temperature difference of about (C/g) dT_b/dt. When its time
constant C/g is below :data:`PINNED_TIME` (1e-6 s) that difference sinks into the rounding of the
temperatures (at 1e-11 s the exact path's balance was 1.5 % open, the large-linear path gave
3e20 W through the link and the stiff path gave up) and the network is refused, naming the link.
Such a node is its boundary: no other temperature depends on it, so removing it changes
nothing else; handling it exactly (the node replaced by the boundary, its link carrying
C dT_b/dt) would belong to the assembly and every solver, and a link that stiff is far more
often a unit slip ("1e-12 K/W") than a model meant.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from .errors import NetworkError

__all__ = ["STIFF_RATIO", "PINNED_TIME", "stiff_groups", "check_stiff_groups"]

#: Largest ratio of a group's summed diagonal conductance to the conductance leaving it. The
#: group's exchange with the rest is then resolved to about 2.2e-16 x 1e10 = 2e-6 (relative).
STIFF_RATIO = 1e10

#: Shortest time constant [s] (capacity over the conductance that holds it) of a node or stiff
#: group of nodes linked to boundaries only (see the module).
PINNED_TIME = 1e-6

#: Thresholds of the single-linkage scan: half a decade apart.
_LEVELS_PER_DECADE = 2


def stiff_groups(asm, limit: float = STIFF_RATIO) -> list[dict]:
    """The groups of points of ``asm`` (an :class:`rcsim.assembly.Assembled`) whose ratio
    (sum of K's diagonal over the group's nodes / conductance leaving its nodes) exceeds
    ``limit``.

    Points are nodes and boundaries: a node tied to a boundary by a link that dwarfs its other
    links sits at the boundary's temperature, and the heat through that link, g (T_b - T), is
    the difference of two equal numbers times a huge one. Each entry: ``points`` (indices, nodes
    ``0..N-1`` then boundaries), ``ratio``, ``leaving`` [W/K], ``segment`` (the stiffest segment
    inside the group). Groups with nothing leaving them are listed only when they hold a
    boundary and their time constant, capacity over the weakest conductance holding them
    together, is below :data:`PINNED_TIME` (``pinned``: that time constant [s]; ``ratio``
    infinite). Worst group first.
    """
    n = asm.n_nodes
    n_pts = n + asm.n_boundaries
    a, b, g = asm.seg_a, asm.seg_b, np.asarray(asm.seg_g, dtype=float)
    use = np.isfinite(g) & (g > 0) & (a != b)
    if not use.any():
        return []
    a, b, g, seg = a[use], b[use], g[use], np.flatnonzero(use)
    diag = (np.bincount(a[a < n], weights=g[a < n], minlength=n_pts)
            + np.bincount(b[b < n], weights=g[b < n], minlength=n_pts))   # boundaries: 0
    g_max, g_min = float(g.max()), float(g.min())
    capacity = np.zeros(n_pts)
    capacity[:n] = np.asarray(asm.capacity, dtype=float)[:n]
    massive = capacity[capacity > 0]
    # a group's diagonal sum is at most twice its inner conductances plus what leaves it: below
    # this bound no group can be too stiff; no group can be pinned when the smallest capacity
    # over the largest conductance is not
    if 2.0 * float(g.sum()) <= (limit - 1.0) * g_min and \
            not (massive.size and float(massive.min()) / g_max < PINNED_TIME):
        return []
    n_levels = int(np.ceil(np.log10(g_max / g_min) * _LEVELS_PER_DECADE)) + 1
    found: dict[tuple, dict] = {}
    for k in range(n_levels):
        threshold = g_max * 10.0 ** (-k / _LEVELS_PER_DECADE)
        strong = g >= threshold
        adj = sp.coo_matrix((np.ones(int(strong.sum())), (a[strong], b[strong])),
                            shape=(n_pts, n_pts))
        ncomp, labels = connected_components(adj, directed=False)
        size = np.bincount(labels, minlength=ncomp)
        if not (size > 1).any():
            continue
        for group in _too_stiff(labels, size, a, b, g, diag, n, limit, capacity, threshold):
            key = tuple(np.flatnonzero(labels == group[0]).tolist())
            if key in found:
                continue
            members = np.asarray(key)
            inside = np.isin(a, members) & np.isin(b, members)
            worst = int(np.argmax(np.where(inside, g, -np.inf)))
            found[key] = {"points": members, "nodes": members, "ratio": group[1],
                          "leaving": group[2], "segment": int(seg[worst]),
                          "pinned": group[3]}
    return sorted(found.values(), key=lambda d: -d["ratio"])


def _too_stiff(labels, size, a, b, g, diag, n, limit, capacity=None, threshold=None):
    """(label, ratio, leaving conductance, pinned time constant or None) of the groups of
    ``labels`` above ``limit``, and of the groups holding a boundary with nothing leaving them
    whose capacity over ``threshold`` is below :data:`PINNED_TIME`; what leaves a group is
    counted from its nodes only (not from a boundary in it)."""
    ncomp = size.size
    la, lb = labels[a], labels[b]
    cross = la != lb                     # the segment leaves a group
    from_a, from_b = cross & (a < n), cross & (b < n)
    leaving = (np.bincount(la[from_a], weights=g[from_a], minlength=ncomp)
               + np.bincount(lb[from_b], weights=g[from_b], minlength=ncomp))
    total = np.bincount(labels, weights=diag, minlength=ncomp)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = total / leaving
    bad = np.flatnonzero((size > 1) & (leaving > 0) & (ratio > limit))
    out = [(int(c), float(ratio[c]), float(leaving[c]), None) for c in bad]
    if capacity is not None:
        held = np.bincount(labels[n:], minlength=ncomp) > 0          # holds a boundary
        cap = np.bincount(labels, weights=capacity, minlength=ncomp)
        tau = cap / threshold
        pinned = np.flatnonzero((size > 1) & (leaving == 0) & held & (cap > 0)
                                & (tau < PINNED_TIME))
        out += [(int(c), np.inf, 0.0, float(tau[c])) for c in pinned]
    return out


def check_stiff_groups(asm, limit: float = STIFF_RATIO) -> None:
    """Refuse (:class:`rcsim.errors.NetworkError`) a network with a group of nodes joined so
    stiffly that double precision cannot resolve the conductance leaving it (see the module)."""
    groups = stiff_groups(asm, limit)
    if not groups:
        return
    grp = groups[0]
    s = grp["segment"]
    link = asm.link_names[int(np.searchsorted(asm.link_last_seg, s))]
    points = asm.node_names + asm.boundary_names
    names = [points[i] for i in grp["points"][:4]]
    more = f" and {grp['points'].size - 4} more" if grp["points"].size > 4 else ""
    if grp.get("pinned") is not None:
        nodes = [points[i] for i in grp["points"] if i < asm.n_nodes]
        bounds = [points[i] for i in grp["points"] if i >= asm.n_nodes]
        cap = float(np.sum(np.asarray(asm.capacity, dtype=float)[
            [i for i in grp["points"] if i < asm.n_nodes]]))
        what = f"node {nodes[0]!r}" if len(nodes) == 1 else \
            "nodes " + ", ".join(map(repr, nodes[:4])) + (" ..." if len(nodes) > 4 else "")
        raise NetworkError(
            f"link {link!r} ({1.0 / asm.seg_g[s]:.3g} K/W) ties {what}, linked to nothing but "
            f"{', '.join(map(repr, bounds))}, so stiffly that its time constant "
            f"{grp['pinned']:.2g} s is below {PINNED_TIME:g} s: it sits at the boundary's "
            "temperature and the heat through the link is lost in rounding", f"links.{link}",
            f"remove {what} (no other temperature depends on it) or give the link at least "
            f"about {PINNED_TIME / cap * 1.01:.2g} K/W; if the capacity is a slip of unit, it "
            f"needs at least about {PINNED_TIME * cap / grp['pinned'] * 1.01:.2g} J/K with this "
            "link")
    # a link between two nodes: ratio ~ 2 G / leaving; the resistance that brings it to the limit
    r_min = 2.1 / (limit * grp["leaving"])
    bounds = [points[i] for i in grp["points"] if i >= asm.n_nodes]
    fix = (f"link the node's other links to {bounds[0]!r} directly (it sits at its temperature)"
           if bounds else "merge them into one node (capacities added)")
    raise NetworkError(
        f"link {link!r} ({1.0 / asm.seg_g[s]:.3g} K/W) joins {', '.join(map(repr, names))}{more} "
        f"so stiffly that the {grp['leaving']:.3g} W/K leaving them is {grp['ratio']:.2g} times "
        f"smaller than the conductances inside: double precision cannot resolve it (limit "
        f"{limit:.0e})", f"links.{link}",
        f"{fix} or give the link at least about {r_min:.2g} K/W")
