"""Small statistics used by the trend charts: the Wilson score interval.

A win rate from few games is uncertain; the site draws it with an interval
rather than a bare point, and the Wilson score interval stays inside [0, 1]
and behaves well near 0 and 1 and for small samples, where the normal
(Wald) interval does not.
"""
from __future__ import annotations

import math

#: The two-sided 95% normal quantile, so ``wilson`` gives a 95% interval.
Z_95 = 1.959963984540054


def wilson(successes: int, n: int, z: float = Z_95) -> tuple[float, float]:
    """Wilson score interval (low, high) for ``successes`` of ``n`` trials.

    With no trials there is nothing to learn from, so the interval is the
    whole range ``(0.0, 1.0)``. ``successes`` must lie in ``0..n``.
    """
    if n < 0 or successes < 0 or successes > n:
        raise ValueError(f"wilson: successes must be in 0..n with n >= 0, got successes={successes!r}, n={n!r}")
    if n == 0:
        return (0.0, 1.0)
    p = successes / n
    z2 = z * z
    denom = 1.0 + z2 / n
    centre = (p + z2 / (2 * n)) / denom
    half = (z / denom) * math.sqrt(p * (1.0 - p) / n + z2 / (4 * n * n))
    low, high = centre - half, centre + half
    # At the ends the exact bounds are 0 and 1; rounding would leave 1e-17 off.
    if successes == 0:
        low = 0.0
    if successes == n:
        high = 1.0
    return (max(0.0, low), min(1.0, high))
