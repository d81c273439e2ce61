"""Establishment: the planting year's costs, itemised, and the expected replanting in year 1."""

from __future__ import annotations

from tea.model.declare import line, param
from tea.model.expr import I, L, t

E = I.establishment

DEFS = (
    param("planting_material_per_ha", "money/ha", "establishment", "Planting material per ha",
          "Planting units per ha x price of one unit.", E.planting_units_per_ha * E.planting_unit_price),
    line("est_site_preparation", "money/ha", "establishment", "Site preparation", "Site preparation (year 0).",
         L.planting_year * E.site_preparation_per_ha),
    line("est_weed_control", "money/ha", "establishment", "Weed control",
         "Weed control in the planting year (year 0).", L.planting_year * E.weed_control_per_ha),
    line("est_planting_material", "money/ha", "establishment", "Planting material",
         "Planting material: units per ha x unit price (year 0).", L.planting_year * L.planting_material_per_ha),
    line("est_planting_operation", "money/ha", "establishment", "Planting operation", "Planting operation (year 0).",
         L.planting_year * E.planting_operation_per_ha),
    line("est_fertiliser", "money/ha", "establishment", "Establishment fertiliser", "Establishment fertiliser (year 0).",
         L.planting_year * E.fertiliser_per_ha),
    line("est_fencing_other", "money/ha", "establishment", "Fencing and other",
         "Fencing and other one-off costs (year 0).", L.planting_year * E.fencing_other_per_ha),
    line("est_replanting_expected", "money/ha", "establishment", "Expected replanting",
         "Expected gap-filling/replanting: failure probability x replant share x (material + planting) (year 1).",
         ((t == 1) & (I.finance.stand_life_years >= 1)) * E.failure_probability * E.replant_share
         * (L.planting_material_per_ha + E.planting_operation_per_ha)),
    line("establishment_cost", "money/ha", "establishment", "Establishment cost", "Sum of the establishment lines.",
         L.est_site_preparation + L.est_weed_control + L.est_planting_material + L.est_planting_operation
         + L.est_fertiliser + L.est_fencing_other + L.est_replanting_expected),
)
