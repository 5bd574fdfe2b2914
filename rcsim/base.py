"""Small helpers every layer may use: the package version and did-you-mean hints.

This module imports nothing from rcsim and nothing heavy, so any module (the command line's
``--help`` included) can use it without pulling in numpy, pandas or pint.
"""

from __future__ import annotations

import difflib
from functools import lru_cache

__all__ = ["package_version", "suggest"]


@lru_cache(maxsize=1)
def package_version() -> str:
    """The installed rcsim version ("0.0.0" when run from a source tree that is not installed)."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("rcsim")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree
        return "0.0.0"


def suggest(name: str, valid) -> str:
    """Return a hint naming the nearest valid names, or listing them all when few.

    >>> suggest("stif", ["auto", "exact", "stiff"])
    "did you mean 'stiff'?"
    >>> suggest("zzz", ["a", "b"])
    'valid: a, b'
    """
    valid = list(valid)
    close = difflib.get_close_matches(str(name), valid, n=3, cutoff=0.5)
    if close:
        return "did you mean " + " or ".join(repr(c) for c in close) + "?"
    if len(valid) <= 12:
        return "valid: " + ", ".join(valid)
    return f"{len(valid)} names are valid; `rcsim materials` lists them"
