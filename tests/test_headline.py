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
