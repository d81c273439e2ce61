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
    # the deterministic NPV is the expected value of the two outcomes risk draws: NPV(p) = (1 - p) NPV(0) +
    # p NPV(1). The one step in the ledger is the spreading charge, paid in any year with fertiliser: a failed
    # stand with no offtake in its first harvest year skips it, so the two differ by at most p x that charge.
    case = load_case(path)
    p = case["establishment.failure_probability"]
    npv = tea.summarise(case)["npv"]
    ok = tea.summarise(case.replace(**{"establishment.failure_probability": 0.0}))["npv"]
    failed = tea.summarise(case.replace(**{"establishment.failure_probability": 1.0}))["npv"]
    assert abs(npv - ((1 - p) * ok + p * failed)) <= p * case["nutrients.spreading_per_ha"] + 1e-9
    assert failed < ok  # a failure costs the replanting and a year's yield


def test_risk_mean_with_only_the_failure_event_matches_run():
    # the failure event as risk draws it (Bernoulli with the case's probability, nothing else drawn): the mean
    # NPV estimates the deterministic NPV within 4 standard errors (the spreading step is far smaller)
    case = load_case(CLAY)
    draws = 20_000
    p = case["establishment.failure_probability"]
    failed = np.random.default_rng(5).random(draws) < p
    values = risk.draw_values(case, risk.Inputs({}, failed, np.full(draws, p)))
    npv = evaluate(values, figures=("npv",), rows=draws).figures["npv"]
    mean, se = npv.mean(), npv.std(ddof=1) / np.sqrt(draws)
    assert abs(mean - tea.summarise(case)["npv"]) < 4 * se
