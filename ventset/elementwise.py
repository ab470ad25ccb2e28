"""The few operations that differ between a float and a numpy array, so one formula serves both.

A plan works on floats and never imports numpy; a sweep over body mass passes arrays through the same
stage functions. Each helper takes the float path for a plain number and the numpy path otherwise.
"""

from __future__ import annotations

from typing import Any


def is_scalar(x: Any) -> bool:
    """True for a plain number (int, float, numpy scalar), False for an array."""
    return isinstance(x, int | float)


def smaller(x: Any, y: Any) -> Any:
    """The smaller of x and y, element-wise."""
    if is_scalar(x) and is_scalar(y):
        return min(x, y)
    import numpy as np

    return np.minimum(x, y)


def larger(x: Any, y: Any) -> Any:
    """The larger of x and y, element-wise."""
    if is_scalar(x) and is_scalar(y):
        return max(x, y)
    import numpy as np

    return np.maximum(x, y)


def choose(cond: Any, a: Any, b: Any) -> Any:
    """``a`` where ``cond`` holds, else ``b`` (element-wise for arrays; both are evaluated)."""
    if is_scalar(cond) or isinstance(cond, bool):
        return a if cond else b
    import numpy as np

    return np.where(cond, a, b)


def square_root(x: Any) -> Any:
    """√x, element-wise (math.sqrt for a number, so a plan's arithmetic is unchanged)."""
    if is_scalar(x):
        import math

        return math.sqrt(x)
    import numpy as np

    return np.sqrt(x)
