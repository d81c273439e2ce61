"""`tea yield`: the site's yield potential by Monteith's equation, as text and JSON.

They render :func:`tea.inputs.site.season_for`; they never recompute it.
"""

from __future__ import annotations

import textwrap
from typing import Any

from tea.core.safe_text import terminal as safe
from tea.core.texts import CAUTIONS
from tea.inputs import display, site
from tea.inputs.case import Case, case_header
from tea.methods.lue import Season

MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")
#: what the estimate is, said on every view of it
POTENTIAL_NOTE = ("A potential from light, temperature (and water, where rainfall and PET are given) for a "
                  "well-managed mature stand; pests, weeds, nutrients, soil and establishment can keep a field "
                  "below it.")


def _yield_text(value_t_per_ha: float, system: str) -> str:
    v, unit = display.convert(value_t_per_ha, "t DM/ha", system)
    return f"{display.number(v, 1)} {unit}"


def terms(s: Season) -> list[tuple[str, float, str]]:
    """The four terms of Y = S f ε H and their product: (name, value, unit)."""
    return [
        ("seasonal radiation S (PAR in the growing season)", s.radiation, "MJ/m2"),
        ("share intercepted f", s.intercepted_share, "fraction"),
        ("conversion efficiency e (water limit included)", s.conversion, "g DM/MJ"),
        ("share harvested H", s.harvest_share, "fraction"),
        ("yield Y = S x f x e x H", s.harvested_t_per_ha, "t DM/ha"),
    ]


def yield_text(case: Case) -> str:
    """The terminal view: the four terms, their product, the month-by-month table, the case's yield beside it."""
    s = site.season_for(case.values)
    pot = site.potential(case.values, case.origin)
    system = case.unit_system
    out = [f"{safe(case.name)}: yield potential from the site climate", "Monteith: Y = S x f x e x H"]
    if case["case.demo"]:
        out.append("DEMO DATA: invented case and site climate.")
    p = s.parameters
    out.append(f"crop preset {case['crop.preset']}: PAR share {p['par_share']:g}, k {p['extinction_coefficient']:g}, "
               f"base {p['base_temperature_c']:g} degC, season end below {p['end_temperature_c']:g} degC, "
               f"e {p['rue_g_per_mj_par']:g} g/MJ")
    out.append(f"growing season: {s.season_days} days; largest leaf area index {s.lai_max_reached:.1f}")
    out.append("")
    # dry matter in the case's units (radiation in MJ/m2 whatever the units: the measure weather services give)
    dm_factor, dm_unit = display.convert(1.0, "t DM/ha", system)
    for name, value, unit in terms(s):
        if unit == "t DM/ha":
            value, unit = value * dm_factor, dm_unit
        shown = f"{value:.3f}" if unit == "fraction" else f"{value:,.2f}" if unit != "MJ/m2" else f"{value:,.0f}"
        out.append(f"  {name:52} {shown:>10} {unit}")
    out.append("")
    dm_head = dm_unit.replace("short ton DM", "sh.ton DM")  # the column's width
    out.append(f"  {'month':5} {'global':>8} {'PAR in':>8} {'PAR':>8} {'share':>7} {'water':>6} {'dry matter':>13}")
    out.append(f"  {'':5} {'MJ/m2':>8} {'season':>8} {'interc.':>8} {'interc.':>7} {'factor':>6} {dm_head:>13}")
    for m, row in zip(MONTHS, s.rows()):
        out.append(f"  {m:5} {row['global_radiation_mj_per_m2']:8.0f} {row['par_in_season_mj_per_m2']:8.0f} "
                   f"{row['intercepted_par_mj_per_m2']:8.0f} {row['share_intercepted']:7.2f} "
                   f"{row['water_factor']:6.2f} {row['dry_matter_t_per_ha'] * dm_factor:13.2f}")
    total = sum(r["dry_matter_t_per_ha"] for r in s.rows())
    out.append(f"  {'year':5} {s.global_radiation.sum():8.0f} {s.radiation:8.0f} {s.intercepted_par.sum():8.0f} "
               f"{s.intercepted_share:7.2f} {'':6} {total * dm_factor:13.2f}")
    out.append("")
    # which product the case takes as its mature yield: before H where H is a late harvest's loss (the ledger
    # takes the loss off itself), after H where H is the harvested part of the growth (a coppice's stems)
    out.append(f"grown over the season, S x f x e (the table's total): {_yield_text(total, system)}")
    if s.late_loss > 0:
        out.append(f"potential at the autumn peak, S x f x e, is what the case calls mature yield: "
                   f"{_yield_text(pot['potential_t_dm_per_ha'], system)}")
        out.append(f"harvested in late winter, Y = S x f x e x H, after the loss from the autumn peak (the ledger "
                   f"takes it off): {_yield_text(pot['harvested_t_dm_per_ha'], system)}")
    else:
        out.append(f"potential, Y = S x f x e x H (H the harvested part of the growth), is what the case calls "
                   f"mature yield: {_yield_text(pot['potential_t_dm_per_ha'], system)}")
    out.extend(assumed_lines(case, pot))
    out.append("")
    for text in (POTENTIAL_NOTE, CAUTIONS[0], CAUTIONS[3]):
        out.extend(textwrap.wrap(text, 100))
    return "\n".join(_wrap(line) for line in out).rstrip() + "\n"


