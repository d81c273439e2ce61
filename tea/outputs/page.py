"""One case's page: every value the grower's page shows, as plain values for the template.

The page only renders: every figure comes from :class:`tea.model.results.Results`
and the ledger, formatted by :mod:`tea.outputs.terminal` and
:mod:`tea.inputs.display` exactly as the terminal shows it, in the case's
units and currency. Charts are drawn once per page (:func:`page_charts`).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd
from markupsafe import Markup

from tea.core.texts import CAUTIONS
from tea.inputs.case import Case
from tea.model.results import Results
from tea.inputs import display
from tea.outputs import charts, pdf, terminal
from tea.outputs.yield_text import page_line
from tea.outputs.advice import crop_name, grower_warnings, non_native_caution, source_text
from tea.outputs.headline import headline, payback_caveat

#: densest type size; a page with the tornado chart of NPV has one step more, BESIDE
MAX_DENSITY = 4
#: the last layout step of a page with a tornado chart: type of MAX_DENSITY, the chart beside the yearly table
BESIDE = MAX_DENSITY + 1
#: type size of each density [pt] (templates/report.css: .page.d0 ... .page.d5)
TYPE_PT = (7.6, 7.2, 6.8, 6.4, 6.0, 6.0)
#: chart size of each density, as a share of the drawn size (templates/report.css: .page.dN .chart)
CHART_SCALE = (1.0, 0.92, 0.84, 0.76, 0.70, 0.66)
#: yearly rows shown in full before runs of identical years are condensed
MAX_TABLE_ROWS = 24
#: a page's expected height at density 0 [CSS px]: its three charts, the rest less the yearly table, one yearly
#: row, and a tornado chart's block and bar. Measured on the demo pages laid out with templates/report.css; they
#: set only where the search for a page's density starts, the layout decides (tea.outputs.pdf.fit)
CHARTS_PX, TEXT_PX, ROW_PX, TORNADO_PX, BAR_PX = 159.0, 702.5, 7.5, 92.0, 14.0
#: bars of a tornado chart handed in ready-made, for the estimate
GIVEN_BARS = 10
#: width and height of each paper size [mm] (ISO 216; ANSI/ASME Y14.1), and the page's margins across and down
#: (templates/base.html.j2, @page): the charts scale with the width between the margins
PAPER_MM, MARGINS_MM = {"A4": (210.0, 297.0), "Letter": (215.9, 279.4)}, (12.0 + 12.0, 11.0 + 13.0)
MINUS = "\u2212"


# ----------------------------------------------------------------------------- formatting
def print_minus(text: str) -> str:
    """Formatted numbers with a true minus sign (U+2212), which cannot be missed in print.

    >>> print_minus("-1,234 EUR/ha; -5.20 t CO2e/ha; year-0 cost")
    '−1,234 EUR/ha; −5.20 t CO2e/ha; year-0 cost'
    """
    out = []
    for i, ch in enumerate(text):
        starts_number = i + 1 < len(text) and text[i + 1].isdigit() and (i == 0 or not text[i - 1].isalnum())
        out.append(MINUS if ch == "-" and starts_number else ch)
    return "".join(out)


def per_area(case: Case) -> str:
    return "acre" if case.unit_system == "us_customary" else "ha"


def fig_text(case: Case, res: Results, name: str, whole: bool = False) -> str:
    """A decision figure as the terminal shows it, with a print minus sign."""
    return print_minus(terminal._fig(res, case, name, whole=whole))


def value_of(res: Results, name: str) -> float | None:
    return res.per_ha.get(name)


def tone(value: float | None, good_if_negative: bool = False) -> str:
    if value is None or value == 0:
        return ""
    return "good" if (value < 0) == good_if_negative else "bad"


def _money(case: Case, value: float | None, unit: str = "money/ha", digits: int | None = None) -> str:
    v, shown = display.convert(value, unit, case.unit_system)
    price_unit = case.price_unit
    return print_minus(display.money(v, display.unit_text(shown, case.currency, price_unit), digits))


def _quantity(case: Case, value: float | None, unit: str) -> str:
    v, shown = display.convert(value, unit, case.unit_system)
    return print_minus(f"{display.number(v)} {shown}")


def _words(label: str) -> str:
    """A schema label such as ``cropland_full_till`` in words."""
    return str(label).replace("_", " ")


def rate_text(res: Results) -> str:
    real = display.percent(res.discount_rate_real, 1)
    if res.rate_basis == "nominal":
        # (1 + nominal) / (1 + inflation) - 1, not their difference: the sum is shown, so that no reader subtracts
        return (f"{display.percent(res.discount_rate_given, 1)} nominal with {display.percent(res.inflation, 1)} "
                f"inflation = {display.percent(res.discount_rate_real, 2)} real "
                f"({1 + res.discount_rate_given:.4g} / {1 + res.inflation:.4g} \u2212 1, Fisher)")
    return f"{real} real"


def _source(case: Case, path: str) -> str:
    """Where a value came from, as the grower's page names it (see :mod:`tea.outputs.advice`)."""
    return source_text(case, path)


