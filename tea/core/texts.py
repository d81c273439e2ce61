"""Fixed texts every output carries (the cautions), and the width of the terminal's lines."""

from __future__ import annotations

#: widest line the command line prints [characters] (the README promises it)
WIDTH = 100

CAUTIONS: tuple[str, ...] = (
    "Planning estimates only: these figures are not financial, tax or agronomic advice.",
    "Planting rules differ by place (invasive-species, licensing and planting rules); "
    "check local rules before planting.",
    "Carbon credits depend on the rules of the buyer or registry (eligibility, baselines, permanence, "
    "verification); the credit figures here are indicative only.",
    "Defer to local regulation and to licensed professionals (agronomist, accountant, lender, "
    "carbon-registry verifier) before acting.",
)
