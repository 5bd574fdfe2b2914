"""rcsim: transient heat flow through thermal RC networks built from physical descriptions.

The public face is small; see ``shared/DESIGN.md`` for the contract::

    import rcsim
    net = rcsim.Network()
    net.add_node("payload", capacity=8400.0, initial=5.0)
    net.add_boundary("outdoor", temperature=rcsim.Sine(mean=25, amplitude=7, period=86400))
    net.add_link("payload", "outdoor", resistance=2.5, name="wall")
    res = net.simulate(duration=72 * 3600, step=300)

A simulation supports, and never replaces, qualification testing, local codes and licensed
professional judgement.
"""

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("rcsim")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0.0.0"

from . import errors  # noqa: E402
from .errors import InputError, RcsimError, SolverError  # noqa: E402
from .fitting import FitResult, fit, identify  # noqa: E402
from .network import Network  # noqa: E402
from .profiles import Constant, Repeat, Sine, Steps, Table  # noqa: E402
from .results import Result  # noqa: E402
from .scenario import Scenario, load, loads  # noqa: E402
from .steady import SteadyResult  # noqa: E402
from .sweep import sweep  # noqa: E402  (helpers: ``from rcsim.sweep import Normal, ...``)

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
    "errors",
    "RcsimError",
    "InputError",
    "SolverError",
]
