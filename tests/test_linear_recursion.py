"""The evaluator's short cut for a recursion that scales (tea/model/linear.py) gives the numbers of
stepping every row: growth standing uncut until a harvest takes it, over a screen of coppice fields
whose yields differ by row. The reference is the same recursion stepped year by year for every row
(the evaluator's general path), so the short cut may differ only by rounding."""

from __future__ import annotations

import numpy as np
import pytest

import tea
import tea.model.evaluate as ev
from conftest import CASES_DIR
from tea.model.evaluate import evaluate

LINES = ("uncut_t_dm", "standing_t_dm", "sold_t_dm", "biomass_revenue", "net_cash_flow")


@pytest.fixture(scope="module")
def fields():
    case = tea.load_case(CASES_DIR / "flood_meadow_willow.toml")
    rng = np.random.default_rng(7)
    values = dict(case.values)
    values["yield.site_factor"] = rng.uniform(0.5, 1.2, 500)
    values["costs.haul_distance_km"] = rng.uniform(5.0, 80.0, 500)
    return values


def test_the_short_cut_is_taken_and_equals_stepping_every_row(fields, monkeypatch):
    taken = []
    real = ev.scaled_recursion

    def spy(*args):
        got = real(*args)
        taken.append(got is not None)
        return got

    monkeypatch.setattr(ev, "scaled_recursion", spy)
    fast = evaluate(fields, lines=LINES, figures=("npv", "sold_t_dm"), rows=500)
    assert any(taken)  # the uncut-growth recursion went through the short cut
    monkeypatch.setattr(ev, "scaled_recursion", lambda *args: None)
    slow = evaluate(fields, lines=LINES, figures=("npv", "sold_t_dm"), rows=500)
    for name in LINES:
        np.testing.assert_allclose(fast.lines[name], slow.lines[name], rtol=1e-12, atol=1e-9, err_msg=name)
    for name in ("npv", "sold_t_dm"):
        np.testing.assert_allclose(fast.figures[name], slow.figures[name], rtol=1e-12, atol=1e-9, err_msg=name)


def test_a_yield_input_that_differs_inside_the_recursion_steps_every_row(fields, monkeypatch):
    """An input varying by row inside the recursion's own formula is no shared pattern: no short cut."""
    from tea.model import linear

    env = ev._Env({"yield.site_factor": np.ones((3, 1))}, 5, 3)
    d = ev.MODEL.line("uncut_t_dm")
    model = ev.expanded(ev.MODEL)
    twisted = ev.E.wrap(ev.E.I.yield_.site_factor * ev.E.lag(ev.E.L.uncut_t_dm, 1))
    from tea.model.declare import renamed

    assert linear.scaled_recursion(model, env, renamed(d, expr=twisted), lambda e, s: 0.0, ev._Env) is None
