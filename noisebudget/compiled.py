"""The one way the package compiles a per-point kernel (numba, CPU only).

IEEE arithmetic (``fastmath`` off), the GIL released while a kernel runs (the budget's
worker threads run kernels side by side), numpy's error model (a division by zero gives
inf or NaN, as in the numpy forms). The machine code is cached on disk where numba finds
a writable place (beside the module, else the user's cache folder); where it finds none
(a read-only installation without a writable home), each process compiles the kernels
itself, a few seconds, instead of failing to import.
"""

from __future__ import annotations

from numba import njit

__all__ = ["compiled"]

_OPTIONS = {"nogil": True, "fastmath": False, "error_model": "numpy"}


def compiled(fn):
    """``fn`` compiled by numba, cached on disk where possible."""
    try:
        return njit(cache=True, **_OPTIONS)(fn)
    except RuntimeError:  # numba: "cannot cache function ...: no locator available"
        return njit(cache=False, **_OPTIONS)(fn)
