"""The crop: yield by stand age, harvests, losses, moisture, energy and nutrient offtake.

The mature yield is the dry matter standing at the autumn peak (for a
coppice: wood grown per year), times the site factor. A harvest in year t
takes the growth of the harvest interval's years ending in t; growth before
the first such window (a coppice's cut-back year) is not harvested. A
late-winter harvest loses the overwinter share of the standing dry matter
(leaf and tip fall; Himken et al. 1997 measured it) but finds the crop drier
and its nutrients moved back to roots and rhizomes.
"""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.definition.constants import WATER_VAPORISATION
from tea.model.expr import I, L, by_year, mod, t, where, window_sum

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
    param("heating_value_delivered_gj_per_t_dm", "GJ/t DM", "yield", "Heating value as delivered",
          "Net heating value per t of dry matter delivered at the harvest moisture: q_dry - 2.443 M / (1 - M).",
          I.revenue.heating_value_gj_per_t_dm
          - WATER_VAPORISATION * L.moisture_at_harvest / (1 - L.moisture_at_harvest),
          source="ISO 18125:2017 net calorific value as received"),
    # yield
    line("growth_fraction", "fraction", "yield", "Growth fraction",
         "Growth as a share of the mature yield (ramp-up, plateau, decline).",
         L.stand_year * by_year(Y.ramp_up_fractions, start=1, default=1)
         * where((Y.decline_start_year > 0) & (t > Y.decline_start_year),
                 (1 - Y.decline_per_year) ** (t - Y.decline_start_year), 1)),
    line("growth_t_dm", "t DM/ha", "yield", "Growth",
         "Dry matter grown this year at the autumn peak, with the site factor.",
         Y.mature_t_dm_per_ha * Y.site_factor * L.growth_fraction),
    line("harvest", "flag", "yield", "Harvest year", "1 in a harvest year.",
         (t >= H.first_year) & (mod(t - H.first_year, H.interval_years) == 0) & (t <= LIFE) & (t >= 1)),
    line("standing_t_dm", "t DM/ha", "yield", "Standing DM cut",
         "Standing dry matter cut: the growth of the harvest interval's years ending this year.",
         L.harvest * window_sum(L.growth_t_dm, H.interval_years)),
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
         L.harvested_t_dm * (1 - H.storage_loss)),
    line("moisture", "fraction", "yield", "Moisture at harvest", "Moisture content at harvest, wet basis.",
         L.harvest * L.moisture_at_harvest),
    line("harvested_fresh_t", "t/ha", "yield", "Fresh t harvested", "Fresh tonnes harvested, at harvest moisture.",
         L.harvested_t_dm / (1 - L.moisture_at_harvest)),
    line("sold_fresh_t", "t/ha", "yield", "Fresh t delivered", "Fresh tonnes delivered (haulage basis).",
         L.sold_t_dm / (1 - L.moisture_at_harvest)),
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
    line("n_replaced_kg", "kg/ha", "nutrients", "N replaced", "N put back to replace the offtake.",
         L.n_offtake_kg * N.n_replace_share, show=False),
    line("n_applied_kg", "kg/ha", "nutrients", "N applied",
         "N applied: offtake x replacement share, plus establishment N in year 0.",
         L.n_replaced_kg + L.planting_year * I.establishment.n_kg_per_ha),
    line("p2o5_applied_kg", "kg/ha", "nutrients", "P2O5 applied", "P2O5 applied to replace offtake.",
         L.p2o5_offtake_kg * N.p2o5_replace_share),
    line("k2o_applied_kg", "kg/ha", "nutrients", "K2O applied", "K2O applied to replace offtake.",
         L.k2o_offtake_kg * N.k2o_replace_share),
    line("fertiliser_cost", "money/ha", "costs", "Replacement fertiliser",
         "Replacement fertiliser (excluding establishment N) and its spreading.",
         (L.n_replaced_kg * N.n_price_per_kg + L.p2o5_applied_kg * N.p2o5_price_per_kg
          + L.k2o_applied_kg * N.k2o_price_per_kg
          + (L.n_replaced_kg + L.p2o5_applied_kg + L.k2o_applied_kg > 0) * N.spreading_per_ha) * L.cost_index),
)
