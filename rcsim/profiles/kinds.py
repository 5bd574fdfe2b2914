"""Plain values to profiles, and the profile kinds a scenario file accepts."""

from __future__ import annotations

from ..errors import ProfileError
from .base import Profile
from .shapes import Constant


def as_profile(value, kind: str, where: str | None = None) -> Profile:
    """Turn a number, a string with units or a :class:`Profile` into a bound profile."""
    if isinstance(value, Profile):
        return value.bind(kind, where)
    if isinstance(value, (int, float, str)) and not isinstance(value, bool):
        return Constant(value).bind(kind, where)
    if callable(value):
        raise ProfileError("a Python function is not a profile", where,
                           "use Constant, Sine, Steps, Table or Repeat")
    raise ProfileError(f"expected a number, a string with units or a profile, got "
                       f"{type(value).__name__}", where)


def profile_kinds() -> list[str]:
    """Names of the profile kinds a scenario file accepts."""
    return ["constant", "sine", "steps", "table", "csv"]
