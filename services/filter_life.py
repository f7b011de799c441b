"""A filter's life, calibrated from the changes on record: Weibull with right censoring.

The plan's contaminant budget is a starting estimate (services.intervals). Every recorded
filter change is evidence of what an element of that unit class and filter kind lasts:

- the life the element had taken when it was changed (engine hours run since the change
  before, counted at the plan's reference fuel, the unit in which the budget is stated);
- the differential pressure before the change, where it was recorded: at or over the plan's
  dP limit, the element was used up (an *event*); below it, or not recorded, it still had
  life left when it was taken off (a *right-censored* observation: its life is longer).

The life is fitted with a two-parameter Weibull distribution by maximum likelihood with right
censoring (R. B. Abernethy, The New Weibull Handbook, 5th ed., ch. 5; NIST/SEMATECH
e-Handbook of Statistical Methods, section 8.4.1.2 "Maximum likelihood estimation" and
8.1.6.2 "Weibull"). With r events among n observations t_i, the log-likelihood is

    ln L(k, lam) = sum_events [ln k - k ln lam + (k - 1) ln t_i] - sum_all (t_i / lam)^k.

For a given shape k the scale has a closed form, lam^k = sum_all t_i^k / r, and the shape
solves the profile equation

    g(k) = sum_all t_i^k ln t_i / sum_all t_i^k - 1/k - (1/r) sum_events ln t_i = 0,

whose left side rises with k; it is solved by bisection on ln k. The budget used is a
conservative quantile, B10 (the life by which 10 % of elements are used up), once there are
MIN_EVENTS events; until then the plan's estimate stands, and the explanation says which.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from services.inputs import number_check

MIN_EVENTS = 5  # used-up elements needed before the fit replaces the plan (common practice)
LIFE_QUANTILE = 0.10  # B10: the life by which 10 % of elements are used up
_SHAPE_BOUNDS = (1e-3, 1e3)


@dataclass(frozen=True, slots=True)
class LifeObservation:
    """One element's life when it was changed, and whether it was used up by then."""

    life: float  # engine hours at reference fuel
    used_up: bool  # True: an event; False: right-censored (it had life left)

    def __post_init__(self) -> None:
        number_check("life observation", self.life, positive=True)


@dataclass(frozen=True, slots=True)
class ChangeRecord:
    """One recorded change of one filter position: when, the engine hours, the dP before."""

    at: datetime
    hours: float | None
    dp_before_bar: float | None


@dataclass(frozen=True, slots=True)
class WeibullFit:
    shape: float  # k (beta in Abernethy's notation)
    scale: float  # lambda (eta), same unit as the lives
    events: int
    censored: int
    log_likelihood: float

    def quantile(self, p: float) -> float:
        """The life by which a fraction ``p`` of elements are used up (B10 for p = 0.10)."""
        return float(self.scale * (-math.log1p(-p)) ** (1.0 / self.shape))


@dataclass(frozen=True, slots=True)
class LifeBudget:
    """The life the contaminant budget is stated in, and where it came from."""

    hours: float  # engine hours at the plan's reference fuel
    source: str  # "fitted" or "plan"
    changes: int  # observations behind it (events and censored)
    events: int
    fit: WeibullFit | None
    sentence: str


def life_observations(
    *, changes: Sequence[ChangeRecord], dp_limit_bar: float | None
) -> list[LifeObservation]:
    """One filter position's changes (oldest first) as lives: each against the change before.

    A change without an hour-meter figure, or with fewer hours than the one before (a meter
    replaced), says nothing about the life and is left out. Without a dP limit in the plan
    nothing can count as used up: every observation is censored.
    """
    out: list[LifeObservation] = []
    for before, change in zip(changes, changes[1:], strict=False):
        if before.hours is None or change.hours is None:
            continue
        life = change.hours - before.hours
        if not math.isfinite(life) or life <= 0:
            continue
        dp = change.dp_before_bar
        used_up = dp_limit_bar is not None and dp is not None and dp >= dp_limit_bar
        out.append(LifeObservation(life=life, used_up=used_up))
    return out


