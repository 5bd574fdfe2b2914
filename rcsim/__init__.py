"""rcsim: transient heat flow through thermal RC networks built from physical descriptions.

The public face is small (README.md, "Python")::

    import rcsim
    net = rcsim.Network()
    net.add_node("payload", capacity=8400.0, initial=5.0)
    net.add_boundary("outdoor", temperature=rcsim.Sine(mean=25, amplitude=7, period=86400))
    net.add_link("payload", "outdoor", resistance=2.5, name="wall")
    res = net.simulate(duration=72 * 3600, step=300)

``import rcsim`` is quick: each public name is imported from its module the first time it is
used (PEP 562), so a program that only loads a scenario never pays for fitting or sweeps, and
the command line's ``--help`` imports none of numpy's heavy neighbours. ``dir(rcsim)`` and
``from rcsim import X`` work as usual.

A simulation supports, and never replaces, qualification testing, local codes and licensed
professional judgement.
"""

from __future__ import annotations

import importlib as _importlib
import sys as _sys
import types as _types

from . import errors
from .errors import InputError, RcsimError, SolverError

__all__ = [
    "__version__",
    "Network",
    "Result",
    "SteadyResult",
    "Scenario",
    "load",
    "loads",
    "fit",
    "FitResult",
    "identify",
    "Constant",
    "Sine",
    "Steps",
    "Table",
    "Repeat",
    "sweep",
    "size",
    "SizingResult",
    "solar_position",
    "errors",
    "RcsimError",
    "InputError",
    "SolverError",
]

#: public name -> the module (under rcsim) it comes from, imported on first use
_HOME = {
    "Network": "network",
    "Result": "results",
    "SteadyResult": "steady",
    "Scenario": "scenario",
    "load": "scenario",
    "loads": "scenario",
    "fit": "fitting",
    "FitResult": "fitting",
    "identify": "fitting",
    "Constant": "profiles",
    "Sine": "profiles",
    "Steps": "profiles",
    "Table": "profiles",
    "Repeat": "profiles",
    "size": "sizing",
    "SizingResult": "sizing",
    "solar_position": "solar",
    "sweep": "sweep",  # the function (helpers: ``from rcsim.sweep import Normal, ...``)
}


def __getattr__(name: str):
    """Import a public name from its module on first use and keep it (PEP 562)."""
    if name == "__version__":
        from .base import package_version

        value = package_version()
    elif name in _HOME:
        module = _importlib.import_module(f".{_HOME[name]}", __name__)
        if name == "sweep":  # the function; or the sweep package, when that is callable itself
            value = _sweep_function(getattr(module, "sweep", module))
        else:
            value = getattr(module, name)
    else:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__))


def _sweep_function(value):
    """``rcsim.sweep`` is the sweep function, or the sweep package when that is callable itself."""
    if isinstance(value, _types.ModuleType) and not callable(value):
        function = getattr(value, "sweep", None)
        if callable(function) and not isinstance(function, _types.ModuleType):
            return function
    return value


class _Package(_types.ModuleType):
    """The class of the ``rcsim`` module object: importing the submodule ``rcsim.sweep`` binds
    it to the attribute ``rcsim.sweep`` (the import system does so for every submodule), where
    the sweep function belongs; this keeps the function there, as it always was."""

    def __setattr__(self, name, value):
        if name == "sweep":
            value = _sweep_function(value)
        super().__setattr__(name, value)


_sys.modules[__name__].__class__ = _Package
