"""Terminal and JSON views of a computed case. They render; they never recompute the model."""

from __future__ import annotations

import re
import textwrap
from typing import Any

import pandas as pd

from tea import __version__
from tea.core.safe_text import toml_value
from tea.inputs import display
from tea.inputs.case import Case, case_header, load_preset, preset_names
from tea.analysis.lender import lender_cases
from tea.outputs.advice import non_native_caution
from tea.outputs.headline import headline, payback_caveat
from tea.outputs import yield_text
from tea.model.ledger import BY_NAME, LINE_NAMES
from tea.model.results import FIGURE_BY_NAME, Results
from tea.core.texts import CAUTIONS, WIDTH, commented, fitted


def _fig(res: Results, case: Case, name: str, whole: bool = False) -> str:
    """One figure formatted in the case's units and currency."""
    fig = FIGURE_BY_NAME[name]
    value = (res.whole_field if whole else res.per_ha)[name]
    unit = fig.unit
    if whole and fig.scales:
        unit = unit.replace("/ha", "")
    price_unit = "GJ" if res.price_basis == "gj" else "t DM"
    if name.startswith("breakeven_price") and res.price_basis == "gj":
        unit = "money/GJ"
    elif name.startswith("breakeven_price"):
        unit = "money/t DM"
    value, unit = display.convert(value, unit, case.unit_system)
    text = _shown(res, case, name, value, unit, whole, price_unit)
    if case.unit_system == "us_customary" and value is not None and "GJ" in unit:  # energy also in MMBtu
        text += f" ({_shown(res, case, name, *display.in_mmbtu(value, unit), whole, price_unit)})"
    return text


def _shown(res: Results, case: Case, name: str, value: float | None, unit: str, whole: bool, price_unit: str) -> str:
    if name.startswith("breakeven_mature") and value is not None:
        return f"{value:,.2f} {unit}"
    if value is None:
        note = res.notes.get(name, "undefined")
        return f"– ({note})"
    if unit.startswith("money"):
        digits = 2 if name.startswith("breakeven") else None  # a break-even is compared with a price: keep the cents
        return display.money(value, display.unit_text(unit, case.currency, price_unit), digits)
    if unit == "fraction":
        return display.percent(value)
    if unit == "ratio":
        return f"{value:.2f}"
    if name == "years_below_covenant":
        return f"{value:.0f}"
    if unit == "yr":
        if name in ("payback_year", "discounted_payback_year"):
            years = (res.whole_field if whole else res.per_ha)[name.removesuffix("_year") + "_years"]
            text = f"year {value:.0f}" + (f" (after {years:.2f} years, interpolated)" if years is not None else "")
            caveat = payback_caveat(case, res) if name == "payback_year" and not whole else ""
            return text + (f"; {caveat}" if caveat else "")
        return f"year {value:.0f}" if name.endswith("_year") else f"{value:.1f} years"
    return f"{display.number(value)} {unit}"


SUMMARY_ROWS = (
    ("Cash", ("npv", "npv_vs_current_use", "irr", "irr_vs_current_use", "mirr", "eav", "current_margin",
              "current_use_net", "eav_vs_current_use", "payback_year", "cash_at_removal", "discounted_payback_year",
              "peak_funding_need", "peak_funding_year", "establishment_cost")),
    ("Break-even", ("breakeven_price", "breakeven_price_vs_current_use", "breakeven_sold_t_dm_per_ha_per_year",
                    "breakeven_mature_yield_t_dm_per_ha",
                    "breakeven_mature_yield_vs_current_use_t_dm_per_ha")),
    ("Output", ("sold_t_dm", "mean_sold_t_dm_per_year", "sold_gj")),
    ("Carbon", ("soc_start_t_c_per_ha", "soc_end_t_c_per_ha", "soc_gain_t_c", "soc_gain_t_co2e",
                "soc_loss_after_reversion_t_c", "ghg_emissions_t_co2e", "ghg_net_t_co2e", "ghg_net_with_reversion_t_co2e",
                "current_ghg_t_co2e", "ghg_net_vs_current_use_t_co2e", "ghg_net_with_reversion_vs_current_use_t_co2e",
                "ghg_net_t_co2e_per_year", "ghg_net_kg_co2e_per_t_dm", "ghg_net_kg_co2e_per_gj", "credited_t_co2e",
                "credit_payback_t_co2e", "carbon_credit_pv")),
    ("Loan", ("loan_principal", "loan_payment", "loan_interest_total", "min_dscr", "min_dscr_year", "dscr_covenant",
              "years_below_covenant", "money_short_of_debt_service", "llcr", "equity_peak_funding_need")),
    ("After tax", ("npv_after_tax", "irr_after_tax", "tax_total")),
)

