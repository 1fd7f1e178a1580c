"""Registry of public callables (layer: bottom; imports nothing from symresp).

``@public`` marks a callable or class as part of the documented surface; a test
checks that every registered object carries a runnable doctest example.
"""

from __future__ import annotations

from typing import TypeVar

__all__ = ["public", "REGISTERED"]

_T = TypeVar("_T")

#: Names of registered public objects, filled at import time only.
REGISTERED: list[object] = []


def public(obj: _T) -> _T:
    """Register ``obj`` as public API and show it under the ``symresp`` module path."""
    REGISTERED.append(obj)
    try:
        obj.__module__ = "symresp"  # type: ignore[attr-defined]
    except (AttributeError, TypeError):  # builtins or slotted objects keep their module
        pass
    return obj
