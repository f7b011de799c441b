"""The band around a unit's usage rate, from the rates of the intervals between readings.

Hour-meter readings are cumulative, so the residuals about a line through them are not
independent and an interval that assumes they are (Sen 1968) is far too narrow. The
intervals between consecutive readings are close to independent instead: each one's hours
are the work done in it. The rate over a window is the ratio estimator
sum(hours) / sum(days); its band is a bootstrap over intervals (Efron & Tibshirani, *An
Introduction to the Bootstrap*, 1993, ch. 13, percentile interval), resampling whole
intervals with replacement. The draws come from SplitMix64 (Steele, Lea & Flood 2014,
"Fast splittable pseudorandom number generators", OOPSLA), seeded by the caller, so the
same readings always give the same band and services/ holds no source of randomness.

With few intervals the plain percentile interval is too narrow (its spread is that of a
sample of n, not of the population). It is widened as Hesterberg's "expanded percentile
interval" (Hesterberg 2015, "What teachers should know about the bootstrap", The American
Statistician 69(4), sec. 3.4): the percentiles taken are those at which the normal
distribution reaches sqrt(n / (n - 1)) times Student's t quantile with n - 1 degrees of
freedom.

The central rate is the Theil-Sen estimate (:func:`theil_sen`), kept here beside the band.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Final

import numpy as np

SECONDS_PER_DAY: Final = 86_400.0
BOOTSTRAP_DRAWS: Final = 400  # resamples per band
MAX_INTERVALS: Final = 200  # only the newest intervals are resampled above this
MAX_POINTS: Final = 500  # above this, readings are thinned by a fixed stride (O(n^2) pairs)
BAND_CONFIDENCE: Final = 0.90  # two-sided confidence of Sen's interval by default


@dataclass(frozen=True, slots=True)
class SlopeFit:
    """Theil-Sen slope with Sen's confidence interval (units of y per unit of x)."""

    slope: float
    low: float
    high: float
    points: int  # points used (after thinning)


def _tie_term(values: Sequence[float]) -> int:
    counts: dict[float, int] = {}
    for value in values:
        counts[value] = counts.get(value, 0) + 1
    return sum(k * (k - 1) * (2 * k + 5) for k in counts.values())


def theil_sen(
    *, xs: Sequence[float], ys: Sequence[float], confidence: float = BAND_CONFIDENCE
) -> SlopeFit | None:
    """Median of pairwise slopes, with Sen's (1968) interval; None without two distinct x.

    Above :data:`MAX_POINTS` points, every k-th point is kept counting back from the
    last, so the result is deterministic and the newest point always counts.
    """
    if len(xs) != len(ys):
        raise ValueError(f"xs and ys differ in length: {len(xs)} and {len(ys)}")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be between 0 and 1, got {confidence}")
    n = len(xs)
    if n > MAX_POINTS:
        keep = sorted(range(n - 1, -1, -math.ceil(n / MAX_POINTS)))
        xs, ys, n = [xs[i] for i in keep], [ys[i] for i in keep], len(keep)
    slopes = _pair_slopes(xs, ys)
    if not slopes:
        return None
    # Sen (1968) eq. 2.6: variance of Kendall's S with ties in x and in y.
    variance = (n * (n - 1) * (2 * n + 5) - _tie_term(xs) - _tie_term(ys)) / 18.0
    z = statistics.NormalDist().inv_cdf(0.5 + confidence / 2)
    spread = z * math.sqrt(max(variance, 0.0))
    count = len(slopes)
    upper = min(round((count + spread) / 2), count - 1)
    lower = max(round((count - spread) / 2) - 1, 0)
    return SlopeFit(
        slope=statistics.median(slopes), low=slopes[lower], high=slopes[upper], points=n
    )


def _pair_slopes(xs: Sequence[float], ys: Sequence[float]) -> list[float]:
    """(ys[j] - ys[i]) / (xs[j] - xs[i]) for every pair i < j with distinct x, sorted: the
    same float divisions as a loop over the pairs, in the same order before a stable sort."""
    x, y = np.asarray(xs, dtype=np.float64), np.asarray(ys, dtype=np.float64)
    first, second = np.triu_indices(len(x), 1)  # row by row: i, then each j after it
    dx = x[second] - x[first]
    distinct = dx != 0
    slopes = (y[second] - y[first])[distinct] / dx[distinct]
    return list(np.sort(slopes, kind="stable").tolist())


