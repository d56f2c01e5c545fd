"""Compile with numba when it is installed (the ``[fast]`` extra); run as plain Python otherwise.

Compiled functions are cached on disk (``cache=True``), so only the first run on a machine pays the
compile. :func:`compiled` tells whether the kernel really is compiled.
"""

from __future__ import annotations

import importlib.util
import os
from collections.abc import Callable
from typing import Any, Literal, TypeVar

F = TypeVar("F", bound=Callable[..., Any])

#: Set ``RECONCILE_NO_JIT=1`` to run the kernel as plain Python even when numba is installed.
_DISABLED = os.environ.get("RECONCILE_NO_JIT", "") not in ("", "0")


def numba_available() -> bool:
    return not _DISABLED and importlib.util.find_spec("numba") is not None


def inline(function: F) -> F:
    """:func:`jit` for a small helper that numba should inline into its callers."""
    return jit(function, always_inline=True)


def jit(function: F, always_inline: bool = False) -> F:
    """``numba.njit(cache=True)`` when numba is available, the function itself otherwise.

    The plain function stays reachable as ``.py_func`` either way, so tests can run both.
    """
    if not numba_available():
        function.py_func = function  # type: ignore[attr-defined]
        return function
    import numba

    mode: Literal["never", "always"] = "always" if always_inline else "never"
    compiled: F = numba.njit(cache=True, nogil=True, inline=mode)(function)  # type: ignore[assignment]
    return compiled
