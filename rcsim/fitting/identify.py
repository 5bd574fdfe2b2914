"""Structures grown from the data: forward selection with likelihood-ratio tests.

The procedure published for the heat dynamics of buildings by Bacher & Madsen, "Identifying
suitable models for the heat dynamics of buildings", *Energy and Buildings* 43 (2011)
1511-1522: start from the simplest structure (one node per measured column, see
:mod:`rcsim.fitting.ladder`), fit every structure one extension larger, take the one with the
highest likelihood and test it against the current one by the likelihood-ratio test::

    LR = 2 (l_extended - l_current)  ~  chi-square with (k_extended - k_current) degrees of freedom

under the hypothesis that the extension is not needed (Wilks' theorem). When its p-value is
below the significance level (0.05 by default) the extension is kept and the search goes on
from it; otherwise the current structure is selected. The test is approximate where the smaller
structure lies on the edge of the larger one (a new capacity near zero), as Bacher & Madsen
note; it then errs towards the smaller structure.

Each structure is fitted as any scenario is (deterministic output error, or with
``noise="process"`` the stochastic model of :mod:`rcsim.fitting.stochastic`), with the
:class:`rcsim.fitting.linear.LinearModel` for speed, from the parent's fitted values and a few
starts for the new ones. Without a heat input in the log only time constants and ratios are
determined: the first measured node's capacity is then fixed (``capacity``) and the others are
relative to it.
"""

from __future__ import annotations

import math
import os
import time as _time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..base import suggest
from ..errors import DataError, InputError
from ..scenario import Scenario, loads
from ..units import to_si
from .candidates import NOISE_KINDS
from .procedure import check_starts, fit_prepared, issue_warnings
from .holdout import parse_holdout
from .ladder import (MOVES, BoundaryInput, Ladder, LadderSetup, base_ladder, base_starts,
                     clean_name, extensions)
from .linear import LinearModel
from .logs import log_header, read_log, strip_unit
from .parameters import make_parameters
from .result import FitResult

__all__ = ["identify", "Identification", "METHOD"]

#: Least-squares settings of the structures' fits: a structure with a node the data do not need
#: has a flat valley that costs many evaluations to walk to its end; the likelihood there is
#: already within a small fraction of a unit of its best, far below what the test can tell.
SEARCH_OPTIONS = {"ftol": 1e-10, "xtol": 1e-8, "evaluations": 5}
#: Each start of a structure first gets this budget; the best one goes on.
SCREEN_OPTIONS = {"ftol": 1e-6, "xtol": 1e-5, "evaluations": 1}

METHOD = ("forward selection with likelihood-ratio tests (Bacher & Madsen, Energy and Buildings "
          "43 (2011) 1511-1522)")


@dataclass
class Identification:
    """What :func:`identify` found.

    Attributes
    ----------
    steps : DataFrame
        One row per structure tried, in order: ``step``, ``structure``, ``extension`` (what it
        added), ``nodes``, ``free_values``, ``parameters`` (free values plus noise parameters),
        ``log_likelihood``, ``aic``, ``bic``, ``lr_statistic``, ``df`` and ``p_value`` (the
        likelihood-ratio test against the structure it extends), ``rmse_fit`` [K],
        ``rmse_holdout`` [K], ``whiteness_p`` (Ljung-Box), ``accepted``, ``selected``.
    selected : rcsim.Scenario
        The selected structure with its fitted values (its text comments on the search).
    fit : FitResult
        The selected structure's fit.
    path : str
        The path the search took, as text.
    fits : dict
        Structure -> FitResult of every structure tried.
    significance : float
    noise : str
    notes : list of str
        What the data fixed or could not fix (e.g. a capacity fixed for want of a heat input).
    columns : dict
        Log column -> node, boundary or source of the structures.
    """

    steps: pd.DataFrame
    selected: Scenario
    fit: FitResult
    path: str
    fits: dict
    significance: float
    noise: str
    notes: list = field(default_factory=list)
    columns: dict = field(default_factory=dict)
    free: list = field(default_factory=list)
    wall_time: float = 0.0

    def to_csv(self, path) -> str:
        """Write :attr:`steps` to a CSV file (temporary name, renamed when complete)."""
        from .result import write_text_atomic

        return write_text_atomic(path, self.steps.to_csv(index=False))

    def write_selected(self, path) -> str:
        """Write the selected scenario (TOML) to ``path``, checked by reading it back."""
        return self.fit.write_scenario(path)

    def plot(self, **kwargs):
        """The measured record with the fits of the structures the search kept, overlaid (see
        :func:`rcsim.fitting.figures.plot_candidates`)."""
        from .figures import plot_candidates

        kept = self.steps.loc[self.steps["accepted"], "structure"].tolist()
        return plot_candidates({k: self.fits[k] for k in kept}, selected=self.fit.label, **kwargs)


