"""The amplified line of a cable: spans and amplifiers (docs/physics.md).

A cable of L km is cut into ``ceil(L / span_km)`` equal spans with an amplifier after each, the
last one being the receiving end's preamplifier.
"""

from __future__ import annotations

import math

__all__ = ["span_count"]


def span_count(length_km: float, span_km: float) -> int:
    """Equal spans of a cable of ``length_km`` with spans no longer than ``span_km`` (at least 1)."""
    if span_km <= 0:
        raise ValueError(f"span_km must be > 0, got {span_km}")
    # The tolerance keeps a 160.0 km cable on 80 km spans at two spans despite float noise.
    return max(1, math.ceil(length_km / span_km - 1e-9))
