"""Timing: the year row and the year flags every other line multiplies by.

Year 0 is planting: establishment costs and grants fall at t = 0,
undiscounted. Year t >= 1 is the t-th growing season, booked at the end of
year t; the last year is the stand life and carries the removal cost. Rows
after a row's own stand life (a batch holds several stand lives) are zero.
"""

from __future__ import annotations

from tea.model.declare import line
from tea.model.expr import I, t

LIFE = I.finance.stand_life_years

DEFS = (
    line("year", "yr", "timing", "Year", "Year since planting (0 = planting year).", t),
    line("planting_year", "flag", "timing", "Planting year", "1 in year 0, the planting year.", t == 0, show=False),
    line("stand_year", "flag", "timing", "Stand year", "1 in the years the stand stands: 1..stand life.",
         (t >= 1) & (t <= LIFE), show=False),
    line("removal_year", "flag", "timing", "Removal year", "1 in the last year, when the stand is taken out.",
         t == LIFE, show=False),
)