def identify(log, measured, drivers=(), ambient=None, *, time=None, time_unit=None,
             max_gap=None, holdout=None, noise="measurement", significance=0.05, max_nodes=4,
             capacity="1 kJ/K", sigma=None, starts=3, lags=None, moves=MOVES) -> Identification:
    """Grow a network from a log by forward selection with likelihood-ratio tests.

    Parameters
    ----------
    log : path or pandas.DataFrame
        The logged record (see :func:`rcsim.fitting.read_log` for its form).
    measured : str or list of str
        The log column(s) of the body's measured temperature(s) [degC].
    drivers : list of str
        Log columns that drive the body: a heat input [W] (or in the unit of its header, as in
        ``heater [kW]``), or a temperature it exchanges heat with when its header gives a
        temperature unit (``ground [degC]``).
    ambient : None, number, str
        The surroundings: a temperature (``20`` or ``"20 degC"``), a log column, or ``"free"``
        (an unknown constant, fitted). None: ``"free"``, unless a temperature driver is given.
    holdout : optional
        A span left out of every fit and scored (see :mod:`rcsim.fitting.holdout`).
    noise : 'measurement' or 'process'
        Deterministic fits (output error) or stochastic ones (Kalman filter).
    significance : float
        Level of the likelihood-ratio test (0.05 as Bacher & Madsen).
    max_nodes : int
        The largest structure tried.
    moves : sequence of str
        The kinds of extension tried (default all: ``envelope``, ``mass``, ``leak``,
        ``heater``; see :mod:`rcsim.fitting.ladder`).
    capacity : number or str
        The first measured node's capacity when the log has no heat input (which alone would
        fix the scale); capacities found are then relative to it.
    sigma, starts, lags, time, time_unit, max_gap : optional
        As for :func:`rcsim.fit`; ``starts`` caps the starting points of each structure.

    Returns
    -------
    Identification

    Raises
    ------
    InputError / DataError
        A column that is not in the log, an ambient that is neither a temperature, a column nor
        'free', nothing for the body to exchange heat with, a bad option.
    """
    from ..threads import kernels

    wall0 = _time.perf_counter()
    _check_options(noise, significance, max_nodes, starts)
    moves = (moves,) if isinstance(moves, str) else tuple(moves)
    for m in moves:
        if m not in MOVES:
            raise InputError(f"unknown extension {m!r}", "moves", suggest(m, list(MOVES)))
    with kernels():  # many small matrices: threads only cost
        result = _identify(log, measured, drivers, ambient, dict(
            time=time, time_unit=time_unit, max_gap=max_gap), holdout, noise, significance,
            max_nodes, capacity, sigma, starts, lags, moves)
    result.wall_time = _time.perf_counter() - wall0
    issue_warnings(result.fit, stacklevel=2)
    return result


def _check_options(noise, significance, max_nodes, starts) -> None:
    if noise not in NOISE_KINDS:
        raise InputError(f"noise must be one of {', '.join(map(repr, NOISE_KINDS))}, got "
                         f"{noise!r}", "noise")
    if not (isinstance(significance, (int, float)) and 0 < significance < 1):
        raise InputError(f"significance must lie between 0 and 1, got {significance!r}",
                         "significance", "e.g. 0.05")
    if not isinstance(max_nodes, int) or isinstance(max_nodes, bool) or max_nodes < 1:
        raise InputError(f"max_nodes must be a positive whole number, got {max_nodes!r}",
                         "max_nodes")
    check_starts(starts)


@dataclass
class _Tried:
    """A structure fitted: its ladder, fit, fitted values (key -> SI) and what it extended."""

    ladder: Ladder
    fit: FitResult
    values: dict
    extension: str = ""


