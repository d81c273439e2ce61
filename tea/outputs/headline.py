"""The decision in plain words: one banner and one sentence, true in every situation.

The comparison that decides is the stand against the field's current use
(``eav_vs_current_use``: how much more or less a year the stand earns). Four
situations read differently, and each gets its own words:

* ``assumed_zero``: the case gave no current margin, so today's use is taken
  to earn nothing; the comparison rests on that assumption, and the sentence
  says so and names the key to give;
* ``both_lose``: the stand loses money (its own NPV < 0) and so does today's
  use after rent and overheads, but the stand loses less;
* ``earns_more``: the stand earns more than today's use;
* ``earns_less``: the stand earns less than today's use.

The terminal and the printed page show the same words.
"""

from __future__ import annotations

from dataclasses import dataclass

from tea.inputs import units
from tea.inputs.case import Case
from tea.model.results import Results
from tea.inputs import display

#: the situations, in the order they are tested
SITUATIONS = ("assumed_zero", "both_lose", "earns_more", "earns_less")


@dataclass(frozen=True)
class Headline:
    """The decision: a situation, a short banner, a tone for the page, and a sentence with the numbers."""

    situation: str
    verdict: str
    tone: str  # good | bad | mixed | neutral
    sentence: str


def margin_assumed(case: Case) -> bool:
    """True when the case left the current use's margin out and it is taken as 0."""
    return case.origin.get("field.current_margin_per_ha") == "default"


def _per_area(case: Case, value_per_ha: float) -> str:
    """Money per ha said in the case's units and currency: "-1,548 EUR per ha", "626 USD per acre"."""
    value, _ = display.convert(value_per_ha, "money/ha", case.unit_system)
    return f"{display.money(value, case.currency)} per {'acre' if case.unit_system == 'us_customary' else 'ha'}"


def payback_caveat(case: Case, res: Results) -> str:
    """What the payback year alone hides, as a clause ("below zero again in year 15 and ends the stand life at
    -1,548 EUR per ha"), or "" where the running total of cash stays at or above zero from the payback year on.

    The payback year is the first year the running total is back at zero;
    a stand whose removal (or a replanting, a bad harvest) costs more than
    the cash it has made by then is below zero again afterwards, and may end
    its life behind.
    """
    again, end = res["payback_lost_year"], res["cash_at_removal"]
    if res["payback_year"] is None or again is None:
        return ""
    total = _per_area(case, end or 0.0)
    if (end or 0.0) < 0:
        return f"below zero again in year {again:.0f} and ends the stand life at {total}"
    return f"below zero again in year {again:.0f} before ending at {total}"


def headline(case: Case, res: Results) -> Headline:
    """The banner and sentence of a computed case."""
    def money(name: str) -> str:
        return _per_area(case, abs(res[name] or 0.0)) + " per year"

    diff = res["eav_vs_current_use"] or 0.0
    stand_loses = (res["npv"] or 0.0) < 0
    today_loses = (res["current_use_net"] or 0.0) < 0
    opening = f"Over {case.stand_life} years at {display.percent(res.discount_rate_real, 1)} (real), "
    pay = res["payback_year"]
    caveat = payback_caveat(case, res)
    # payback counts the cash without interest: beside a loss at the discount rate, the sentence says so
    paid = ("; counted without interest, its cash flow pays back" if stand_loses else ", and its cash flow pays back")
    closing = (f"{paid} in year {pay:.0f}" + (f" but is {caveat}." if caveat else ".")
               if pay is not None else ", and its cash flow does not pay back within the stand life.")
    if margin_assumed(case):
        key = "field." + units.spell("current_margin_per_{ha}", case.unit_system)
        own = ("loses " if stand_loses else "earns ") + money("eav")
        return Headline(
            "assumed_zero", "Compared with an assumed zero margin", "neutral",
            f"{opening}the stand on its own {own}{closing} The field's current margin was not given, so today's "
            f"use is taken to earn nothing and the comparison with it rests on that; give {key} to compare.")
    if stand_loses and today_loses:
        words = ("less" if diff >= 0 else "more")
        return Headline(
            "both_lose" if diff >= 0 else "earns_less",
            "Both lose money; the stand loses less" if diff >= 0 else "Both lose money; the stand loses more",
            "mixed" if diff >= 0 else "bad",
            f"{opening}both uses lose money: the stand loses {money('eav')} and today's use "
            f"{money('current_use_net')} after rent and overheads, so the stand loses "
            f"{money('eav_vs_current_use')} {words}{closing}")
    if diff >= 0:
        return Headline("earns_more", "Earns more than the field's current use", "good",
                        f"{opening}the stand earns {money('eav_vs_current_use')} more than the field's current use"
                        + closing)
    own = " and loses money on its own" if stand_loses else ""
    return Headline("earns_less", "Earns less than the field's current use", "bad",
                    f"{opening}the stand earns {money('eav_vs_current_use')} less than the field's current use"
                    f"{own}{closing}")
