"""The headline tells the truth in every situation, in the terminal and on the page.

Sources named beside each check:

* numpy-financial 1.0 ``npv`` of the ledger's net cash flow (values[0] at
  t = 0, undiscounted) for whether the stand loses money on its own;
* common practice: what today's use nets is its gross margin less the rent and
  overheads it pays too (the definition the README states);
* the words of each situation are the project's own (tea/outputs/headline.py):
  these tests check that each situation gets its own, never the green banner
  of another.

The cases are the clay-corner demo case with its current use changed (demo
data as input only; no check value comes from it).
"""

from __future__ import annotations

import html as html_text
import re

import numpy_financial as npf
import pytest

import tea
from tea.outputs import headline, report, terminal

from conftest import copy_case, to_toml


def _case(demo_mappings, **field_and_costs):
    data = copy_case(demo_mappings["clay_corner_miscanthus"])
    for path, value in field_and_costs.items():
        section, _, key = path.partition("__")
        if value is None:
            data[section].pop(key, None)
        else:
            data[section][key] = value
    case = tea.load_text(to_toml(data), source="headline.toml")
    frame = tea.build_ledger(case)
    return case, frame, tea.summarise(case, frame)


def _npv(case, frame) -> float:
    return npf.npv(case["finance.discount_rate"], frame["net_cash_flow"].to_numpy())  # a real-rate case


def _today_nets(case) -> float:
    # common practice: the current use nets its margin less the rent and overheads it pays too
    return case["field.current_margin_per_ha"] - case["costs.rent_per_ha"] - case["costs.overheads_per_ha"]


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text.replace("\u2212", "-")).strip()


def _shown(case, frame, res, head):
    """The headline in the terminal summary and on the page (HTML text), each flattened."""
    term = _flat(terminal.summary_text(case, frame, res, yearly=False))
    html = report.summary_html(case, frame, res, sensitivity=False)
    page = _flat(re.sub(r"<[^>]+>", " ", html[html.index("<body"):]).replace("&#39;", "'"))
    assert _flat(head.sentence) in term and _flat(head.sentence) in page
    assert head.verdict.upper() in term and head.verdict in page
    assert f'class="decision {head.tone}"' in html
    return term, page


def test_both_lose_money_and_the_stand_loses_less(demo_mappings):
    case, frame, res = _case(demo_mappings, costs__rent_per_ha=400.0, field__current_margin_per_ha=100.0)
    assert _npv(case, frame) < 0  # numpy-financial: the stand loses money on its own
    assert _today_nets(case) < 0  # and today's use loses money after rent and overheads
    head = headline.headline(case, res)
    assert head.situation == "both_lose" and head.tone == "mixed"
    _shown(case, frame, res, head)
    assert "both uses lose money" in head.sentence and "loses" in head.sentence and "less" in head.sentence
    assert "earns" not in head.verdict.lower()  # never "earns more" for a stand that loses money


def test_an_assumed_zero_margin_is_said_and_names_the_key(demo_mappings):
    case, frame, res = _case(demo_mappings, field__current_margin_per_ha=None)
    assert case["field.current_margin_per_ha"] == 0.0
    head = headline.headline(case, res)
    assert head.situation == "assumed_zero" and head.tone == "neutral"
    _shown(case, frame, res, head)
    assert "not given" in head.sentence and "field.current_margin_per_ha" in head.sentence
    assert "more than the field's current use" not in head.sentence


def test_an_assumed_zero_margin_names_the_us_key(demo_mappings):
    data = copy_case(demo_mappings["sandy_slope_switchgrass"])
    data["field"].pop("current_margin_per_acre")
    case = tea.load_text(to_toml(data), source="us.toml")
    frame = tea.build_ledger(case)
    head = headline.headline(case, tea.summarise(case, frame))
    assert head.situation == "assumed_zero" and "field.current_margin_per_acre" in head.sentence
    assert "per acre per year" in head.sentence


def test_the_stand_earns_more(demo_mappings):
    case, frame, res = _case(demo_mappings)
    assert _npv(case, frame) > 0 and _today_nets(case) > 0
    head = headline.headline(case, res)
    assert head.situation == "earns_more" and head.tone == "good"
    _shown(case, frame, res, head)
    assert "more than the field's current use" in head.sentence


def test_the_stand_earns_less(demo_mappings):
    case, frame, res = _case(demo_mappings, field__current_margin_per_ha=600.0)
    assert _npv(case, frame) > 0 and res["eav_vs_current_use"] < 0
    head = headline.headline(case, res)
    assert head.situation == "earns_less" and head.tone == "bad"
    _shown(case, frame, res, head)
    assert "less than the field's current use" in head.sentence