def _establishment_source(case: Case) -> str:
    """Where the establishment cost's inputs came from: its costs (each money input of the establishment that
    is not 0, the grant included) and the planting rate, each named where they differ; each source once."""
    from tea.inputs import schema

    costs = list(dict.fromkeys(_source(case, k.path) for k in schema.KEYS
                               if k.section == "establishment" and k.money and case.values.get(k.path)))
    rate = _source(case, "establishment.planting_units_per_ha")
    return rate if costs in ([], [rate]) else f"{'; '.join(costs)}; planting rate: {rate}"


# ----------------------------------------------------------------------------- a case page
@dataclass(frozen=True)
class Tile:
    """One key figure: its label, its value as formatted, and two lines of context."""

    label: str
    value: str
    tone: str = ""
    whole: str = ""
    hint: str = ""

    @property
    def number(self) -> str:
        """The number at the start of the value ("" if it does not start with one)."""
        m = _NUMBER.match(self.value)
        return m.group(0) if m else ""

    @property
    def unit(self) -> str:
        """The rest of the value after its number."""
        return self.value[len(self.number):].strip()


_NUMBER = re.compile(r"^[\u2212-]?[\d,]+(\.\d+)?( %)?")


def _tiles(case: Case, res: Results) -> list[Tile]:
    per = per_area(case)
    life = case.stand_life
    area_v, area_u = display.area(case.area_ha, case.unit_system)
    field = f"whole field ({display.number(area_v)} {area_u}): "

    def whole(name: str) -> str:
        return field + fig_text(case, res, name, whole=True) if value_of(res, name) is not None else ""

    def val(name: str) -> str:
        return "–" if value_of(res, name) is None else fig_text(case, res, name)

    def note(name: str, otherwise: str) -> str:
        return res.notes[name] if value_of(res, name) is None and name in res.notes else otherwise

    tiles = [
        Tile("Net present value", val("npv"), tone(value_of(res, "npv")), whole("npv"),
             f"all cash in and out over {life} years, valued today at "
             f"{display.percent(res.discount_rate_real, 1)} real"),
        Tile("Gain over the current use", val("npv_vs_current_use"), tone(value_of(res, "npv_vs_current_use")),
             whole("npv_vs_current_use"),
             f"present value, vs today's use at {fig_text(case, res, 'current_use_net')} net of rent and "
             "overheads"),
        Tile("The same gain, per year", val("eav_vs_current_use"), tone(value_of(res, "eav_vs_current_use")),
             whole("eav_vs_current_use"), f"an even yearly amount over the {life}-year stand life"),
        Tile("Rate of return (IRR)", val("irr"), "", "",
             note("irr", f"real; against the current use: "
                  + (val("irr_vs_current_use") if value_of(res, "irr_vs_current_use") is not None else "not defined"))),
        Tile("Pays back in", val("payback_year"),
             "" if value_of(res, "payback_year") is not None and (value_of(res, "cash_at_removal") or 0) >= 0
             else "bad", "",
             note("payback_year", "when the running total of cash is back above zero"
                  + (f"; {caveat}" if (caveat := payback_caveat(case, res)) else "")
                  + (f"; counting interest, {val('discounted_payback_year')}"
                     if value_of(res, "discounted_payback_year") is not None else ""))),
        Tile("Peak funding need", val("peak_funding_need"), "", whole("peak_funding_need"),
             f"the deepest point of the running total, in {val('peak_funding_year')}"
             if value_of(res, "peak_funding_year") is not None else "the cash never runs below zero"),
        Tile("Break-even price", val("breakeven_price"), "", "",
             f"price assumed {_price(case)}; to match the current use {val('breakeven_price_vs_current_use')}"),
        Tile("Break-even yield", val("breakeven_sold_t_dm_per_ha_per_year"), "", "",
             note("breakeven_mature_yield_t_dm_per_ha", _breakeven_yield_hint(case, res))),
        Tile("Soil carbon gained", val("soc_gain_t_c"), tone(value_of(res, "soc_gain_t_c")),
             whole("soc_gain_t_c"), _soc_hint(case, res)),
        Tile("Net greenhouse-gas balance", val("ghg_net_t_co2e"), tone(value_of(res, "ghg_net_t_co2e"), True),
             whole("ghg_net_t_co2e"),
             f"emissions {val('ghg_emissions_t_co2e')} less the soil carbon gain over the stand life; below zero "
             f"is a net removal; {val('ghg_net_with_reversion_t_co2e')} once the field returns to its current use"),
    ]
    credits = value_of(res, "carbon_credit_revenue") or 0.0
    if credits > 0:
        tiles.append(Tile("Carbon credits, present value", val("carbon_credit_pv"), "", whole("carbon_credit_pv"),
                          f"{val('credited_t_co2e')} credited over the stand life at {_credit_price(case)}, "
                          f"{val('credit_payback_t_co2e')} paid back at removal; net of fees"))
    grant = case.values.get("establishment.grant_per_ha") or 0.0
    tiles.append(Tile("Establishment cost", val("establishment_cost"), "", whole("establishment_cost"),
                      (f"before the grant of {_money(case, grant, 'money/ha')}; " if grant else "")
                      + "with the expected replanting"))
    if len(tiles) % 4:  # fill the last row with the current use's margin, the yardstick of the page
        tiles.append(Tile("Current use earns", val("current_margin"), "", whole("current_margin"),
                          f"{_words(case['field.current_use'])}: its gross margin, before rent and overheads"))
    return [Tile(t.label, t.value, t.tone, t.whole, print_minus(t.hint)) for t in tiles]