LABELS = {
    "npv": "NPV",
    "npv_vs_current_use": "NPV vs current use",
    "irr": "IRR",
    "irr_vs_current_use": "IRR vs current use",
    "mirr": "MIRR",
    "eav": "Equivalent annual value",
    "current_margin": "Current use margin",
    "current_use_net": "Current use, after rent+overheads",
    "eav_vs_current_use": "EAV vs current use",
    "payback_year": "Payback",
    "payback_years": "Payback (interpolated)",
    "payback_lost_year": "Below zero again in",
    "cash_at_removal": "Cash over the stand life",
    "discounted_payback_year": "Discounted payback",
    "peak_funding_need": "Peak funding need",
    "peak_funding_year": "Peak funding in",
    "establishment_cost": "Establishment cost",
    "breakeven_price": "Break-even price",
    "breakeven_price_vs_current_use": "Break-even price vs current use",
    "breakeven_mature_yield_t_dm_per_ha": "Break-even mature yield",
    "breakeven_mature_yield_vs_current_use_t_dm_per_ha": "Break-even yield vs current use",
    "sold_t_dm": "Dry matter sold (life)",
    "mean_sold_t_dm_per_year": "Dry matter sold per year",
    "breakeven_sold_t_dm_per_ha_per_year": "Break-even dry matter sold",
    "sold_gj": "Energy sold (life)",
    "soc_start_t_c_per_ha": "SOC at planting",
    "soc_end_t_c_per_ha": "SOC at removal",
    "soc_gain_t_c": "SOC gain",
    "soc_gain_t_co2e": "SOC gain as CO2",
    "soc_loss_after_reversion_t_c": "SOC lost after reversion",
    "ghg_emissions_t_co2e": "GHG emissions (life)",
    "ghg_net_t_co2e": "Net GHG balance (life)",
    "ghg_net_t_co2e_per_year": "Net GHG per year",
    "ghg_net_kg_co2e_per_t_dm": "Net GHG per t DM",
    "ghg_net_kg_co2e_per_gj": "Net GHG per GJ",
    "credited_t_co2e": "Carbon credited (life)",
    "ghg_net_with_reversion_t_co2e": "Net GHG, life + reversion",
    "credit_payback_t_co2e": "Credits paid back at removal",
    "current_ghg_t_co2e": "Current use emissions (life)",
    "ghg_net_vs_current_use_t_co2e": "Net GHG vs current use",
    "ghg_net_with_reversion_vs_current_use_t_co2e": "  the same, + reversion",
    "carbon_credit_pv": "Carbon credits, present value",
    "loan_principal": "Establishment loan",
    "loan_payment": "Largest yearly loan payment",
    "loan_interest_total": "Interest over the loan",
    "min_dscr": "Lowest DSCR (test years)",
    "min_dscr_year": "Lowest DSCR in",
    "dscr_covenant": "DSCR covenant",
    "years_below_covenant": "Years below covenant",
    "llcr": "LLCR at the first test",
    "equity_peak_funding_need": "Peak own funding after loan",
    "money_short_of_debt_service": "Debt service not covered, any year",
    "npv_after_tax": "NPV after tax",
    "irr_after_tax": "IRR after tax",
    "tax_total": "Tax over the stand life",
}

def loan_capped(res: Results) -> bool:
    """Whether the loan drawn is less than the loan asked for (a sculpted loan capped at what its target DSCR
    repays), by more than half a cent."""
    return (res["loan_asked"] or 0) > (res["loan_principal"] or 0) + 0.005


def no_cash_in_a_test_year(res: Results) -> bool:
    """Whether the lowest DSCR of the test years is 0 because that year's cash available is nil or negative
    (the ratio is taken as 0 there, not as a negative number)."""
    return bool(res["loan_principal"]) and res["min_dscr"] == 0