def intervals_from(points: Sequence[tuple[datetime, float]]) -> list[tuple[float, float]]:
    """(engine hours run, days) between consecutive points, oldest first; pairs with no time
    between them are skipped, and hours never count below zero."""
    out = []
    for (t0, h0), (t1, h1) in zip(points, points[1:], strict=False):
        days = (t1 - t0).total_seconds() / SECONDS_PER_DAY
        if days > 0:
            out.append((max(h1 - h0, 0.0), days))
    return out


_MASK64: Final = (1 << 64) - 1


def splitmix64(*, seed: int) -> Iterator[int]:
    """64-bit pseudo-random integers from ``seed`` (SplitMix64, Steele, Lea & Flood 2014)."""
    state = seed & _MASK64
    while True:
        state = (state + 0x9E3779B97F4A7C15) & _MASK64
        z = state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & _MASK64
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & _MASK64
        yield z ^ (z >> 31)


def t_quantile(*, p: float, df: int) -> float:
    """Student's t quantile: exact for 1 and 2 degrees of freedom, else the Cornish-Fisher
    expansion of Abramowitz & Stegun (1964) 26.7.5 about the normal quantile."""
    if not 0 < p < 1 or df < 1:
        raise ValueError(f"p must be in (0, 1) and df 1 or more, got {p}, {df}")
    if df == 1:
        return math.tan(math.pi * (p - 0.5))
    if df == 2:
        return (2 * p - 1) / math.sqrt(2 * p * (1 - p))
    z = statistics.NormalDist().inv_cdf(p)
    g1 = (z**3 + z) / 4
    g2 = (5 * z**5 + 16 * z**3 + 3 * z) / 96
    g3 = (3 * z**7 + 19 * z**5 + 17 * z**3 - 15 * z) / 384
    g4 = (79 * z**9 + 776 * z**7 + 1482 * z**5 - 1920 * z**3 - 945 * z) / 92_160
    return z + g1 / df + g2 / df**2 + g3 / df**3 + g4 / df**4


def rate_band(
    *, intervals: Sequence[tuple[float, float]], confidence: float, seed: int
) -> tuple[float, float] | None:
    """(low, high) engine hours per day covering the unit's mean rate with ``confidence``;
    None with fewer than two intervals (nothing to resample)."""
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be between 0 and 1, got {confidence}")
    intervals = list(intervals)[-MAX_INTERVALS:]
    n = len(intervals)
    if n < 2:
        return None
    # SplitMix64 as splitmix64() gives it, every draw of the band at once: the k-th state is
    # seed + k x the golden gamma (mod 2^64, as unsigned 64-bit arithmetic wraps), so the
    # same draws come out in the same order, row by row, without a Python step per draw.
    # In place, in two arrays: a fresh array per step costs more than the step (each is
    # over a hundred kilobytes, which the allocator maps and faults in anew every time).
    with np.errstate(over="ignore"):
        z = np.arange(1, BOOTSTRAP_DRAWS * n + 1, dtype=np.uint64)
        z *= np.uint64(0x9E3779B97F4A7C15)
        z += np.uint64(seed & _MASK64)
        shifted = z >> np.uint64(30)
        z ^= shifted
        z *= np.uint64(0xBF58476D1CE4E5B9)
        z ^= np.right_shift(z, np.uint64(27), out=shifted)
        z *= np.uint64(0x94D049BB133111EB)
        z ^= np.right_shift(z, np.uint64(31), out=shifted)
        z %= np.uint64(n)
    picks = z.view(np.intp).reshape(-1, n)  # each below n: the same number as a signed int
    table = np.array(intervals, dtype=np.float64)
    # Running sums, left to right as the loop added them (sum() would pair them up and
    # round differently): the last column is each resample's total.
    drawn = table[:, 0].take(picks, out=shifted.view(np.float64).reshape(-1, n))
    hours = drawn.cumsum(axis=1, out=drawn)[:, -1].copy()
    drawn = table[:, 1].take(picks, out=drawn)
    days = drawn.cumsum(axis=1, out=drawn)[:, -1]
    ratios = (hours / days).tolist()
    ratios.sort()
    tail = (1 - confidence) / 2
    widened = math.sqrt(n / (n - 1)) * t_quantile(p=1 - tail, df=n - 1)
    upper = statistics.NormalDist().cdf(widened)
    return _quantile(ratios, 1 - upper), _quantile(ratios, upper)


def _quantile(ordered: Sequence[float], q: float) -> float:
    """Linear interpolation between order statistics (Hyndman & Fan 1996, type 7)."""
    pos = q * (len(ordered) - 1)
    lo = math.floor(pos)
    hi = min(lo + 1, len(ordered) - 1)
    return ordered[lo] + (ordered[hi] - ordered[lo]) * (pos - lo)