def _breakeven_yield_hint(case: Case, res: Results) -> str:
    """Beside the break-even in dry matter sold: the case's own, and the break-even as the mature yield the case
    gives (before its site factor and losses), the case's beside it; numbers in the tile's unit."""
    def number(value: float | None) -> str:
        return "–" if value is None else f"{display.convert(value, 't DM/ha/yr', case.unit_system)[0]:,.2f}"

    before = display.before_site_factor(case["yield.site_factor"])
    return (f"sold a year on average (case {number(value_of(res, 'mean_sold_t_dm_per_year'))}); as mature yield"
            + (f" {before}" if before else "")
            + f": {number(value_of(res, 'breakeven_mature_yield_t_dm_per_ha'))} "
            f"(case {number(case['yield.mature_t_dm_per_ha'])})")


def _credit_price(case: Case) -> str:
    """The credit price as the case gives it, per tonne of CO2e (a credit is a metric tonne wherever it is
    sold); in a US customary case also per short ton, the unit its tonnages are shown in."""
    price = case["carbon.credit_price_per_t_co2e"]
    if case.unit_system != "us_customary":
        return f"{_money(case, price, 'money', 2)}/t CO2e"
    per_short_ton, _ = display.convert(price, "money/t CO2e", case.unit_system)
    return (f"{_money(case, per_short_ton, 'money', 2)}/short ton CO2e "
            f"({_money(case, price, 'money', 2)}/metric ton)")


def _soc_hint(case: Case, res: Results) -> str:
    gain = value_of(res, "soc_gain_t_c") or 0.0
    if gain > 0:
        return f"= {fig_text(case, res, 'soc_gain_t_co2e')}; lost again if the field returns to its current use"
    if gain < 0:
        return f"= {fig_text(case, res, 'soc_gain_t_co2e')}: the crop holds less soil carbon than the current use"
    return "the crop holds the same soil carbon as the current use"


def _price(case: Case) -> str:
    if case.price_basis == "gj":
        return _money(case, case["revenue.price_per_gj"], "money/GJ", 2)
    return _money(case, case["revenue.price_per_t_dm"], "money/t DM", 2)


