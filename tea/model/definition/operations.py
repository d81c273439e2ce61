"""Operations by year: the case's [[operations]] (a cut-back, a second-year weed control, liming every fifth
year, gap-filling), laid out by year, as cost, diesel and N lines.

Their cost is escalated like every cost after planting (undiscounted and unescalated in year 0); their diesel
and N join the diesel and N lines, and so the greenhouse-gas lines. Nothing falls after the stand life.
"""

from __future__ import annotations

from tea.model.declare import line
from tea.model.expr import I, L, by_year, t, where

S = I.schedule
LIFE = I.finance.stand_life_years

DEFS = (
    line("operations_cost", "money/ha", "costs", "Operations",
         "Operations of the year ([[operations]]): their cost per ha, escalated after planting.",
         (t <= LIFE) * by_year(S.cost_per_ha_by_year, start=0, default=0) * where(t >= 1, L.cost_index, 1)),
    line("operations_diesel_l", "l/ha", "carbon", "Operations diesel", "Diesel the year's operations burn.",
         (t <= LIFE) * by_year(S.diesel_l_per_ha_by_year, start=0, default=0)),
    line("operations_n_kg", "kg/ha", "nutrients", "Operations N", "N the year's operations apply.",
         (t <= LIFE) * by_year(S.n_kg_per_ha_by_year, start=0, default=0)),
    line("limestone_t", "t/ha", "nutrients", "Limestone spread", "Limestone the year's operations spread.",
         (t <= LIFE) * by_year(S.limestone_t_per_ha_by_year, start=0, default=0)),
    line("dolomite_t", "t/ha", "nutrients", "Dolomite spread", "Dolomite the year's operations spread.",
         (t <= LIFE) * by_year(S.dolomite_t_per_ha_by_year, start=0, default=0)),
)
