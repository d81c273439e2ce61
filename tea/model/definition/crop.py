"""The crop: yield by stand age, harvests, losses, moisture, energy and nutrient offtake.

The mature yield is the dry matter standing at the autumn peak (for a
coppice: wood grown per year), times the site factor, less the stools or
plants lost to mortality. The growth of the years up to the cut-back year is
cut back and never sold; after it, growth stands until it is harvested: a
harvest in year t takes all growth since the cut-back or the last harvest, so
rotations of any length follow. An optional final harvest at removal takes
what has grown since the last harvest. A
late-winter harvest loses the overwinter share of the standing dry matter
(leaf and tip fall; Himken et al. 1997 measured it) but finds the crop drier
and its nutrients moved back to roots and rhizomes. An autumn (green) harvest
delivers wetter biomass: dried to the buyer's moisture specification (cost per
t of water removed: the mass balance 1/(1 - M) - 1/(1 - M_spec) t of water per
t DM) or sold at a price cut per point above it; stored wetter than the safe
moisture it loses more dry matter; the nutrients it takes off are replaced at
their own shares; and the growth of the years after it carries the green-cut
yield factor.
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.definition.constants import POINTS_PER_WHOLE, WATER_VAPORISATION
from tea.model.expr import I, L, by_year, given, lag, maximum, mod, or_default, t, where

Y, H, N = I.yield_, I.harvest, I.nutrients
LIFE = I.finance.stand_life_years

DEFS = (
    # parameters of the chosen harvest time
    param("late_winter_harvest", "flag", "yield", "Late-winter harvest",
          "1 for a late-winter harvest, 0 for an autumn one.", H.timing == "late_winter"),
    param("standing_retention", "fraction", "yield", "Share still standing at the harvest",
          "Share of the autumn standing dry matter still there at the harvest (1 - overwinter loss in late winter).",
          where(L.late_winter_harvest, 1 - H.overwinter_dm_loss, 1)),
    param("moisture_at_harvest", "fraction", "yield", "Moisture at harvest",
          "Moisture content (wet basis) at the chosen harvest time.",
          where(L.late_winter_harvest, H.moisture_late_winter, H.moisture_autumn)),
    param("above_buyer_spec", "flag", "yield", "Wetter than the buyer's specification",
          "1 where a buyer's moisture specification is given and the harvest moisture is above it.",
          given(H.buyer_moisture_max) & (L.moisture_at_harvest > or_default(H.buyer_moisture_max, 1))),
    param("dried_to_spec", "flag", "yield", "Dried to the buyer's specification",
          "1 where biomass wetter than the buyer's specification is dried to it.",
          L.above_buyer_spec & (H.above_spec == "dry")),
    param("moisture_delivered", "fraction", "yield", "Moisture as delivered",
          "Moisture content (wet basis) as stored and delivered: the buyer's specification where the biomass is "
          "dried to it, else the harvest moisture.",
          where(L.dried_to_spec, or_default(H.buyer_moisture_max, 0), L.moisture_at_harvest)),
    param("water_removed_t_per_t_dm", "t/t DM", "yield", "Water removed per t DM",
          "Water dried off per t of dry matter: 1/(1 - M_harvest) - 1/(1 - M_delivered) (mass balance).",
          1 / (1 - L.moisture_at_harvest) - 1 / (1 - L.moisture_delivered), source="mass balance of water"),
    param("moisture_price_factor", "fraction", "yield", "Price kept after the moisture cut",
          "1 - price cut per point x points of moisture above the buyer's specification (not below 0), where the "
          "biomass is sold wet; else 1.",
          where(L.above_buyer_spec & (H.above_spec == "price_cut"),
                maximum(0, 1 - H.price_cut_per_point * POINTS_PER_WHOLE
                        * (L.moisture_at_harvest - or_default(H.buyer_moisture_max, 0))), 1)),
    param("storage_loss_share", "fraction", "yield", "Storage loss share",
          "Share of harvested dry matter lost in storage: the wet share where stored wetter than the safe "
          "moisture, else the dry share.",
          where(L.moisture_delivered > H.storage_safe_moisture, H.storage_loss_wet, H.storage_loss)),
    param("heating_value_delivered_gj_per_t_dm", "GJ/t DM", "yield", "Heating value as delivered",
          "Net heating value per t of dry matter delivered at its moisture: q_dry - 2.443 M / (1 - M).",
          I.revenue.heating_value_gj_per_t_dm
          - WATER_VAPORISATION * L.moisture_delivered / (1 - L.moisture_delivered),
          source="ISO 18125:2017 net calorific value as received"),
    # yield
    line("ramp_usual", "fraction", "yield", "Ramp-up as planted",
         "Ramp-up fraction of the year where establishment succeeds: the case's fractions from year 1, then 1; "
         "0 in the planting year (year 0), which grows no crop to harvest.",
         L.stand_year * by_year(Y.ramp_up_fractions, start=1, default=1), show=False),
    line("ramp_after_failure", "fraction", "yield", "Ramp-up after a failed establishment",
         "Ramp-up fraction of the year where establishment fails and is replanted: a year late (year 1 yields "
         "nothing, year 2 what year 1 would have).",
         (t > 1) * lag(L.ramp_usual, 1), show=False),
    line("ramp_expected", "fraction", "yield", "Expected ramp-up",
         "Expected ramp-up fraction: (1 - failure probability) x as planted + failure probability x a year late.",
         (1 - I.establishment.failure_probability) * L.ramp_usual
         + I.establishment.failure_probability * L.ramp_after_failure),
    line("growth_fraction", "fraction", "yield", "Growth fraction",
         "Growth as a share of the mature yield (expected ramp-up, plateau, decline, mortality).",
         L.stand_year * L.ramp_expected
         * where((Y.decline_start_year > 0) & (t > Y.decline_start_year),
                 (1 - Y.decline_per_year) ** (t - Y.decline_start_year), 1)
         * (1 - Y.mortality_per_year) ** maximum(t - 1, 0)),
    line("green_cut_before", "flag", "yield", "After a green cut",
         "1 in the years after an autumn (green) harvest has been taken.",
         (1 - L.late_winter_harvest) * (t > H.first_year), show=False),
    line("growth_t_dm", "t DM/ha", "yield", "Growth",
         "Dry matter grown this year at the autumn peak, with the site factor (and the green-cut yield "
         "factor after an autumn harvest).",
         Y.mature_t_dm_per_ha * Y.site_factor * L.growth_fraction
         * where(L.green_cut_before, H.green_cut_yield_factor, 1)),
    line("harvest", "flag", "yield", "Harvest year",
         "1 in a harvest year: the first harvest year and every interval after it, and the removal year where "
         "a final harvest is taken.",
         (((t >= H.first_year) & (mod(t - H.first_year, H.interval_years) == 0))
          | ((t == LIFE) & H.final_harvest_at_removal)) & (t <= LIFE) & (t >= 1)),
    line("growth_after_cut_back_t_dm", "t DM/ha", "yield", "Growth after the cut-back",
         "Growth of the years after the cut-back year (the cut-back year's and earlier growth is never sold).",
         (t > H.cut_back_year) * L.growth_t_dm),
    line("uncut_t_dm", "t DM/ha", "yield", "Growth standing uncut",
         "Growth standing at the end of the year before any harvest: what is left of last year's (its share "
         "carried over a year uncut), unless it was harvested, plus this year's growth after the cut-back.",
         lag(L.uncut_t_dm, 1) * (1 - lag(L.harvest, 1)) * H.uncut_carryover + L.growth_after_cut_back_t_dm,
         show=False),
    line("uncut_ramp_as_planted", "fraction", "yield", "Ramp-up standing uncut, as planted",
         "Ramp-up fractions of the years since the cut-back or the last harvest, summed, where establishment "
         "succeeds: above 0 where a harvest of the stand as planted takes dry matter.",
         lag(L.uncut_ramp_as_planted, 1) * (1 - lag(L.harvest, 1)) + (t > H.cut_back_year) * L.ramp_usual,
         show=False),
    line("uncut_ramp_after_failure", "fraction", "yield", "Ramp-up standing uncut, after a failure",
         "The same where establishment fails and the stand ramps up a year late: above 0 where a harvest of the "
         "replanted stand takes dry matter.",
         lag(L.uncut_ramp_after_failure, 1) * (1 - lag(L.harvest, 1))
         + (t > H.cut_back_year) * L.ramp_after_failure, show=False),
    line("harvest_takes_share", "fraction", "yield", "Chance a harvest takes dry matter",
         "In a harvest year, the chance that it takes dry matter: (1 - failure probability) where the stand as "
         "planted has growth standing uncut, + failure probability where the stand replanted a year late has; "
         "the expected ledger is the same mix of the two outcomes.",
         L.harvest * ((1 - I.establishment.failure_probability) * (L.uncut_ramp_as_planted > 0)
                      + I.establishment.failure_probability * (L.uncut_ramp_after_failure > 0)), show=False),
    line("standing_t_dm", "t DM/ha", "yield", "Standing DM cut",
         "Standing dry matter cut: all growth since the cut-back or the last harvest.",
         L.harvest * L.uncut_t_dm),
    line("overwinter_loss_t_dm", "t DM/ha", "yield", "Overwinter loss",
         "Dry matter lost between the autumn peak and a late-winter harvest.",
         L.standing_t_dm - L.standing_t_dm * L.standing_retention),
    line("field_loss_t_dm", "t DM/ha", "yield", "Field loss", "Dry matter lost in cutting, baling or chipping.",
         L.standing_t_dm * L.standing_retention - L.harvested_t_dm),
    line("harvested_t_dm", "t DM/ha", "yield", "Harvested DM",
         "Dry matter taken off the field (the nutrient offtake basis).",
         L.standing_t_dm * L.standing_retention * (1 - H.field_loss)),
    line("storage_loss_t_dm", "t DM/ha", "yield", "Storage loss", "Dry matter lost in storage.",
         L.harvested_t_dm - L.sold_t_dm),
    line("sold_t_dm", "t DM/ha", "yield", "DM sold", "Dry matter delivered and sold.",
         L.harvested_t_dm * (1 - L.storage_loss_share)),
    line("moisture", "fraction", "yield", "Moisture at harvest", "Moisture content at harvest, wet basis.",
         L.harvest * L.moisture_at_harvest),
    line("harvested_fresh_t", "t/ha", "yield", "Fresh t harvested", "Fresh tonnes harvested, at harvest moisture.",
         L.harvested_t_dm / (1 - L.moisture_at_harvest)),
    line("water_removed_t", "t/ha", "yield", "Water dried off",
         "Water removed drying the harvest to the buyer's moisture specification.",
         L.harvested_t_dm * L.water_removed_t_per_t_dm),
    line("sold_fresh_t", "t/ha", "yield", "Fresh t delivered", "Fresh tonnes delivered (haulage basis).",
         L.sold_t_dm / (1 - L.moisture_delivered)),
    line("sold_gj", "GJ/ha", "yield", "Energy sold",
         "Energy delivered: dry matter sold x net heating value at the delivered moisture (ISO 18125 relation).",
         L.sold_t_dm * L.heating_value_delivered_gj_per_t_dm),
    # nutrients
    param("n_offtake_kg_per_t_dm", "kg/t DM", "nutrients", "N removed per t DM",
          "N removed per t DM at the chosen harvest time.",
          where(L.late_winter_harvest, N.n_late_winter_kg_per_t_dm, N.n_autumn_kg_per_t_dm)),
    param("p2o5_offtake_kg_per_t_dm", "kg/t DM", "nutrients", "P2O5 removed per t DM",
          "P2O5 removed per t DM at the chosen harvest time.",
          where(L.late_winter_harvest, N.p2o5_late_winter_kg_per_t_dm, N.p2o5_autumn_kg_per_t_dm)),
    param("k2o_offtake_kg_per_t_dm", "kg/t DM", "nutrients", "K2O removed per t DM",
          "K2O removed per t DM at the chosen harvest time.",
          where(L.late_winter_harvest, N.k2o_late_winter_kg_per_t_dm, N.k2o_autumn_kg_per_t_dm)),
    line("n_offtake_kg", "kg/ha", "nutrients", "N offtake", "N removed with the harvest.",
         L.harvested_t_dm * L.n_offtake_kg_per_t_dm),
    line("p2o5_offtake_kg", "kg/ha", "nutrients", "P2O5 offtake", "P2O5 removed with the harvest.",
         L.harvested_t_dm * L.p2o5_offtake_kg_per_t_dm),
    line("k2o_offtake_kg", "kg/ha", "nutrients", "K2O offtake", "K2O removed with the harvest.",
         L.harvested_t_dm * L.k2o_offtake_kg_per_t_dm),
    *(param(f"{nut}_replace_share_at_timing", "fraction", "nutrients", f"{label} replacement share",
            f"Share of the {label} removed put back, at the chosen harvest time.",
            where(L.late_winter_harvest, getattr(N, f"{nut}_replace_share"), getattr(N, f"{nut}_replace_share_autumn")))
      for nut, label in (("n", "N"), ("p2o5", "P2O5"), ("k2o", "K2O"))),
    line("n_replaced_kg", "kg/ha", "nutrients", "N replaced", "N put back to replace the offtake.",
         L.n_offtake_kg * L.n_replace_share_at_timing, show=False),
    line("n_applied_kg", "kg/ha", "nutrients", "N applied",
         "N applied: offtake x replacement share, plus establishment N in year 0 and the operations' N.",
         L.n_replaced_kg + L.planting_year * I.establishment.n_kg_per_ha + L.operations_n_kg),
    line("p2o5_applied_kg", "kg/ha", "nutrients", "P2O5 applied", "P2O5 applied to replace offtake.",
         L.p2o5_offtake_kg * L.p2o5_replace_share_at_timing),
    line("k2o_applied_kg", "kg/ha", "nutrients", "K2O applied", "K2O applied to replace offtake.",
         L.k2o_offtake_kg * L.k2o_replace_share_at_timing),
    line("fertiliser_cost", "money/ha", "costs", "Replacement fertiliser",
         "Replacement fertiliser (excluding establishment N) and its spreading: one pass in a year with "
         "fertiliser to put back, taken with the chance that the year's harvest takes dry matter (a stand "
         "replanted after a failed establishment may have nothing to replace in its first harvest year).",
         (L.n_replaced_kg * N.n_price_per_kg + L.p2o5_applied_kg * N.p2o5_price_per_kg
          + L.k2o_applied_kg * N.k2o_price_per_kg
          + (L.n_replaced_kg + L.p2o5_applied_kg + L.k2o_applied_kg > 0) * L.harvest_takes_share
          * N.spreading_per_ha) * L.cost_index),
)
