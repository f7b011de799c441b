"""The band's bootstrap draws its resamples from SplitMix64 (Steele, Lea & Flood, "Fast
splittable pseudorandom number generators", OOPSLA 2014) inlined for speed: it must draw
exactly what the ``splitmix64`` generator gives, so the bands stay the same to the last bit."""

from __future__ import annotations

import math
from statistics import NormalDist

from hypothesis import given
from hypothesis import strategies as st

from services.usage_band import BOOTSTRAP_DRAWS, MAX_INTERVALS, _quantile, rate_band, splitmix64
from services.usage_band import t_quantile as tq


def band_by_generator(
    intervals: list[tuple[float, float]], confidence: float, seed: int
) -> tuple[float, float] | None:
    """The bootstrap written plainly, one ``next()`` of the generator per draw."""
    intervals = intervals[-MAX_INTERVALS:]
    n = len(intervals)
    if n < 2:
        return None
    draws = splitmix64(seed=seed)
    ratios = []
    for _ in range(BOOTSTRAP_DRAWS):
        hours = days = 0.0
        for _ in range(n):
            h, d = intervals[next(draws) % n]
            hours += h
            days += d
        ratios.append(hours / days)
    ratios.sort()
    tail = (1 - confidence) / 2
    widened = math.sqrt(n / (n - 1)) * tq(p=1 - tail, df=n - 1)
    upper = NormalDist().cdf(widened)
    return _quantile(ratios, 1 - upper), _quantile(ratios, upper)


@given(
    intervals=st.lists(
        st.tuples(st.floats(0, 40, allow_nan=False), st.floats(0.01, 30, allow_nan=False)),
        max_size=12,
    ),
    seed=st.integers(0, 2**64 - 1),
)
def test_inlined_draws_are_the_generators(intervals: list[tuple[float, float]], seed: int) -> None:
    assert rate_band(intervals=intervals, confidence=0.9, seed=seed) == band_by_generator(
        intervals, 0.9, seed
    )