def sculpted_below_capacity(case: Case, res: Results) -> bool:
    """Whether a sculpted loan is smaller than its target DSCR could carry: its payments then keep the shape of
    the cash available at a higher, single DSCR than the target."""
    low = res["min_dscr"]
    return (case["loan.profile"] == "sculpted" and bool(res["loan_principal"]) and low is not None
            and low > case["loan.sculpt_dscr"] * (1 + 1e-6))


#: labels that name a metric unit, as a US customary case shows them (its value is converted)
US_LABELS = {"ghg_net_kg_co2e_per_t_dm": "Net GHG per short ton DM"}


def label(name: str, case: Case) -> str:
    """A figure's label in the terminal, in the case's units."""
    return (US_LABELS.get(name) if case.unit_system == "us_customary" else None) or LABELS[name]


TABLE = (
    ("year", "year", "yr"),
    ("harvested_t_dm", "harvest DM", "t DM/ha"),
    ("sold_t_dm", "sold DM", "t DM/ha"),
    ("total_revenue", "revenue", "money/ha"),
    ("total_cost", "costs", "money/ha"),
    ("net_cash_flow", "net cash", "money/ha"),
    ("cumulative_cash_flow", "cumulative", "money/ha"),
    ("cumulative_discounted_cash_flow", "cum. disc.", "money/ha"),
    ("soc_t_c", "SOC", "t C/ha"),
    ("ghg_net_t_co2e", "net GHG", "t CO2e/ha"),
)


def summary_text(case: Case, frame: pd.DataFrame, res: Results, yearly: bool = True) -> str:
    """The readable terminal summary: the decision figures, then the yearly table."""
    system = case.unit_system
    area, area_unit = display.area(case.area_ha, system)
    per = "acre" if system == "us_customary" else "ha"
    out = []
    head = f"{case.name}"
    if case["case.demo"]:
        head += "   [DEMO DATA]"
    out.append(head)
    out.append("=" * len(head))
    out.append(f"{case['field.name']}: {display.number(area)} {area_unit}, {case.crop_words}")
    rate = f"{display.percent(res.discount_rate_real, 2)} real"
    if res.rate_basis == "nominal":
        rate += f" (from {display.percent(res.discount_rate_given, 2)} nominal, {display.percent(res.inflation, 2)} inflation, Fisher)"
    out.append(f"Stand life {case.stand_life} years; discount rate {rate}; money in {case.currency}; case hash {case.hash}")
    out.append("")
    head = headline(case, res)
    out.append(head.verdict.upper() + ".")
    out.append(head.sentence)
    out.append("")
    width = max(len(v) for v in LABELS.values()) + 2
    for title, names in SUMMARY_ROWS:
        if title == "Loan" and not res["loan_principal"]:
            continue
        if title == "After tax" and not case["tax.rate"]:
            continue
        money = "; payments in money of each year" if title == "Loan" and case["finance.inflation"] else ""
        out.append(f"{title} (per {per} | whole field{money})")
        for name in names:
            if name in ("credited_t_co2e", "credit_payback_t_co2e", "carbon_credit_pv") \
                    and not case["carbon.credit_price_per_t_co2e"]:
                continue
            if name == "money_short_of_debt_service" and not res[name]:
                continue
            per_ha = _fig(res, case, name)
            if name == "breakeven_sold_t_dm_per_ha_per_year" and res[name] is not None:  # beside the case's own
                sold, _ = display.convert(res["mean_sold_t_dm_per_year"], "t DM/ha/yr", case.unit_system)
                per_ha += f" on average (case: {sold:,.2f})"
            if name.startswith("breakeven_mature") and res[name] is not None:  # beside the case's own value
                given, _ = display.convert(case["yield.mature_t_dm_per_ha"], "t DM/ha/yr", case.unit_system)
                before = display.before_site_factor(case["yield.site_factor"])
                per_ha += f" (case: {given:,.2f}" + (f", {before})" if before else ")")
            whole = _fig(res, case, name, whole=True) if FIGURE_BY_NAME[name].scales else ""
            row = f"  {label(name, case):<{width}}{per_ha:<34}{whole}".rstrip()
            # a long figure (a reason it is undefined) continues under the figures, not under the labels
            out.extend(textwrap.wrap(row, WIDTH, subsequent_indent=" " * (width + 2), break_on_hyphens=False)
                       if len(row) > WIDTH else [row])
            said = ""
            if name == "min_dscr" and no_cash_in_a_test_year(res):
                said = ("0: the cash available that year is nil or negative, so the stand pays none of its debt "
                        "service (the ratio is taken as 0, not as a negative number)")
            if name == "min_dscr" and sculpted_below_capacity(case, res):
                said = (f"above the sculpting target {case['loan.sculpt_dscr']:.2f}: the loan asked for is less than "
                        "that target could carry, so its payments keep the shape of the cash at this higher ratio")
            if name == "loan_principal" and loan_capped(res):
                said = (f"less than the {_fig(res, case, 'loan_asked')} asked for: the sculpted profile draws at "
                        "most what its target DSCR repays")
            if said:  # under the figure, within the terminal's 100 columns
                out.extend(textwrap.wrap(said, WIDTH, initial_indent=" " * (width + 2),
                                         subsequent_indent=" " * (width + 2)))
        out.append("")
    block = yield_text.site_lines(case)
    if block:
        out.extend(block + [""])
    if yearly:
        out.append(f"Yearly ledger (per {per}; {case.currency}; `tea run --json` gives every line)")
        out.extend(yearly_table(case, frame).splitlines())
        out.append("")
    caution = non_native_caution(case)
    if caution:
        out.append(f"note: {caution}")
    elif case.values.get("field.region") is None:
        out.append("note: give field.region to be told whether the crop is native there.")
    out.append("Cautions:")
    out.extend(f"  - {c}" for c in CAUTIONS)
    return "\n".join(wrapped(line) for line in out)



