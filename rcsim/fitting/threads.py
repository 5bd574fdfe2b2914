"""One BLAS thread for the fitting's many small matrices.

BLAS threads help large matrix products; on the 2x2 to 20x20 matrices of a Kalman filter or a
small network they only cost, and on a busy machine a call that should take microseconds can
take milliseconds. The fits that run many of them (process noise, identification) hold BLAS to
one thread while they run (:mod:`threadpoolctl`). The libraries are found once (reading the
process's memory map is slow), then each use only sets the thread count and restores it.
"""

from __future__ import annotations

__all__ = ["one_blas_thread"]

_CONTROLLER = None


def one_blas_thread():
    """A context manager holding the BLAS libraries loaded by numpy and scipy to one thread."""
    global _CONTROLLER
    if _CONTROLLER is None:
        import scipy.linalg  # noqa: F401  (load scipy's BLAS before the libraries are listed)
        from threadpoolctl import ThreadpoolController

        _CONTROLLER = ThreadpoolController()
    return _CONTROLLER.limit(limits=1, user_api="blas")