def _loan_line(case: Case, res: Results) -> str:
    if not value_of(res, "loan_principal"):
        return ""
    cover = (f"lowest DSCR of the covenant test years {fig_text(case, res, 'min_dscr')} in "
             f"{fig_text(case, res, 'min_dscr_year')}"
             + (", a year whose cash available is nil or negative" if terminal.no_cash_in_a_test_year(res) else "")
             + f" (covenant {fig_text(case, res, 'dscr_covenant')}" if value_of(res, "min_dscr") is not None else "")
    # debt service the stand's own cash leaves to other funds, in any year (a grace year's interest included)
    interest_in_grace = (case["loan.grace_years"] or 0) > 0 and case["loan.grace_interest"] != "capitalised"
    short = (f"; the stand's cash leaves {fig_text(case, res, 'money_short_of_debt_service')} of debt service "
             f"uncovered{', grace years included' if interest_in_grace else ''}"
             if (value_of(res, "money_short_of_debt_service") or 0) > 0 else "")
    below = value_of(res, "years_below_covenant") or 0
    level = case["loan.profile"] == "annuity"  # the only profile whose payment is the same each year
    # the loan is paid in money of each year, the rest of the page in today's money
    year_money = " in money of each year" if case["finance.inflation"] else ""
    return (f"{fig_text(case, res, 'loan_principal')} at {display.percent(case['loan.rate'], 1)}, repaid at "
            f"{'' if level else 'up to '}{fig_text(case, res, 'loan_payment')}{year_money}; {cover}"
            + ((f"; {below:.0f} year{'s' if below != 1 else ''} below)" if below else ")") if cover else "") + short
            + (f"; LLCR {fig_text(case, res, 'llcr')} at the first test" if value_of(res, "llcr") is not None else "")
            + f"; own funding peaks at {fig_text(case, res, 'equity_peak_funding_need')}.")


@dataclass(frozen=True)
class Cell:
    text: str
    tone: str = ""


def _cash_rows(case: Case, frame: pd.DataFrame) -> tuple[list[list[Cell]], bool]:
    """The yearly cash table, condensed when long (runs of three or more identical years)."""
    system = case.unit_system
    rows = []
    for _, r in frame.iterrows():
        sold, _u = display.convert(float(r["sold_t_dm"]), "t DM/ha", system)
        money = [display.convert(float(r[k]), "money/ha", system)[0]
                 for k in ("total_revenue", "total_cost", "net_cash_flow", "cumulative_cash_flow")]
        shown = (f"{sold:,.1f}" if r["harvest"] > 0 and sold > 0 else "–",
                 *(display.money(v, digits=0) for v in money))
        rows.append((int(r["year"]), shown, money))
    condensed = False
    if len(rows) > MAX_TABLE_ROWS:
        grouped: list[tuple[str, tuple, list]] = []
        i = 0
        while i < len(rows):
            j = i
            while j + 1 < len(rows) and rows[j + 1][1][:4] == rows[i][1][:4]:
                j += 1
            if j - i >= 2:
                grouped.append((f"{rows[i][0]}–{rows[j][0]}", rows[i][1][:4] + (rows[j][1][4],), rows[j][2]))
                condensed = True
                i = j + 1
            else:
                grouped.append((str(rows[i][0]), rows[i][1], rows[i][2]))
                i += 1
    else:
        grouped = [(str(y), s, m) for y, s, m in rows]
    out = []
    for year, shown, money in grouped:
        net, cum = money[2], money[3]
        out.append([Cell(year), Cell(shown[0]), Cell(print_minus(shown[1])), Cell(print_minus(shown[2])),
                    Cell(print_minus(shown[3]), "neg" if net < -0.5 else ""),
                    Cell(print_minus(shown[4]), "neg" if cum < -0.5 else "")])
    return out, condensed