def wrapped(line: str) -> str:
    """A line of the summary within :data:`WIDTH` characters, continued lines indented like the first."""
    if len(line) <= WIDTH:
        return line
    indent = " " * (len(line) - len(line.lstrip(" -")))
    return textwrap.fill(line, WIDTH, subsequent_indent=indent, break_on_hyphens=False)


def decision_sentence(case: Case, res: Results) -> str:
    """The decision in one plain sentence, with the numbers (see :mod:`tea.outputs.headline`)."""
    return headline(case, res).sentence


def yearly_table(case: Case, frame: pd.DataFrame) -> str:
    system = case.unit_system
    cols, heads = [], []
    for name, head, unit in TABLE:
        vals = []
        for v in frame[name].tolist():
            conv, shown = display.convert(v, unit, system)
            if name == "year":
                vals.append(f"{int(v)}")
            elif unit.startswith("money"):
                vals.append(display.money(conv, digits=0))
            else:
                vals.append(f"{conv:,.2f}")
        cols.append(vals)
        heads.append(head)
    widths = [max(len(h), *(len(v) for v in col)) for h, col in zip(heads, cols)]
    blocks: list[list[int]] = [[0]]  # columns of each block of the table, the year first in every block
    for j in range(1, len(cols)):
        if sum(widths[k] + 2 for k in blocks[-1]) + widths[j] > WIDTH:
            blocks.append([0])
        blocks[-1].append(j)
    lines: list[str] = []
    for block in blocks:
        if lines:
            lines.append("")
        lines.append("  ".join(heads[k].rjust(widths[k]) for k in block))
        lines += ["  ".join(cols[k][i].rjust(widths[k]) for k in block) for i in range(len(frame))]
    return "\n".join(lines)


def json_payload(case: Case, frame: pd.DataFrame, res: Results) -> dict[str, Any]:
    """Everything a program needs: figures, discount rate, the whole ledger, version, hash, cautions."""
    payload = res.to_dict()
    payload["tool_version"] = __version__
    payload["demo_data"] = bool(case["case.demo"])
    payload["unit_system"] = case.unit_system
    payload["region"] = case.values.get("field.region")
    payload["non_native_crop"] = case.preset.non_native_in(case.values.get("field.region"))
    if case.unit_system != "metric":  # the figures also as the case's outputs show them (per acre, short tons)
        payload["figures_in_case_units"] = {}
        for name, value in payload["figures_per_ha"].items():
            unit = payload["figure_units"].get(name, "").replace("price unit", case.price_unit)
            shown, shown_unit = display.convert(value if isinstance(value, float) else None, unit, case.unit_system)
            payload["figures_in_case_units"][name] = {"value": shown if shown is not None else value,
                                                      "unit": shown_unit.replace("money", case.currency)}
    payload["ledger"] = {
        "per": "ha",
        "years": [int(y) for y in frame["year"]],
        "units": {name: BY_NAME[name].unit for name in LINE_NAMES},
        "lines": {name: [_json_number(v) for v in frame[name]] for name in LINE_NAMES if name != "year"},
    }
    payload["inputs"] = {path: value for path, value in sorted(case.values.items())}
    payload["site_climate_yield"] = yield_text.site_payload(case)
    lender = lender_cases(case)
    payload["lender"] = {"bankable": {k: _json_number(v) for k, v in lender.base.items()},
                         "downside": {k: _json_number(v) for k, v in lender.downside.items()},
                         "downside_terms": lender.terms}
    return payload


