"""Transient integration: exact modal path for linear networks, stiff path for any network."""

from .driver import EXACT_LIMIT, simulate

__all__ = ["simulate", "EXACT_LIMIT"]
