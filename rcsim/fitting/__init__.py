"""Fit capacities, resistances and starting states of a scenario to a logged temperature record.

A *log* is a table: a time column (seconds, or ISO-8601 timestamps) and temperature columns.
Columns named like a node (or mapped to one) are *measured*: the model is fitted to them. Columns
named like a boundary (or mapped to one) *drive* the model: the boundary follows the log (linear
between samples) instead of its profile in the scenario. The model starts at the log's first row;
with ``simulation.start`` and a log with timestamps, the scenario's own profiles are read from
(first timestamp - start) on (:class:`rcsim.profiles.Shifted`).

Any numeric value of the scenario can be *freed* by its key path (``nodes.block.capacity``,
``links.skin.resistance``, ``links.wall.parts[1].conduction.thickness``, ``nodes.block.initial``,
``boundaries.room.temperature``). The fit is weighted least squares
(:func:`scipy.optimize.least_squares`, trust-region reflective) on

    r_i = (T_measured(t_i) - T_model(t_i; theta)) / sigma_column

over every finite measured value. Values that must be positive (capacities, resistances, lengths,
...) are fitted as their logarithm, so they stay positive; temperatures and powers are fitted as
they are. Several starts guard against local minima.

Uncertainty comes from the Jacobian J at the optimum (the usual linearisation, as in
:func:`scipy.optimize.curve_fit` with ``absolute_sigma=False``)::

    cov = s^2 (J^T J)^-1,     s^2 = sum(r^2) / (n - p)

The standard error of a log-scale value x = ln(theta) gives std_error(theta) = theta * se(x) (the
delta method) and the interval exp(x +- t_{0.975,n-p} se(x)), which stays positive.

Speed: on a linear network the model runs on the exact modal path. Freed initial temperatures and
constant boundary temperatures or source powers enter the output linearly and leave the
eigen-decomposition as it is, so it is reused (and their Jacobian columns are exact differences);
only values that change capacities or conductances need a new decomposition. Networks the exact
path cannot take go through :meth:`rcsim.Network.simulate` per evaluation.

A fit supports, and never replaces, qualification testing and professional judgement: check the
fitted model against data it was not fitted to before predicting with it.

Beyond one scenario and one log: several candidate scenarios compared in one table
(:func:`compare`: log-likelihood, AIC, BIC, RMSE on the fitted and held-out spans, Ljung-Box
whiteness, the selected one and why); structures grown from the data by forward selection with
likelihood-ratio tests (:func:`identify`, after Bacher & Madsen 2011); a stochastic model with
process noise fitted by maximum likelihood with a Kalman filter (``noise="process"``, after
Kristensen, Madsen & Joergensen 2004); several logs at once with shared and per-record values.

Modules (one job each): ``logs`` (reading and checking the log), ``parameters`` (free key paths,
tiers, bounds, starts), ``model`` (the model at the log's times; the only user of the transient
engine), ``linear`` (a fast model of networks whose free values are matrix entries),
``recurrence`` (linear recurrences over rows), ``problem`` (residuals, Jacobian, the search from
several starts), ``statistics`` (covariance, intervals, correlations and their warnings),
``diagnostics`` (likelihood, AIC, BIC, Ljung-Box), ``holdout`` (the held-out span),
``summary`` (the optimum to a result), ``result`` (:class:`FitResult`, writing the estimates and
the fitted scenario), ``notes`` (the warning class and the notes gathered), ``candidates`` (a
scenario's ``[fit]`` section), ``estimate`` (:func:`fit`, the procedure), ``record`` and
``records`` and ``joint`` (several logs at once), ``procedure`` (one fit, shared by the others),
``kalman`` (the continuous-discrete Kalman filter), ``stochastic``, ``stochastic_result`` and
``stochastic_fit`` (the fit with process noise), ``compare`` (candidates compared), ``ladder``
(structures and their extensions), ``identify`` (forward selection), ``figures`` (the
comparison figure), ``threads`` (one BLAS thread for small matrices).
"""

from .candidates import Candidate, FitSpec, read_candidate
from .compare import Comparison, compare
from .diagnostics import ljung_box
from .estimate import fit
from .holdout import Holdout, parse_holdout
from .identify import Identification, identify
from .logs import Log, read_log
from .notes import FitWarning
from .parameters import LOG_RANGE, parse_bound
from .joint import JointFit
from .result import FitResult
from .statistics import AUTOCORRELATION_LIMIT, CORRELATION_LIMIT, WIDE_FACTOR, WIDE_KELVIN

__all__ = ["fit", "FitResult", "FitWarning", "Log", "read_log", "parse_bound", "compare",
           "Comparison", "identify", "Identification", "JointFit", "ljung_box", "Holdout",
           "parse_holdout", "Candidate", "FitSpec", "read_candidate"]
