"""What a network or a run should warn about, and the warnings a run collects.

* :func:`network_warnings`: nodes with no path to any boundary (a node linked to nothing, or a
  group of nodes linked only among themselves). Such nodes keep their heat: their temperatures
  follow their initial values and their sources alone, which is rarely what was meant. ``rcsim
  check`` and every run warn.
* :func:`run_watchers`: observers of a run's output samples (fed by the recorder, see
  :class:`rcsim.recording.RecordingPlan`) that warn once per run at its end:
  :class:`FreezingWatch` (a node passing its declared freezing point, ``freezes_at``, without
  latent heat) and :class:`CorrelationWatch` (a convection correlation outside the validity
  range of its source, :func:`rcsim.correlations.outside_validity`).
* :func:`collecting_warnings`: the warnings raised while a run was made, kept for
  ``Result.warnings`` and raised again for the caller.

The freezing watch is exact where the path gives its solution between samples (every path does
for the nodes watched: ``Chunk.evaluate``): a crossing between samples is located on it, and
wherever the samples come within a margin of the freezing point (the largest change between
neighbouring samples) the extreme between them is found on the solution too, so a freezing
point passed and left again between two samples is seen, with its time and its lowest (highest)
value. Without that solution the check is at the output samples, and the warning says so and
names the step. The correlation watch judges the output samples (a share of the film's heat,
which samples weigh well), using the flows of the nonlinear links that the recorder computes
for the heat-flow histories (no second solve).

Messages start with the scenario file's name when the network was read from one
(``network.source_name``).
"""

from __future__ import annotations

import contextlib
import sys
import warnings

import numpy as np

from .correlations import outside_validity
from .errors import RcsimWarning
from .laws import FilmLaw, SegmentLaws

__all__ = ["network_warnings", "run_watchers", "FreezingWatch", "CorrelationWatch",
           "collecting_warnings", "warning_texts", "warn_network", "warn_watched",
           "FreezingWarning", "CorrelationRangeWarning", "FloatingNodesWarning"]


class FloatingNodesWarning(RcsimWarning):
    """Nodes with no path to any boundary."""


class FreezingWarning(RcsimWarning):
    """A node passed its declared freezing point without latent heat."""


class CorrelationRangeWarning(RcsimWarning):
    """A convection correlation was used outside the validity range of its source."""


def _prefix(network) -> str:
    name = getattr(network, "source_name", None)
    return f"{name}: " if name else ""


def _names(names: list[str]) -> str:
    return ", ".join(repr(n) for n in names[:6]) + (" ..." if len(names) > 6 else "")


# -- the network ---------------------------------------------------------------------------------
def network_warnings(network, asm=None) -> list[str]:
    """One text per group of nodes with no path to any boundary (empty when every node has
    one). ``asm`` is the network's assembly (assembled here when not given)."""
    asm = network.assemble() if asm is None else asm
    prefix = _prefix(network)
    touched = np.zeros(asm.n_nodes, dtype=bool)
    for ends in (asm.seg_a, asm.seg_b):
        touched[ends[ends < asm.n_nodes]] = True
    texts = []
    for group in asm.floating_groups():
        names = [asm.node_names[i] for i in group]
        if len(group) == 1 and not touched[group[0]]:
            texts.append(f"{prefix}nodes.{names[0]}: node {names[0]!r} is linked to nothing: it "
                         "keeps its initial temperature and whatever its sources put in (link "
                         "it, or remove it)")
            continue
        have = "node {} has" if len(names) == 1 else "nodes {} have"
        texts.append(f"{prefix}{have.format(_names(names))} no path to any boundary: they "
                     "exchange heat only among themselves and with their sources, and have no "
                     "steady state (link them to a boundary if that is not meant)")
    return texts


