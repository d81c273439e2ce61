"""Carbon: soil organic carbon under the stand, field emissions, credits.

Greenhouse-gas lines are emissions positive, removals (SOC gain) negative.
SOC follows the IPCC 2006 Tier 1 stock-change method (Vol. 4 Eq. 2.25): the
stock moves from the current use's equilibrium to the stand's, linearly over
the transition period, or by a first-order approach whose rate comes from the
transition period (95 % of the change within it) unless the case gives one, or
at a measured rate per year over the transition period; it is held at its last
value after the stand is removed. The stand's factors follow the land use the
case (or preset) names: a grass harvested every year on former cropland takes
the Table 5.5 set-aside factor, as IPCC 2006 Vol. 4 Ch. 6 advises for cropland
converted to grassland; a coppice the perennial/tree-crop factor.
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.definition.constants import (C_TO_CO2, DOLOMITE_EF, FIRST_ORDER_REACH, KG_PER_T, LIMESTONE_EF,
                                           N2O_N_TO_N2O, UREA_EF, UREA_N)
from tea.model.expr import I, L, at_year, cumsum, exp, lag, lookup, maximum, minimum, mod, or_default, t, total, where

CB = I.carbon
LIFE = I.finance.stand_life_years
HELD = minimum(t, LIFE)  # years since planting, held at the stand life after removal


def _n2o(column: str, label: str, unit: str):
    return param(column, unit, "carbon", label, f"{label}: IPCC default for the case's method and climate.",
                 lookup("n2o_factors", column, CB.n2o_method, L.climate_moisture),
                 source="IPCC 2006 Vol.4 Ch.11 Tables 11.1/11.3; 2019 Refinement Tables 11.1/11.3")


DEFS = (
    param("soc_start_t_c", "t C/ha", "carbon", "SOC at planting",
          "SOC stock at planting: the current use's equilibrium, SOC_ref x F_LU x F_MG x F_I.",
          CB.soc_ref_t_c_per_ha * CB.current_f_lu * CB.current_f_mg * CB.current_f_i,
          source="IPCC 2006 Vol.4 Ch.2 Eq. 2.25"),
    param("soc_target_t_c", "t C/ha", "carbon", "SOC equilibrium under the stand",
          "SOC equilibrium under the stand: SOC_ref x F_LU x F_MG x F_I of the crop.",
          CB.soc_ref_t_c_per_ha * CB.crop_f_lu * CB.crop_f_mg * CB.crop_f_i,
          source="IPCC 2006 Vol.4 Ch.2 Eq. 2.25"),
    param("soc_first_order", "flag", "carbon", "First-order SOC path",
          "1 for the first-order SOC path, 0 for the IPCC linear stock change.", CB.soc_method == "first_order"),
    param("soc_measured_rate", "flag", "carbon", "Measured SOC rate",
          "1 for a measured SOC rate per year over the transition period.", CB.soc_method == "measured_rate"),
    param("first_order_k", "1/yr", "carbon", "First-order rate constant",
          "Rate constant of the first-order path: the case's, or ln(20) / transition years.",
          or_default(CB.first_order_rate_per_year, FIRST_ORDER_REACH / CB.transition_years),
          source="first-order decay: 95 % of the change within the transition period"),
    param("climate_moisture", "label", "carbon", "Moisture regime", "Wet (moist or wet climates) or dry.",
          lookup("climate_moisture", "moisture", I.field.climate), source="IPCC 2006 Vol.4 Ch.3 climate zones"),
    _n2o("ef1", "EF1, direct N2O", "kg N2O-N/kg N"),
    _n2o("frac_gasf", "Frac_GASF, N volatilised", "kg N/kg N"),
    _n2o("frac_leach", "Frac_LEACH, N leached", "kg N/kg N"),
    _n2o("ef4", "EF4, N2O from volatilised N", "kg N2O-N/kg N"),
    _n2o("ef5", "EF5, N2O from leached N", "kg N2O-N/kg N"),
    param("gwp_n2o", "kg CO2e/kg N2O", "carbon", "GWP100 of N2O", "GWP100 of N2O in the case's assessment report.",
          lookup("gwp100", "n2o", CB.gwp), source="IPCC AR4/AR5/AR6 WG1"),
    line("soc_t_c", "t C/ha", "carbon", "SOC stock", "SOC stock (0-30 cm) at the end of the year under the stand.",
         where(L.soc_first_order,
               L.soc_target_t_c + (L.soc_start_t_c - L.soc_target_t_c) * exp(0 - L.first_order_k * HELD),
               where(L.soc_measured_rate,
                     L.soc_start_t_c + or_default(CB.soc_rate_t_c_per_ha_per_year, 0)
                     * minimum(maximum(HELD, 0), CB.transition_years),
                     L.soc_start_t_c + (L.soc_target_t_c - L.soc_start_t_c)
                     * minimum(maximum(HELD / CB.transition_years, 0), 1))),
         source="IPCC 2006 Vol.4 Ch.2 Eq. 2.25 (linear over the transition period)"),
    line("soc_current_use_t_c", "t C/ha", "carbon", "SOC under current use",
         "SOC stock had the current use continued (its equilibrium).", L.soc_start_t_c + 0 * t),
    line("soc_change_t_c", "t C/ha", "carbon", "SOC change", "Change of the SOC stock during the year.",
         L.soc_t_c - lag(L.soc_t_c, 1, fill=L.soc_t_c)),
    line("diesel_l", "l/ha", "carbon", "Diesel", "Diesel burnt.",
         L.planting_year * CB.diesel_establishment_l_per_ha + L.harvest * CB.diesel_harvest_l_per_ha
         + L.harvested_t_dm * CB.diesel_l_per_t_dm + L.removal_year * CB.diesel_removal_l_per_ha
         + L.operations_diesel_l),
    line("ghg_n2o_direct_t_co2e", "t CO2e/ha", "carbon", "N2O direct", "Direct N2O from N applied (IPCC Eq. 11.1).",
         L.n_applied_kg * L.ef1 * N2O_N_TO_N2O * L.gwp_n2o / KG_PER_T, source="IPCC 2006 Vol.4 Ch.11 Eq. 11.1"),
    line("ghg_n2o_indirect_t_co2e", "t CO2e/ha", "carbon", "N2O indirect",
         "Indirect N2O: volatilised and leached N (IPCC Eq. 11.9, 11.10).",
         L.n_applied_kg * (L.frac_gasf * L.ef4 + L.frac_leach * L.ef5) * N2O_N_TO_N2O * L.gwp_n2o / KG_PER_T,
         source="IPCC 2006 Vol.4 Ch.11 Eq. 11.9, 11.10"),
    line("ghg_fertiliser_t_co2e", "t CO2e/ha", "carbon", "Fertiliser manufacture",
         "Emissions from making the fertiliser applied.",
         (L.n_applied_kg * CB.n_manufacture_kg_co2e_per_kg + L.p2o5_applied_kg * CB.p2o5_manufacture_kg_co2e_per_kg
          + L.k2o_applied_kg * CB.k2o_manufacture_kg_co2e_per_kg) / KG_PER_T),
    line("ghg_diesel_t_co2e", "t CO2e/ha", "carbon", "Diesel CO2", "CO2 from diesel burnt.",
         L.diesel_l * CB.diesel_kg_co2_per_l / KG_PER_T),
    line("ghg_haulage_t_co2e", "t CO2e/ha", "carbon", "Haulage", "Road haulage of the fresh tonnes delivered.",
         L.sold_fresh_t * I.costs.haul_distance_km * CB.haul_kg_co2e_per_t_km / KG_PER_T),
    line("ghg_prior_biomass_t_co2e", "t CO2e/ha", "carbon", "Prior vegetation lost",
         "Biomass of the vegetation before the stand, lost at planting: B x CF x 44/12 (year 0).",
         L.planting_year * CB.prior_biomass_t_dm_per_ha * CB.biomass_carbon_fraction * C_TO_CO2,
         source="IPCC 2006 Vol.4 Ch.2 Eq. 2.16 with Ch.6 Table 6.4 (B_after = 0 at planting)"),
    param("n2o_per_kg_n_t_co2e", "t CO2e/kg N", "carbon", "N2O per kg N mineralised",
          "Direct and leached N2O per kg of N mineralised, as CO2e: (EF1 + Frac_LEACH x EF5) x 44/28 x GWP.",
          (L.ef1 + L.frac_leach * L.ef5) * N2O_N_TO_N2O * L.gwp_n2o / KG_PER_T,
          source="IPCC 2006 Vol.4 Ch.11 Eq. 11.1, 11.10 (F_SOM)"),
    line("n_mineralised_kg", "kg N/ha", "carbon", "N mineralised from SOC lost",
         "N mineralised where the SOC stock falls: SOC lost x 1000 / C:N.",
         maximum(0 - L.soc_change_t_c, 0) * KG_PER_T / CB.soc_c_to_n, source="IPCC 2006 Vol.4 Ch.11 Eq. 11.8"),
    line("ghg_n2o_mineralised_t_co2e", "t CO2e/ha", "carbon", "N2O from SOC lost",
         "N2O (direct and leached) from the N mineralised when SOC is lost (IPCC Eq. 11.8 with 11.1, 11.10).",
         L.n_mineralised_kg * L.n2o_per_kg_n_t_co2e, source="IPCC 2006 Vol.4 Ch.11 Eq. 11.8, 11.1, 11.10"),
    line("residue_n_removal_kg", "kg N/ha", "carbon", "Residue N at removal",
         "N in the stand's biomass ploughed in at removal (F_CR of the removal year): biomass x N per t.",
         L.removal_year * CB.stand_biomass_t_dm_per_ha * CB.stand_biomass_n_kg_per_t_dm,
         source="IPCC 2006 Vol.4 Ch.11 Eq. 11.1 (F_CR, N in crop residues returned to soils)"),
    line("ghg_n2o_residue_t_co2e", "t CO2e/ha", "carbon", "N2O from residues at removal",
         "Direct and leached N2O from the residue N of the removal year (IPCC Eq. 11.1, 11.10).",
         L.residue_n_removal_kg * L.n2o_per_kg_n_t_co2e, source="IPCC 2006 Vol.4 Ch.11 Eq. 11.1, 11.10"),
    line("ghg_lime_urea_t_co2e", "t CO2e/ha", "carbon", "Lime and urea CO2",
         "CO2 from lime (limestone 0.12, dolomite 0.13 t C/t) and from urea (0.20 t C/t) applied.",
         (L.limestone_t * LIMESTONE_EF + L.dolomite_t * DOLOMITE_EF
          + L.n_applied_kg / KG_PER_T * I.nutrients.urea_share_of_n * (1 - L.planting_year) / UREA_N * UREA_EF)
         * C_TO_CO2, source="IPCC 2006 Vol.4 Ch.11 Eq. 11.12, 11.13"),
    line("ghg_emissions_t_co2e", "t CO2e/ha", "carbon", "Emissions", "Sum of the emission lines.",
         L.ghg_n2o_direct_t_co2e + L.ghg_n2o_indirect_t_co2e + L.ghg_fertiliser_t_co2e + L.ghg_diesel_t_co2e
         + L.ghg_haulage_t_co2e + L.ghg_prior_biomass_t_co2e + L.ghg_n2o_mineralised_t_co2e
         + L.ghg_lime_urea_t_co2e + L.ghg_n2o_residue_t_co2e),
    line("ghg_soc_t_co2e", "t CO2e/ha", "carbon", "SOC change as CO2",
         "SOC change as CO2: -change x 44/12 (a gain is negative).", (0 - L.soc_change_t_c) * C_TO_CO2),
    line("biomass_pool_t_c", "t C/ha", "carbon", "Stand biomass carbon",
         "Carbon in the stand's own biomass (rhizomes, roots, stools, standing stems) at the end of the year: "
         "the mature amount x the expected ramp-up, none once the stand is removed.",
         (t >= 1) * (t < LIFE) * CB.stand_biomass_t_dm_per_ha * CB.biomass_carbon_fraction * L.ramp_expected),
    line("ghg_biomass_t_co2e", "t CO2e/ha", "carbon", "Stand biomass as CO2",
         "Change of the stand's biomass carbon as CO2: built up (negative), lost at removal (positive).",
         (0 - (L.biomass_pool_t_c - lag(L.biomass_pool_t_c, 1))) * C_TO_CO2,
         source="IPCC 2006 Vol.4 Ch.2 Eq. 2.7 (stock difference), carbon kept apart from SOC"),
    line("ghg_net_t_co2e", "t CO2e/ha", "carbon", "Net GHG",
         "Emissions + SOC line + stand biomass line: the net balance (negative = net removal).",
         L.ghg_emissions_t_co2e + L.ghg_soc_t_co2e + L.ghg_biomass_t_co2e),
    # the current use's own emissions, years 1..stand life (its SOC is at its equilibrium)
    line("current_n2o_t_co2e", "t CO2e/ha", "carbon", "Current use: N2O",
         "Direct and indirect N2O from the N the current use would apply (IPCC Eq. 11.1, 11.9, 11.10).",
         L.stand_year * I.field.current_n_kg_per_ha * (L.ef1 + L.frac_gasf * L.ef4 + L.frac_leach * L.ef5)
         * N2O_N_TO_N2O * L.gwp_n2o / KG_PER_T, source="IPCC 2006 Vol.4 Ch.11 Eq. 11.1, 11.9, 11.10"),
    line("current_inputs_t_co2e", "t CO2e/ha", "carbon", "Current use: fertiliser and diesel",
         "Making the fertiliser the current use would apply, and its diesel.",
         L.stand_year * (I.field.current_n_kg_per_ha * CB.n_manufacture_kg_co2e_per_kg
                         + I.field.current_p2o5_kg_per_ha * CB.p2o5_manufacture_kg_co2e_per_kg
                         + I.field.current_k2o_kg_per_ha * CB.k2o_manufacture_kg_co2e_per_kg
                         + I.field.current_diesel_l_per_ha * CB.diesel_kg_co2_per_l) / KG_PER_T),
    line("current_ghg_t_co2e", "t CO2e/ha", "carbon", "Current use: emissions",
         "Emissions the current use would have had in the year.", L.current_n2o_t_co2e + L.current_inputs_t_co2e),
    line("ghg_net_vs_current_t_co2e", "t CO2e/ha", "carbon", "Net GHG vs current use",
         "Net balance of the stand less the current use's emissions (its SOC stays at its equilibrium).",
         L.ghg_net_t_co2e - L.current_ghg_t_co2e),
    # credits: removals credited at verification, a buffer held back, the loss at removal paid back
    param("credit_enrolled", "flag", "carbon", "Credits sold",
          "1 where the case sells credits: a credit price > 0 and credits issued over the stand life (no removal "
          "verified, or a first verification after the stand life, claims none, and pays no verification or "
          "registry fee).",
          (CB.credit_price_per_t_co2e > 0) & (total(L.credited_t_co2e) > 0)),
    line("credit_eligible_t_co2e", "t CO2e/ha", "carbon", "Removals eligible",
         "SOC gain of the year as CO2 while the stand stands, the removal year excepted, where the case sells "
         "credits (a credit price > 0; none claimed, none paid back, otherwise).",
         (CB.credit_price_per_t_co2e > 0) * L.stand_year * (t < LIFE) * maximum(L.soc_change_t_c, 0) * C_TO_CO2),
    line("credited_gross_t_co2e", "t CO2e/ha", "carbon", "Removals verified",
         "Removals verified: all eligible removals so far in the first verification year, the year's after it.",
         (t == CB.credit_first_year) * cumsum(L.credit_eligible_t_co2e)
         + (t > CB.credit_first_year) * L.credit_eligible_t_co2e),
    line("credit_buffer_t_co2e", "t CO2e/ha", "carbon", "Held in the buffer",
         "Share of the verified removals held back in the non-permanence buffer.",
         L.credited_gross_t_co2e * CB.credit_buffer_share),
    line("credited_t_co2e", "t CO2e/ha", "carbon", "Credited",
         "Credits issued: removals verified x (1 - buffer).",
         L.credited_gross_t_co2e - L.credit_buffer_t_co2e),
    line("credit_reversal_t_co2e", "t CO2e/ha", "carbon", "Credited removals reversed",
         "In the removal year, the verified removals lost when the SOC returns to the current use's level: "
         "the smaller of all verified removals and the SOC gain as CO2.",
         L.removal_year * minimum(total(L.credited_gross_t_co2e),
                                  maximum(at_year(L.soc_t_c, LIFE) - L.soc_start_t_c, 0) * C_TO_CO2)),
    line("credit_payback_t_co2e", "t CO2e/ha", "carbon", "Credits paid back",
         "Reversed removals beyond the buffer, paid back in the removal year (none where the buffer bears them).",
         (CB.credit_reversal == "payback")
         * maximum(at_year(L.credit_reversal_t_co2e, LIFE) - total(L.credit_buffer_t_co2e), 0) * L.removal_year),
    line("credit_net_t_co2e", "t CO2e/ha", "carbon", "Credits net of payback",
         "Credits issued less credits paid back.", L.credited_t_co2e - L.credit_payback_t_co2e),

)
