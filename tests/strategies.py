"""Hypothesis building blocks shared by the property tests."""
from __future__ import annotations

from hypothesis import strategies as st

from helix.project import Level


def storeys(draw, most: int, low: float, high: float) -> tuple[Level, ...]:
    """1 to ``most`` storeys of heights drawn from ``[low, high]`` metres, from level 0."""
    n = draw(st.integers(1, most))
    heights = [draw(st.floats(low, high)) for _ in range(n)]
    return tuple(Level(f"L{i}", float(sum(heights[:i]))) for i in range(n + 1))
