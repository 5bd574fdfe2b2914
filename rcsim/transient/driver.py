"""``simulate``: checks, initial state, solver choice, chunked recording, the Result."""

from __future__ import annotations

import datetime as _dt
import math
import time as _time
import warnings

import numpy as np

from ..errors import (InputError, Interrupted, NetworkError, ProfileError, RcsimWarning,
                      SolverError)
from ..limits import ExcursionTracker
from ..materials import suggest
from ..modes import DENSE_LIMIT
from ..profiles import common_period
from ..results import Chunk, H5Sink, MemorySink, Recorder, Result
from ..statespace import state_space
from ..steady import steady_temperatures
from ..units import to_si
from .exact import ExactPropagator
from .initial import given_temperatures, resolve_initial_option

__all__ = ["simulate", "EXACT_LIMIT", "MAX_SAMPLES", "SOLVERS"]

#: Solver names: 'auto' picks 'exact' for linear networks and 'piecewise' (falling back to
#: 'stiff' where it does not suit) for nonlinear ones.
SOLVERS = ("auto", "exact", "piecewise", "stiff")

#: 'auto' uses the exact path up to this many states, the stiff path above.
EXACT_LIMIT = 2000
#: Samples x (modes + inputs) per chunk of the exact path: bounds memory, keeps arrays in cache.
CHUNK_ELEMENTS = 200_000
#: Largest number of output samples of one run.
MAX_SAMPLES = 50_000_000


def _output_times(duration: float, step: float) -> np.ndarray:
    n_full = int(math.floor(duration / step + 1e-9))
    t = np.arange(n_full + 1, dtype=float) * step
    if duration - t[-1] > 1e-9 * step:
        t = np.append(t, duration)
    else:
        t[-1] = duration
    return t


def _given_times(times, duration: float) -> np.ndarray:
    """Output times 0, the given times and the end, checked."""
    try:
        t = np.asarray(times, dtype=float).ravel()
    except (TypeError, ValueError):
        raise InputError("times must be a list of numbers [s]", "times") from None
    if t.size == 0 or not np.all(np.isfinite(t)):
        raise InputError("times must be finite numbers [s]", "times")
    if np.any(np.diff(t) <= 0):
        i = int(np.argmax(np.diff(t) <= 0)) + 1
        raise InputError(f"times must increase (times[{i}] = {t[i]:g} s)", "times")
    if t[0] < 0 or t[-1] > duration * (1 + 1e-12):
        raise InputError(f"times must lie within 0 and the duration ({duration:g} s)", "times")
    return np.unique(np.concatenate([[0.0], t, [duration]]))


