"""A run, checked and prepared once for whichever path takes it (:class:`Problem`).

:func:`build_problem` checks the run's settings, assembles the network, builds its reduced state
space, the output times, what to record and the starting temperatures (given or steady; a
periodic start is found by :mod:`.periodic` once a path is chosen). The paths read everything
from the problem and share the pieces it builds on first use: the modal propagator of a linear
network, the energy-form model of any network.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from ..errors import InputError, RcsimWarning
from ..nonlinear import build_terms, steady_newton
from ..recording import RecordingPlan, plan_recording
from ..run_warnings import run_watchers
from ..statespace import state_space
from ..surfaces import sol_air_series
from ..thermostat import (IDEAL_BAND_FLOOR, narrowest_switching_band, run_as_ideal,
                          shortest_cycle)
from ..units import to_si
from .initial import given_temperatures, resolve_initial_option
from .registry import check_solver

__all__ = ["Problem", "Start", "build_problem", "check_settings", "output_times",
           "given_times", "MAX_SAMPLES"]

#: Largest number of output samples of one run.
MAX_SAMPLES = 50_000_000


@dataclass
class Start:
    """The state a run starts from.

    Attributes
    ----------
    temperatures : ndarray
        Temperatures of the states (massive nodes, in the order of ``ss.massive``) [degC].
    energies : ndarray or None
        Stored energies of the states [J] when the temperatures do not say all (a pack at its
        melting point: how much of it has melted); None otherwise.
    modal : ndarray or None
        The modal state z = V^T C T when it was computed in modal form (a linear periodic start).
    """

    temperatures: np.ndarray
    energies: np.ndarray | None = None
    modal: np.ndarray | None = None


@dataclass
class Problem:
    """Everything a transient path needs for one run.

    Attributes
    ----------
    network : rcsim.Network
    asm : rcsim.assembly.Assembled
        The network's assembly (or a copy with other inputs, :meth:`Assembled.with_inputs`).
    ss : rcsim.statespace.StateSpace
    times : ndarray
        Output times [s], increasing, from 0 to the end of the run.
    thermostats : tuple of rcsim.thermostat.Thermostat
        Their settings (each path binds fresh run states).
    initial : str
        'given', 'steady' or 'periodic'.
    overrides : dict
        Starting temperatures given for the run, by node name.
    plan : rcsim.recording.RecordingPlan
        What to record.
    rtol, atol : float
        Tolerances of the paths that have any (see :meth:`rcsim.Network.simulate`).
    start : Start or None
        The starting state; None for a periodic start until one is found.
    step : float
        The output step asked for [s] (the times may be given instead).
    """

    network: object
    asm: object
    ss: object
    times: np.ndarray
    thermostats: tuple
    initial: str
    overrides: dict
    plan: RecordingPlan
    rtol: float = 1e-6
    atol: float = 1e-6
    start: Start | None = None
    step: float = math.nan

    @property
    def duration(self) -> float:
        """End of the run [s]."""
        return float(self.times[-1])

    @property
    def is_linear(self) -> bool:
        """No radiation or film correlation, no phase change, no thermostat."""
        return self.asm.is_linear and not self.thermostats

    @property
    def profiles(self) -> list:
        """Input profiles in the order w = [boundaries; sources]."""
        return self.asm.profiles

    @cached_property
    def propagator(self):
        """The modal propagator of a linear network (:class:`.exact.ExactPropagator`)."""
        from .exact import ExactPropagator

        return ExactPropagator(self.asm)

    @cached_property
    def energy_model(self):
        """The network in energy form (:class:`.energy_model.EnergyModel`) with fresh thermostat
        run states; shared by the paths and the periodic start of one run."""
        from .energy_model import EnergyModel

        terms, phase, controllers = build_terms(None, self.asm, self.thermostats)
        return EnergyModel(self.asm, terms, phase, controllers)


def output_times(duration: float, step: float) -> np.ndarray:
    """0, step, 2 step, ... and the end (a last shorter interval when ``step`` does not divide
    ``duration``)."""
    n_full = int(math.floor(duration / step + 1e-9))
    t = np.arange(n_full + 1, dtype=float) * step
    if duration - t[-1] > 1e-9 * step:
        t = np.append(t, duration)
    else:
        t[-1] = duration
    return t


def given_times(times, duration: float) -> np.ndarray:
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
    if t[-1] > duration:            # within rounding of the end: both kept, in order
        return np.unique(np.concatenate([[0.0], t, [duration]]))
    head = [[0.0]] if t[0] > 0 else []
    tail = [[duration]] if t[-1] < duration else []
    return np.concatenate(head + [t] + tail) if head or tail else t.copy()


def check_settings(duration, step, solver, rtol, atol) -> tuple[float, float]:
    """Check a run's settings; returns (duration, step) in seconds."""
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
    check_solver(solver)
    for tol, name in ((rtol, "rtol"), (atol, "atol")):
        if not (0 < tol < 1):
            raise InputError(f"{name} must be between 0 and 1, got {tol!r}", name)
    return duration, step


