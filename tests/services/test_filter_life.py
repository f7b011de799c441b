"""Calibrated filter life: Weibull by maximum likelihood with right censoring.

Checked against scipy.stats (scipy 1.14+: ``stats.CensoredData.right_censored`` with
``stats.weibull_min.fit(..., floc=0)``, the reference maximum-likelihood fit) on seeded samples,
and the B10 quantile against ``stats.weibull_min.ppf``. The likelihood is the one in the
NIST/SEMATECH e-Handbook of Statistical Methods, section 8.4.1.2.
"""

from __future__ import annotations

import math
import random
from datetime import UTC, datetime, timedelta

import pytest

from services.filter_life import (
    LIFE_QUANTILE,
    MIN_EVENTS,
    ChangeRecord,
    LifeObservation,
    life_budget,
    life_observations,
    weibull_fit,
)
from tests.services.test_intervals import CODE_18_UPPER, CODE_20_UPPER, project

stats = pytest.importorskip("scipy.stats")

T0 = datetime(2026, 1, 1, tzinfo=UTC)


def _sample(
    seed: int, n: int, shape: float, scale: float, censor_at: float
) -> list[LifeObservation]:
    """Weibull lives; an element still in service at ``censor_at`` (or taken off early at a
    random time, as at a planned change) is censored there."""
    rng = random.Random(seed)
    out = []
    for _ in range(n):
        life = rng.weibullvariate(scale, shape)
        taken_off = min(censor_at, rng.uniform(0.3, 2.0) * scale)
        out.append(LifeObservation(life=min(life, taken_off), used_up=life <= taken_off))
    return out


def _scipy_fit(obs: list[LifeObservation]) -> tuple[float, float]:
    data = stats.CensoredData.right_censored([o.life for o in obs], [not o.used_up for o in obs])
    shape, _loc, scale = stats.weibull_min.fit(data, floc=0)
    return shape, scale


def _loglik(obs: list[LifeObservation], k: float, lam: float) -> float:
    """The censored log-likelihood through scipy's logpdf and logsf (events and censored)."""
    return sum(
        stats.weibull_min.logpdf(o.life, k, scale=lam)
        if o.used_up
        else stats.weibull_min.logsf(o.life, k, scale=lam)
        for o in obs
    )


@pytest.mark.parametrize(
    ("seed", "n", "shape", "scale", "censor_at"),
    [(1, 40, 2.0, 500.0, 700.0), (2, 25, 1.3, 800.0, 600.0), (3, 60, 3.5, 450.0, 450.0),
     (4, 12, 0.8, 300.0, 1e9)],
)  # fmt: skip
def test_fit_matches_scipy_on_seeded_censored_samples(
    seed: int, n: int, shape: float, scale: float, censor_at: float
) -> None:
    obs = _sample(seed, n, shape, scale, censor_at)
    assert any(not o.used_up for o in obs) and any(o.used_up for o in obs)
    fit = weibull_fit(observations=obs)
    assert fit is not None
    ref_shape, ref_scale = _scipy_fit(obs)
    assert fit.shape == pytest.approx(ref_shape, rel=2e-3)
    assert fit.scale == pytest.approx(ref_scale, rel=2e-3)
    # Our optimum is at least as likely as scipy's (both maximise the same likelihood).
    assert fit.log_likelihood == pytest.approx(_loglik(obs, fit.shape, fit.scale), rel=1e-9)
    assert fit.log_likelihood >= _loglik(obs, ref_shape, ref_scale) - 1e-6
    assert fit.events == sum(o.used_up for o in obs)
    assert fit.events + fit.censored == n


def test_b10_is_scipys_tenth_percentile() -> None:
    fit = weibull_fit(observations=_sample(7, 30, 2.2, 600.0, 800.0))
    assert fit is not None
    expected = stats.weibull_min.ppf(0.10, fit.shape, scale=fit.scale)
    assert fit.quantile(LIFE_QUANTILE) == pytest.approx(expected, rel=1e-9)


