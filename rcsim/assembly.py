"""A network as arrays: points, segments, sparse matrices, and what is derived from them.

Assembly turns a :class:`rcsim.network.Network` into::

    C dT/dt = -K T + B u(t) + P s(t)

with K (nodes x nodes) the conductance matrix including the conductances to boundaries, B (nodes
x boundaries) the boundary coupling and P (nodes x sources) the source map. Points are nodes
``0..N-1`` then boundaries ``N..N+M-1``; a *segment* is a two-terminal conductance between two
points. Massive conduction layers become ladders of internal nodes named ``"<link>.<i>"``
(numbered from the link's first point); a nonlinear part (radiation, a correlation film) makes
its segment nonlinear, with the linear parts beside it in series.

Derived results (the reduced state space, the modes, time constants) are kept in an explicit
:class:`AssemblyCache` created with each :class:`Assembled`: the structural part (which depends
on K, C, B and P only) can be shared with a copy that has other input profiles
(:meth:`Assembled.with_inputs`).
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import connected_components

from .base import suggest
from .errors import LumpedWarning, NetworkError
from .radiation_links import warn_separate_radiation_links

__all__ = ["Assembled", "AssemblyCache", "StructureCache", "BoundarySegments",
           "assemble_network", "conductance_matrices"]


class BoundarySegments(NamedTuple):
    """The segments that touch a boundary, for energy accounting (one entry per segment, apart
    from ``links``)."""

    links: list                 # indices of the links that touch a boundary, in link order
    link_column: np.ndarray     # the column of each segment's link in ``links``
    node: np.ndarray            # its node (point index below N)
    boundary: np.ndarray        # its boundary column (0..M-1)
    conductance: np.ndarray     # its conductance [W/K]


@dataclass
class StructureCache:
    """What depends on the matrices K, C, B, P only (not on the input profiles).

    Attributes
    ----------
    state_space : rcsim.statespace.StateSpace or None
        The reduced system (massless nodes eliminated), once built.
    modes : rcsim.modes.Modes or None
        The modal decomposition of the reduced system, once computed.
    boundary_segments : BoundarySegments or None
        The segments that touch a boundary, once listed.
    floating_groups : list or None
        The groups of nodes with no path to a boundary, once found.
    """

    state_space: object | None = None
    modes: object | None = None
    boundary_segments: object | None = None
    floating_groups: list | None = None


@dataclass
class AssemblyCache:
    """Results derived from one :class:`Assembled`, computed on first use.

    Attributes
    ----------
    structure : StructureCache
        Shared by copies with other inputs (:meth:`Assembled.with_inputs`).
    time_constants : dict
        Time constants [s] of a nonlinear network linearised at the end of a run, by
        (end time [s], thermostat settings); bounded to a few entries.
    """

    structure: StructureCache = field(default_factory=StructureCache)
    time_constants: dict = field(default_factory=dict)


@dataclass
class Assembled:
    """The network as arrays. Points are nodes ``0..N-1`` then boundaries ``N..N+M-1``."""

    node_names: list[str]
    capacity: np.ndarray
    initial: np.ndarray
    boundary_names: list[str]
    boundary_profiles: list
    source_names: list[str]
    source_nodes: np.ndarray
    source_profiles: list
    seg_a: np.ndarray
    seg_b: np.ndarray
    seg_g: np.ndarray
    link_names: list[str]
    link_first_seg: np.ndarray
    link_last_seg: np.ndarray
    K: sp.csr_matrix
    B: sp.csr_matrix
    P: sp.csr_matrix
    internal_of: dict = field(default_factory=dict)  # internal node name -> link name
    phase_change: dict = field(default_factory=dict)  # node index -> PhaseChange
    nl: object | None = None  # rcsim.laws.SegmentLaws of the nonlinear segments, if any
    #: rcsim.varying.VaryingSegments of the segments whose conductance varies in time, if any
    varying: object | None = None
    #: derived results; a new, empty one for every copy made with ``dataclasses.replace``
    cache: AssemblyCache = field(default_factory=AssemblyCache, init=False, repr=False,
                                 compare=False)

    @property
    def n_nodes(self) -> int:
        return len(self.node_names)

    @property
    def n_boundaries(self) -> int:
        return len(self.boundary_names)

    @property
    def n_user_nodes(self) -> int:
        """Nodes the user named (the internal nodes of massive layers follow them)."""
        return self.n_nodes - len(self.internal_of)

    @property
    def is_linear(self) -> bool:
        return not self.phase_change and self.nl is None and self.varying is None

    def at_time(self, t: float) -> "Assembled":
        """This assembly with every conductance that varies in time at its value at ``t`` [s]
        (itself when none does): the network as it stands at that instant."""
        if self.varying is None:
            return self
        seg_g = self.varying.conductances_at(self.seg_g, t)
        K, B = conductance_matrices(self.seg_a, self.seg_b, seg_g, self.n_nodes,
                                    self.n_boundaries)
        return dataclasses.replace(self, seg_g=seg_g, K=K, B=B, varying=None)

    @property
    def profiles(self) -> list:
        """Input profiles in the order of the input vector w = [u (boundaries); s (sources)]."""
        return list(self.boundary_profiles) + list(self.source_profiles)

    def with_inputs(self, boundary_profiles=None, source_profiles=None) -> "Assembled":
        """A copy with other boundary and/or source profiles, sharing the structural cache.

        K, C, B and P are unchanged, so the reduced system and the modes computed for one copy
        serve every other (a fit that varies only inputs decomposes the network once).
        """
        new = dataclasses.replace(
            self,
            boundary_profiles=list(self.boundary_profiles if boundary_profiles is None
                                   else boundary_profiles),
            source_profiles=list(self.source_profiles if source_profiles is None
                                 else source_profiles))
        if len(new.boundary_profiles) != self.n_boundaries or \
                len(new.source_profiles) != len(self.source_names):
            raise ValueError("with_inputs needs one profile per boundary and per source")
        new.cache.structure = self.cache.structure
        return new

    # compatibility: older code stored these as attributes of the assembly
    @property
    def _state_space(self):
        return self.cache.structure.state_space

    @_state_space.setter
    def _state_space(self, value) -> None:
        self.cache.structure.state_space = value

    @property
    def _modes(self):
        return self.cache.structure.modes

    @_modes.setter
    def _modes(self, value) -> None:
        self.cache.structure.modes = value

    def node_index(self, name: str) -> int:
        try:
            return self.node_names.index(name)
        except ValueError:
            raise NetworkError(f"unknown node {name!r}", None,
                               suggest(name, self.node_names)) from None

    def boundary_values(self, t) -> np.ndarray:
        """Boundary temperatures at time(s) t: shape (M,) or (len(t), M)."""
        return _values(self.boundary_profiles, t)

    def source_values(self, t) -> np.ndarray:
        """Source powers at time(s) t: shape (S,) or (len(t), S)."""
        return _values(self.source_profiles, t)

    def floating_groups(self) -> list[list[int]]:
        """Groups of nodes with no path to any boundary (their steady state is undefined)."""
        cached = self.cache.structure.floating_groups
        if cached is None:
            cached = self.cache.structure.floating_groups = self._find_floating_groups()
        return [list(g) for g in cached]

    def _find_floating_groups(self) -> list[list[int]]:
        n = self.n_nodes
        mask = (self.seg_a < n) & (self.seg_b < n)
        adj = sp.coo_matrix((np.ones(mask.sum()), (self.seg_a[mask], self.seg_b[mask])),
                            shape=(n, n))
        ncomp, labels = connected_components(adj, directed=False)
        grounded = np.zeros(ncomp, dtype=bool)
        bmask = (self.seg_a < n) & (self.seg_b >= n)
        grounded[labels[self.seg_a[bmask]]] = True
        bmask = (self.seg_b < n) & (self.seg_a >= n)
        grounded[labels[self.seg_b[bmask]]] = True
        return [np.flatnonzero(labels == c).tolist() for c in np.flatnonzero(~grounded)]

    def boundary_segments(self) -> BoundarySegments:
        """Segments touching a boundary, for energy accounting (see :class:`BoundarySegments`)."""
        cached = self.cache.structure.boundary_segments
        if cached is None:
            cached = self.cache.structure.boundary_segments = self._list_boundary_segments()
        return cached

    def _list_boundary_segments(self) -> BoundarySegments:
        n = self.n_nodes
        is_b = (self.seg_a >= n) | (self.seg_b >= n)
        segs = np.flatnonzero(is_b)
        seg_link = np.searchsorted(self.link_last_seg, segs)  # segments are stored link by link
        links = sorted(set(seg_link.tolist()))
        col = {li: c for c, li in enumerate(links)}
        a, b = self.seg_a[segs], self.seg_b[segs]
        node = np.where(a >= n, b, a)
        bnd = np.where(a >= n, a, b) - n
        return BoundarySegments(links, np.asarray([col[li] for li in seg_link], dtype=np.int64),
                                node, bnd, self.seg_g[segs])

    def link_ends(self, links) -> tuple[np.ndarray, np.ndarray]:
        """(first point, second point) of the first segment of each of ``links``."""
        seg = self.link_first_seg[np.asarray(links, dtype=np.int64)]
        return self.seg_a[seg], self.seg_b[seg]

    def segment_flows(self, node_t: np.ndarray, boundary_t: np.ndarray) -> np.ndarray:
        """Heat flow through every segment [W], positive from seg_a to seg_b.

        ``node_t`` has shape (..., N) and ``boundary_t`` (..., M).
        """
        points = np.concatenate([node_t, boundary_t], axis=-1)
        q = self.seg_g * (points[..., self.seg_a] - points[..., self.seg_b])
        if self.nl is not None:
            s = self.nl.seg
            q[..., s] = self.nl.flows(points[..., self.seg_a[s]], points[..., self.seg_b[s]])
        return q

    def link_flows(self, node_t: np.ndarray, boundary_t: np.ndarray) -> np.ndarray:
        """Heat flow at the first end of every link [W]."""
        return self.segment_flows(node_t, boundary_t)[..., self.link_first_seg]


def _values(profiles, t) -> np.ndarray:
    if np.ndim(t) == 0:
        return np.array([p.value(float(t)) for p in profiles])
    if not profiles:
        return np.zeros((len(t), 0))
    return np.column_stack([p.value(t) for p in profiles])


def conductance_matrices(seg_a, seg_b, seg_g, n_nodes: int, n_bound: int):
    """K (N x N) and B (N x M) from segments (points ``a``, ``b``, conductance ``g`` [W/K]).

    K holds the sum of the conductances at each node on its diagonal and minus the conductance
    between two nodes off it; B the conductance from each node to each boundary.

    >>> K, B = conductance_matrices(np.array([0, 0]), np.array([1, 2]), np.array([2.0, 3.0]), 2, 1)
    >>> K.toarray().tolist(), B.toarray().tolist()
    ([[5.0, -2.0], [-2.0, 2.0]], [[3.0], [0.0]])
    """
    aa_node = seg_a < n_nodes
    bb_node = seg_b < n_nodes
    both = aa_node & bb_node
    m1 = aa_node & ~bb_node
    m2 = bb_node & ~aa_node
    rows = np.concatenate([seg_a[both], seg_b[both], seg_a[both], seg_b[both], seg_a[m1],
                           seg_b[m2]])
    cols = np.concatenate([seg_a[both], seg_b[both], seg_b[both], seg_a[both], seg_a[m1],
                           seg_b[m2]])
    g = seg_g
    vals = np.concatenate([g[both], g[both], -g[both], -g[both], g[m1], g[m2]])
    K = sp.csr_matrix((vals, (rows, cols)), shape=(n_nodes, n_nodes))
    brow = np.concatenate([seg_a[m1], seg_b[m2]])
    bcol = np.concatenate([seg_b[m1] - n_nodes, seg_a[m2] - n_nodes])
    bval = np.concatenate([g[m1], g[m2]])
    B = sp.csr_matrix((bval, (brow, bcol)), shape=(n_nodes, n_bound))
    return K, B


# -- assembly ----------------------------------------------------------------------------------
@dataclass
class _Nodes:
    """Node names, capacities and initial temperatures as assembly collects them."""

    names: list
    capacity: list
    initial: list
    internal_of: dict = field(default_factory=dict)
    phase_change: dict = field(default_factory=dict)  # node index -> PhaseChange of a slice


def _link_chains(network, nodes: _Nodes) -> list:
    """Per link, its parts in series as ('R', resistance), ('N', node index) for the internal
    nodes of massive layers, ('X', part) for a nonlinear part or ('V', part) for a conductance
    that varies in time."""
    chains = []
    for link in network.links.values():
        chain = []
        k = 0
        for part in link.parts:
            if part.is_nonlinear:
                chain.append(("X", part))
                continue
            if part.varying is not None:
                chain.append(("V", part))
                continue
            if not part.is_massive:
                chain.append(("R", part.resistance))
                continue
            _check_biot(link, part)
            inner, outer, capacity = part.ladder()   # slice by slice (rcsim.parts.Part)
            melts = part.slice_phase_changes()
            if part.is_core and part is not link.parts[0]:
                raise NetworkError("a solid core (inner radius 0) must be the link's first part: "
                                   "the link's first point is its centre", part.where)
            for i in range(part.slices):
                k += 1
                name = f"{link.name}.{k}"
                nodes.internal_of[name] = link.name
                nodes.names.append(name)
                nodes.capacity.append(capacity[i])
                nodes.initial.append(np.nan if part.initial is None else part.initial)
                if melts:
                    nodes.phase_change[len(nodes.names) - 1] = melts[i]
                chain.extend([("R", inner[i]), ("N", len(nodes.names) - 1),
                              ("R", outer[i])])
        chains.append(chain)
    return chains


class _Segments(NamedTuple):
    """Segments of every link as assembly collects them."""

    a: list                     # first point of each segment
    b: list                     # second point
    r: list                     # resistance [K/W] (inf for a nonlinear segment)
    first: list                 # first segment of each link
    last: list                  # last segment of each link
    nonlinear: list             # (segment index, law, R before, R after) of nonlinear segments
    varying: list               # (segment index, profile, series R, link) of varying segments


def _segments(network, chains, point_index) -> _Segments:
    """Segments of every link."""
    seg_a, seg_b, seg_r, first, last = [], [], [], [], []
    nl_segments = []  # (segment index, law, R before, R after)
    var_segments = []  # (segment index, conductance profile, series resistance, link name)
    for link, chain in zip(network.links.values(), chains):
        start = point_index[link.a]
        acc = 0.0
        law = vary = None
        first.append(len(seg_a))
        for kind, val in chain + [("N", point_index[link.b])]:
            if kind == "R":
                acc += val
            elif kind == "V":
                if law is not None or vary is not None:
                    raise NetworkError("a conductance that varies in time in series with "
                                       "another varying or nonlinear part, with no node between "
                                       "them", link.where, "split the link at a node")
                vary = val
                acc += val.resistance
            elif kind == "X":
                if vary is not None:
                    raise NetworkError("a conductance that varies in time in series with a "
                                       "nonlinear part, with no node between them", link.where,
                                       "split the link at a node")
                if law is not None:
                    raise NetworkError("two nonlinear parts in series with no node between "
                                       "them", link.where, "split the link at a node (a "
                                       "surface node with a small capacity)")
                law = (val.law, acc)
                acc = 0.0
            else:                                   # a node ends the segment
                seg_a.append(start)
                seg_b.append(val)
                if law is None:
                    seg_r.append(acc)
                else:
                    seg_r.append(np.inf)            # excluded from the linear conductance matrix
                    nl_segments.append((len(seg_a) - 1, law[0], law[1], acc))
                if vary is not None:                # its value at t = 0 is in K
                    var_segments.append((len(seg_a) - 1, vary.varying, acc - vary.resistance,
                                         link.name))
                acc, law, vary = 0.0, None, None
                start = val
        last.append(len(seg_a) - 1)
    return _Segments(seg_a, seg_b, seg_r, first, last, nl_segments, var_segments)


def assemble_network(network) -> Assembled:
    """Assemble ``network`` (a :class:`rcsim.network.Network`) into an :class:`Assembled`.

    Warns (:class:`rcsim.errors.LumpedWarning`) on a massive layer kept as one node whose Biot
    number is above 0.1.
    """
    user = list(network.nodes)
    nodes = _Nodes(user, [network.nodes[n].capacity for n in user],
                   [np.nan if network.nodes[n].initial is None else network.nodes[n].initial
                    for n in user])
    boundary_names = list(network.boundaries)
    n_user = len(user)
    chains = _link_chains(network, nodes)
    # stack: the warning, assemble_network, Network.assemble, the caller
    warn_separate_radiation_links(network, stacklevel=4)
    n_nodes = len(nodes.names)
    if n_nodes == 0:
        raise NetworkError("the network has no nodes", None, "add at least one node")
    point_index = {nm: i for i, nm in enumerate(nodes.names[:n_user])}
    for j, nm in enumerate(boundary_names):
        point_index[nm] = n_nodes + j
    segments = _segments(network, chains, point_index)
    seg_a = np.asarray(segments.a, dtype=np.int64)
    seg_b = np.asarray(segments.b, dtype=np.int64)
    seg_g = 1.0 / np.asarray(segments.r, dtype=float)
    K, B = conductance_matrices(seg_a, seg_b, seg_g, n_nodes, len(boundary_names))
    src_nodes = np.asarray([point_index[s.node] for s in network.sources.values()],
                           dtype=np.int64)
    P = sp.csr_matrix((np.ones(len(src_nodes)), (src_nodes, np.arange(len(src_nodes)))),
                      shape=(n_nodes, len(src_nodes)))
    phase = {point_index[n.name]: n.phase_change for n in network.nodes.values()
             if n.phase_change is not None}
    phase.update(nodes.phase_change)
    nl = varying = None
    if segments.nonlinear:
        from .laws import SegmentLaws

        nl = SegmentLaws(segments.nonlinear)
    if segments.varying:
        from .varying import VaryingSegments

        varying = VaryingSegments(segments.varying, seg_g)
    return Assembled(
        node_names=nodes.names,
        capacity=np.asarray(nodes.capacity, dtype=float),
        initial=np.asarray(nodes.initial, dtype=float),
        boundary_names=boundary_names,
        boundary_profiles=[b.profile for b in network.boundaries.values()],
        source_names=list(network.sources),
        source_nodes=src_nodes,
        source_profiles=[s.profile for s in network.sources.values()],
        seg_a=seg_a, seg_b=seg_b, seg_g=seg_g,
        link_names=list(network.links),
        link_first_seg=np.asarray(segments.first, dtype=np.int64),
        link_last_seg=np.asarray(segments.last, dtype=np.int64),
        K=K, B=B, P=P,
        internal_of=nodes.internal_of,
        phase_change=phase,
        nl=nl,
        varying=varying,
    )


def _check_biot(link, part) -> None:
    """Warn when a massive layer kept as one node has Bi = h L / k > 0.1."""
    if part.slices != 1:
        return
    i = link.parts.index(part)

    def side_resistance(parts):  # nonlinear parts count as unknown (left out)
        return float(np.nansum([p.resistance for p in parts]))

    # Bi = hL/k = (L/(kA)) / (1/(hA)): the layer's resistance over the film's (any geometry);
    # a solid core has no inner side
    sides = [link.parts[i + 1:]] if part.is_core else [link.parts[:i], link.parts[i + 1:]]
    r_ext = min(side_resistance(side) for side in sides)
    bi = math.inf if r_ext == 0 else part.resistance / r_ext
    if bi > 0.1:
        suggested = 10 if math.isinf(bi) else max(3, min(50, math.ceil(bi * 10)))
        shown = "infinite (the layer touches a node directly)" if math.isinf(bi) \
            else f"{bi:.3g}"
        # stack: _check_biot, _link_chains, assemble_network, Network.assemble, the caller
        warnings.warn(f"{part.where}: a massive layer kept as one node has Biot number "
                      f"hL/k = {shown} > 0.1, so the lumped assumption is doubtful; "
                      f"set slices = {suggested} or more", LumpedWarning, stacklevel=5)