# -- watchers of a run's samples -----------------------------------------------------------------
class FreezingWatch:
    """Nodes with a declared freezing point (``freezes_at``) and no phase change: warns once per
    node that passes its freezing point during the run (its temperatures beyond it are those of
    a body that neither freezes nor thaws)."""

    category = FreezingWarning
    #: what the recorder hands :meth:`observe` besides the samples
    wants = ("evaluate",)

    def __init__(self, network, nodes: list[int], names: list[str], points: list[float]):
        self.prefix = _prefix(network)
        self.nodes = list(nodes)
        self.names = list(names)
        self.points = np.asarray(points, dtype=float)
        self.start_below = None                 # side of the freezing point at the first sample
        self.crossed_at = np.full(len(nodes), np.nan)
        self.extreme = np.full(len(nodes), np.nan)
        self.on_samples = False                 # a chunk came without the solution between
        self.step = np.nan                      # the longest output step seen [s]
        self.last_t = self.last_T = None

    def observe(self, t: np.ndarray, T: np.ndarray, u: np.ndarray, evaluate=None) -> None:
        if self.start_below is None:
            self.start_below = T[0] < self.points
            self.sign = np.where(self.start_below, -1.0, 1.0)
        if self.last_t is None:
            tt, TT = t, T
        else:
            tt, TT = np.concatenate([[self.last_t], t]), np.vstack([self.last_T[None, :], T])
        if tt.size > 1:
            self.step = np.fmax(self.step, float(np.max(np.diff(tt))))
            if evaluate is None:
                self.on_samples = True
        # d: how far on the starting side of the freezing point (< 0: beyond it)
        d = (TT - self.points[None, :]) * self.sign[None, :]
        self._note_extreme(d.min(axis=0))
        for j in np.flatnonzero(np.isnan(self.crossed_at)):
            self._find_crossing(j, tt, d[:, j], evaluate)
        self.last_t, self.last_T = t[-1], np.array(T[-1])

    def _note_extreme(self, d_min) -> None:
        far = self.points + self.sign * d_min
        self.extreme = np.where(np.isnan(self.extreme), far,
                                np.where(self.start_below, np.fmax(self.extreme, far),
                                         np.fmin(self.extreme, far)))

    def _find_crossing(self, j: int, tt, d, evaluate) -> None:
        """The first crossing of node ``j`` in the samples ``tt`` (its distances ``d``): in the
        first interval whose samples straddle the point, or earlier between samples that come
        within the margin of it (found on ``evaluate``); linear between samples without it."""
        beyond = np.flatnonzero(d < 0)
        k = int(beyond[0]) if beyond.size else tt.size     # first sample beyond
        if evaluate is not None and k > 1:
            step = np.abs(np.diff(d[:k]))                   # the intervals before it
            margin = step.copy()
            margin[1:] = np.maximum(margin[1:], step[:-1])
            margin[:-1] = np.maximum(margin[:-1], step[1:])
            # an extreme inside interval i: d falls into it and rises out of it
            falls_in = np.ones(k - 1, dtype=bool)
            falls_in[1:] = d[1:k - 1] <= d[:k - 2]
            rises_out = np.ones(k - 1, dtype=bool)
            rises_out[:-1] = d[2:k] >= d[1:k - 1]
            near = np.flatnonzero((np.minimum(d[:k - 1], d[1:k]) <= margin) & falls_in
                                  & rises_out)
            for i in near.tolist():
                if self._dip(j, tt[i], tt[i + 1], evaluate):
                    return
        if k >= tt.size or k == 0:
            return
        a, b = float(tt[k - 1]), float(tt[k])
        if evaluate is not None:
            self.crossed_at[j] = _root(lambda x: self._distance(j, x, evaluate), a, b)
        else:       # linear between the samples on either side
            f = d[k - 1] / (d[k - 1] - d[k])
            self.crossed_at[j] = a + f * (b - a)

    def _distance(self, j: int, x: float, evaluate) -> float:
        T = float(evaluate(np.array([x]), np.array([j]))[0])
        return (T - self.points[j]) * self.sign[j]

    def _dip(self, j: int, a: float, b: float, evaluate) -> bool:
        """Whether node ``j`` passes its point between samples at ``a`` and ``b`` (both on the
        starting side): the extreme between them found on the solution."""
        from scipy.optimize import minimize_scalar

        found = minimize_scalar(lambda x: self._distance(j, x, evaluate), bounds=(a, b),
                                method="bounded", options={"xatol": 1e-9 * (b - a)})
        d_min = float(found.fun)
        extreme = np.full(self.points.size, np.inf)
        extreme[j] = d_min
        self._note_extreme(extreme)
        if d_min >= 0:
            return False
        self.crossed_at[j] = _root(lambda x: self._distance(j, x, evaluate), a, float(found.x))
        return True

    def warnings(self) -> list[str]:
        texts = []
        sampled = ""
        if self.on_samples:
            sampled = (f"; checked at the output samples only, every {_duration(self.step)}: "
                       "a shorter step may find it earlier")
        for k in np.flatnonzero(~np.isnan(self.crossed_at)):
            name, point = self.names[k], self.points[k]
            if self.start_below[k]:
                what, far, wrong = "rises above", "highest", "above"
            else:
                what, far, wrong = "falls below", "lowest", "below"
            texts.append(f"{self.prefix}nodes.{name}: {name!r} {what} its freezing point "
                         f"{point:g} degC at t = {self.crossed_at[k] / 3600:.4g} h ({far} "
                         f"{self.extreme[k]:.3g} degC) with no latent heat, so its temperatures "
                         f"{wrong} it are wrong (give it a phase_change, or treat freezing as a "
                         f"failure){sampled}")
        return texts


