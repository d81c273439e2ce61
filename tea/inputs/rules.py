"""Rules that tie a case's keys together, checked once every value is known (after the site climate's
estimate): currency, price, harvest energy, yield against the crop's record, loan and stand life,
operations in the stand's years; and warnings where a sensitivity range or a risk distribution is about
another case than the one the figures show."""

from __future__ import annotations

import re
from typing import Any, Mapping

from tea.core.errors import WHAT_IF, Notice, Problem
from tea.core.safe_text import toml_value
from tea.inputs import display, schema, units
from tea.inputs.schema import YIELD_CEILING_T_DM_PER_HA

_CURRENCY_RE = re.compile(r"^[A-Z]{3}$")
#: a short list of common ISO 4217 codes; another well-formed code only warns
COMMON_CURRENCIES = frozenset(
    "AUD BRL CAD CHF CNY CZK DKK EUR GBP HUF INR JPY MXN NOK NZD PLN RON SEK USD ZAR".split()
)


#: how far the centre of a risk distribution may sit from the case's own value before it is pointed out
SPEC_CENTRE_TOLERANCE = 0.15


def spec_checks(values: Mapping[str, Any], warnings: list, source: str) -> None:
    """Warn where a sensitivity range leaves out the case's own value, or where the mean of a risk
    distribution (before truncation) sits well away from it: the analysis would then be about another case
    than the one the figures show, e.g. after the mature yield came to be estimated from the site climate."""
    from tea.inputs import riskspec

    system = values.get("case.units") if values.get("case.units") in units.SYSTEMS else "metric"

    def shown(path: str, value: float) -> str:
        inp, _ = riskspec.resolve(path)
        f = 1.0 if inp is None or inp.key is None else units.display_factor(inp.key.template, system)
        return f"{value * f:.4g}"

    ranges = (values.get("sensitivity") or {}).get("ranges", {})
    for path, r in ranges.items():
        base = values.get(path)
        if isinstance(base, (int, float)) and not r["low"] <= base <= r["high"]:
            warnings.append(Notice(source, f"sensitivity.ranges.{path}", f"the case's own value {shown(path, base)} "
                                   f"is outside the range {shown(path, r['low'])} to {shown(path, r['high'])}; "
                                   "check the range", path=path, kind=WHAT_IF))
    for path, dist in ((values.get("risk") or {}).get("inputs") or {}).items():
        base = values.get(path)
        kind = dist.get("dist")
        if kind == "triangular":
            centre = (dist["low"] + dist["mode"] + dist["high"]) / 3.0
        elif kind == "uniform":
            centre = (dist["low"] + dist["high"]) / 2.0
        else:  # normal, lognormal
            centre = dist.get("mean")
        if not isinstance(base, (int, float)) or centre is None or base == 0:
            continue
        if abs(centre / base - 1.0) > SPEC_CENTRE_TOLERANCE:
            warnings.append(Notice(source, f"risk.inputs.{path}", f"its draws centre on {shown(path, centre)}, "
                                   f"{centre / base - 1.0:+.0%} from the case's own value {shown(path, base)}; the "
                                   "risk results will centre away from the figures of the case: check the "
                                   "distribution", path=path, kind=WHAT_IF))


#: sections parsed by their own modules: [sensitivity] and [risk] (ranges and
#: distributions of inputs), kept whole under the section name


def currency_problem(code: str) -> str | None:
    """Why ``code`` is not a currency code (three capital letters, as ISO 4217 writes them), or None.

    >>> currency_problem("EUR") is None, currency_problem("eur\\n")
    (True, 'expected a three-letter ISO 4217 code such as EUR or USD, got "eur\\\\n"')
    """
    if _CURRENCY_RE.fullmatch(code):
        return None
    return f"expected a three-letter ISO 4217 code such as EUR or USD, got {toml_value(code)}"


