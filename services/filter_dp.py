"""A filter's differential pressure (dP): fit its rise and find where it meets the limit.

Clogging curves are flat, then rise steeply near the end of a filter's life (filter clogging
literature, e.g. Separations 8(6):71, 2021). A clean element already reads a dP of its own (the
housing and the clean media), so the rise is fitted *above* that baseline:

    dP(h) = c + a * exp(b * (h - h0))

by least squares (for each b the model is linear in c and a, so b is searched on one axis and
c, a solved exactly: the variable-projection method of Golub and Pereyra, 1973). A pure
exponential through total dP reads the baseline as part of the rise, flattens the fitted
growth and puts the limit late. From four readings the exponential must beat a straight line
dP = c + a (h - h0) by an F-test (extra-sum-of-squares), so noise on a flat curve is not
read as a steep rise. With more readings than parameters the limit is placed where
the one-sided 95 % upper prediction bound of dP meets it (Student's t on the residuals, the
parameters' covariance by the delta method, as in Seber and Wild, Nonlinear Regression,
1989): the earliest plausible crossing, the conservative side.
"""

from __future__ import annotations

import contextlib
import math
import statistics
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from datetime import datetime

from services.inputs import number_check
from services.schedule import MIN_DP_READINGS, fmt_hours, plural

# One-sided 95 % quantiles of Student's t by degrees of freedom (any t table, e.g. NIST/SEMATECH
# e-Handbook of Statistical Methods, 1.3.6.7.2); above 30, the normal quantile 1.645.
_T95: tuple[float, ...] = (
    6.314, 2.920, 2.353, 2.132, 2.015, 1.943, 1.895, 1.860, 1.833, 1.812,
    1.796, 1.782, 1.771, 1.761, 1.753, 1.746, 1.740, 1.734, 1.729, 1.725,
    1.721, 1.717, 1.714, 1.711, 1.708, 1.706, 1.703, 1.701, 1.699, 1.697,
)  # fmt: skip
_B_RANGE_PER_H = (1e-5, 0.5)  # growth rates searched, per engine hour
_PROJECT_SPAN_H = 20_000.0  # a crossing further out than this is not projected


def t95_one_sided(dof: int) -> float:
    if dof < 1:
        raise ValueError(f"dof must be 1 or more, got {dof}")
    return _T95[dof - 1] if dof <= len(_T95) else 1.645


@dataclass(frozen=True, slots=True)
class DpReading:
    """A differential-pressure reading across the filter, with its conditions where known."""

    at: datetime
    hours: float  # engine hours
    dp_bar: float
    flow_l_per_h: float | None = None
    load_pct: float | None = None
    fuel_temperature_c: float | None = None

    def __post_init__(self) -> None:
        for name in ("hours", "dp_bar", "flow_l_per_h"):
            number_check(name, getattr(self, name))
        number_check("load_pct", self.load_pct, most=100.0)
        if self.fuel_temperature_c is not None and not math.isfinite(self.fuel_temperature_c):
            raise ValueError(
                f"fuel_temperature_c must be a finite number, got {self.fuel_temperature_c}"
            )


@dataclass(frozen=True, slots=True)
class DpFit:
    """dp = c + a * exp(b * (h - h0)), least squares; c is the clean element's baseline.
    With ``linear``, dp = c + a * (h - h0) (b = 0)."""

    a: float
    b: float
    h0: float
    readings: int
    crossing_hours: float | None  # engine hours at the limit; None if the fit does not rise
    c: float = 0.0
    bounded: bool = False  # crossing placed by the upper prediction bound
    linear: bool = False  # the straight line won the F-test


def _linear_for(b: float, xs: Sequence[float], ys: Sequence[float]) -> tuple[float, float, float]:
    """(c, a, sum of squared residuals) of ys = c + a exp(b x) for a fixed b."""
    es = [math.exp(b * x) for x in xs]
    a, c = statistics.linear_regression(es, ys)
    sse = sum((y - c - a * e) ** 2 for y, e in zip(ys, es, strict=True))
    return c, a, sse