def _wrap(line: str) -> str:
    """A line within 100 characters, continued lines indented like the first."""
    indent = " " * (len(line) - len(line.lstrip(" ")))
    return line if len(line) <= 100 else textwrap.fill(line, 100, subsequent_indent=indent + "  ")


def assumed_lines(case: Case, pot: dict | None) -> list[str]:
    """One line on the case's own yield against the site's potential (none without a site climate)."""
    if pot is None:
        return []
    system = case.unit_system
    if pot["estimated"]:
        return [f"the case gives no mature yield: the estimate is used"
                + (f" (x site factor {case['yield.site_factor']:g} = {_yield_text(pot['assumed_t_dm_per_ha'], system)})"
                   if case["yield.site_factor"] != 1.0 else "")]
    share = pot["assumed_share"]
    if share is None:
        return [f"assumed mature yield {_yield_text(pot['assumed_t_dm_per_ha'], system)}; the site climate gives "
                "the crop no season to compare with"]
    line = (f"assumed mature yield (x site factor) {_yield_text(pot['assumed_t_dm_per_ha'], system)}: "
            f"{share:.0%} of the site's potential")
    return [line + (" - above what the site's light and warmth allow; check it" if share > 1.0 else "")]


def yield_payload(case: Case) -> dict[str, Any]:
    """The JSON view: the terms, the months, the potential and the case's yield beside it."""
    s = site.season_for(case.values)
    pot = site.potential(case.values, case.origin)
    names = ("radiation_mj_per_m2", "share_intercepted", "conversion_g_per_mj", "share_harvested",
             "yield_t_dm_per_ha")
    return {
        **case_header(case),
        "method": "Monteith light-use efficiency: Y = S f e H (S: PAR in the growing season)",
        "crop_preset": case["crop.preset"],
        "parameters": s.parameters,
        "season_days": s.season_days,
        "lai_max_reached": s.lai_max_reached,
        "terms": {n: v for n, (_, v, _) in zip(names, terms(s))},
        "months": s.rows(),
        "potential_t_dm_per_ha": pot["potential_t_dm_per_ha"],
        "harvested_t_dm_per_ha": pot["harvested_t_dm_per_ha"],
        "assumed_t_dm_per_ha": pot["assumed_t_dm_per_ha"],
        "assumed_share_of_potential": pot["assumed_share"],
        "yield_estimated_from_climate": pot["estimated"],
        "note": POTENTIAL_NOTE,
        "cautions": [CAUTIONS[0], CAUTIONS[3]],
    }


def site_lines(case: Case) -> list[str]:
    """The short block `tea run` prints when the case has a site climate (none without one)."""
    pot = site.potential(case.values, case.origin)
    if pot is None:
        return []
    system = case.unit_system
    per = "acre" if system == "us_customary" else "ha"
    out = [f"Yield potential from the site climate (per {per}; `tea yield` shows the terms)",
           f"  potential at the autumn peak            {_yield_text(pot['potential_t_dm_per_ha'], system)}"]
    out.extend("  " + line for line in assumed_lines(case, pot))
    return out


def site_payload(case: Case) -> dict[str, Any] | None:
    """The site-climate figures of `tea run --json` (None without a site climate)."""
    pot = site.potential(case.values, case.origin)
    if pot is None:
        return None
    return {"potential_t_dm_per_ha": pot["potential_t_dm_per_ha"],
            "harvested_t_dm_per_ha": pot["harvested_t_dm_per_ha"],
            "assumed_t_dm_per_ha": pot["assumed_t_dm_per_ha"],
            "assumed_share_of_potential": pot["assumed_share"],
            "yield_estimated_from_climate": pot["estimated"],
            "note": POTENTIAL_NOTE}


def page_line(case: Case) -> str:
    """The grower page's words on the site's potential, after the mature yield (empty without a site climate)."""
    pot = site.potential(case.values, case.origin)
    if pot is None:
        return ""
    share = pot["assumed_share"]
    if share is None:
        return "; the site climate gives the crop no growing season"
    what = "estimated from" if pot["estimated"] else f"{share:.0%} of"
    return (f"; {what} the site's potential, {_yield_text(pot['potential_t_dm_per_ha'], case.unit_system)} "
            "(light and warmth; fields commonly yield less)" + (": check it" if share > 1.0 else ""))