def _assumptions(case: Case, res: Results) -> list[dict[str, str]]:
    v = case.values
    per = per_area(case)
    area_v, area_u = display.area(case.area_ha, case.unit_system)
    items = [
        ("Field", f"{v.get('field.name', '')}, {display.number(area_v)} {area_u}; {_words(v['field.climate'])} "
                  f"climate, {_words(v['field.soil'])} soil", _source(case, "field.area_ha")),
        ("Current use", f"{_words(v['field.current_use'])}, earning {fig_text(case, res, 'current_margin')}",
         _source(case, "field.current_margin_per_ha")),
        ("Crop", case.crop_words, f"crop preset {_words(case.preset.name)}"),
        ("Stand life", f"{case.stand_life} years", _source(case, "finance.stand_life_years")),
        ("Mature yield", f"{_quantity(case, v['yield.mature_t_dm_per_ha'], 't DM/ha/yr')} "
                         f"× site factor {v['yield.site_factor']:.2f}" + page_line(case),
         _source(case, "yield.mature_t_dm_per_ha")),
        ("Harvest", _harvest_text(case), _source(case, "harvest.first_year")),
        ("Price", f"{_price(case)}" + _price_change_text(case),
         _source(case, "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm")),
        ("Establishment", f"{fig_text(case, res, 'establishment_cost')} with expected replanting"
         + (f"; grant {_money(case, v.get('establishment.grant_per_ha'), 'money/ha')}"
            if v.get("establishment.grant_per_ha") else ""),
         _establishment_source(case)),
        ("Discount rate", rate_text(res), _source(case, "finance.discount_rate")),
        ("Soil carbon", f"{_quantity(case, res['soc_start_t_c_per_ha'], 't C/ha')} at planting, "
                        f"moving towards {_quantity(case, _soc_target(case), 't C/ha')} "
                        f"({_soc_method(case)})", _source(case, "carbon.soc_ref_t_c_per_ha")),
    ]
    if (v.get("tax.rate") or 0) > 0:  # the figures above are before the stand's own tax
        items.append(("Tax", f"{display.percent(v['tax.rate'], 0)} of the stand's taxable result: NPV after tax "
                      f"{fig_text(case, res, 'npv_after_tax')}, IRR after tax {fig_text(case, res, 'irr_after_tax')} "
                      "(the other figures are before tax)", _source(case, "tax.rate")))
    if (v.get("carbon.credit_price_per_t_co2e") or 0) > 0:
        items.append(("Carbon credits", f"{_credit_price(case)} "
                      f"first verified in year {v.get('carbon.credit_first_year', 1)}, "
                      f"{display.percent(v.get('carbon.credit_buffer_share') or 0.0, 0)} held back as a buffer",
                      _source(case, "carbon.credit_price_per_t_co2e")))
    if value_of(res, "loan_principal"):
        items.append(("Loan", _loan_terms(case, res), _source(case, "loan.rate")))
    return [{"label": a, "value": print_minus(b), "source": c} for a, b, c in items]


#: how each repayment profile repays, in words
PROFILE_WORDS = {"annuity": "level payments", "straight_line": "equal repayments of principal",
                 "sculpted": "payments shaped to the cash available at a DSCR of {dscr:.2f}"}


def _loan_terms(case: Case, res: Results) -> str:
    """The loan's terms as the lender set them: what it is a share of, the amount drawn, rate, term, grace and
    its interest, profile, and the reserve, grant bridge and working-capital line where there are any."""
    v = case.values
    grant = (v.get("establishment.grant_per_ha") or 0) > 0
    basis = " less the grant" if grant and v.get("loan.sized_on") == "cost_net_of_grant" else ""
    grace = v.get("loan.grace_years") or 0
    drawn = (f"{fig_text(case, res, 'loan_asked')} asked for, {fig_text(case, res, 'loan_principal')} drawn (what "
             f"the target DSCR repays)" if terminal.loan_capped(res) else fig_text(case, res, "loan_principal"))
    parts = [f"{display.percent(v['loan.share_of_establishment'], 0)} of the planting-year cost{basis}, "
             f"{drawn} at {display.percent(v['loan.rate'], 1)}, repaid over "
             f"{v['loan.term_years']} years"
             + (f" after {grace} grace year{'s' if grace != 1 else ''} ("
                + ("interest added to the loan" if v.get("loan.grace_interest") == "capitalised" else "interest paid")
                + ")" if grace else ""),
             PROFILE_WORDS[v["loan.profile"]].format(dscr=v.get("loan.sculpt_dscr") or 0.0)
             + (f" (the loan asked for is less than that could carry: its DSCR is {value_of(res, 'min_dscr'):.2f})"
                if terminal.sculpted_below_capacity(case, res) else "")]
    if (v.get("loan.reserve_years") or 0) > 0:
        parts.append(f"a reserve of {v['loan.reserve_years']:g} year"
                     f"{'s' if v['loan.reserve_years'] != 1 else ''} of debt service")
    if v.get("loan.bridge_grant") and grant and (v.get("establishment.grant_year") or 0) > 0:
        parts.append(f"a bridge until the grant is paid in year {v['establishment.grant_year']}")
    if (v.get("working_capital.limit_per_ha") or 0) > 0:
        parts.append(f"a working-capital line up to {_money(case, v['working_capital.limit_per_ha'], 'money/ha', 0)} "
                     f"at {display.percent(v.get('working_capital.rate') or 0.0, 1)}")
    return "; ".join(parts)