def json_header(case: Case) -> dict[str, Any]:
    """The keys every JSON output of a case opens with (tying it to its inputs)."""
    return case_header(case)


def _json_number(v: float) -> float | None:
    """A float for JSON; NaN (e.g. DSCR in a year without debt service) becomes null."""
    v = float(v)
    return v if v == v and abs(v) != float("inf") else None


#: a source text that replaced a preset value opens with what the value was, then names the document
_CHANGED = re.compile(r"changed from [^:]*:\s*")
#: longest entry of a preset's short list of sources [characters]
SHORT_SOURCE = 60


def short_sources(text: str) -> list[str]:
    """What a source text names, for a short list of a preset's sources: an attribution that stands for
    itself (``derived``, ``from memory``, ``common practice``, ``extension guides``...) as that phrase; authors and
    year as the first author et al. and the year; a journal as its name, volume and pages; a text that opens
    with what was found (a measurement, "published ...", "within the published ...") by every reference it
    gives in brackets; any other by its words before the first comma, colon or semicolon outside brackets
    (a bracket dropped where that is longer than :data:`SHORT_SOURCE` characters, then cut there).

    >>> short_sources("changed from 30: Szczukowski, Tworkowski, Klasa & Stolarski 2002, Plant Soil Environ. 48:413")
    ['Szczukowski et al. 2002']
    >>> short_sources("Hay and Forage Grower (hayandforage.com, Maintenance), R. Smith: one-third")
    ['Hay and Forage Grower (hayandforage.com, Maintenance)']
    >>> short_sources("derived: 1.0 x (1 - 0.30)"), short_sources("from memory (as the other preset): none")
    (['derived'], ['from memory'])
    >>> short_sources("K 1.2-2.4 g/kg in stems (2009) of clones (Biomass and Bioenergy 25(6):571-580, 2003)")
    ['Biomass and Bioenergy 25(6):571-580']
    >>> short_sources("within the published 0.6-10: 0.05 % K (0.6 kg; Warncke et al. 2010, x; Guénon et al. 2016)")
    ['Warncke et al. 2010', 'Guénon et al. 2016']
    >>> short_sources("University of Missouri Extension G1208 (J. C. Frisby, reviewed 1993), Fuel Requirement Estimates")
    ['University of Missouri Extension G1208']
    >>> short_sources("iForest 5:224-229 (2012), doi:10.3832/ifor0628-005: 7,140 cuttings/ha")
    ['iForest 5:224-229']
    """
    text = _CHANGED.sub("", text.strip(), count=1)
    own = next((p for p in _STANDS_FOR_ITSELF if text.startswith(p)), None)
    if own is not None:
        return [own]
    named = _references(text, anywhere=False)
    if named:
        return named
    if _FINDING.match(text):
        groups = _bracketed(text)
        cited = [ref for group in groups for ref in _references(group, anywhere=True)]
        if cited:
            return list(dict.fromkeys(cited))
        named = next((g for g in groups if re.match(_NAME, g)), None)  # a bracket that opens with a name
        if named is not None:
            text = named
    name = _before_first_stop(text)
    if len(name) > SHORT_SOURCE:
        name = re.sub(r"\s*\([^()]*(?:\([^()]*\)[^()]*)*\)", "", name).strip()
    return [name if len(name) <= SHORT_SOURCE else name[:SHORT_SOURCE - 1].rstrip() + "\u2026"]


