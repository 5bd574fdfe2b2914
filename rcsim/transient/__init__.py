"""Transient integration: one contract (:mod:`.base`), one registry of paths (:mod:`.registry`),
one driver (:mod:`.driver`).

The paths: exact (linear networks, modal closed form), piecewise (nonlinear networks, closed form
between events and waveform relaxation), stiff (any network, BDF). Importing this package is
light; the driver and the paths are imported when first used.
"""

from .registry import EXACT_LIMIT, PATHS, SOLVERS

__all__ = ["simulate", "trajectory", "EXACT_LIMIT", "SOLVERS", "PATHS"]


def __getattr__(name):
    # the driver and the trajectory entry point pull in numpy and scipy: on first use only
    if name == "simulate":
        from .driver import simulate

        return simulate
    if name == "trajectory":
        from .trajectories import trajectory

        return trajectory
    raise AttributeError(f"module 'rcsim.transient' has no attribute {name!r}")