def _identify(source, measured, drivers, ambient, read, holdout, noise, significance,
              max_nodes, capacity, sigma, starts, lags, moves) -> Identification:
    setup, log, columns, notes = _setup(source, measured, drivers, ambient, read, capacity)
    span = parse_holdout(holdout, log.time)

    def fit_one(ladder: Ladder, value_starts: list, extension: str) -> _Tried:
        text = ladder.text(setup, value_starts[0], f"{ladder.label} (rcsim identify)",
                           tables=False)
        sc = loads(text, name=_file_name(ladder))
        keys = ladder.free_keys(setup)
        params = make_parameters(sc, keys, {k: setup.temperature_range for k in keys
                                            if k.endswith((".initial", ".temperature"))}, log)
        model = LinearModel(sc, log, params)
        points = [np.array([p.to_x(v[p.key]) for p in params]) for v in value_starts[:starts]]
        res = fit_prepared(sc, log, params, model, holdout=span, sigma=sigma, noise=noise,
                           lags=lags, points=points, starts=len(points), options=SEARCH_OPTIONS,
                           screen=SCREEN_OPTIONS, final=False)
        res.label = _unique(ladder.label, tried)
        return _Tried(ladder, res, dict(zip(params.keys, res.estimates["value"])), extension)

    tried: dict = {}
    base = base_ladder(setup)
    current = fit_one(base, base_starts(base, setup), "")
    rows = [_row(0, current, None, accepted=True)]
    tried[current.fit.label] = current
    lines = [f"start  {current.fit.label}: {_describe(current)}"]
    step = 0
    while True:
        step += 1
        options = [e for e in extensions(current.ladder, setup, current.values, moves)
                   if e.ladder.n_nodes <= max_nodes]
        if not options:
            lines.append(f"step {step}: no extension left within {max_nodes} nodes; stop")
            break
        fits = []
        for e in options:
            fits.append(fit_one(e.ladder, e.starts(current.values), e.description))
            tried[fits[-1].fit.label] = fits[-1]
        best = max(fits, key=lambda f: f.fit.log_likelihood)
        test = {f.fit.label: _lr_test(current, f) for f in fits}
        lr, df, p = test[best.fit.label]
        keep = p < significance
        for f in fits:
            rows.append(_row(step, f, test[f.fit.label], accepted=keep and f is best))
        verdict = (f"significant at {significance:g}: kept ({best.ladder.n_nodes} nodes)" if keep
                   else f"not significant at {significance:g}; stop")
        lines.append(f"step {step}: {len(fits)} extension(s) tried; best: {best.extension} "
                     f"(LR {lr:.4g} on {df} df, p {_fmt_p(p)}): {verdict}")
        if not keep:
            break
        current = best
    selected = current
    refine = getattr(selected.fit, "_refine", None)
    if refine is not None:  # intervals for the structure kept (the others need none)
        fit = refine()
        fit.label = selected.fit.label
        tried[fit.label] = _Tried(selected.ladder, fit, selected.values, selected.extension)
        selected = tried[fit.label]
    table = pd.DataFrame(rows)
    table["selected"] = table["structure"] == selected.fit.label
    header = [f"selected {selected.fit.label}: {_describe(selected)}"]
    path = "\n".join([f"Structures grown from {log.name} by {METHOD}, "
                      f"significance {significance:g}"] + ["  " + ln for ln in lines] + header)
    sc_selected = _selected_scenario(selected, setup, log, columns, path, notes)
    selected.fit.fitted_scenario = sc_selected
    return Identification(table, sc_selected, selected.fit, path,
                          {k: v.fit for k, v in tried.items()}, significance, noise, notes,
                          columns, selected.ladder.free_keys(setup))


def _unique(label: str, taken) -> str:
    name, i = label, 2
    while name in taken:
        name = f"{label} ({i})"
        i += 1
    return name


def _lr_test(current: _Tried, other: _Tried) -> tuple[float, int, float]:
    """(LR statistic, degrees of freedom, p-value) of ``other`` against ``current``."""
    from scipy import stats

    lr = 2.0 * (other.fit.log_likelihood - current.fit.log_likelihood)
    df = int(other.fit.n_parameters - current.fit.n_parameters)
    if df <= 0:
        return lr, df, float("nan")
    p = float(stats.chi2.sf(lr, df)) if lr > 0 else 1.0
    return lr, df, p


def _row(step, tried: _Tried, test, accepted) -> dict:
    f = tried.fit
    lr, df, p = test if test is not None else (math.nan, 0, math.nan)
    return {"step": step, "structure": f.label, "extension": tried.extension or "(start)",
            "nodes": tried.ladder.n_nodes, "free_values": len(f.estimates),
            "parameters": f.n_parameters, "log_likelihood": f.log_likelihood, "aic": f.aic,
            "bic": f.bic, "lr_statistic": lr, "df": df, "p_value": p,
            "rmse_fit": f.simulation_rmse, "rmse_holdout": f.holdout_rmse,
            "whiteness_p": f.whiteness_p, "accepted": bool(accepted)}