def _references(text: str, anywhere: bool) -> list[str]:
    """The references a text gives: authors and year ("Wilson et al. 2013"), a journal with its volume and
    pages, or a quoted title; at its start only, or ``anywhere`` in it."""
    found = []
    for m in (_AUTHORS.finditer(text) if anywhere else [_AUTHORS.match(text)]):
        if m:
            first, others, year = m.group(1), m.group(2), m.group(3)
            found.append(f"{first} et al. {year}" if "," in others or "et al" in others else f"{first}{others} {year}")
    if found:
        return found
    journal = (_JOURNAL.search if anywhere else _JOURNAL.match)(text)
    if journal:
        return [journal.group(1)]
    title = re.match(r'"([^"]+)"', text) if anywhere else None
    return [f'"{title.group(1)}"'] if title else []


#: a source text that opens with what was found (a measurement, "published", "within the published"), not a name
_FINDING = re.compile(r"(?:[a-z]|[A-Z][a-z]? \d|\d)")
#: a letter of a name in any script, upper case first (a capital, then letters, hyphens or apostrophes)
_NAME = r"[^\W\d_a-z][^\W\d_]*(?:[-'][^\W\d_]+)*"
#: authors and year opening a reference: "Wilson, Heaton, Liebman & Moore 2013", "Kemmerer & Liu 2010",
#: "Sanderson et al. 1997", "Guénon et al. 2016"
_AUTHORS = re.compile(rf"({_NAME})((?:,? (?:{_NAME}|&|and|et al\.))*) ((?:19|20)\d\d)\b")
#: a journal with its volume and pages: "Biomass and Bioenergy 25(6):571-580", "iForest 5:224-229"
_JOURNAL = re.compile(r"((?:[A-Z]|i[A-Z])[A-Za-z&\- ]* \d+(?:\([\d\-]+\))?:\d+(?:-\d+)?)")
#: source texts that name no reference but stand for themselves
_STANDS_FOR_ITSELF = ("derived", "from memory", "common practice", "extension guides", "grower guides")


def _bracketed(text: str) -> list[str]:
    """The contents of the outermost brackets of a text, in order."""
    found, depth, start = [], 0, 0
    for i, ch in enumerate(text):
        if ch == "(":
            if depth == 0:
                start = i + 1
            depth += 1
        elif ch == ")" and depth:
            depth -= 1
            if depth == 0:
                found.append(text[start:i])
    return found


def _before_first_stop(text: str) -> str:
    """A text up to its first comma, colon or semicolon outside brackets."""
    depth = 0
    for i, ch in enumerate(text):
        depth += 1 if ch in "([" else (-1 if ch in ")]" else 0)
        if ch in ",:;" and depth == 0:
            return text[:i].strip()
    return text.strip()


def presets_text(verbose: bool = False, system: str = "metric", width: int | None = None) -> str:
    """The crop presets; with ``verbose`` every value with its source, spelled and converted to ``system``;
    lines fitted to ``width`` characters (a value's source going on as comment lines), else one per item."""
    from tea.inputs import schema, units

    out = []
    for name in preset_names():
        p = load_preset(name)
        aliases = f" (also: {', '.join(p.aliases)})" if p.aliases else ""
        out.append(f"{name}: {p.described()}{aliases}")
        if verbose:
            for path, value in p.values_in(system).items():
                key = schema.BY_PATH[path]
                spelling, shown = units.in_system(key.template, value, system, digits=3)
                out.append(commented(f"    {key.section}.{spelling} = {toml_value(shown, limit=10_000)}",
                                     p.source_in(path, system), width))  # as a case writes it
            for what, regions in (("native in", p.native_regions), ("non-native in", p.non_native_regions)):
                if regions:
                    out.append(commented(f"    {what}: {', '.join(regions)}", p.region_sources[what.split()[0]],
                                         width))
            unsettled = [r for r in schema.REGIONS if r not in p.native_regions + p.non_native_regions]
            if unsettled:
                out.append(f"    not settled by its sources (the outputs say so): {', '.join(unsettled)}")
        else:
            sources = sorted({name for s in p.sources.values() for name in short_sources(s)} - {""})
            out.append("    sources: " + "; ".join(sources))
    out.append("")
    out.append("`tea presets -v` lists every value with its source (--units us_customary in US units); "
               "a case overrides any of them.")
    return "\n".join(fitted(line, width) for line in out)