def _harvest_text(case: Case) -> str:
    v = case.values
    every = v["harvest.interval_years"]
    when = "every year" if every == 1 else f"every {every} years"
    timing = _words(v["harvest.timing"])
    text = f"{when} from year {v['harvest.first_year']}, {timing}"
    if v["harvest.timing"] == "late_winter" and v.get("harvest.overwinter_dm_loss"):
        text += f" ({display.percent(v['harvest.overwinter_dm_loss'], 0)} lost over winter)"
    return text


def _price_change_text(case: Case) -> str:
    change = case.values.get("revenue.price_change_per_year") or 0.0
    if case.values.get("revenue.price_path"):
        return ", following the price path given"
    if change == 0:
        return ", constant in real terms"
    return f", {print_minus(display.percent(change, 1))} a year in real terms"


def _soc_target(case: Case) -> float:
    v = case.values
    return v["carbon.soc_ref_t_c_per_ha"] * v["carbon.crop_f_lu"] * v["carbon.crop_f_mg"] * v["carbon.crop_f_i"]


def _soc_method(case: Case) -> str:
    v = case.values
    if v.get("carbon.soc_method") == "first_order":
        k = v.get("carbon.first_order_rate_per_year") or math.log(20.0) / v["carbon.transition_years"]
        return f"first-order approach, {display.percent(k, 0)} a year"
    if v.get("carbon.soc_method") == "measured_rate":
        return (f"measured rate, {v['carbon.soc_rate_t_c_per_ha_per_year']:g} t C/ha a year over "
                f"{v['carbon.transition_years']} years")
    return f"IPCC Tier 1 stock change over {v['carbon.transition_years']} years"


def page_charts(case: Case, frame: pd.DataFrame, res: Results, anchor: str) -> list[charts.Chart]:
    """The charts of a case's page: running total of cash, yield by stand age, soil carbon."""
    return charts.draw_all(page_chart_specs(case, frame, res, anchor))


def page_chart_specs(case: Case, frame: pd.DataFrame, res: Results, anchor: str) -> list[charts.Spec]:
    """The charts of :func:`page_charts` described by their values, to be drawn here or in a worker."""
    system, per = case.unit_system, per_area(case)
    years = [float(y) for y in frame["year"]]

    def conv(column: str, unit: str) -> list[float]:
        return [display.convert(float(x), unit, system)[0] for x in charts.finite(frame[column])]

    dm_unit = display.convert(1.0, "t DM/ha", system)[1]
    c_unit = display.convert(1.0, "t C/ha", system)[1]
    return [
        charts.Spec("cumulative_cash", dict(
            years=years, cumulative=conv("cumulative_cash_flow", "money/ha"), payback_year=value_of(res, "payback_year"),
            lost_year=value_of(res, "payback_lost_year"), unit_label=f"{case.currency} per {per}", name=f"{anchor}-cash")),
        charts.Spec("yield_by_age", dict(
            years=years, grown=conv("growth_t_dm", "t DM/ha"), sold=conv("sold_t_dm", "t DM/ha"),
            harvest=[float(h) for h in frame["harvest"]], unit_label=dm_unit.replace("/", " per "),
            name=f"{anchor}-yield")),
        charts.Spec("soil_carbon", dict(
            years=years, soc=conv("soc_t_c", "t C/ha"), soc_current_use=conv("soc_current_use_t_c", "t C/ha"),
            unit_label=c_unit.replace("/", " per "), name=f"{anchor}-soc")),
    ]


def chart_view(chart: charts.Chart) -> dict[str, Any]:
    """A chart for the template: inline SVG for the HTML page, the same SVG as an embedded image for the PDF."""
    return {"title": chart.title, "alt": chart.alt, "svg": Markup(chart.svg), "img": chart.src}