def harvest_energy_problem(heating_value, moisture):
    """Rows where fuel at the harvest moisture would hold no net energy, and the reason for one row.

    The model's relation (:func:`tea.methods.agronomy.delivered_heating_value`):
    q = q_dry - 2.443 M / (1 - M) GJ per t DM. At q <= 0 the water to evaporate
    takes all the heat the dry matter gives: energy sold, a per-GJ price and
    revenue would turn negative, so such an input is refused.

    Returns ``(bad, why)``: ``bad`` a boolean array shaped like the inputs,
    ``why(i)`` the message of element ``i`` (flat index).

    >>> bad, why = harvest_energy_problem(18.5, 0.9)
    >>> bool(bad), why(0)[:57]
    (True, 'at 0.9 moisture the net heating value is -3.49 GJ/t DM: t')
    """
    import numpy as np

    from tea.methods.agronomy import delivered_heating_value

    q_dry = np.asarray(heating_value, dtype=float)
    m = np.asarray(moisture, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.where(m < 1.0, delivered_heating_value(q_dry, np.minimum(m, 0.999)), -np.inf)
    q = np.broadcast_to(q, np.broadcast(q_dry, m).shape)
    bad = ~(q > 0)

    def why(i: int) -> str:
        qi, mi = float(q.flat[i]), float(np.broadcast_to(m, q.shape).flat[i])
        dry = float(np.broadcast_to(q_dry, q.shape).flat[i])
        return (f"at {mi:g} moisture the net heating value is {qi:.3g} GJ/t DM: the water takes all the heat "
                f"the dry matter gives ({dry:g} GJ/t DM dry, q = q_dry - 2.443 M/(1 - M)); expected a moisture "
                f"below {dry / (dry + 2.443):.3g} at harvest, or a higher heating value")
    return bad, why


def mature_yield_as_given(values: Mapping[str, Any], spelled: Mapping[str, str]) -> tuple[str, float, str]:
    """The mature-yield key as the case spells it (section included), and the factor and unit that show a
    yield [t DM/ha] in the case's units.

    >>> mature_yield_as_given({"case.units": "us_customary"}, {})
    ('yield.mature_short_ton_dm_per_acre', 0.4460896, 'short ton DM/acre')
    """
    system = "us_customary" if values.get("case.units") == "us_customary" else "metric"
    factor, unit = display.convert(1.0, "t DM/ha", system)
    key = "yield." + (spelled.get("yield.mature_t_dm_per_ha") or units.spell("mature_{t}_dm_per_{ha}", system))
    return key, factor, unit


def cross_checks(values, problems, warnings, source, spelled, rejected=frozenset(), origin=None) -> None:
    def bad(key: str, message: str) -> None:
        problems.append(Problem(source, key, message))

    def warn(key: str, message: str, path: str | None = None, check: bool = False) -> None:
        """``key`` as the file spells it; ``path``: the schema's key path it stands for, if another."""
        warnings.append(Notice(source, key, message, path=path or (key if key in schema.BY_PATH else None),
                               check=check))

    bad_keys = {p.key for p in problems} | set(rejected)
    values = {p: v for p, v in values.items() if p not in rejected}  # a refused value ties nothing
    currency = values.get("case.currency")
    if isinstance(currency, str) and "case.currency" not in bad_keys:
        why = currency_problem(currency)
        if why:
            bad("case.currency", why)
        elif currency not in COMMON_CURRENCIES:
            warn("case.currency", f"{currency} is not a common ISO 4217 code", check=True)

    has_t, has_gj = values.get("revenue.price_per_t_dm") is not None, values.get("revenue.price_per_gj") is not None
    if has_t and has_gj:
        bad("revenue.price_per_gj", "give one price, price_per_t_dm or price_per_gj, not both")
    elif not has_t and not has_gj and "revenue.price_per_t_dm" not in bad_keys and "revenue.price_per_gj" not in bad_keys:
        system = values.get("case.units") if values.get("case.units") in units.SYSTEMS else "metric"
        key = units.spell(schema.BY_PATH["revenue.price_per_t_dm"].template, system)
        per = "short ton" if system == "us_customary" else "t"
        bad(f"revenue.{key}", f"missing value: expected a biomass price per {per} of dry matter (or price_per_gj)")

    timing = values.get("harvest.timing")
    moisture_key = "harvest.moisture_late_winter" if timing == "late_winter" else "harvest.moisture_autumn"
    hv, moisture = values.get("revenue.heating_value_gj_per_t_dm"), values.get(moisture_key)
    if timing in ("autumn", "late_winter") and isinstance(hv, (int, float)) and isinstance(moisture, (int, float)):
        low, why = harvest_energy_problem(hv, moisture)
        if low:
            bad(f"{moisture_key.partition('.')[0]}.{spelled.get(moisture_key, moisture_key.partition('.')[2])}", why(0))

    y, rec = values.get("yield.mature_t_dm_per_ha"), values.get("yield.record_t_dm_per_ha")
    if isinstance(y, (int, float)) and isinstance(rec, (int, float)) and y > 0 and rec > 0:
        ceiling = min(YIELD_CEILING_T_DM_PER_HA, 2.0 * rec)
        key, f, unit = mature_yield_as_given(values, spelled)
        estimated = (origin or {}).get("yield.mature_t_dm_per_ha") == "estimated"
        what = f"{y * f:.3g} {unit}" + (", estimated from the site climate," if estimated else "")
        if y > ceiling:
            bad(key, f"{what} is far above the highest recorded for this crop ({rec * f:.3g} {unit}); "
                f"expected at most {ceiling * f:.3g}")
        elif y > rec:
            warn(key, f"{what} is above the highest recorded for this crop ({rec * f:.3g} {unit})"
                 + ("; the crop's light-use parameters may not suit this site: give the mature yield from local "
                    "trials" if estimated else ""), path="yield.mature_t_dm_per_ha")

    life = values.get("finance.stand_life_years")
    if isinstance(values.get("operations"), list) and isinstance(life, int):
        from tea.inputs.operations import years_of

        for op in values["operations"]:
            late = [y for y in years_of(op) if y > life] if ("year" in op or "years" in op) else []
            if late:
                warn("operations", f"{op['name']}: year {late[0]} is after the stand's last year ({life}); "
                     "it is left out")

    share = values.get("loan.share_of_establishment")
    if isinstance(share, (int, float)) and share > 0 and values.get("loan.rate") is None and "loan.rate" not in bad_keys:
        bad("loan.rate", "missing value: a loan (share_of_establishment > 0) needs its interest rate [fraction/yr]")
    life, first = values.get("finance.stand_life_years"), values.get("harvest.first_year")
    grace, term = values.get("loan.grace_years"), values.get("loan.term_years")
    if isinstance(share, (int, float)) and share > 0 and isinstance(life, int) and isinstance(grace, int) \
            and isinstance(term, int) and grace + term > life:
        bad("loan.term_years", f"grace ({grace}) + term ({term}) years run past the stand life ({life} years)")
    profile, n = values.get("loan.profile"), values.get("harvest.interval_years")
    if isinstance(share, (int, float)) and share > 0 and isinstance(n, int) and n > 1 \
            and profile in ("annuity", "straight_line"):
        warn("loan.profile", f"{profile} repayments fall due every year, but the crop is harvested every {n} "
             "years: the years with no harvest have no sales to pay them from (their DSCR is 0); a sculpted "
             "profile (loan.profile = \"sculpted\") sets each year's debt service to the cash of that year")
    if profile != "sculpted" and "loan.sculpt_dscr" in spelled:
        warn("loan.sculpt_dscr", f"applies to a sculpted profile only; the {values.get('loan.profile')} "
             "profile does not use it")
    cov = values.get("loan.covenant_first_year")
    if isinstance(share, (int, float)) and share > 0 and isinstance(grace, int) and isinstance(term, int) \
            and isinstance(cov, int) and cov > grace + term and "loan.covenant_first_year" not in bad_keys:
        bad("loan.covenant_first_year", f"year {cov} comes after the loan's last repayment (year {grace + term}): "
            f"the covenant would never be tested; expected 0 (the first repayment year) to {grace + term}")
    if isinstance(life, int) and isinstance(first, int) and first > life and "harvest.first_year" not in bad_keys:
        bad("harvest.first_year", f"the first harvest (year {first}) falls after the stand's life ({life} years)")
    start = values.get("yield.decline_start_year")
    if isinstance(life, int) and isinstance(start, int) and start >= life and start > 0:
        warn("yield.decline_start_year", f"year {start} is not before the last year ({life}); no decline is modelled")
    # values that would be silently ignored, and growth never harvested
    given = set(spelled)
    cut = values.get("harvest.cut_back_year")
    if isinstance(cut, int) and isinstance(first, int) and cut >= first and "harvest.cut_back_year" not in bad_keys:
        bad("harvest.cut_back_year", f"the cut-back (year {cut}) must come before the first harvest (year {first})")
    if isinstance(life, int) and isinstance(first, int) and isinstance(n, int) and first <= life \
            and not values.get("harvest.final_harvest_at_removal"):
        left = (life - first) % n
        if left:
            warn("harvest.interval_years", f"the last {left} year(s) of growth before removal in year {life} are "
                 f"grown but never harvested (harvests in year {first} and every {n} years); "
                 "set harvest.final_harvest_at_removal = true to harvest them at removal")
    if "yield.decline_per_year" in given and not values.get("yield.decline_start_year"):
        warn("yield.decline_per_year", "is ignored without yield.decline_start_year")
    if "revenue.price_path" in given and "revenue.price_change_per_year" in given:
        warn("revenue.price_change_per_year", "is ignored: revenue.price_path replaces it")
    if "yield.fresh_moisture" in given and "yield.mature_t_dm_per_ha" in given and \
            not spelled["yield.mature_t_dm_per_ha"].startswith("mature_fresh"):
        warn("yield.fresh_moisture", "is ignored: the mature yield is given as dry matter")
    if values.get("carbon.soc_method") == "measured_rate" and values.get("carbon.soc_rate_t_c_per_ha_per_year") is None:
        problems.append(Problem(source, "carbon.soc_method", "measured_rate needs its rate: give "
                                "carbon.soc_rate_t_c_per_ha_per_year (t C/ha/yr, a gain positive)"))
    if values.get("revenue.contract_years") and values.get("revenue.contract_price_per_t_dm") is None \
            and values.get("revenue.contract_price_per_gj") is None:
        problems.append(Problem(source, "revenue.contract_years", "a fixed-price contract needs its price: give "
                                "revenue.contract_price_per_t_dm (or contract_price_per_gj)"))
    if values.get("revenue.contract_price_per_gj") is not None and values.get("revenue.price_per_gj") is None:
        problems.append(Problem(source, "revenue.contract_price_per_gj", "a contract price per GJ goes with a "
                                "market price per GJ (revenue.price_per_gj); give contract_price_per_t_dm instead"))
    cfy = values.get("carbon.credit_first_year")
    if isinstance(cfy, int) and isinstance(life, int) and cfy > life and values.get("carbon.credit_price_per_t_co2e"):
        warn("carbon.credit_first_year", f"year {cfy} is after the stand life ({life} years); no credits are paid")
