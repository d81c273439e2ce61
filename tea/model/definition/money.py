"""Money: costs, receipts, the net cash flow, the current use it replaces, discounting.

Cost and revenue lines are positive magnitudes; only the cash-flow lines carry
a sign. Land costs, the current use's forgone margin and yearly payments run
in years 1..stand life. The current use nets its gross margin less the rent
and overheads it would pay too, so "vs current use" figures count only what
the decision changes.
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.expr import I, L, by_year, cumsum, given, maximum, mod, or_default, t, where

C, R, FI = I.costs, I.revenue, I.finance


def real(rate):
    """A rate of the case as a real rate: a nominal one through the Fisher equation."""
    return where(FI.rate_basis == "nominal", (1 + rate) / (1 + FI.inflation) - 1, rate)


def growth(rate):
    """(1 + rate)^(t - 1), the rate made real if the case gives its changes in nominal terms: 1 in year 1,
    the base year of every price and cost after planting."""
    real_rate = where(FI.escalation_basis == "nominal", (1 + rate) / (1 + FI.inflation) - 1, rate)
    return (1 + real_rate) ** (t - 1)


DEFS = (
    # costs
    line("cost_index", "fraction", "costs", "Cost index",
         "Level of every cost after planting except rent: (1 + change)^(t - 1), 1 in year 1.",
         growth(C.change_per_year)),
    line("rent_index", "fraction", "costs", "Rent index", "Level of the rent: (1 + change)^(t - 1), 1 in year 1.",
         growth(C.rent_change_per_year)),
    line("harvest_cost", "money/ha", "costs", "Cutting", "Cutting, per harvest.",
         L.harvest * C.harvest_per_ha * L.cost_index),
    line("baling_chipping_cost", "money/ha", "costs", "Baling or chipping", "Baling or chipping, per t DM harvested.",
         L.harvested_t_dm * C.baling_chipping_per_t_dm * L.cost_index),
    line("haulage_cost", "money/ha", "costs", "Haulage", "Haulage: fresh t delivered x distance x rate.",
         L.sold_fresh_t * C.haul_distance_km * C.haul_per_t_km * L.cost_index),
    line("storage_cost", "money/ha", "costs", "Storage", "Storage, per t DM sold.",
         L.sold_t_dm * C.storage_per_t_dm * L.cost_index),
    line("drying_cost", "money/ha", "costs", "Drying", "Drying to the buyer's specification: water removed x cost per t.",
         L.water_removed_t * I.harvest.drying_per_t_water * L.cost_index),
    line("rent", "money/ha", "costs", "Rent", "Land rent, years 1..L.", L.stand_year * C.rent_per_ha * L.rent_index),
    line("overheads", "money/ha", "costs", "Overheads", "Overheads, years 1..L.",
         L.stand_year * C.overheads_per_ha * L.cost_index),
    line("insurance", "money/ha", "costs", "Insurance", "Insurance, years 1..L.",
         L.stand_year * C.insurance_per_ha * L.cost_index),
    line("upkeep", "money/ha", "costs", "Upkeep", "Field upkeep, years 1..L.",
         L.stand_year * C.upkeep_per_ha * L.cost_index),
    line("removal_cost", "money/ha", "costs", "Removal", "Taking the stand out (last year).",
         L.removal_year * C.removal_per_ha * L.cost_index),
    line("credit_payback_cost", "money/ha", "costs", "Credits paid back",
         "Credits paid back at removal x credit price.",
         L.credit_payback_t_co2e * I.carbon.credit_price_per_t_co2e),
    line("verification_cost", "money/ha", "costs", "Verification and registry",
         "Verifications (first verification year, then every interval, while the stand stands) and yearly "
         "registry fees, where credits are sold (a credit price and credits issued).",
         L.credit_enrolled * L.stand_year * (t < I.finance.stand_life_years)
         * ((t >= I.carbon.credit_first_year) * (mod(t - I.carbon.credit_first_year,
                                                       I.carbon.verification_interval_years) == 0)
            * I.carbon.verification_per_ha + I.carbon.registry_per_ha) * L.cost_index),
    line("grant_clawback", "money/ha", "costs", "Grant paid back",
         "Share of the grant paid back in the removal year when the stand stands fewer years than the grant asks: "
         "grant x (1 - stand life / commitment years).",
         L.removal_year * where(I.establishment.grant_commitment_years > 0, I.establishment.grant_per_ha
                                * maximum(0, 1 - I.finance.stand_life_years / I.establishment.grant_commitment_years),
                                0)),
    line("total_cost", "money/ha", "costs", "Total cost", "All costs of the year, establishment included.",
         L.establishment_cost + L.fertiliser_cost + L.harvest_cost + L.baling_chipping_cost + L.haulage_cost
         + L.storage_cost + L.drying_cost + L.rent + L.overheads + L.insurance + L.upkeep + L.removal_cost + L.grant_clawback
         + L.credit_payback_cost + L.verification_cost + L.operations_cost),
    # revenue
    param("price_per_t_dm_year1", "money/t DM", "revenue", "Biomass price per t DM in year 1",
          "The case's price per t DM, or its price per GJ times the heating value as delivered.",
          where(given(R.price_per_gj), R.price_per_gj * L.heating_value_delivered_gj_per_t_dm, R.price_per_t_dm)),
    line("price_index", "fraction", "revenue", "Price index",
         "Market price multiplier: (1 + change)^(t - 1), or the case's price path.",
         L.stand_year * where(given(R.price_path), by_year(R.price_path, start=1, hold_last=True),
                              growth(R.price_change_per_year))),
    param("contract_price_per_t_dm_year1", "money/t DM", "revenue", "Contract price per t DM in year 1",
          "The contract's price per t DM, or its price per GJ times the heating value as delivered (the market "
          "price where the case gives no contract price).",
          where(given(R.contract_price_per_gj), R.contract_price_per_gj * L.heating_value_delivered_gj_per_t_dm,
                or_default(R.contract_price_per_t_dm, L.price_per_t_dm_year1))),
    line("contract_year", "flag", "revenue", "Contract year", "1 in the years sold under the fixed-price contract.",
         L.stand_year * (t <= R.contract_years)),
    line("market_price_per_t_dm", "money/t DM", "revenue", "Market price per t DM",
         "Market price per t DM (per-GJ prices through the heating value).",
         L.price_per_t_dm_year1 * L.price_index),
    line("price_per_t_dm", "money/t DM", "revenue", "Price per t DM",
         "Price received per t DM: the contract price in contract years, the market price after.",
         where(L.contract_year, L.contract_price_per_t_dm_year1 * growth(R.contract_change_per_year),
               L.market_price_per_t_dm)),
    line("biomass_revenue", "money/ha", "revenue", "Biomass revenue",
         "Dry matter sold x price x the share kept after a moisture price cut.",
         L.sold_t_dm * L.price_per_t_dm * L.moisture_price_factor),
    line("uncontracted_revenue", "money/ha", "revenue", "Sales at the market price",
         "Biomass revenue of the years outside a fixed-price contract.", (1 - L.contract_year) * L.biomass_revenue),
    line("grant", "money/ha", "revenue", "Grant", "Establishment grant, in the year it is paid.",
         (t == I.establishment.grant_year) * I.establishment.grant_per_ha),
    line("salvage", "money/ha", "revenue", "Salvage at removal",
         "Receipt at removal (rhizomes or stools sold, a terminal value), in the last year.",
         L.removal_year * R.salvage_per_ha),
    line("annual_payment", "money/ha", "revenue", "Yearly payment", "Yearly payments.",
         L.stand_year * where(R.annual_payment_years > 0, t <= R.annual_payment_years, 1)
         * R.annual_payment_per_ha),
    line("carbon_credit_revenue", "money/ha", "revenue", "Carbon-credit revenue", "Credited t CO2e x credit price.",
         L.credited_t_co2e * I.carbon.credit_price_per_t_co2e),
    line("carbon_credit_net_cash", "money/ha", "revenue", "Credits net of their costs",
         "Credit receipts less the credits paid back at removal and the verification and registry costs.",
         L.carbon_credit_revenue - L.credit_payback_cost - L.verification_cost),
    line("total_revenue", "money/ha", "revenue", "Total revenue", "All receipts of the year.",
         L.biomass_revenue + L.grant + L.annual_payment + L.carbon_credit_revenue + L.salvage),
    # cash
    param("discount_rate_real", "fraction/yr", "cash", "Real discount rate",
          "The case's discount rate, made real through the Fisher equation if it is nominal.",
          real(FI.discount_rate), source="Fisher equation: (1 + i) = (1 + r)(1 + inflation)"),
    line("net_cash_flow", "money/ha", "cash", "Net cash flow", "Total revenue - total cost.",
         L.total_revenue - L.total_cost),
    line("current_margin", "money/ha", "cash", "Current use margin (forgone)",
         "Gross margin the current use would have earned (forgone), years 1..L.",
         L.stand_year * I.field.current_margin_per_ha),
    line("current_use_cash_flow", "money/ha", "cash", "Current use nets (margin - rent - overheads)",
         "What the field would net under its current use: current margin - rent - overheads (paid under either use).",
         L.current_margin - L.rent - L.overheads),
    line("incremental_cash_flow", "money/ha", "cash", "Incremental cash flow",
         "Net cash flow - current use cash flow: the change from today's use.",
         L.net_cash_flow - L.current_use_cash_flow),
    line("discount_factor", "fraction", "cash", "Discount factor", "(1 + r)^-t at the real discount rate.",
         (1 + L.discount_rate_real) ** (0 - t)),
    line("discounted_cash_flow", "money/ha", "cash", "Discounted cash flow", "Net cash flow x discount factor.",
         L.net_cash_flow * L.discount_factor),
    line("cumulative_cash_flow", "money/ha", "cash", "Cumulative cash flow", "Running total of the net cash flow.",
         cumsum(L.net_cash_flow)),
    line("cumulative_discounted_cash_flow", "money/ha", "cash", "Cumulative discounted",
         "Running total of the discounted cash flow.", cumsum(L.discounted_cash_flow)),
    line("discounted_incremental_cash_flow", "money/ha", "cash", "Discounted incremental",
         "Incremental cash flow x discount factor.", L.incremental_cash_flow * L.discount_factor),
    line("cumulative_discounted_incremental", "money/ha", "cash", "Cumulative disc. incremental",
         "Running total of the discounted incremental cash flow.", cumsum(L.discounted_incremental_cash_flow)),
)