class CasePage:
    """One case's page, built once: the figures, tables and charts; :meth:`at` sets the density.

    ``sensitivity`` gives the tornado block per layout step (see
    :class:`tea.outputs.whatmoves.SensitivityViews`), or None; ``drawn``, the
    page's charts (:func:`page_charts`) when they were drawn already.
    """

    def __init__(self, case: Case, frame: pd.DataFrame, res: Results, anchor: str, sensitivity=None,
                 drawn: list[charts.Chart] | None = None):
        self.case, self.anchor, self.sensitivity = case, anchor, sensitivity
        per = per_area(case)
        area_v, area_u = display.area(case.area_ha, case.unit_system)
        head = headline(case, res)
        rows, condensed = _cash_rows(case, frame)
        self.chunks = _chunks(rows)
        dm_unit = display.convert(1.0, "t DM/ha", case.unit_system)[1]
        money_unit = f"{case.currency}/{per}"
        self.base = {
            "anchor": anchor,
            "demo": bool(case.values.get("case.demo")),
            "title": case.name,
            "field_line": f"{case.values.get('field.name', '')} · {display.number(area_v)} {area_u} · "
                          f"{case.crop_words}",
            "notes": case.values.get("case.notes") or "",
            "verdict": head.verdict,
            "verdict_tone": head.tone,
            "sentence": head.sentence,
            "basis": (f"Figures per {per} unless marked whole field · money in {case.currency}, in today's money · "
                      f"discount rate {rate_text(res)} · stand life {case.stand_life} years"),
            "tiles": _tiles(case, res),
            "loan": _loan_line(case, res),
            "charts": [chart_view(c) for c in (drawn if drawn is not None else page_charts(case, frame, res, anchor))],
            "table": {
                "head": ("Year", "Sold", "Receipts", "Costs", "Net cash", "Running total"),
                "units": ("", dm_unit, money_unit, money_unit, money_unit, money_unit),
                "chunks": self.chunks,
                "condensed": condensed,
            },
            "assumptions": _assumptions(case, res),
            "warnings": [print_minus(w) for w in grower_warnings(case)],
            "cautions": ([non_native_caution(case)] if non_native_caution(case) else []) + list(CAUTIONS),
            "footer": {"version": res.version, "hash": res.case_hash, "source": Path(case.source).name,
                       "demo": bool(case.values.get("case.demo")), "page": ""},
        }

    @property
    def first_density(self) -> int:
        """Where the fit starts: a yearly table in two blocks side by side needs dense type.

        The search always starts here (never from an earlier fit), so the same
        case gives the same page in any process.
        """
        return 0 if len(self.chunks) == 1 else 2

    def start_density(self, page_size: str) -> int:
        """Where the search for the page's density starts: the least dense from :attr:`first_density` at which
        a page of this many yearly rows (in its taller block) and tornado bars is expected to fit the sheet."""
        rows = max(len(c) for c in self.chunks)
        bars = 0 if self.sensitivity is None else self.sensitivity.bars
        (width, tall), (across, down) = PAPER_MM[page_size], MARGINS_MM
        wider = (width - across) / (PAPER_MM["A4"][0] - across)
        fixed = (CHARTS_PX + (TORNADO_PX + BAR_PX * bars if bars else 0.0)) * wider
        height = fixed + TEXT_PX + ROW_PX * rows
        room = (tall - down) * pdf.PX_PER_IN / 25.4
        if height <= room:
            return self.first_density
        expected = pdf.choose(pdf.Measure(0, height, fixed, room), 0, TYPE_PT, CHART_SCALE, MAX_DENSITY, fill=1.0)
        return max(self.first_density, expected)

    @property
    def last_density(self) -> int:
        """The last layout step worth trying: with a tornado chart, moving it beside the yearly table."""
        return BESIDE if self.sensitivity is not None and self.sensitivity.movable else MAX_DENSITY

    def at(self, density: int, page_label: str = "") -> dict[str, Any]:
        """The page's values at a layout density; ``page_label`` replaces the footer's page number."""
        view = self.sensitivity.view(density, len(self.chunks) > 1) if self.sensitivity is not None else None
        return dict(self.base, density=int(min(max(density, 0), BESIDE)), sensitivity=view,
                    footer=dict(self.base["footer"], page=page_label))


def _chunks(rows: list[list[Cell]]) -> list[list[list[Cell]]]:
    """The table in one block, or two side by side when it is still long after condensing."""
    if len(rows) <= MAX_TABLE_ROWS + 2:
        return [rows]
    half = math.ceil(len(rows) / 2)
    return [rows[:half], rows[half:]]