def _ideal_where_needed(thermostats: tuple, asm, t_out: np.ndarray) -> tuple:
    """On/off thermostats switching faster than the output can show, run as ideal controllers
    (:func:`rcsim.thermostat.run_as_ideal`), with a warning each."""
    if not thermostats:
        return thermostats
    step = float(np.median(np.diff(t_out)))
    names = asm.node_names

    def capacity_of(node):
        return float(asm.capacity[names.index(node)])

    duration = float(t_out[-1])
    out, ideal = run_as_ideal(thermostats, capacity_of, step, duration)
    for th in (t for t in thermostats if t.name in ideal):
        if th.control == "proportional":
            warnings.warn(RcsimWarning(
                f"thermostat {th.name!r}: its proportional band of {th.band:.3g} K is widened to "
                f"{IDEAL_BAND_FLOOR:g} K (narrower, its power would be a gain times a "
                "temperature difference lost in rounding)"), stacklevel=4)
            continue
        c = capacity_of(th.sensor)
        narrowest = narrowest_switching_band(th, c, step, duration)
        warnings.warn(RcsimWarning(
            f"thermostat {th.name!r}: its band of {th.band:.3g} K lets it switch faster than "
            f"the output step of {step:.3g} s can show (a cycle could last "
            f"{shortest_cycle(th, c):.2g} s, {2 * duration / shortest_cycle(th, c):.2g} "
            f"switchings in the run); it runs as an ideal controller (the average of its "
            f"switching: a proportional law over its band), its switchings not counted; a band "
            f"of at least {narrowest:.2g} K keeps the on/off switching"), stacklevel=4)
    return out


def build_problem(network, duration, step, *, initial=None, solver="auto", record=None,
                  rtol=1e-6, atol=1e-6, times=None, assembled=None, limits=True) -> Problem:
    """Check a run and prepare it (see :meth:`rcsim.Network.simulate` for the arguments).

    ``assembled`` replaces the network's own assembly (a copy with other inputs); ``limits``
    False leaves the network's temperature limits untracked.
    """
    asm = network.assemble() if assembled is None else assembled
    duration, step = check_settings(duration, step, solver, rtol, atol)
    t_out = output_times(duration, step) if times is None else given_times(times, duration)
    for p in asm.profiles:
        p.check_span(0.0, duration)
    if asm.varying is not None:     # conductances that vary: covered and positive over the run
        asm.varying.check(0.0, duration)
    ss = state_space(asm)
    thermostats = _ideal_where_needed(tuple(network.thermostats.values()), asm, t_out)
    plan = plan_recording(asm, record, network.limits.values() if limits else (),
                          [t.name for t in thermostats], sol_air_series(network, asm),
                          run_watchers(network, asm))
    mode, overrides = resolve_initial_option(initial)
    problem = Problem(network, asm, ss, t_out, thermostats, mode, overrides, plan,
                      rtol=float(rtol), atol=float(atol), step=step)
    if mode != "periodic":
        u0 = asm.boundary_values(0.0)
        if mode == "given":
            T0 = given_temperatures(network, asm, overrides, u0)
        else:
            T0 = steady_newton(asm, u0, asm.source_values(0.0), list(thermostats))
        problem.start = Start(T0[ss.massive])
    return problem