def weibull_fit(*, observations: Sequence[LifeObservation]) -> WeibullFit | None:
    """The maximum-likelihood Weibull for lives with right censoring (None: no fit exists).

    No fit exists without an event, or when the profile equation has no root within
    shape 0.001..1000 (e.g. every event at the same life and nothing censored later).
    """
    events = [o.life for o in observations if o.used_up]
    if not events:
        return None
    top = max(o.life for o in observations)
    t = [o.life / top for o in observations]  # scaled to <= 1: t**k cannot overflow
    logs = [math.log(x) for x in t]
    r = len(events)
    mean_event_log = sum(math.log(x / top) for x in events) / r

    def g(k: float) -> float:
        powers = [float(x**k) for x in t]
        weighted = sum(p * lg for p, lg in zip(powers, logs, strict=True))
        return weighted / sum(powers) - 1 / k - mean_event_log

    lo, hi = (math.log(b) for b in _SHAPE_BOUNDS)
    if g(math.exp(lo)) > 0 or g(math.exp(hi)) < 0:
        return None
    for _ in range(200):
        mid = (lo + hi) / 2
        if g(math.exp(mid)) < 0:
            lo = mid
        else:
            hi = mid
    k = math.exp((lo + hi) / 2)
    scaled = (sum(x**k for x in t) / r) ** (1 / k)
    scale = scaled * top
    loglik = sum(math.log(k) - k * math.log(scale) + (k - 1) * math.log(x) for x in events) - sum(
        (o.life / scale) ** k for o in observations
    )
    return WeibullFit(k, scale, r, len(observations) - r, loglik)


def life_budget(*, plan_hours: float, observations: Sequence[LifeObservation]) -> LifeBudget:
    """The fitted B10 life once MIN_EVENTS elements were used up; the plan's until then."""
    number_check("plan interval_hours", plan_hours, positive=True)
    n = len(observations)
    events = sum(1 for o in observations if o.used_up)
    fit = weibull_fit(observations=observations) if events >= MIN_EVENTS else None
    if fit is not None:
        b10 = fit.quantile(LIFE_QUANTILE)
        return LifeBudget(
            hours=b10,
            source="fitted",
            changes=n,
            events=events,
            fit=fit,
            sentence=(
                f"The contaminant budget is calibrated from {n} recorded changes of this "
                f"filter on this unit class ({events} used up at the dP limit): B10 life "
                f"{b10:,.0f} h at the plan's reference fuel (Weibull shape {fit.shape:.2f}, "
                f"scale {fit.scale:,.0f} h), in place of the plan's {plan_hours:,.0f} h."
            ),
        )
    return LifeBudget(
        hours=plan_hours,
        source="plan",
        changes=n,
        events=events,
        fit=None,
        sentence=(
            f"The contaminant budget is the plan's estimate ({plan_hours:,.0f} h at its "
            f"reference fuel), not yet calibrated: {events} of {n} recorded changes of this "
            f"filter on this unit class were used up at the dP limit, and {MIN_EVENTS} are "
            "needed."
        ),
    )


def life_inputs(life: LifeBudget) -> dict[str, object]:
    """The figures behind a life budget (JSON-safe), for the projection's inputs."""
    fit = life.fit
    return {
        "source": life.source,
        "hours": life.hours,
        "changes": life.changes,
        "events": life.events,
        "quantile": LIFE_QUANTILE,
        "min_events": MIN_EVENTS,
        "shape": fit.shape if fit else None,
        "scale": fit.scale if fit else None,
    }


def budget_to_json(life: LifeBudget) -> dict[str, object]:
    """A life budget as JSON-safe values, whole (:func:`budget_from_json` reads it back)."""
    return dataclasses.asdict(life)


def budget_from_json(data: dict[str, Any]) -> LifeBudget:
    fit = data.get("fit")
    return LifeBudget(**{**data, "fit": WeibullFit(**fit) if fit else None})