def _fmt_p(p: float) -> str:
    if not math.isfinite(p):
        return "= n/a"
    return "< 1e-12" if p < 1e-12 else f"= {p:.3g}"


def _describe(t: _Tried) -> str:
    f = t.fit
    text = (f"{len(f.estimates)} free values, log-likelihood {f.log_likelihood:.6g}, "
            f"BIC {f.bic:.6g}, RMSE {f.simulation_rmse:.4g} K")
    if math.isfinite(f.holdout_rmse):
        text += f", held-out RMSE {f.holdout_rmse:.4g} K"
    p = f.whiteness_p
    if math.isfinite(p):
        text += f", residuals {'white' if p >= 0.05 else 'not white'} (Ljung-Box p {_fmt_p(p)})"
    return text


def _file_name(ladder: Ladder) -> str:
    return f"identified-{ladder.n_nodes}-node{'s' if ladder.n_nodes > 1 else ''}.toml"


def _selected_scenario(selected: _Tried, setup, log, columns, path, notes) -> Scenario:
    """The selected structure as a scenario whose text tells how it was found, with the log's
    inputs written in as tables (so that it runs as the log did)."""
    fixed = set(selected.ladder.free_keys(setup))
    comments = ["Structure found by rcsim identify; " + path.splitlines()[0] + "."]
    comments += [ln.strip() for ln in path.splitlines()[1:]]
    comments.append("Log columns: " + "; ".join(f"{c!r} -> {n}" for c, n in columns.items()) + ".")
    comments.append("Free values of the fit: " + ", ".join(sorted(fixed)) + ".")
    comments += notes
    text = selected.ladder.text(setup, selected.values, f"{selected.ladder.label} "
                                "(rcsim identify)", comments=comments, tables=True)
    return loads(text, name=_file_name(selected.ladder))


def _setup(source, measured, drivers, ambient, read, capacity):
    """Names, inputs and starting scales of the structures, and the log read once."""
    tcol, header = log_header(source, read.get("time"))
    label = "<data>" if isinstance(source, pd.DataFrame) else os.path.basename(os.fspath(source))
    measured = [measured] if isinstance(measured, str) else list(measured or [])
    drivers = [drivers] if isinstance(drivers, str) else list(drivers or [])
    if not measured:
        raise InputError("nothing is measured", "measured", "name the log column of the body's "
                         "temperature, e.g. measured=['temp'] (--measured temp)")
    for what, cols in (("measured", measured), ("drivers", drivers)):
        for c in cols:
            if c not in header:
                raise DataError(f"has no column {c!r} ({what})", label,
                                suggest(c, header) or "columns are: " + ", ".join(header))
    if len(set(measured + drivers)) != len(measured) + len(drivers):
        raise InputError("a column is named twice among measured and drivers", "drivers")
    taken: set = set()
    pairs = [(c, clean_name(c, f"measured_{i + 1}", taken)) for i, c in enumerate(measured)]
    temps, powers = [], []
    for c in drivers:
        (temps if _is_temperature(c, label) else powers).append(c)
    boundaries = []
    amb = _ambient(ambient, header, measured, drivers, temps, label)
    if amb is not None:
        kind, value = amb
        name = clean_name(value, "ambient", taken) if kind == "column" else \
            clean_name("ambient", "ambient", taken)
        boundaries.append(BoundaryInput(name, kind, value if kind == "column" else None,
                                        value if kind == "constant" else None))
    boundaries += [BoundaryInput(clean_name(c, f"boundary_{i + 1}", taken), "column", c)
                   for i, c in enumerate(temps)]
    if not boundaries:
        raise InputError("the body exchanges heat with nothing", "ambient",
                         "give ambient= a temperature, a log column or 'free' (--ambient)")
    sources = [(clean_name(c, f"heat_{i + 1}", taken), c) for i, c in enumerate(powers)]
    columns = {c: n for c, n in pairs}
    columns.update({b.column: b.name for b in boundaries if b.kind == "column"})
    columns.update({c: n for n, c in sources})
    ignore = [c for c in header if c not in columns]
    log = read_log(source, [n for _, n in pairs],
                   [b.name for b in boundaries if b.kind == "column"], columns=columns,
                   ignore=ignore, sources=[n for n, _ in sources], **read)
    return _finish_setup(log, pairs, boundaries, sources, capacity, columns)


