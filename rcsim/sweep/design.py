"""The design of a sweep: which keys change, their values run by run, all checked before any run.

Grid keys give every combination (full factorial), the first key varying slowest. Distributions
are drawn ``samples`` times, up front, from ``numpy.random.default_rng(seed)``, one key after the
other in the order given; with grids too, every grid point is run with the same draws (common
random numbers), grid-major. So the values do not depend on the executor, the number of workers
or the order in which runs finish.
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass
from itertools import product

import numpy as np

from ..errors import InputError
from ..scenario import Scenario, load, parse_key_path, quantity_kind
from .grammar import Distribution, Grid, as_spec

__all__ = ["Design", "MAX_RUNS", "scenario_of", "check_key", "bind_vary", "make_design",
           "check_design_values"]

#: A sweep of more runs than this is refused (a typo in a grid should not start a week of work).
MAX_RUNS = 1_000_000


@dataclass
class Design:
    """The runs of a sweep.

    Attributes
    ----------
    keys : list of str
        Key paths, in the order given.
    kinds : list of str
        Quantity kind of each key (``units.KINDS``).
    specs : list
        The bound :class:`~rcsim.sweep.grammar.Grid` or distribution of each key (SI).
    values : ndarray, shape (runs, keys)
        The value of every key in every run (SI; degC for temperatures).
    seed : int or None
        Seed of the draws (None when nothing is drawn).
    samples : int
        Draws per grid point (0 when nothing is drawn).
    """

    keys: list
    kinds: list
    specs: list
    values: np.ndarray
    seed: int | None
    samples: int = 0

    def describe(self, unit_of) -> dict:
        """``{key: "normal(0.05, 0.005) m"}``; ``unit_of(key)`` gives each key's unit."""
        return {k: s.describe(unit_of(k)) for k, s in zip(self.keys, self.specs)}


def scenario_of(scenario) -> Scenario:
    """A Scenario, loaded from a path when one is given."""
    if isinstance(scenario, Scenario):
        return scenario
    if isinstance(scenario, (str, os.PathLike)):
        return load(scenario)
    raise InputError(f"expected a Scenario or a scenario file path, got {type(scenario).__name__}",
                     "scenario")


def check_key(sc: Scenario, key) -> str:
    """The quantity kind at ``key``; raises naming the key (with a suggestion) if it is unusable."""
    where = f"{sc.name}: {key}"
    tokens = parse_key_path(key, sc.name)
    raw = sc.value(key)  # raises ScenarioError naming the key, with a suggestion
    kind = quantity_kind(tokens)
    if kind is None or isinstance(raw, (dict, list, bool)):
        raise InputError("this key does not hold a single number to vary", where,
                         "address a numeric value, e.g. links.wall.parts[1].conduction.thickness")
    return kind


def bind_vary(sc: Scenario, vary) -> tuple[list, list, list]:
    """(keys, kinds, bound specs) of ``vary``, every key checked against the scenario."""
    if not isinstance(vary, dict) or not vary:
        raise InputError("nothing to vary", "vary",
                         "give at least one key, e.g. {'nodes.payload.capacity': [8e3, 9e3]}")
    keys, kinds, specs = [], [], []
    for key, value in vary.items():
        kind = check_key(sc, key)
        where = f"vary {key}"
        keys.append(key)
        kinds.append(kind)
        specs.append(as_spec(value, where).bind(kind, where))
    return keys, kinds, specs


def _check_counts(specs, samples, seed) -> None:
    has_dist = any(isinstance(s, Distribution) for s in specs)
    if has_dist and samples is None:
        raise InputError("distributions need a number of samples", "samples",
                         "give samples=N (--sample N on the command line)")
    if samples is not None:
        if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or samples < 1:
            raise InputError(f"samples must be a whole number >= 1, got {samples!r}", "samples")
        if not has_dist:
            raise InputError("samples given but no key has a distribution", "samples",
                             "vary a key with e.g. normal(50mm,5mm), or leave samples out")
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer))
                             or seed < 0):
        raise InputError(f"seed must be a whole number >= 0, got {seed!r}", "seed")


def make_design(sc: Scenario, vary, samples=None, seed=None, max_runs=MAX_RUNS) -> Design:
    """Check ``vary`` against ``sc`` and lay out every run's values (draws made here)."""
    keys, kinds, specs = bind_vary(sc, vary)
    _check_counts(specs, samples, seed)
    grid_cols = [i for i, s in enumerate(specs) if isinstance(s, Grid)]
    dist_cols = [i for i, s in enumerate(specs) if isinstance(s, Distribution)]
    n_grid = math.prod(len(specs[i].values) for i in grid_cols)
    n_samp = samples if dist_cols else 1
    total = n_grid * n_samp
    if total > max_runs:
        raise InputError(f"{total} runs is more than the limit of {max_runs}", "vary",
                         "use fewer grid points or samples (or raise max_runs)")
    if dist_cols and seed is None:
        seed = int(np.random.SeedSequence().entropy % (2**63))
    values = np.empty((total, len(keys)))
    if grid_cols:  # full factorial, first key slowest; each point repeated for the draws
        points = np.array(list(product(*[specs[i].values for i in grid_cols])), dtype=float)
        values[:, grid_cols] = np.repeat(points, n_samp, axis=0)
    if dist_cols:  # the same draws at every grid point
        rng = np.random.default_rng(seed)
        for i in dist_cols:
            values[:, i] = np.tile(np.asarray(specs[i].draw(rng, n_samp), dtype=float), n_grid)
    return Design(keys, kinds, specs, values, seed if dist_cols else None,
                  int(samples) if samples is not None else 0)


def check_design_values(sc: Scenario, design: Design) -> None:
    """Build the scenario at both ends of each grid and at each distribution's median, so values
    the model refuses are reported before anything runs."""
    for key, spec in zip(design.keys, design.specs):
        vals = spec.ends() if isinstance(spec, Grid) else (spec.center(),)
        for v in dict.fromkeys(vals):
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    sc.with_values({key: float(v)})
            except InputError as err:
                raise InputError(f"value {v:.6g} is refused: {err.message}", f"vary {key}",
                                 err.hint) from None