def _root(f, a: float, b: float) -> float:
    """The point in [a, b] where ``f`` (>= 0 at a, < 0 at b) changes sign (Brent's method)."""
    from scipy.optimize import brentq

    fa = f(a)
    if fa < 0:
        return a
    return float(brentq(f, a, b, xtol=1e-9 * max(b - a, 1e-300), rtol=1e-15))


def _duration(seconds: float) -> str:
    """An output step for a message: '10 min', '2 h', '90 s'."""
    for unit, size in (("h", 3600.0), ("min", 60.0)):
        if seconds >= size:
            return f"{seconds / size:.4g} {unit}"
    return f"{seconds:.4g} s"


class CorrelationWatch:
    """Films whose h comes from a correlation: warns once per film whose Rayleigh, Reynolds or
    Prandtl number leaves the range of the correlation's source at output samples carrying at
    least :attr:`min_share` (1 %) of the heat the film carries over the run, saying how far, at
    what share of the samples and what share of the film's heat. (A film whose surface passes
    the air temperature has Ra near 0 for a moment, below every lower bound; h hardly matters
    there, since the film carries almost no heat, and the rule keeps those moments quiet.)"""

    category = CorrelationRangeWarning
    min_share = 0.01
    #: what the recorder hands :meth:`observe` besides the samples: the flows of the nonlinear
    #: segments, computed once for the heat-flow histories and the watchers
    wants = ("nonlinear",)

    def __init__(self, network, asm):
        nl = asm.nl
        self.prefix = _prefix(network)
        films = [k for k, law in enumerate(nl.laws) if isinstance(law, FilmLaw)]
        self.laws = [nl.laws[k] for k in films]
        self.films = list(range(len(films)))
        self.film_pos = np.asarray(films, dtype=np.int64)     # their places in asm.nl
        # the film segments alone, with the linear parts in series with each
        self.nl = SegmentLaws([(nl.seg[k], nl.laws[k], nl.R1[k], nl.R2[k]) for k in films])
        n = asm.n_nodes
        seg = self.nl.seg
        ends = np.concatenate([asm.seg_a[seg], asm.seg_b[seg]])
        # the recorder solves every nonlinear segment for the watchers: all their ends recorded
        every = np.concatenate([asm.seg_a[nl.seg], asm.seg_b[nl.seg]])
        self.nodes = sorted({int(p) for p in every if p < n})
        col = {p: j for j, p in enumerate(self.nodes)}
        m = len(self.nodes)
        # segment ends as columns of [T of self.nodes | u]
        self.a_col = np.asarray([col[int(p)] if p < n else m + int(p - n)
                                 for p in asm.seg_a[seg]], dtype=np.int64)
        self.b_col = np.asarray([col[int(p)] if p < n else m + int(p - n)
                                 for p in asm.seg_b[seg]], dtype=np.int64)
        self.samples = 0
        self.heat = np.zeros(len(self.films))
        # per film: {range: [count, heat, lowest value, highest value]} of samples outside
        self.found = [dict() for _ in self.films]

    def observe(self, t: np.ndarray, T: np.ndarray, u: np.ndarray, nonlinear=None) -> None:
        """Judge the samples ``t``, ``T`` (of :attr:`nodes`), ``u``; ``nonlinear``: the flows
        of every nonlinear segment there (:class:`rcsim.recording.NonlinearFlows`), solved here
        when not given."""
        if nonlinear is not None:
            pos = self.film_pos
            q, ta, tb = nonlinear.q[:, pos], nonlinear.ta[:, pos], nonlinear.tb[:, pos]
        else:
            points = np.hstack([T, np.asarray(u, dtype=float).reshape(T.shape[0], -1)])
            ta, tb = points[:, self.a_col], points[:, self.b_col]
            q = self.nl.flows(ta, tb)
        t1, t2 = ta - q * self.nl.R1, tb + q * self.nl.R2      # the film's own faces
        self.samples += T.shape[0]
        for j, k in enumerate(self.films):
            law = self.laws[k]
            ts, tf = (t1[:, k], t2[:, k]) if law.surface_first else (t2[:, k], t1[:, k])
            heat = np.abs(q[:, k])
            self.heat[j] += heat.sum()
            for rng, values, mask in outside_validity(law.correlation.name, ts, tf, law.dims):
                if not mask.any():
                    continue
                seen = values[mask]
                rec = self.found[j].setdefault(rng, [0, 0.0, np.inf, -np.inf])
                rec[0] += int(mask.sum())
                rec[1] += float(heat[mask].sum())
                rec[2] = min(rec[2], float(seen.min()))
                rec[3] = max(rec[3], float(seen.max()))

    def warnings(self) -> list[str]:
        texts = []
        for j, k in enumerate(self.films):
            if not self.found[j]:
                continue
            law = self.laws[k]
            parts, sources = [], []
            for rng, (count, heat, lo, hi) in self.found[j].items():
                share = heat / self.heat[j] if self.heat[j] > 0 else 0.0
                if share < self.min_share:
                    continue
                span = f"{rng.low:g}..{rng.high:g}"
                seen = (f"down to {lo:.3g}" if lo < rng.low else "") + \
                    (" and " if lo < rng.low and hi > rng.high else "") + \
                    (f"up to {hi:.3g}" if hi > rng.high else "")
                parts.append(f"{rng.number} {seen} against {span} at "
                             f"{100 * count / self.samples:.3g} % of the output samples "
                             f"(carrying {100 * share:.3g} % of its heat)")
                sources.append(rng.source)
            if not parts:
                continue
            where = f"{law.where}: " if law.where else ""
            texts.append(f"{self.prefix}{where}the {law.correlation.name} correlation left "
                         f"its validity range: {'; '.join(parts)}; h there is extrapolated "
                         f"(range: {'; '.join(dict.fromkeys(sources))})")
        return texts


