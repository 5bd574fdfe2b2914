"""Temperatures of chosen nodes at given times: the transient engine as a function, for fits.

:func:`trajectory` makes the same checks, the same start and the same path choice as a run
(:func:`rcsim.transient.driver.simulate`), without histories of flows and energies, limits or a
Result. On the exact path it propagates the modes straight to the requested times; an assembly
copy made with :meth:`rcsim.assembly.Assembled.with_inputs` shares its modal decomposition with
the original, so a fit that varies inputs or starting temperatures decomposes the network once.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .driver import choose_paths, run_first
from .problem import build_problem
from .registry import AUTO

__all__ = ["trajectory"]


def trajectory(network, times, nodes, *, assembled=None, initial=None, solver: str = AUTO,
               rtol: float = 1e-6, atol: float = 1e-6) -> np.ndarray:
    """Temperatures [degC] of ``nodes`` at ``times`` [s], shape (len(times), len(nodes)).

    Parameters
    ----------
    network : rcsim.Network
        Its thermostats and, unless ``assembled`` is given, its assembly.
    times : array of float
        Increasing times [s], from 0 on (t = 0 is the start; it need not be among them).
    nodes : sequence of str or int
        Node names or indices into the assembly's nodes.
    assembled : rcsim.assembly.Assembled, optional
        Use this assembly instead of the network's own: typically
        ``network.assemble().with_inputs(boundary_profiles, source_profiles)``.
    initial : None, 'given', 'steady', 'periodic' or dict
        As for :meth:`rcsim.Network.simulate`; a dict {node: temperature [degC]} overrides the
        given starting temperatures.
    solver : 'auto', 'exact', 'piecewise' or 'stiff'
        The same choice as a run makes: 'auto' takes the exact path for linear networks up to
        :data:`rcsim.transient.EXACT_LIMIT` states.
    rtol, atol : float
        Tolerances of the piecewise and stiff paths.
    """
    t = np.asarray(times, dtype=float).ravel()
    if t.size == 0 or not np.all(np.isfinite(t)) or t[0] < 0 or np.any(np.diff(t) <= 0):
        raise InputError("times must be increasing finite numbers from 0 on [s]", "times")
    if t[-1] <= 0:
        raise InputError("times must reach past 0", "times")
    asm = network.assemble() if assembled is None else assembled
    idx = [_node_index(asm, node) for node in nodes]
    names = [asm.node_names[i] for i in idx]
    problem = build_problem(network, float(t[-1]), float(t[-1]), initial=initial,
                            solver=solver, record=sorted(set(names), key=names.index),
                            rtol=rtol, atol=atol, times=t, assembled=asm, limits=False)
    candidates, declined = choose_paths(problem, solver)
    _, T = run_first(problem, candidates, declined,
                     lambda path: path.temperatures_at(problem, idx), solver)
    return T[np.searchsorted(problem.times, t)]


def _node_index(asm, node) -> int:
    if isinstance(node, (int, np.integer)):
        if not 0 <= int(node) < asm.n_nodes:
            raise InputError(f"node index {node} out of range (0..{asm.n_nodes - 1})", "nodes")
        return int(node)
    return asm.node_index(str(node))
