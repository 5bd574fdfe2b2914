"""Time profiles for boundary temperatures and source powers.

Kinds: :class:`Constant`, :class:`Sine`, :class:`Steps`, :class:`Table` (also read from a CSV
column with :meth:`Table.from_csv`), and any of them repeated with a period (:class:`Repeat`, or
``profile.repeat(period)``) or read on another clock (:class:`Shifted`).

Every profile is, internally, a *piecewise-linear part* (knots where the slope or the value jumps)
plus a sum of *sinusoids*. The exact solver integrates both in closed form, so a step is taken at
its exact time and a sine is never approximated by chords. Values are right-continuous: at a step
time the new value applies.

Profiles accept numbers or strings with units. A profile is *bound* to what it drives (a
temperature or a power) when it is attached to a boundary or a source; only then are strings parsed
("25 degC" for a level, "7 K" for a sine amplitude of a temperature).

Modules (one job each): ``base`` (the base class: values, exact integrals, span checks),
``shapes`` (constant, sine, steps), ``table`` (linear interpolation, from CSV), ``periodic``
(repeat, common period), ``shifted`` (another clock), ``kinds`` (plain values to profiles, the
kinds a scenario accepts), ``timeseries`` (reading CSV time series, memory check). Importing this
package loads neither pandas nor pint: they are imported where a CSV is read or a unit parsed.
"""

from .base import Profile
from .kinds import as_profile, profile_kinds
from .periodic import Repeat, common_period
from .shapes import Constant, Sine, Steps
from .shifted import Shifted
from .table import Table
from .timeseries import check_fits_in_memory, memory_available, read_csv_text, read_time_series

__all__ = [
    "Profile",
    "Constant",
    "Sine",
    "Steps",
    "Table",
    "Repeat",
    "Shifted",
    "as_profile",
    "profile_kinds",
    "read_time_series",
    "common_period",
]