def _best_b(xs: Sequence[float], ys: Sequence[float]) -> float:
    """The growth rate of least squares: a log grid, then golden-section refinement."""
    low, high = (math.log(v) for v in _B_RANGE_PER_H)
    span = max(xs) - min(xs)
    high = min(high, math.log(50.0 / span)) if span > 0 else high  # exp(b x) stays finite
    grid = [low + (high - low) * i / 120 for i in range(121)]
    best = min(grid, key=lambda g: _linear_for(math.exp(g), xs, ys)[2])
    step = (high - low) / 120
    lo, hi = best - step, best + step
    ratio = (math.sqrt(5) - 1) / 2
    for _ in range(60):
        m1, m2 = hi - ratio * (hi - lo), lo + ratio * (hi - lo)
        if _linear_for(math.exp(m1), xs, ys)[2] < _linear_for(math.exp(m2), xs, ys)[2]:
            hi = m2
        else:
            lo = m1
    return math.exp((lo + hi) / 2)


Curve = Callable[[float], float]
Grad = Callable[[float], tuple[float, ...]]


def _upper_bound(*, curve: Curve, grad: Grad, xs: Sequence[float], sse: float) -> Curve:
    """The curve's one-sided 95 % upper prediction bound: curve(x) + t s sqrt(1 + g' C g),
    C = (J'J)^-1 by the delta method (for a straight line, the textbook prediction interval).
    Needs more readings than parameters; ZeroDivisionError when J'J is singular."""
    rows = [grad(x) for x in xs]
    k = len(rows[0])
    dof = len(xs) - k
    if dof < 1:
        raise ZeroDivisionError("no residual degrees of freedom")
    inv = _inverse([[sum(r[i] * r[j] for r in rows) for j in range(k)] for i in range(k)])
    s2, t = sse / dof, t95_one_sided(dof)

    def bound(x: float) -> float:
        g = grad(x)
        var = s2 * (1.0 + sum(g[i] * inv[i][j] * g[j] for i in range(k) for j in range(k)))
        return curve(x) + t * math.sqrt(max(0.0, var))

    return bound


def _inverse(m: list[list[float]]) -> list[list[float]]:
    """Gauss-Jordan inverse with partial pivoting (2x2 and 3x3 here)."""
    k = len(m)
    aug = [[*row, *(1.0 if i == j else 0.0 for j in range(k))] for i, row in enumerate(m)]
    for col in range(k):
        pivot = max(range(col, k), key=lambda r: abs(aug[r][col]))
        if not math.isfinite(aug[pivot][col]) or abs(aug[pivot][col]) < 1e-300:
            raise ZeroDivisionError("singular")
        aug[col], aug[pivot] = aug[pivot], aug[col]
        head = aug[col][col]
        aug[col] = [v / head for v in aug[col]]
        for r in range(k):
            if r != col:
                factor = aug[r][col]
                aug[r] = [v - factor * w for v, w in zip(aug[r], aug[col], strict=True)]
    return [row[k:] for row in aug]


def _first_crossing(curve: Callable[[float], float], *, start: float, limit: float) -> float | None:
    """Smallest x >= start where curve(x) >= limit (doubling search, then bisection)."""
    f = curve
    if f(start) >= limit:
        return start
    step, lo = 1.0, start
    while f(lo + step) < limit:
        lo, step = lo + step, step * 2
        if lo - start > _PROJECT_SPAN_H:
            return None
    hi = lo + step
    for _ in range(60):
        mid = (lo + hi) / 2
        lo, hi = (lo, mid) if f(mid) >= limit else (mid, hi)
    return hi