def test_censoring_lengthens_the_life() -> None:
    """Elements taken off with life left are evidence of longer life than events alone."""
    events = [LifeObservation(life=x, used_up=True) for x in (300, 400, 450, 500, 620)]
    alone = weibull_fit(observations=events)
    more = weibull_fit(
        observations=[*events, *(LifeObservation(life=600, used_up=False) for _ in range(5))]
    )
    assert alone is not None and more is not None
    assert more.scale > alone.scale


def test_no_event_no_fit() -> None:
    assert weibull_fit(observations=[LifeObservation(life=500, used_up=False)] * 8) is None


def test_life_observations_pair_changes_and_read_dp_against_the_limit() -> None:
    changes = [
        ChangeRecord(T0, 1000.0, None),
        ChangeRecord(T0 + timedelta(days=30), 1400.0, 0.9),  # at/over 0.8 bar: used up
        ChangeRecord(T0 + timedelta(days=60), 1800.0, 0.4),  # below: censored
        ChangeRecord(T0 + timedelta(days=90), None, 1.0),  # no meter: left out
        ChangeRecord(T0 + timedelta(days=99), 2200.0, None),  # before has no meter: left out
        ChangeRecord(T0 + timedelta(days=120), 100.0, 1.2),  # meter replaced: left out
        ChangeRecord(T0 + timedelta(days=150), 450.0, 0.8),  # exactly at the limit: used up
        ChangeRecord(T0 + timedelta(days=180), 900.0, None),  # dP not recorded: censored
    ]
    got = life_observations(changes=changes, dp_limit_bar=0.8)
    assert [(o.life, o.used_up) for o in got] == [
        (400, True), (400, False), (350, True), (450, False)
    ]  # fmt: skip
    # Without a dP limit in the plan, nothing is known to be used up.
    assert not any(o.used_up for o in life_observations(changes=changes, dp_limit_bar=None))


def test_plan_estimate_until_enough_events_then_the_fitted_b10() -> None:
    obs = _sample(11, 40, 2.0, 500.0, 700.0)
    events = [o for o in obs if o.used_up]
    few = [*events[: MIN_EVENTS - 1], *[o for o in obs if not o.used_up]]
    plan = life_budget(plan_hours=500.0, observations=few)
    assert plan.source == "plan" and plan.hours == 500.0 and plan.fit is None
    assert f"{MIN_EVENTS - 1} of {len(few)} recorded changes" in plan.sentence
    assert "plan's estimate" in plan.sentence
    fitted = life_budget(plan_hours=500.0, observations=obs)
    assert fitted.source == "fitted" and fitted.fit is not None
    ref_shape, ref_scale = _scipy_fit(obs)
    b10 = stats.weibull_min.ppf(0.10, ref_shape, scale=ref_scale)
    assert fitted.hours == pytest.approx(b10, rel=5e-3)
    assert f"from {len(obs)} recorded changes" in fitted.sentence and "B10" in fitted.sentence


def test_bad_numbers_are_refused_by_name() -> None:
    with pytest.raises(ValueError, match="life observation"):
        LifeObservation(life=math.nan, used_up=True)
    with pytest.raises(ValueError, match="interval_hours"):
        life_budget(plan_hours=0.0, observations=[])


def test_the_fitted_life_states_the_budget_in_the_projection() -> None:
    """The budget is the life at the plan's reference burn and fuel (the mass balance of
    filter life, common practice). Fuel at ISO 4406 code 20 (<= 10,000 per mL) against the
    reference code 18 (<= 2,500 per mL), ISO 4406:1999 Table 1, spends it 4x as fast."""
    burn = 30.0  # the plan's reference burn in tests/services/test_intervals.py
    spent = 3_000.0 * CODE_18_UPPER  # the 3,000 L of reference fuel burned since the change
    fitted = life_budget(
        plan_hours=500.0,
        observations=[LifeObservation(life=x, used_up=True) for x in (200, 260, 300, 340, 420)],
    )
    assert fitted.source == "fitted"
    for life, budget_hours in ((None, 500.0), (fitted, fitted.hours)):
        p = project(current_concentration_per_ml=CODE_20_UPPER, life=life)
        left = budget_hours * burn * CODE_18_UPPER - spent
        assert p.basis.value == "contaminant_budget"
        assert p.due.hours == pytest.approx(10_100.0 + left / (burn * CODE_20_UPPER))
    assert fitted.sentence in p.explanation
