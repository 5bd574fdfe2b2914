"""The periodic start: the state at t = 0 of the periodic regime under periodic inputs.

A linear network has it in closed form (:meth:`.exact.ExactPropagator.periodic_state`). A
nonlinear one is the fixed point of the *period map* (integrate one period from the stored
energies H): found with Anderson mixing from the steady state under the period-mean inputs. The
chosen path may offer its own period map (the piecewise path does); the stiff path's is the
fallback. The driver finds the start once per run, whichever path then runs it.
"""

from __future__ import annotations

import warnings

import numpy as np

from ..errors import NetworkError, RcsimError, SolverError
from ..modes import DENSE_LIMIT
from ..nonlinear import steady_newton
from ..profiles import common_period
from .base import NotSuitable
from .mixing import Anderson
from .problem import Start

__all__ = ["periodic_start", "find_fixed_point", "check_grounded"]


def periodic_start(problem, period_map=None, max_periods: int = 200,
                   tol: float = 1e-6) -> Start:
    """The start of ``problem``'s periodic regime.

    ``period_map(H) -> H`` (stored energies after one period from H) is tried first for a
    nonlinear network; when it raises :class:`NotSuitable`, or is None, the stiff path's is
    used. Raises :class:`rcsim.errors.ProfileError` when the inputs are not periodic, and
    :class:`rcsim.errors.SolverError` when no periodic regime is found, and
    :class:`rcsim.errors.NetworkError` when a group of nodes has no path to a boundary (its
    level over a period is set by nothing, as its steady state is).
    """
    check_grounded(problem.asm)
    if problem.is_linear and problem.ss.n <= DENSE_LIMIT:
        return _linear_start(problem)
    from .stiff import StiffPath

    model = problem.energy_model
    period = common_period(model.profiles + model.varying_profiles, "simulation.initial")
    asm, ss = problem.asm, problem.ss
    if period == 0.0:        # constant inputs: the steady state
        H = model.energy_of(steady_newton(asm, asm.boundary_values(0.0),
                                          asm.source_values(0.0))[ss.massive])
        return Start(model.temperatures(H)[0], H)
    maps = [m for m in (period_map, StiffPath().period_map(problem)) if m is not None]
    for k, one_period in enumerate(maps):
        try:
            H = find_fixed_point(model, one_period, _mean_steady_state(problem, period),
                                 problem.atol, max_periods, tol, period)
        except NotSuitable:
            if k == len(maps) - 1:
                raise
            continue
        return Start(model.temperatures(H)[0], H)
    raise AssertionError("unreachable")  # pragma: no cover


def check_grounded(asm) -> None:
    """Refuse a periodic start when a group of nodes has no path to any boundary."""
    groups = asm.floating_groups()
    if groups:
        names = [asm.node_names[i] for i in groups[0]]
        shown = ", ".join(repr(n) for n in names[:6]) + (" ..." if len(names) > 6 else "")
        have = "node {} has" if len(names) == 1 else "nodes {} have"
        raise NetworkError(f"{have.format(shown)} no path to any boundary, so the periodic "
                           "regime is undefined (as the steady state is)", "simulation.initial",
                           "link them to a boundary, or start from given temperatures")


def _linear_start(problem) -> Start:
    """Closed-form periodic start of a linear network (every node grounded)."""
    prop = problem.propagator
    period = common_period(prop.profiles, "simulation.initial")
    if period == 0.0:
        period = problem.duration
    z0, _ = prop.periodic_state(period, None)
    return Start(prop.V @ z0, None, modal=z0)


def _mean_steady_state(problem, period: float) -> np.ndarray:
    """State temperatures [degC] of the steady state under the inputs averaged over one period
    (Newton: radiation and films included; a network grounded only through them has no linear
    steady state); the given temperatures (20 degC where none) when there is none."""
    asm, ss, model = problem.asm, problem.ss, problem.energy_model
    tt = np.linspace(0.0, period, 96, endpoint=False)
    w = np.column_stack([p.value(tt) for p in model.profiles]).mean(axis=0)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return steady_newton(asm, w[:model.M], w[model.M:])[ss.massive]
    except (RcsimError, np.linalg.LinAlgError, ValueError):
        return np.nan_to_num(asm.initial[ss.massive], nan=20.0)


def find_fixed_point(model, period_map, Tm, atol: float, max_periods: int = 200,
                     tol: float = 1e-6, period: float = np.nan) -> np.ndarray:
    """Stored energies H with ``period_map(H) = H``, from state temperatures ``Tm``: iterate
    with Anderson mixing until one period changes no temperature by more than
    max(tol, 10 atol) [K]."""
    H = model.energy_of(Tm)
    mixer = Anderson(min(model.n, 8))
    change = np.inf
    for _ in range(max_periods):
        Hn = period_map(H)
        Tn = model.temperatures(Hn)[0]
        change = float(np.max(np.abs(Tn - model.temperatures(H)[0])))
        if change < max(tol, 10 * atol):
            return Hn
        H_next = mixer.step(H, Hn)
        if not np.all(np.isfinite(H_next)):
            mixer = Anderson(min(model.n, 8))
            H_next = Hn
        H = H_next
    raise SolverError(f"no periodic regime after {max_periods} periods (last change "
                      f"{change:.3g} K per period)", time=period * max_periods,
                      hint="start from given temperatures and simulate longer")