@pytest.mark.parametrize("price", [40.0])
def test_a_stand_losing_money_against_a_paying_use_is_never_green(demo_mappings, price):
    case, frame, res = _case(demo_mappings, revenue__price_per_t_dm=price)
    assert _npv(case, frame) < 0 < _today_nets(case)
    head = headline.headline(case, res)
    assert head.situation == "earns_less" and head.tone == "bad"
    assert "loses money on its own" in head.sentence


@pytest.mark.parametrize("demo, section, key, value, ends_behind", [
    ("clay_corner_miscanthus", "costs", "removal_per_ha", 9000.0, True),  # a removal dearer than the cash made
    ("flood_meadow_willow", "revenue", "price_per_gj", 5.0, False),  # a coppice between two cuts
])
def test_a_payback_the_running_total_falls_back_from_is_said(demo_mappings, demo, section, key, value, ends_behind):
    """The payback year is the first year the running total of cash is back at zero (Brealey, Myers and Allen,
    Principles of Corporate Finance, ch. 5); a removal that costs more than the cash made by then, or the
    costs of a coppice's years between two cuts, take it below zero again. The year it does and the total at removal are read from numpy's running sum of the
    ledger's own net cash flow, and the headline, the terminal's payback row and the page's payback tile say
    both (the tile in the loss colour when the stand ends behind)."""
    import numpy as np

    data = copy_case(demo_mappings[demo])
    data[section][key] = value
    case = tea.load_text(to_toml(data), source="payback.toml")
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    running = np.cumsum(frame["net_cash_flow"].to_numpy())
    pay = res["payback_year"]
    again = next(t for t in range(int(pay) + 1, len(running)) if running[t] < 0)
    assert res["payback_lost_year"] == again
    assert res["cash_at_removal"] == pytest.approx(running[-1], rel=1e-12)
    assert (running[-1] < 0) == ends_behind
    total = f"{running[-1]:,.0f} {case.currency} per ha"
    clause = (f"below zero again in year {again} and ends the stand life at {total}" if ends_behind
              else f"below zero again in year {again} before ending at {total}")
    head = headline.headline(case, res)
    assert f"pays back in year {pay:.0f} but is {clause}." in _flat(head.sentence)
    term, page = _shown(case, frame, res, head)
    row = next(line for line in terminal.summary_text(case, frame, res).splitlines() if line.strip().startswith("Payback "))
    assert _flat(row).startswith(f"Payback year {pay:.0f}") and clause in term.split("Payback year", 1)[1]
    assert clause in page.split("Pays back in", 1)[1]
    html = report.summary_html(case, frame, res, sensitivity=False)
    tone = re.search(r'<div class="tile ?([a-z]*)">\s*<p class="label">Pays back in', html).group(1)
    assert (tone == "bad") == ends_behind


def test_a_payback_that_holds_has_no_caveat(demo_mappings):
    """The demo stand's running total stays above zero from its payback year to removal (numpy's running sum
    of the ledger's net cash flow): nothing is added to the payback."""
    import numpy as np

    case, frame, res = _case(demo_mappings)
    running = np.cumsum(frame["net_cash_flow"].to_numpy())
    assert (running[int(res["payback_year"]):] >= 0).all()
    assert res["payback_lost_year"] is None and headline.payback_caveat(case, res) == ""


def test_the_gain_tile_names_what_todays_use_nets_not_its_margin(demo_mappings):
    """The gain over the current use is against what today's use nets once its rent and overheads are paid
    (common practice, the README's definition): the page's tile says that amount, not the gross margin, which
    read as if giving up +120 a year had raised the gain."""
    case, frame, res = _case(demo_mappings, field__current_margin_per_ha=120.0, costs__rent_per_ha=180.0,
                             costs__overheads_per_ha=40.0)
    nets = _today_nets(case)
    assert nets == pytest.approx(-100.0)
    html = report.summary_html(case, frame, res, sensitivity=False)
    page = _flat(html_text.unescape(re.sub(r"<[^>]+>", " ", html)))
    assert f"present value, vs today's use at {nets:,.0f} EUR/ha/yr net of rent and overheads" in page
    assert "today's margin" not in page


def test_a_payback_beside_a_loss_says_it_counts_no_interest(demo_mappings):
    # Brealey, Myers and Allen (ch. 5): the payback period counts cash without discounting. Beside a loss at
    # the discount rate (numpy-financial npv < 0) a plain "pays back" would read as a contradiction; the
    # sentence says the payback counts no interest, and says nothing of interest where the stand earns
    case, frame, res = _case(demo_mappings, costs__rent_per_ha=250.0, field__current_margin_per_ha=100.0)
    assert _npv(case, frame) < 0 and res["payback_year"] is not None
    head = headline.headline(case, res)
    assert f"counted without interest, its cash flow pays back in year {res['payback_year']:.0f}" in head.sentence
    _shown(case, frame, res, head)
    case, frame, res = _case(demo_mappings)
    assert _npv(case, frame) > 0
    assert "without interest" not in headline.headline(case, res).sentence