def dp_fit(*, readings: Sequence[DpReading], limit_bar: float, h0: float) -> DpFit | None:
    """Fit dP = c + a exp(b (h - h0)) to the readings and find where it meets the limit.

    With four or more readings the exponential must earn its extra parameter: it is kept only
    when it beats the straight line dP = c + a (h - h0) by an F-test at 90 % (F(1, n - 3)'s
    quantile is t(0.95, n - 3)^2); otherwise the line is used, so noise on a flat curve is
    not read as a steep rise. 90 % rather than 95 % leans toward the exponential, the
    conservative side (a straight line projects late where the curve does bend up).
    Returns None with fewer than three readings or all at the same hours. A fit that
    does not rise has no crossing. A limit already seen is the crossing (observed, not
    projected); otherwise the crossing is never before the last reading.
    """
    usable = sorted(readings, key=lambda r: r.hours)
    if len(usable) < MIN_DP_READINGS or usable[0].hours == usable[-1].hours:
        return None
    xs = [r.hours - h0 for r in usable]
    ys = [r.dp_bar for r in usable]
    try:
        fit, curve, grad, sse = _model_choose(xs=xs, ys=ys, h0=h0)
    except (statistics.StatisticsError, OverflowError):
        return None
    if fit.a <= 0:
        return fit
    reached = [r for r in usable if r.dp_bar >= limit_bar]
    bounded = False
    if reached:
        crossing: float | None = reached[0].hours
    else:
        with contextlib.suppress(ZeroDivisionError):
            curve, bounded = _upper_bound(curve=curve, grad=grad, xs=xs, sse=sse), True
        x = _first_crossing(curve, start=xs[-1], limit=limit_bar)
        crossing = None if x is None else h0 + x
    return replace(fit, crossing_hours=crossing, bounded=bounded)


def _model_choose(
    *, xs: Sequence[float], ys: Sequence[float], h0: float
) -> tuple[DpFit, Curve, Grad, float]:
    """(fit without its crossing, its curve, its gradient in the parameters, its SSE)."""
    n = len(xs)
    b = _best_b(xs, ys)
    c, a, sse = _linear_for(b, xs, ys)
    slope, intercept = statistics.linear_regression(xs, ys)
    sse_line = sum((y - intercept - slope * x) ** 2 for x, y in zip(xs, ys, strict=True))
    exp_wins = n == MIN_DP_READINGS or (sse_line - sse > t95_one_sided(n - 3) ** 2 * sse / (n - 3))
    if exp_wins and a > 0:
        fit = DpFit(a=a, b=b, h0=h0, readings=n, crossing_hours=None, c=c)
        return (
            fit,
            lambda x: c + a * math.exp(b * x),
            lambda x: (1.0, math.exp(b * x), a * x * math.exp(b * x)),
            sse,
        )
    fit = DpFit(a=slope, b=0.0, h0=h0, readings=n, crossing_hours=None, c=intercept, linear=True)
    return fit, lambda x: intercept + slope * x, lambda x: (1.0, x), sse_line


def dp_fit_inputs(fit: DpFit | None) -> dict[str, float | int | bool] | None:
    """The fit's parameters for a projection's JSON inputs."""
    if fit is None:
        return None
    keys = ("c_bar", "a_bar", "b_per_h", "h0", "readings", "bounded", "linear")
    values = (fit.c, fit.a, fit.b, fit.h0, fit.readings, fit.bounded, fit.linear)
    return dict(zip(keys, values, strict=True))


def dp_limit(
    *, limit_bar: float | None, readings: Sequence[DpReading], last_change_at: datetime, h0: float
) -> tuple[DpFit | None, str | None]:
    """The dP fit of the readings since the change (None when there is none) and the
    sentence that explains it; no limit or fewer than three readings: (None, None)."""
    dp_since = [r for r in readings if r.at >= last_change_at]
    if limit_bar is None or len(dp_since) < MIN_DP_READINGS:
        return None, None
    fit = dp_fit(readings=dp_since, limit_bar=limit_bar, h0=h0)
    if fit is None:
        return None, "The dP readings since the change could not be fitted; no dP projection."
    if fit.crossing_hours is None:
        return fit, (
            f"The {fit.readings} dP readings since the change do not rise toward the limit, so "
            "no dP projection was made."
        )
    how = "the 95 % upper prediction bound meets" if fit.bounded else "the fitted curve meets"
    rise = (
        f"rises in a straight line, {fit.a * 100:.3g} bar per 100 h (an exponential did not fit "
        "significantly better)"
        if fit.linear
        else f"rises {fit.a:.3g} bar x e^({fit.b:.3g}/h)"
    )
    return fit, (
        f"Filter dP fitted on {plural(fit.readings, 'reading')} above a clean-element baseline "
        f"of {fit.c:.2f} bar {rise}; the change is due where {how} the {limit_bar:g} bar "
        f"limit, at {fmt_hours(fit.crossing_hours)}."
    )
