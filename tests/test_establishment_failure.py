"""Establishment failure in `tea run`: the expected replanting and the expected year of yield lost, consistent
with the failure event `tea risk` draws."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import tea
from tea.analysis import risk
from tea.inputs.case import load_case
from tea.model.evaluate import evaluate

from conftest import CASES_DIR, DEMO_CASES

CLAY = CASES_DIR / "clay_corner_miscanthus.toml"
SANDY = CASES_DIR / "sandy_slope_switchgrass.toml"


def test_expected_ramp_by_hand():
    # hand calculation: ramp [0, 0.4, 0.8], failure 0.15, a failed stand a year late:
    # E[f_t] = f_t + 0.15 (f_(t-1) - f_t): 0, 0.34, 0.74, 0.97, then 1; the planting year (0) grows no
    # crop, so its fraction is 0 (not 1 - 0.15 = 0.85)
    case = load_case(CLAY).replace(**{"yield.ramp_up_fractions": [0.0, 0.4, 0.8],
                                      "establishment.failure_probability": 0.15})
    led = tea.build_ledger(case)
    assert_allclose(led["ramp_expected"][0:6], [0.0, 0.0, 0.34, 0.74, 0.97, 1.0], rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("path", DEMO_CASES, ids=lambda p: p.stem)
def test_npv_is_the_probability_weighted_outcome(path):
    # the deterministic NPV is the expected value of the two outcomes risk draws (the expectation of a
    # two-point outcome, plain arithmetic): NPV(p) = (1 - p) NPV(0) + p NPV(1), to the rounding of the sums.
    # The spreading pass is paid only in a year whose harvest takes dry matter: a failed stand has none in
    # its first harvest year, so the expected ledger takes the pass with the chance that there is one.
    case = load_case(path)
    p = case["establishment.failure_probability"]
    npv = tea.summarise(case)["npv"]
    ok = tea.summarise(case.replace(**{"establishment.failure_probability": 0.0}))["npv"]
    failed = tea.summarise(case.replace(**{"establishment.failure_probability": 1.0}))["npv"]
    assert npv == pytest.approx((1 - p) * ok + p * failed, rel=1e-12, abs=1e-9)
    assert failed < ok  # a failure costs the replanting and a year's yield


def test_spreading_is_paid_with_the_chance_of_a_harvest_that_takes_something():
    # the demo clay field: ramp-up [0, 0.4, 0.8], first harvest in year 2, failure 0.15, spreading 12 per
    # pass. Year 2: the stand as planted harvests 0.4 of its yield and pays the pass; a failed stand (a year
    # late) has nothing to cut and pays none: expected pass 0.85 x 12 = 10.20 (hand arithmetic). Year 3 both
    # harvest something: 12.
    case = load_case(CLAY)
    assert case["establishment.failure_probability"] == 0.15 and case["nutrients.spreading_per_ha"] == 12.0
    assert case["yield.ramp_up_fractions"] == [0.0, 0.4, 0.8] and case["harvest.first_year"] == 2
    led = tea.build_ledger(case)
    without = tea.build_ledger(case.replace(**{"nutrients.spreading_per_ha": 0.0}))
    passes = (led["fertiliser_cost"] - without["fertiliser_cost"]) / led["cost_index"]
    assert_allclose(passes[:5], [0.0, 0.0, 0.85 * 12.0, 12.0, 12.0], rtol=1e-12, atol=1e-12)


def test_risk_mean_with_only_the_failure_event_is_the_run_at_the_share_drawn():
    # the failure event as risk draws it (Bernoulli with the case's probability, nothing else drawn): the
    # draws take one of two NPVs, so their mean is (1 - f) NPV(0) + f NPV(1) for the share f that failed, and
    # the run's NPV is the same at f = p (plain arithmetic of a two-point mean)
    case = load_case(CLAY)
    draws = 20_000
    p = case["establishment.failure_probability"]
    failed = np.random.default_rng(5).random(draws) < p
    values = risk.draw_values(case, risk.Inputs({}, failed, np.full(draws, p)))
    npv = evaluate(values, figures=("npv",), rows=draws).figures["npv"]
    f = failed.mean()
    ok = tea.summarise(case.replace(**{"establishment.failure_probability": 0.0}))["npv"]
    bad = tea.summarise(case.replace(**{"establishment.failure_probability": 1.0}))["npv"]
    assert npv.mean() == pytest.approx((1 - f) * ok + f * bad, rel=1e-12)
    assert npv.mean() - tea.summarise(case)["npv"] == pytest.approx((f - p) * (bad - ok), rel=1e-9, abs=1e-9)


def test_risk_mean_with_no_failure_and_nothing_drawn_is_the_run():
    # zero failure probability and an empty [risk.inputs]: every draw is the case itself, so the mean is the
    # run's NPV (a mean of identical values)
    case = load_case(CLAY).replace(**{"establishment.failure_probability": 0.0, "risk.inputs": {},
                                      "risk.correlations": [], "risk.failure_event": True})
    res = risk.run(case, draws=300, seed=7, progress=False)
    assert res.failure_share == 0.0
    assert res.stats["npv"].mean == pytest.approx(tea.summarise(case)["npv"], rel=1e-12)
    assert res.stats["npv"].sd == pytest.approx(0.0, abs=1e-9)