def simulate(network, duration, step, *, initial=None, solver="auto", record=None, output=None,
             rtol=1e-6, atol=1e-6, progress=None, start_time=None, scenario_text=None,
             times=None) -> Result:
    """Integrate ``network`` over [0, duration]; see :meth:`rcsim.Network.simulate`."""
    wall0 = _time.perf_counter()
    asm = network.assemble()
    duration = to_si(duration, "time", "duration")
    step = to_si(step, "time", "step")
    if duration <= 0:
        raise InputError(f"duration must be positive, got {duration:g} s", "duration")
    if step <= 0:
        raise InputError(f"step must be positive, got {step:g} s", "step")
    if step > duration:
        raise InputError(f"step ({step:g} s) is longer than the duration ({duration:g} s)", "step")
    if duration / step > MAX_SAMPLES:
        raise InputError(f"{duration / step:.3g} output samples are too many (limit "
                         f"{MAX_SAMPLES:.0e})", "step", "use a longer step")
    if solver not in SOLVERS:
        raise InputError(f"solver must be one of {', '.join(map(repr, SOLVERS))}, got {solver!r}",
                         "solver")
    for tol, nm in ((rtol, "rtol"), (atol, "atol")):
        if not (0 < tol < 1):
            raise InputError(f"{nm} must be between 0 and 1, got {tol!r}", nm)
    if times is None:
        t_out = _output_times(duration, step)
    else:
        t_out = _given_times(times, duration)
    for p in list(asm.boundary_profiles) + list(asm.source_profiles):
        p.check_span(0.0, duration)

    ss = state_space(asm)
    thermostats = list(network.thermostats.values())
    nonlinear = not asm.is_linear or bool(thermostats)
    if solver == "exact" and nonlinear:
        raise InputError("the exact solver needs a linear network (this one has radiation, "
                         "film correlations, phase change or thermostats)", "solver",
                         "use solver = 'stiff' or 'auto'")
    if solver == "exact" and ss.n > DENSE_LIMIT:
        raise InputError(f"the exact solver handles up to {DENSE_LIMIT} states, this network has "
                         f"{ss.n}", "solver", "use solver = 'stiff' or 'auto'")
    use_exact = solver == "exact" or (solver == "auto" and not nonlinear and ss.n <= EXACT_LIMIT)

    # what to record
    names = asm.node_names
    if record is None:
        rec_idx = list(range(asm.n_nodes))
        links = list(range(len(asm.link_names)))
    else:
        if isinstance(record, str):
            record = [record]
        rec_idx = []
        for r in record:
            if r not in names:
                raise InputError(f"unknown node {r!r}", "record", suggest(r, names))
            rec_idx.append(names.index(r))
        avail = set(rec_idx)
        n = asm.n_nodes
        links = [li for li in range(len(asm.link_names))
                 if all(p >= n or int(p) in avail for p in
                        (asm.seg_a[asm.link_first_seg[li]], asm.seg_b[asm.link_first_seg[li]]))]
    lim_nodes, lim_kinds, lim_vals = [], [], []
    for lim in network.limits.values():
        if lim.node not in names:
            raise NetworkError(f"unknown node {lim.node!r}", lim.where, suggest(lim.node, names))
        for kind, val in (("min", lim.min), ("max", lim.max)):
            if val is not None:
                lim_nodes.append(names.index(lim.node))
                lim_kinds.append(kind)
                lim_vals.append(val)
    out_nodes = sorted(set(rec_idx) | set(lim_nodes) |
                       {int(p) for li in links for p in
                        (asm.seg_a[asm.link_first_seg[li]], asm.seg_b[asm.link_first_seg[li]])
                        if p < asm.n_nodes} |
                       ({int(p) for p in np.concatenate([asm.seg_a[asm.nl.seg],
                                                         asm.seg_b[asm.nl.seg]])
                         if p < asm.n_nodes} if asm.nl is not None and links else set()))
    tracker = ExcursionTracker([names[i] for i in lim_nodes], lim_kinds, lim_vals) \
        if lim_nodes else None
    boundary_links = asm.boundary_segments()[0]

    mode, overrides = resolve_initial_option(initial)
    u0 = asm.boundary_values(0.0)
    s0 = asm.source_values(0.0)
    if mode == "given":
        T0 = given_temperatures(network, asm, overrides, u0)
    elif mode == "steady":
        if asm.nl is None and not thermostats:
            T0 = steady_temperatures(asm, u0, s0)
        else:
            from ..nonlinear import steady_newton  # noqa: PLC0415

            T0 = steady_newton(asm, u0, s0, thermostats)
    else:
        T0 = None

    extra_names = {}
    if asm.phase_change:
        extra_names["liquid_fraction"] = [names[i] for i in sorted(asm.phase_change)]
    if thermostats:
        extra_names["thermostat_power"] = [t.name for t in thermostats]

    sink = H5Sink(output) if output is not None else MemorySink()
    recorder = Recorder(asm, out_nodes, rec_idx, links, boundary_links, tracker, lim_nodes, sink,
                        extra_names, extra_sources=[t.name for t in thermostats])
    try:
        if use_exact:
            stats = _run_exact(asm, t_out, T0, mode, overrides, recorder, out_nodes,
                               boundary_links, progress, network)
            solver_name = "exact (modal)"
        else:
            stats = None
            fallback = None
            if solver in ("auto", "piecewise"):
                from .piecewise import NotSuitable, run_piecewise_network  # noqa: PLC0415

                try:
                    stats = run_piecewise_network(network, asm, t_out, T0, mode, recorder,
                                                  out_nodes, boundary_links, rtol, atol,
                                                  progress, thermostats)
                    solver_name = "piecewise exact (events, waveform relaxation)"
                except NotSuitable as exc:
                    if solver == "piecewise":
                        raise SolverError(f"the piecewise solver cannot take this run: {exc}",
                                          hint="use solver = 'stiff' or 'auto'") from None
                    fallback = str(exc)
            if stats is None:
                from .stiff import run_stiff_network  # noqa: PLC0415

                stats = run_stiff_network(network, asm, t_out, T0, mode, recorder, out_nodes,
                                          boundary_links, rtol, atol, progress, thermostats)
                solver_name = "stiff (BDF, sparse Jacobian)"
                if fallback is not None:
                    stats["piecewise_declined"] = fallback
        balance, terms = recorder.energy_balance()
        tau = _time_constants_or_none(asm, float(t_out[-1]), network)
        wall = _time.perf_counter() - wall0
        stats["wall_time [s]"] = wall
        stats["states"] = int(ss.n)
        meta = {
            "solver": solver_name,
            "energy_balance": float(balance),
            "energy_terms": terms,
            "stats": stats,
            "scenario": scenario_text or network.source_text or "",
            "start_time": "" if start_time is None else str(start_time),
            "duration": float(duration),
            "step": float(step),
            "title": network.title or "",
            "initial": mode,
            "time_constants": [] if tau is None else [float(x) for x in tau],
            "period": _period_or_none(asm, mode),
            "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        }
        limits = recorder.limits_table()
        nodes = recorder.node_table()
        if output is not None:
            from .. import __version__
            from ..results import _h5_attrs

            sink.write_table("limits", limits)
            sink.write_table("nodes", nodes)
            for key, table in recorder.tables.items():
                sink.write_table(key, table)
            sink.finish(_h5_attrs({**meta, "rcsim_version": __version__}))
            res = Result({}, dict(sink.names), meta, limits, nodes, path=str(output),
                         thermostats=recorder.tables.get("thermostats"))
        else:
            res = Result(sink.arrays(), dict(sink.names), meta, limits, nodes,
                         thermostats=recorder.tables.get("thermostats"))
        return res
    except KeyboardInterrupt as exc:
        sink.abort()
        if isinstance(exc, Interrupted):
            raise
        reached = recorder.last_time or 0.0
        where = f" to {output}" if output is not None else ""
        raise Interrupted(f"interrupted at t = {reached:g} s of {duration:g} s "
                          f"({100 * reached / duration:.0f} %); nothing was written{where}",
                          reached=reached, total=duration) from None
    except BaseException:
        sink.abort()
        raise


def _period_or_none(asm, mode):
    """The inputs' common period when the run started in its periodic regime."""
    if mode != "periodic":
        return None
    p = common_period(list(asm.boundary_profiles) + list(asm.source_profiles))
    return float(p) if p > 0 else None


def _time_constants_or_none(asm, t_end: float, network):
    """Time constants of the network; a nonlinear one linearised about the steady state under
    the inputs at the end of the run (what governs its approach to the end). None when they
    cannot be computed (too large, or no steady state)."""
    from ..modes import modal_decomposition

    if state_space(asm).n > DENSE_LIMIT:
        return None
    if asm.is_linear:
        return modal_decomposition(asm).time_constants
    from ..errors import RcsimError
    from ..nonlinear import linearised, steady_newton

    # a pure function of the assembled network, the end time and the thermostats: kept on the
    # assembly, so repeated runs of one network do not solve the same steady state again
    thermostats = list(network.thermostats.values())
    key = (float(t_end), tuple((t.name, t.node, t.sensor, t.mode, t.setpoint, t.band, t.power,
                                t.control) for t in thermostats))
    cache = asm.__dict__.setdefault("_tau_cache", {})
    if key in cache:
        return cache[key]
    try:
        u = asm.boundary_values(t_end)
        with warnings.catch_warnings():  # on/off thermostats are left off here; no news
            warnings.simplefilter("ignore", RcsimWarning)
            T = steady_newton(asm, u, asm.source_values(t_end), thermostats)
        tau = modal_decomposition(linearised(asm, T, u)).time_constants
    except (RcsimError, np.linalg.LinAlgError, ValueError):
        tau = None
    if len(cache) > 16:
        cache.clear()
    cache[key] = tau
    return tau


def _run_exact(asm, t_out, T0, mode, overrides, recorder, out_nodes, boundary_links, progress,
               network) -> dict:
    prop = ExactPropagator(asm)
    ss = prop.ss
    M = asm.n_boundaries
    if mode == "periodic":
        profiles = prop.profiles
        period = common_period(profiles, "simulation.initial")
        if period == 0.0:
            period = float(t_out[-1])
        z_given = None
        if any(len(g) for g in asm.floating_groups()):
            Tg = given_temperatures(network, asm, overrides, asm.boundary_values(0.0))
            z_given = prop.z_from_temperatures(Tg[ss.massive])
        z0, net_float = prop.periodic_state(period, z_given)
        if net_float.size and np.max(np.abs(net_float)) > 1e-9 * max(1.0, np.abs(z0).max()):
            raise ProfileError("nodes with no path to a boundary gain or lose heat every period, "
                               "so there is no periodic regime", "simulation.initial",
                               "start from given temperatures")
    else:
        z0 = prop.z_from_temperatures(T0[ss.massive])
    A_out, D_out = prop.output_maps(np.asarray(out_nodes))
    # energy through boundary links: sum over their boundary segments of g * (int u_b - int T)
    _, seg_col, e_nodes, e_b, e_g = asm.boundary_segments()
    A_e, D_e = prop.output_maps(e_nodes)
    nb = len(boundary_links)
    to_links = np.zeros((seg_col.size, nb))
    to_links[np.arange(seg_col.size), seg_col] = 1.0
    q_store = prop.V.T @ ss.C                    # stored energy = q . z  (massive nodes)
    n_modes = prop.lam.size
    n_in = prop.n_inputs
    S = n_in - M

    w0 = prop.inputs_at(t_out[:1])
    T_first = z0[None, :] @ A_out.T + w0 @ D_out.T
    recorder.add(Chunk(t_out[:1], T_first, w0[:, :M], w0[:, M:], np.zeros((1, nb)),
                       np.zeros((1, S)), np.zeros(1)))
    chunk = max(256, CHUNK_ELEMENTS // max(1, n_modes + n_in))
    chunk -= chunk % 32
    z = z0.copy()
    e_links = np.zeros(nb)
    e_src = np.zeros(S)
    N = t_out.size - 1
    k0 = 0
    while k0 < N:
        k1 = min(N, k0 + chunk)
        tt = t_out[k0:k1 + 1]
        Z, Zint, U = prop.propagate(tt, z)
        w = prop.inputs_at(tt[1:])
        T = Z @ A_out.T + w @ D_out.T
        if nb:
            int_T = Zint @ A_e.T + U @ D_e.T
            inc = (e_g[None, :] * (U[:, e_b] - int_T)) @ to_links
            cum_links = e_links[None, :] + np.cumsum(inc, axis=0)
            e_links = cum_links[-1].copy()
        else:
            cum_links = np.zeros((k1 - k0, 0))
        cum_src = e_src[None, :] + np.cumsum(U[:, M:], axis=0)
        if S:
            e_src = cum_src[-1].copy()
        stored = Z @ q_store - float(z0 @ q_store)
        recorder.add(Chunk(tt[1:], T, w[:, :M], w[:, M:], cum_links, cum_src, stored))
        z = Z[-1].copy()
        k0 = k1
        if progress is not None:
            progress(k1 / N)
    return {"modes": int(n_modes), "samples": int(t_out.size)}