def _finish_setup(log, pairs, boundaries, sources, capacity, columns):
    notes = []
    first, tables, start = {}, {}, {}
    for col, node in pairs:
        vals = log.values[col].to_numpy(dtype=float)
        ok = np.flatnonzero(np.isfinite(vals))
        first[node] = float(vals[ok[0]])
    y0 = log.values[pairs[0][0]].to_numpy(dtype=float)
    y0 = y0[np.isfinite(y0)]
    for b in boundaries:
        if b.kind == "column":
            vals = log.values[b.column].to_numpy(dtype=float)
            ok = np.isfinite(vals)
            tables[b.name] = (log.time[ok].tolist(), vals[ok].tolist())
            start[b.name] = float(vals[ok][0])
        elif b.kind == "constant":
            start[b.name] = float(b.value)
        else:  # free: start at the last measured value (where a cooling body heads)
            start[b.name] = float(y0[-1])
    pmax = 0.0
    for name, col in sources:
        vals = log.values[col].to_numpy(dtype=float)
        ok = np.isfinite(vals)
        tables[name] = (log.time[ok].tolist(), vals[ok].tolist())
        pmax = max(pmax, float(np.max(np.abs(vals[ok]))))
    fixed = None
    if pmax <= 0.0:
        fixed = to_si(capacity, "capacity", "capacity")
        if not fixed > 0:
            raise InputError(f"capacity must be positive, got {capacity!r}", "capacity")
        notes.append(f"no heat input in the log: only time constants and ratios are determined; "
                     f"the capacity of {pairs[0][1]} is fixed at {fixed:.6g} J/K and the others "
                     "are relative to it")
    scale_r = max(float(np.ptp(y0)), 0.1) / pmax if pmax > 0 else 1.0
    logged = np.concatenate([log.values[c].to_numpy(dtype=float) for c in columns
                             if c not in dict(sources).values()] +
                            [np.array([b.value]) for b in boundaries if b.kind == "constant"])
    logged = logged[np.isfinite(logged)]
    margin = max(float(np.ptp(logged)), 10.0)
    temperature_range = (float(logged.min()) - margin, float(logged.max()) + margin)
    dt = float(np.median(np.diff(log.time)))
    simulation = {"duration": f"{float(log.time[-1]):.12g} s", "step": f"{dt:.12g} s",
                  "initial": "given"}
    if log.start_time is not None:
        simulation["start"] = log.start_time.isoformat()
    setup = LadderSetup([(c, n) for c, n in pairs], boundaries, sources, fixed, first, start,
                        float(log.time[-1]), scale_r, tables, simulation, temperature_range)
    return setup, log, columns, notes


def _is_temperature(column: str, label: str) -> bool:
    """A driver is a temperature when its header gives a temperature unit, else a power."""
    unit = strip_unit(column)[1]
    if unit is None:
        return False
    try:
        to_si(f"1 {unit}", "power", column)
        return False
    except InputError:
        pass
    try:
        to_si(f"1 {unit}", "temperature", column)
    except InputError:
        raise DataError(f"column {column!r}: {unit!r} is neither a unit of power (a heat input) "
                        "nor of temperature", label, "write e.g. 'heater [W]' or "
                        "'ground [degC]'") from None
    if unit.replace("°", "deg").lower() not in ("degc", "c", "celsius"):
        raise DataError(f"column {column!r}: temperatures in a log are read in degC, not "
                        f"{unit!r}", label, "convert the column to degC")
    return True


def _ambient(ambient, header, measured, drivers, temps, label):
    """(kind, value) of the ambient: ('column', name), ('constant', degC), ('free', None), or
    None (no ambient of its own: a temperature driver stands in)."""
    if ambient is None:
        return None if temps else ("free", None)
    if isinstance(ambient, str) and ambient.strip().lower() == "free":
        return "free", None
    if isinstance(ambient, str) and ambient in header:
        if ambient in measured or ambient in drivers:
            raise InputError(f"column {ambient!r} is already measured or a driver", "ambient")
        return "column", ambient
    try:
        return "constant", to_si(ambient, "temperature", "ambient")
    except InputError:
        raise InputError(f"ambient {ambient!r} is neither a temperature, a log column nor "
                         "'free'", "ambient", suggest(str(ambient), header) or
                         "e.g. ambient=20 (degC), ambient='outdoor' or ambient='free'") from None
