"""The ledger: a validated case turned into one row per year, one column per line item.

This is the one place that maps case inputs to the models (:mod:`tea.methods.agronomy`,
:mod:`tea.methods.carbon`, :mod:`tea.methods.finance`). :func:`model_inputs` turns case values
(scalars, or ``(cases,)`` arrays for risk and screening) into numeric columns;
:func:`compute` evaluates every line for all cases at once, shaped
``(cases, years)``; :func:`build_ledger` returns one case's ledger as a pandas
DataFrame.

Timing and signs
----------------
Year 0 is planting: establishment costs and grants fall at t = 0, undiscounted.
Year t >= 1 is the t-th growing season, booked at the end of year t; the last
year is the stand life L, which also carries the removal cost. Land costs, the
current use's forgone margin and yearly payments run in years 1..L. Cost and
revenue lines are positive magnitudes; only the cash-flow lines carry a sign.
Greenhouse-gas lines are emissions positive, removals (SOC gain) negative.
Every line is per hectare.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np
import pandas as pd

from tea.methods import agronomy, carbon, finance, loan
from tea.inputs import published
from tea.inputs.case import Case

C_TO_CO2 = carbon.C_TO_CO2
N2O_N_TO_N2O = carbon.N2O_N_TO_N2O


@dataclass(frozen=True)
class Line:
    """One ledger column: its name, unit (per ha) and meaning."""

    name: str
    unit: str  # "money" means the case's currency
    group: str
    doc: str


LINES: tuple[Line, ...] = (
    Line("year", "yr", "time", "Year since planting (0 = planting year)."),
    # establishment
    Line("est_site_preparation", "money/ha", "establishment", "Site preparation (year 0)."),
    Line("est_weed_control", "money/ha", "establishment", "Weed control in the planting year (year 0)."),
    Line("est_planting_material", "money/ha", "establishment", "Planting material: units per ha x unit price (year 0)."),
    Line("est_planting_operation", "money/ha", "establishment", "Planting operation (year 0)."),
    Line("est_fertiliser", "money/ha", "establishment", "Establishment fertiliser (year 0)."),
    Line("est_fencing_other", "money/ha", "establishment", "Fencing and other one-off costs (year 0)."),
    Line("est_replanting_expected", "money/ha", "establishment",
         "Expected gap-filling/replanting: failure probability x replant share x (material + planting) (year 1)."),
    Line("establishment_cost", "money/ha", "establishment", "Sum of the establishment lines."),
    # yield
    Line("growth_fraction", "fraction", "yield", "Growth as a share of the mature yield (ramp-up, plateau, decline)."),
    Line("growth_t_dm", "t DM/ha", "yield", "Dry matter grown this year at the autumn peak, with the site factor."),
    Line("harvest", "flag", "yield", "1 in a harvest year."),
    Line("standing_t_dm", "t DM/ha", "yield",
         "Standing dry matter cut: the growth of the harvest interval's years ending this year."),
    Line("overwinter_loss_t_dm", "t DM/ha", "yield", "Dry matter lost between the autumn peak and a late-winter harvest."),
    Line("field_loss_t_dm", "t DM/ha", "yield", "Dry matter lost in cutting, baling or chipping."),
    Line("harvested_t_dm", "t DM/ha", "yield", "Dry matter taken off the field (the nutrient offtake basis)."),
    Line("storage_loss_t_dm", "t DM/ha", "yield", "Dry matter lost in storage."),
    Line("sold_t_dm", "t DM/ha", "yield", "Dry matter delivered and sold."),
    Line("moisture", "fraction", "yield", "Moisture content at harvest, wet basis."),
    Line("harvested_fresh_t", "t/ha", "yield", "Fresh tonnes harvested, at harvest moisture."),
    Line("sold_fresh_t", "t/ha", "yield", "Fresh tonnes delivered (haulage basis)."),
    Line("sold_gj", "GJ/ha", "yield",
         "Energy delivered: dry matter sold x net heating value at the delivered moisture (ISO 18125 relation)."),
    # nutrients
    Line("n_offtake_kg", "kg/ha", "nutrients", "N removed with the harvest."),
    Line("p2o5_offtake_kg", "kg/ha", "nutrients", "P2O5 removed with the harvest."),
    Line("k2o_offtake_kg", "kg/ha", "nutrients", "K2O removed with the harvest."),
    Line("n_applied_kg", "kg/ha", "nutrients", "N applied: offtake x replacement share, plus establishment N in year 0."),
    Line("p2o5_applied_kg", "kg/ha", "nutrients", "P2O5 applied to replace offtake."),
    Line("k2o_applied_kg", "kg/ha", "nutrients", "K2O applied to replace offtake."),
    Line("fertiliser_cost", "money/ha", "costs", "Replacement fertiliser (excluding establishment N) and its spreading."),
    # costs
    Line("harvest_cost", "money/ha", "costs", "Cutting, per harvest."),
    Line("baling_chipping_cost", "money/ha", "costs", "Baling or chipping, per t DM harvested."),
    Line("haulage_cost", "money/ha", "costs", "Haulage: fresh t delivered x distance x rate."),
    Line("storage_cost", "money/ha", "costs", "Storage, per t DM sold."),
    Line("rent", "money/ha", "costs", "Land rent, years 1..L."),
    Line("overheads", "money/ha", "costs", "Overheads, years 1..L."),
    Line("insurance", "money/ha", "costs", "Insurance, years 1..L."),
    Line("upkeep", "money/ha", "costs", "Field upkeep, years 1..L."),
    Line("removal_cost", "money/ha", "costs", "Taking the stand out (last year)."),
    Line("total_cost", "money/ha", "costs", "All costs of the year, establishment included."),
    # revenue
    Line("price_index", "fraction", "revenue", "Real price multiplier: (1 + change)^(t - 1), or the case's price path."),
    Line("price_per_t_dm", "money/t DM", "revenue", "Price received per t DM (per-GJ prices through the heating value)."),
    Line("biomass_revenue", "money/ha", "revenue", "Dry matter sold x price."),
    Line("grant", "money/ha", "revenue", "Establishment grant (year 0)."),
    Line("annual_payment", "money/ha", "revenue", "Yearly payments."),
    Line("carbon_credit_revenue", "money/ha", "revenue", "Credited t CO2e x credit price."),
    Line("total_revenue", "money/ha", "revenue", "All receipts of the year."),
    # cash
    Line("net_cash_flow", "money/ha", "cash", "Total revenue - total cost."),
    Line("current_margin", "money/ha", "cash", "Gross margin the current use would have earned (forgone), years 1..L."),
    Line("current_use_cash_flow", "money/ha", "cash",
         "What the field would net under its current use: current margin - rent - overheads (paid under either use)."),
    Line("incremental_cash_flow", "money/ha", "cash", "Net cash flow - current use cash flow: the change from today's use."),
    Line("discount_factor", "fraction", "cash", "(1 + r)^-t at the real discount rate."),
    Line("discounted_cash_flow", "money/ha", "cash", "Net cash flow x discount factor."),
    Line("cumulative_cash_flow", "money/ha", "cash", "Running total of the net cash flow."),
    Line("cumulative_discounted_cash_flow", "money/ha", "cash", "Running total of the discounted cash flow."),
    Line("discounted_incremental_cash_flow", "money/ha", "cash", "Incremental cash flow x discount factor."),
    Line("cumulative_discounted_incremental", "money/ha", "cash", "Running total of the discounted incremental cash flow."),
    # carbon
    Line("soc_t_c", "t C/ha", "carbon", "SOC stock (0-30 cm) at the end of the year under the stand."),
    Line("soc_current_use_t_c", "t C/ha", "carbon", "SOC stock had the current use continued (its equilibrium)."),
    Line("soc_change_t_c", "t C/ha", "carbon", "Change of the SOC stock during the year."),
    Line("diesel_l", "l/ha", "carbon", "Diesel burnt."),
    Line("ghg_n2o_direct_t_co2e", "t CO2e/ha", "carbon", "Direct N2O from N applied (IPCC Eq. 11.1)."),
    Line("ghg_n2o_indirect_t_co2e", "t CO2e/ha", "carbon", "Indirect N2O: volatilised and leached N (IPCC Eq. 11.9, 11.10)."),
    Line("ghg_fertiliser_t_co2e", "t CO2e/ha", "carbon", "Emissions from making the fertiliser applied."),
    Line("ghg_diesel_t_co2e", "t CO2e/ha", "carbon", "CO2 from diesel burnt."),
    Line("ghg_haulage_t_co2e", "t CO2e/ha", "carbon", "Road haulage of the fresh tonnes delivered."),
    Line("ghg_emissions_t_co2e", "t CO2e/ha", "carbon", "Sum of the emission lines."),
    Line("ghg_soc_t_co2e", "t CO2e/ha", "carbon", "SOC change as CO2: -change x 44/12 (a gain is negative)."),
    Line("ghg_net_t_co2e", "t CO2e/ha", "carbon", "Emissions + SOC line: the net balance (negative = net removal)."),
    Line("credited_t_co2e", "t CO2e/ha", "carbon", "SOC gain credited: gain x 44/12 x (1 - buffer), from the first credited year."),
    # establishment loan
    Line("loan_drawdown", "money/ha", "loan", "Loan drawn at planting: share x year-0 establishment cost."),
    Line("loan_interest", "money/ha", "loan",
         "Interest due on the opening balance (capitalised in grace years if so chosen); money of the year (nominal)."),
    Line("loan_principal", "money/ha", "loan", "Principal repaid (level payment - interest); money of the year."),
    Line("debt_service", "money/ha", "loan", "Interest paid + principal repaid; money of the year."),
    Line("loan_balance", "money/ha", "loan", "Balance owed at the end of the year; money of the year."),
    Line("dscr", "ratio", "loan",
         "Net cash flow in money of the year (x (1 + inflation)^t in a nominal case) / debt service; blank without debt service."),
    Line("equity_cash_flow", "money/ha", "loan",
         "Net cash flow + drawdown - debt service in today's money (/ (1 + inflation)^t): the grower's own cash."),
)
LINE_NAMES = tuple(line.name for line in LINES)
BY_NAME = {line.name: line for line in LINES}


# ----------------------------------------------------------------------------- inputs
def _col(x: Any, dtype=float) -> np.ndarray:
    """A scalar or (cases,) array as a (cases, 1) column."""
    a = np.asarray(x, dtype=dtype)
    return a.reshape(-1, 1) if a.ndim else a.reshape(1, 1)


def _lookup(values: Any, fn) -> np.ndarray:
    """Apply a lookup on labels (a str, or an array of str) -> float column."""
    arr = np.asarray(values)
    if arr.ndim == 0:
        return _col(fn(str(arr)))
    uniq, inverse = np.unique(arr, return_inverse=True)
    table = np.array([fn(str(u)) for u in uniq], dtype=float)
    return table[inverse].reshape(-1, 1)


def _labels(*parts: Any) -> np.ndarray:
    """Labels joined element-wise with "|" (scalars broadcast against arrays)."""
    arrays = np.broadcast_arrays(*(np.asarray(x, dtype=str) for x in parts))
    out = arrays[0]
    for a in arrays[1:]:
        out = np.char.add(np.char.add(out, "|"), a)
    return out


def _is_wet(climate: str) -> bool:
    """IPCC moisture regime of a climate zone for the N2O factors: the same regime as the SOC factors."""
    return published.climate_regimes(climate)[1] == "moist_wet"


def model_inputs(v: Mapping[str, Any]) -> dict[str, Any]:
    """Numeric model inputs from canonical case values.

    ``v`` maps key paths to a scalar (one case) or a ``(cases,)`` array; label
    keys (harvest timing, climate, method names) may be arrays of strings.
    Returns (cases, 1) float columns plus the ramp-up and price-path lists.
    """
    c = {path: v[path] for path in v}
    late = _lookup(c["harvest.timing"], lambda s: float(s == "late_winter"))
    site = _labels(c["carbon.n2o_method"], c["field.climate"])

    def n2o(name: str) -> np.ndarray:
        def factor(label: str) -> float:
            method, climate = label.split("|")
            return published.n2o_factors(method.removeprefix("ipcc"), _is_wet(climate))[name]
        return _lookup(site, factor)

    gwp_n2o = _lookup(c["carbon.gwp"], lambda s: published.gwp("N2O", s))
    pick = lambda autumn, winter: np.where(late > 0, _col(c[winter]), _col(c[autumn]))  # noqa: E731
    moisture = pick("harvest.moisture_autumn", "harvest.moisture_late_winter")
    hv = _col(c["revenue.heating_value_gj_per_t_dm"])
    hv_delivered = agronomy.delivered_heating_value(hv, moisture)  # a per-GJ price pays for this
    if c.get("revenue.price_per_gj") is not None:
        price = _col(c["revenue.price_per_gj"]) * hv_delivered
    else:
        price = _col(c["revenue.price_per_t_dm"])
    nominal = _lookup(c["finance.rate_basis"], lambda s: float(s == "nominal"))

    p: dict[str, Any] = {
        "life": _col(c["finance.stand_life_years"], int),
        "rate": _col(_real_rate(c)),
        # inflation that turns the loan's nominal payments into the ledger's real money (0 for a real case)
        "loan_inflation": nominal * _col(c["finance.inflation"]),
        # establishment
        "site_prep": _col(c["establishment.site_preparation_per_ha"]),
        "weed": _col(c["establishment.weed_control_per_ha"]),
        "material": _col(c["establishment.planting_units_per_ha"]) * _col(c["establishment.planting_unit_price"]),
        "planting": _col(c["establishment.planting_operation_per_ha"]),
        "est_fert": _col(c["establishment.fertiliser_per_ha"]),
        "fencing": _col(c["establishment.fencing_other_per_ha"]),
        "est_n": _col(c["establishment.n_kg_per_ha"]),
        "p_fail": _col(c["establishment.failure_probability"]),
        "replant_share": _col(c["establishment.replant_share"]),
        "grant": _col(c["establishment.grant_per_ha"]),
        # yield and harvest
        "mature": _col(c["yield.mature_t_dm_per_ha"]),
        "site_factor": _col(c["yield.site_factor"]),
        "ramp": c["yield.ramp_up_fractions"],
        "decline_start": _col(c["yield.decline_start_year"], int),
        "decline_rate": _col(c["yield.decline_per_year"]),
        "first": _col(c["harvest.first_year"], int),
        "interval": _col(c["harvest.interval_years"], int),
        "retention": np.where(late > 0, 1.0 - _col(c["harvest.overwinter_dm_loss"]), 1.0),
        "field_loss": _col(c["harvest.field_loss"]),
        "storage_loss": _col(c["harvest.storage_loss"]),
        "moisture": moisture,
        "hv": hv,
        "hv_delivered": hv_delivered,
        # nutrients
        "n_per_t": pick("nutrients.n_autumn_kg_per_t_dm", "nutrients.n_late_winter_kg_per_t_dm"),
        "p_per_t": pick("nutrients.p2o5_autumn_kg_per_t_dm", "nutrients.p2o5_late_winter_kg_per_t_dm"),
        "k_per_t": pick("nutrients.k2o_autumn_kg_per_t_dm", "nutrients.k2o_late_winter_kg_per_t_dm"),
        "n_share": _col(c["nutrients.n_replace_share"]),
        "p_share": _col(c["nutrients.p2o5_replace_share"]),
        "k_share": _col(c["nutrients.k2o_replace_share"]),
        "n_price": _col(c["nutrients.n_price_per_kg"]),
        "p_price": _col(c["nutrients.p2o5_price_per_kg"]),
        "k_price": _col(c["nutrients.k2o_price_per_kg"]),
        "spreading": _col(c["nutrients.spreading_per_ha"]),
        # costs
        "harvest_cost": _col(c["costs.harvest_per_ha"]),
        "baling": _col(c["costs.baling_chipping_per_t_dm"]),
        "distance": _col(c["costs.haul_distance_km"]),
        "haul_rate": _col(c["costs.haul_per_t_km"]),
        "storage": _col(c["costs.storage_per_t_dm"]),
        "rent": _col(c["costs.rent_per_ha"]),
        "overheads": _col(c["costs.overheads_per_ha"]),
        "insurance": _col(c["costs.insurance_per_ha"]),
        "upkeep": _col(c["costs.upkeep_per_ha"]),
        "removal": _col(c["costs.removal_per_ha"]),
        # revenue
        "price": price,
        "price_change": _col(c["revenue.price_change_per_year"]),
        "price_path": c.get("revenue.price_path"),
        "payment": _col(c["revenue.annual_payment_per_ha"]),
        "payment_years": _col(c["revenue.annual_payment_years"], int),
        "margin": _col(c["field.current_margin_per_ha"]),
        # carbon
        "soc_start": _col(c["carbon.soc_ref_t_c_per_ha"]) * _col(c["carbon.current_f_lu"])
        * _col(c["carbon.current_f_mg"]) * _col(c["carbon.current_f_i"]),
        "soc_target": _col(c["carbon.soc_ref_t_c_per_ha"]) * _col(c["carbon.crop_f_lu"])
        * _col(c["carbon.crop_f_mg"]) * _col(c["carbon.crop_f_i"]),
        "first_order": _lookup(c["carbon.soc_method"], lambda s: float(s == "first_order")),
        "transition": _col(c["carbon.transition_years"]),
        "k_rate": _col(c["carbon.first_order_rate_per_year"]),
        "ef1": n2o("ef1"),
        "frac_gasf": n2o("frac_gasf"),
        "frac_leach": n2o("frac_leach"),
        "ef4": n2o("ef4"),
        "ef5": n2o("ef5"),
        "gwp_n2o": gwp_n2o,
        "ef_diesel": _col(c["carbon.diesel_kg_co2e_per_l"]),
        "diesel_est": _col(c["carbon.diesel_establishment_l_per_ha"]),
        "diesel_harvest": _col(c["carbon.diesel_harvest_l_per_ha"]),
        "diesel_per_t": _col(c["carbon.diesel_l_per_t_dm"]),
        "diesel_removal": _col(c["carbon.diesel_removal_l_per_ha"]),
        "ef_n": _col(c["carbon.n_manufacture_kg_co2e_per_kg"]),
        "ef_p": _col(c["carbon.p2o5_manufacture_kg_co2e_per_kg"]),
        "ef_k": _col(c["carbon.k2o_manufacture_kg_co2e_per_kg"]),
        "ef_haul": _col(c["carbon.haul_kg_co2e_per_t_km"]),
        "credit_price": _col(c["carbon.credit_price_per_t_co2e"]),
        "credit_first": _col(c["carbon.credit_first_year"], int),
        "buffer": _col(c["carbon.credit_buffer_share"]),
        # establishment loan
        "loan_share": _col(c["loan.share_of_establishment"]),
        "loan_rate": _col(0.0 if c.get("loan.rate") is None else c["loan.rate"]),
        "loan_term": _col(c["loan.term_years"], int),
        "loan_grace": _col(c["loan.grace_years"], int),
        "loan_capitalised": _lookup(c["loan.grace_interest"], lambda s: float(s == "capitalised")),
    }
    return p


def _real_rate(c: Mapping[str, Any], key: str = "finance.discount_rate") -> Any:
    """A rate of the case as a real rate: nominal ones through the Fisher equation."""
    r = np.asarray(c[key], dtype=float)
    basis = np.asarray(c["finance.rate_basis"])
    nominal = finance.fisher_real_rate(r, np.asarray(c["finance.inflation"], dtype=float))
    return np.where(basis == "nominal", nominal, r)


# ----------------------------------------------------------------------------- the model
def compute(p: Mapping[str, Any], n_years: int | None = None) -> dict[str, np.ndarray]:
    """Every ledger line for all cases, shaped ``(cases, years)``, per hectare.

    Parameters
    ----------
    p : mapping
        Output of :func:`model_inputs`.
    n_years : int, optional
        Number of year rows; default the longest stand life + 1. Rows after a
        case's own stand life are zero (SOC held at its last value).
    """
    life = p["life"]
    if n_years is None:
        n_years = int(life.max()) + 1
    t = np.arange(n_years)
    T = t[None, :].astype(float)
    active = ((t[None, :] >= 1) & (t[None, :] <= life)).astype(float)
    y0 = (t[None, :] == 0).astype(float)
    y1 = ((t[None, :] == 1) & (life >= 1)).astype(float)
    last = (t[None, :] == life).astype(float)
    L: dict[str, np.ndarray] = {}
    L["year"] = np.broadcast_to(T, (life.shape[0], n_years)).copy()

    # establishment
    L["est_site_preparation"] = y0 * p["site_prep"]
    L["est_weed_control"] = y0 * p["weed"]
    L["est_planting_material"] = y0 * p["material"]
    L["est_planting_operation"] = y0 * p["planting"]
    L["est_fertiliser"] = y0 * p["est_fert"]
    L["est_fencing_other"] = y0 * p["fencing"]
    L["est_replanting_expected"] = y1 * p["p_fail"] * p["replant_share"] * (p["material"] + p["planting"])
    L["establishment_cost"] = (L["est_site_preparation"] + L["est_weed_control"] + L["est_planting_material"]
                               + L["est_planting_operation"] + L["est_fertiliser"] + L["est_fencing_other"]
                               + L["est_replanting_expected"])

    # yield
    L["growth_fraction"] = agronomy.growth_fraction(t, p["ramp"], p["decline_start"], p["decline_rate"]) * active
    L["growth_t_dm"] = p["mature"] * p["site_factor"] * L["growth_fraction"]
    flags = agronomy.harvest_flags(t, p["first"], p["interval"], life)
    L["harvest"] = flags.astype(float)
    L["standing_t_dm"] = agronomy.harvested_growth(L["growth_t_dm"], flags, p["interval"])
    cut = L["standing_t_dm"] * p["retention"]
    L["overwinter_loss_t_dm"] = L["standing_t_dm"] - cut
    L["harvested_t_dm"] = cut * (1.0 - p["field_loss"])
    L["field_loss_t_dm"] = cut - L["harvested_t_dm"]
    L["sold_t_dm"] = L["harvested_t_dm"] * (1.0 - p["storage_loss"])
    L["storage_loss_t_dm"] = L["harvested_t_dm"] - L["sold_t_dm"]
    L["moisture"] = L["harvest"] * p["moisture"]
    L["harvested_fresh_t"] = agronomy.fresh_tonnes(L["harvested_t_dm"], p["moisture"])
    L["sold_fresh_t"] = agronomy.fresh_tonnes(L["sold_t_dm"], p["moisture"])
    L["sold_gj"] = L["sold_t_dm"] * p["hv_delivered"]

    # nutrients
    L["n_offtake_kg"] = L["harvested_t_dm"] * p["n_per_t"]
    L["p2o5_offtake_kg"] = L["harvested_t_dm"] * p["p_per_t"]
    L["k2o_offtake_kg"] = L["harvested_t_dm"] * p["k_per_t"]
    n_replaced = L["n_offtake_kg"] * p["n_share"]
    L["n_applied_kg"] = n_replaced + y0 * p["est_n"]
    L["p2o5_applied_kg"] = L["p2o5_offtake_kg"] * p["p_share"]
    L["k2o_applied_kg"] = L["k2o_offtake_kg"] * p["k_share"]
    any_applied = ((n_replaced + L["p2o5_applied_kg"] + L["k2o_applied_kg"]) > 0).astype(float)
    L["fertiliser_cost"] = (n_replaced * p["n_price"] + L["p2o5_applied_kg"] * p["p_price"]
                            + L["k2o_applied_kg"] * p["k_price"] + any_applied * p["spreading"])

    # costs
    L["harvest_cost"] = L["harvest"] * p["harvest_cost"]
    L["baling_chipping_cost"] = L["harvested_t_dm"] * p["baling"]
    L["haulage_cost"] = L["sold_fresh_t"] * p["distance"] * p["haul_rate"]
    L["storage_cost"] = L["sold_t_dm"] * p["storage"]
    L["rent"] = active * p["rent"]
    L["overheads"] = active * p["overheads"]
    L["insurance"] = active * p["insurance"]
    L["upkeep"] = active * p["upkeep"]
    L["removal_cost"] = last * p["removal"]
    L["total_cost"] = (L["establishment_cost"] + L["fertiliser_cost"] + L["harvest_cost"] + L["baling_chipping_cost"]
                       + L["haulage_cost"] + L["storage_cost"] + L["rent"] + L["overheads"] + L["insurance"]
                       + L["upkeep"] + L["removal_cost"])

    # carbon (before revenue: credits are paid on it)
    soc = np.where(
        p["first_order"] > 0,
        carbon.soc_path_first_order(p["soc_start"], p["soc_target"], np.minimum(T, life), p["k_rate"]),
        carbon.soc_path_stock_change(p["soc_start"], p["soc_target"], np.minimum(T, life), p["transition"]),
    )
    L["soc_t_c"] = soc
    L["soc_current_use_t_c"] = np.broadcast_to(p["soc_start"], soc.shape).copy()
    L["soc_change_t_c"] = np.diff(soc, axis=1, prepend=soc[:, :1])
    L["diesel_l"] = (y0 * p["diesel_est"] + L["harvest"] * p["diesel_harvest"]
                     + L["harvested_t_dm"] * p["diesel_per_t"] + last * p["diesel_removal"])
    n = L["n_applied_kg"]
    L["ghg_n2o_direct_t_co2e"] = n * p["ef1"] * N2O_N_TO_N2O * p["gwp_n2o"] / 1000.0
    L["ghg_n2o_indirect_t_co2e"] = (n * (p["frac_gasf"] * p["ef4"] + p["frac_leach"] * p["ef5"])
                                    * N2O_N_TO_N2O * p["gwp_n2o"] / 1000.0)
    L["ghg_fertiliser_t_co2e"] = (n * p["ef_n"] + L["p2o5_applied_kg"] * p["ef_p"]
                                  + L["k2o_applied_kg"] * p["ef_k"]) / 1000.0
    L["ghg_diesel_t_co2e"] = L["diesel_l"] * p["ef_diesel"] / 1000.0
    L["ghg_haulage_t_co2e"] = L["sold_fresh_t"] * p["distance"] * p["ef_haul"] / 1000.0
    L["ghg_emissions_t_co2e"] = (L["ghg_n2o_direct_t_co2e"] + L["ghg_n2o_indirect_t_co2e"] + L["ghg_fertiliser_t_co2e"]
                                 + L["ghg_diesel_t_co2e"] + L["ghg_haulage_t_co2e"])
    L["ghg_soc_t_co2e"] = -L["soc_change_t_c"] * C_TO_CO2
    L["ghg_net_t_co2e"] = L["ghg_emissions_t_co2e"] + L["ghg_soc_t_co2e"]
    credit_years = (t[None, :] >= p["credit_first"]) * active
    L["credited_t_co2e"] = credit_years * np.maximum(L["soc_change_t_c"], 0.0) * C_TO_CO2 * (1.0 - p["buffer"])

    # revenue
    L["price_index"] = agronomy.price_index(t, p["price_change"], p["price_path"]) * active
    L["price_per_t_dm"] = p["price"] * L["price_index"]
    L["biomass_revenue"] = L["sold_t_dm"] * L["price_per_t_dm"]
    L["grant"] = y0 * p["grant"]
    paid = active * np.where(p["payment_years"] > 0, (t[None, :] <= p["payment_years"]), True)
    L["annual_payment"] = paid * p["payment"]
    L["carbon_credit_revenue"] = L["credited_t_co2e"] * p["credit_price"]
    L["total_revenue"] = L["biomass_revenue"] + L["grant"] + L["annual_payment"] + L["carbon_credit_revenue"]

    # cash
    L["net_cash_flow"] = L["total_revenue"] - L["total_cost"]
    L["current_margin"] = active * p["margin"]
    L["current_use_cash_flow"] = L["current_margin"] - L["rent"] - L["overheads"]
    L["incremental_cash_flow"] = L["net_cash_flow"] - L["current_use_cash_flow"]
    L["discount_factor"] = (1.0 + p["rate"]) ** -T
    L["discounted_cash_flow"] = L["net_cash_flow"] * L["discount_factor"]
    L["cumulative_cash_flow"] = np.cumsum(L["net_cash_flow"], axis=1)
    L["cumulative_discounted_cash_flow"] = np.cumsum(L["discounted_cash_flow"], axis=1)
    L["discounted_incremental_cash_flow"] = L["incremental_cash_flow"] * L["discount_factor"]
    L["cumulative_discounted_incremental"] = np.cumsum(L["discounted_incremental_cash_flow"], axis=1)

    # establishment loan
    year0_cost = L["establishment_cost"][:, :1]
    L.update(loan.schedule(p["loan_share"] * year0_cost, p["loan_rate"], p["loan_term"], p["loan_grace"],
                           p["loan_capitalised"] > 0, n_years))
    # the loan is contracted in money of the year; the ledger is in today's money (real)
    to_nominal = (1.0 + p["loan_inflation"]) ** T
    L["dscr"] = loan.dscr(L["net_cash_flow"] * to_nominal, L["debt_service"])
    L["equity_cash_flow"] = L["net_cash_flow"] + (L["loan_drawdown"] - L["debt_service"]) / to_nominal
    if set(L) != set(LINE_NAMES):
        raise RuntimeError(f"ledger lines computed and declared differ: {sorted(set(LINE_NAMES) ^ set(L))}")
    return L


def build_ledger(case: Case) -> pd.DataFrame:
    """One case's ledger: rows are years 0..stand life, columns the line items (per ha).

    >>> from tea import load_case
    >>> ledger = build_ledger(load_case("cases/clay_corner_miscanthus.toml"))
    >>> int(ledger["year"].iloc[-1]) == ledger.attrs["stand_life"]
    True
    """
    lines = compute(model_inputs(case.values))
    frame = pd.DataFrame({name: lines[name][0] for name in LINE_NAMES})
    frame["year"] = frame["year"].astype(int)
    frame.index = pd.Index(frame["year"], name="t")
    frame.attrs.update(case=case.name, currency=case.currency, stand_life=case.stand_life, case_hash=case.hash)
    return frame