def run_watchers(network, asm) -> list:
    """The watchers a run of ``network`` (assembled as ``asm``) needs (often none)."""
    watchers = []
    freezing = [(asm.node_names.index(n.name), n.name, n.freezes_at)
                for n in network.nodes.values()
                if getattr(n, "freezes_at", None) is not None and n.phase_change is None]
    if freezing:
        idx, names, points = zip(*freezing)
        watchers.append(FreezingWatch(network, list(idx), list(names), list(points)))
    if asm.nl is not None and any(isinstance(law, FilmLaw) for law in asm.nl.laws):
        watchers.append(CorrelationWatch(network, asm))
    return watchers


def warn_network(network, asm=None) -> None:
    """Warn (:class:`FloatingNodesWarning`) each text of :func:`network_warnings`."""
    for text in network_warnings(network, asm):
        warnings.warn(text, FloatingNodesWarning, stacklevel=3)


def warn_watched(watchers) -> None:
    """Warn what each watcher of a finished run found (once per node or film)."""
    for watcher in watchers:
        for text in watcher.warnings():
            warnings.warn(text, watcher.category, stacklevel=3)


# -- collecting --------------------------------------------------------------------------------
@contextlib.contextmanager
def collecting_warnings():
    """Record the warnings raised inside (yields the list of records, growing as they come;
    :func:`warning_texts` reads it): every one of rcsim's, and the others as the caller's
    filters let them through (an 'error' filter still raises where the warning is raised). On
    leaving, even by an exception, the records are raised again, from the module that raised
    them, so the caller's own filters decide what it sees."""
    caught: list = []
    try:
        with warnings.catch_warnings(record=True) as recorded:
            warnings.simplefilter("always", RcsimWarning)
            caught = recorded
            yield recorded
    finally:
        modules = _modules_by_file() if caught else {}
        for w in caught:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno,
                                   module=modules.get(w.filename), source=w.source)


def _modules_by_file() -> dict:
    """{file: module name} of the modules loaded (warnings are filtered by module name)."""
    return {getattr(m, "__file__", None): name for name, m in list(sys.modules.items())
            if getattr(m, "__file__", None)}


def warning_texts(caught) -> list[str]:
    """The texts of rcsim's warnings among the records ``caught``, each once, in order."""
    return list(dict.fromkeys(str(w.message) for w in caught
                              if issubclass(w.category, RcsimWarning)))
