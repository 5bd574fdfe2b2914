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

Both watchers judge the output samples: a freezing point crossed and left again between two
samples is not seen (a shorter output step sees it); the time of a crossing is interpolated
linearly between the samples on either side.

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

    def __init__(self, network, nodes: list[int], names: list[str], points: list[float]):
        self.prefix = _prefix(network)
        self.nodes = list(nodes)
        self.names = list(names)
        self.points = np.asarray(points, dtype=float)
        self.start_below = None                 # side of the freezing point at the first sample
        self.crossed_at = np.full(len(nodes), np.nan)
        self.extreme = np.full(len(nodes), np.nan)

    def observe(self, t: np.ndarray, T: np.ndarray, u: np.ndarray) -> None:
        if self.start_below is None:
            self.start_below = T[0] < self.points
            self.last_t, self.last_T = t[0], T[0]
        below = T < self.points
        other = below != self.start_below          # (samples, nodes) on the far side
        new = other.any(axis=0) & np.isnan(self.crossed_at)
        if new.any():       # the crossing, linear between the samples on either side
            k = np.argmax(other, axis=0)[new]
            cols = np.flatnonzero(new)
            t_prev = np.where(k > 0, t[np.maximum(k - 1, 0)], self.last_t)
            T_prev = np.where(k > 0, T[np.maximum(k - 1, 0), cols], self.last_T[cols])
            T_next = T[k, cols]
            f = np.clip((self.points[cols] - T_prev) / np.where(T_next != T_prev,
                                                                 T_next - T_prev, 1.0), 0, 1)
            self.crossed_at[cols] = t_prev + f * (t[k] - t_prev)
        far = np.where(self.start_below, T.max(axis=0), T.min(axis=0))
        self.extreme = np.where(np.isnan(self.extreme), far,
                                np.where(self.start_below, np.fmax(self.extreme, far),
                                         np.fmin(self.extreme, far)))
        self.last_t, self.last_T = t[-1], T[-1]

    def warnings(self) -> list[str]:
        texts = []
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
                         "failure)")
        return texts


class CorrelationWatch:
    """Films whose h comes from a correlation: warns once per film whose Rayleigh, Reynolds or
    Prandtl number leaves the range of the correlation's source at output samples carrying at
    least :attr:`min_share` (1 %) of the heat the film carries over the run, saying how far, at
    what share of the samples and what share of the film's heat. (A film whose surface passes
    the air temperature has Ra near 0 for a moment, below every lower bound; h hardly matters
    there, since the film carries almost no heat, and the rule keeps those moments quiet.)"""

    category = CorrelationRangeWarning
    min_share = 0.01

    def __init__(self, network, asm):
        nl = asm.nl
        self.prefix = _prefix(network)
        films = [k for k, law in enumerate(nl.laws) if isinstance(law, FilmLaw)]
        self.laws = [nl.laws[k] for k in films]
        self.films = list(range(len(films)))
        # the film segments alone, with the linear parts in series with each
        self.nl = SegmentLaws([(nl.seg[k], nl.laws[k], nl.R1[k], nl.R2[k]) for k in films])
        n = asm.n_nodes
        seg = self.nl.seg
        ends = np.concatenate([asm.seg_a[seg], asm.seg_b[seg]])
        self.nodes = sorted({int(p) for p in ends if p < n})
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

    def observe(self, t: np.ndarray, T: np.ndarray, u: np.ndarray) -> None:
        points = np.hstack([T, np.asarray(u, dtype=float).reshape(T.shape[0], -1)])
        ta, tb = points[:, self.a_col], points[:, self.b_col]
        q, _, _ = self.nl.solve(ta, tb)
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
