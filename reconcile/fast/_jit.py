"""Compile with numba when it is installed (the ``[fast]`` extra); run as plain Python otherwise.

Compiled functions are cached on disk (``cache=True``), so only the first run on a machine pays the
compile. :func:`compiled` tells whether the kernel really is compiled.

:func:`mul_overflows` and :func:`add_overflows` are checked int64 arithmetic: plain Python
functions, which compiled code replaces with one machine multiply or add and a test of the CPU's
overflow flag (LLVM's ``*.with.overflow`` intrinsics). numba's cache does not see edits to this
file: clear the cache (``NUMBA_CACHE_DIR``) after changing them.
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


INT64_MAX = 2**63 - 1


def mul_overflows(a: int, b: int) -> tuple[int, bool]:
    """``(a * b, overflowed)``: overflowed when the product is outside +-(2**63 - 1). -2**63 counts
    as overflow too, so every value kept can be negated."""
    product = int(a) * int(b)
    return product, not -INT64_MAX <= product <= INT64_MAX


def add_overflows(a: int, b: int) -> tuple[int, bool]:
    """``(a + b, overflowed)``, as :func:`mul_overflows`."""
    total = int(a) + int(b)
    return total, not -INT64_MAX <= total <= INT64_MAX


def _compile_overflow_checks() -> None:
    """Give the two checks above their compiled form (called only when numba is available)."""
    from numba.core import types
    from numba.extending import intrinsic, overload

    result = types.Tuple((types.int64, types.boolean))  # type: ignore[no-untyped-call]

    def with_overflow(operation: str) -> Any:
        @intrinsic
        def checked(typingctx: Any, a: Any, b: Any) -> Any:
            if not all(
                isinstance(t, types.Integer) and getattr(t, "signed", False) for t in (a, b)
            ):
                return None

            def codegen(context: Any, builder: Any, signature: Any, args: Any) -> Any:
                left, right = (
                    context.cast(builder, v, t, types.int64)
                    for v, t in zip(args, signature.args, strict=True)
                )
                pair = getattr(builder, operation)(left, right)
                value = builder.extract_value(pair, 0)
                lowest = builder.icmp_signed(
                    "==", value, context.get_constant(types.int64, -INT64_MAX - 1)
                )
                flag = builder.or_(builder.extract_value(pair, 1), lowest)
                return context.make_tuple(builder, result, [value, flag])

            return result(a, b), codegen

        return checked

    compiled_mul = with_overflow("smul_with_overflow")
    compiled_add = with_overflow("sadd_with_overflow")

    @overload(mul_overflows)
    def _mul(a: Any, b: Any) -> Any:
        def implementation(a: Any, b: Any) -> Any:
            return compiled_mul(a, b)

        return implementation

    @overload(add_overflows)
    def _add(a: Any, b: Any) -> Any:
        def implementation(a: Any, b: Any) -> Any:
            return compiled_add(a, b)

        return implementation


if numba_available():
    _compile_overflow_checks()
